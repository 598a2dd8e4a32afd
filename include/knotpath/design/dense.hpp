#pragma once
/// \file design/dense.hpp
/// \brief Dense design operator: an Eigen column-major matrix of prepared
/// columns and the prepared response, held by value.

#include <span>
#include <type_traits>
#include <utility>

#include "../detail/scalar.hpp"
#include "concept.hpp"

namespace knotpath {

/// Dense prepared design Z (n x q) and response y (n). Products cost O(n q)
/// per knot; Gram entries are computed on demand, O(n) each.
template <class ScalarT>
class DenseDesign {
 public:
  using Scalar = ScalarT;

  DenseDesign() = default;
  /// Takes ownership of the prepared columns and response.
  DenseDesign(Matrix<Scalar> columns, Vector<Scalar> response)
      : z_(std::move(columns)), y_(std::move(response)) {
    if (z_.rows() != y_.size())
      throw std::invalid_argument("DenseDesign: design rows and response length differ");
    work_.resize(z_.rows());
  }

  Index rows() const noexcept { return z_.rows(); }
  Index cols() const noexcept { return z_.cols(); }

  Scalar squared_norm(Index j) const { return z_.col(j).squaredNorm(); }
  Scalar response_squared_norm() const { return y_.squaredNorm(); }

  void response_correlations(Vector<Scalar>& out) const {
    out.resize(z_.cols());
    for (Index j = 0; j < z_.cols(); ++j) out(j) = z_.col(j).dot(y_);
  }

  void cross_products(Index j, std::span<const Index> active, Eigen::Ref<Vector<Scalar>> out) const {
    for (std::size_t i = 0; i < active.size(); ++i)
      out(static_cast<Index>(i)) = z_.col(active[i]).dot(z_.col(j));
  }

  /// a = Z^T (Z_A d): one pass to form u = Z_A d, one product Z^T u.
  void direction_correlations(std::span<const Index> active, const Eigen::Ref<const Vector<Scalar>>& d,
                              Vector<Scalar>& out) const {
    work_.setZero();
    for (std::size_t i = 0; i < active.size(); ++i) {
      const Scalar coefficient = d(static_cast<Index>(i));
      const auto column = z_.col(active[i]);
      for (Index r = 0; r < z_.rows(); ++r) work_(r) += coefficient * column(r);
    }
    if constexpr (std::is_floating_point_v<Scalar>) {
      out.noalias() = z_.transpose() * work_;  // blocked, vectorized product for hardware types
    } else {
      out.resize(z_.cols());
      for (Index j = 0; j < z_.cols(); ++j) out(j) = z_.col(j).dot(work_);
    }
  }

  /// The prepared columns (for tests and diagnostics).
  const Matrix<Scalar>& columns() const noexcept { return z_; }
  /// The prepared response.
  const Vector<Scalar>& response() const noexcept { return y_; }

 private:
  Matrix<Scalar> z_;               // prepared columns
  Vector<Scalar> y_;               // prepared response
  mutable Vector<Scalar> work_;    // u = Z_A d, reused at every knot
};

}  // namespace knotpath
