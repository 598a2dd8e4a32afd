#pragma once
/// \file design/gram.hpp
/// \brief Gram design operator: the prepared Gram matrix G = Z^T Z, Z^T y and
/// y^T y, built from sufficient statistics (statistics.hpp) by
/// prepare_gram() (problem.hpp). Products cost O(q k) per knot, independent
/// of the number of rows.

#include <span>
#include <utility>

#include "../detail/scalar.hpp"
#include "concept.hpp"

namespace knotpath {

/// Gram design operator (a DesignOperator): prepared Gram matrix G = Z^T Z
/// (q x q), Z^T y and y^T y. Per knot: O(q k) for the direction
/// correlations; Gram entries O(1); memory O(q^2), independent of n. Usually
/// built by prepare_gram(). Holds no scratch space, so one object may serve
/// several concurrent traces.
template <class ScalarT>
class GramDesign {
 public:
  /// The arithmetic type of the statistics.
  using Scalar = ScalarT;

  /// An empty design (q = 0); assign a constructed one before use.
  GramDesign() = default;
  /// \param gram           G = Z^T Z of the prepared columns (q x q, symmetric)
  /// \param response_cross Z^T y (q)
  /// \param response_norm2 y^T y of the prepared (centred, weighted) response
  /// \param rows           number of rows with positive weight behind the statistics
  GramDesign(Matrix<Scalar> gram, Vector<Scalar> response_cross, Scalar response_norm2, Index rows)
      : g_(std::move(gram)), c_(std::move(response_cross)), yy_(std::move(response_norm2)), rows_(rows) {}

  /// Number of rows with positive weight the statistics summarize.
  Index rows() const noexcept { return rows_; }
  /// Number of prepared columns q.
  Index cols() const noexcept { return g_.cols(); }
  /// G_jj = z_j^T z_j; O(1).
  Scalar squared_norm(Index j) const { return g_(j, j); }
  /// y^T y of the prepared response; O(1).
  Scalar response_squared_norm() const { return yy_; }
  /// out = Z^T y (a copy of the stored vector); O(q).
  void response_correlations(Vector<Scalar>& out) const { out = c_; }
  /// out(i) = G(active[i], j) for i < |active|; O(|active|).
  void cross_products(Index j, std::span<const Index> active, Eigen::Ref<Vector<Scalar>> out) const {
    for (std::size_t i = 0; i < active.size(); ++i) out(static_cast<Index>(i)) = g_(active[i], j);
  }
  /// out = G[:, A] d = Z^T (Z_A d) with A = `active`; O(q |A|).
  void direction_correlations(std::span<const Index> active, const Eigen::Ref<const Vector<Scalar>>& d,
                              Vector<Scalar>& out) const {
    out.setZero(g_.cols());
    for (std::size_t i = 0; i < active.size(); ++i) {
      const Scalar coefficient = d(static_cast<Index>(i));
      if constexpr (std::is_floating_point_v<Scalar>) {
        out.noalias() += coefficient * g_.col(active[i]);
      } else {
        for (Index r = 0; r < g_.rows(); ++r) out(r) += coefficient * g_(r, active[i]);
      }
    }
  }
  /// The prepared Gram matrix.
  const Matrix<Scalar>& gram() const noexcept { return g_; }

 private:
  Matrix<Scalar> g_;   // Z^T Z of the prepared columns
  Vector<Scalar> c_;   // Z^T y
  Scalar yy_{0};       // y^T y (centred, weighted)
  Index rows_ = 0;     // rows with positive weight
};

}  // namespace knotpath
