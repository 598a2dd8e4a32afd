#pragma once
/// \file design/dense.hpp
/// \brief Dense design operator: an Eigen column-major matrix of prepared
/// columns and the prepared response, held by value.

#include <memory>
#include <span>
#include <type_traits>
#include <utility>

#include "../detail/parallel.hpp"
#include "../errors.hpp"
#include "../detail/scalar.hpp"
#include "concept.hpp"

namespace knotpath {

/// Dense prepared design Z (n x q) and response y (n), a DesignOperator.
/// Products cost O(n q) per knot; Gram entries are computed on demand, O(n)
/// each. Memory: the copy of Z and y plus one n-vector of scratch space. Z
/// is held through a shared pointer to const, so several designs (one per
/// response, as PathSolver makes them) can share one prepared copy.
///
/// Threads: set_threads() spreads the product over column blocks of fixed
/// width (detail/parallel.hpp), so results do not depend on the count.
/// Thread safety: direction_correlations() writes a mutable scratch vector,
/// so one design object must not be used by two concurrent traces; the const
/// accessors are safe to call concurrently with each other.
template <class ScalarT>
class DenseDesign {
 public:
  /// The arithmetic type of the prepared columns (double, a 50-digit float, a rational).
  using Scalar = ScalarT;

  /// An empty design (0 x 0); assign a constructed one before use.
  DenseDesign() = default;
  /// Takes ownership of the prepared columns and response. Throws
  /// invalid_data when `columns.rows() != response.size()`.
  DenseDesign(Matrix<Scalar> columns, Vector<Scalar> response)
      : DenseDesign(std::make_shared<const Matrix<Scalar>>(std::move(columns)), std::move(response)) {}
  /// Shares prepared columns held elsewhere (never modified). Throws
  /// invalid_data when `columns` is null or its rows differ from the response's length.
  DenseDesign(std::shared_ptr<const Matrix<Scalar>> columns, Vector<Scalar> response)
      : shared_(std::move(columns)), y_(std::move(response)) {
    if (!shared_ || shared_->rows() != y_.size())
      throw invalid_data("DenseDesign: design rows and response length differ");
    work_.resize(y_.size());
  }

  /// Threads for the product Z^T u of direction_correlations() (1 by
  /// default; 0: all hardware threads). The result does not depend on it.
  void set_threads(std::size_t threads) {
    threads_ = detail::threads_for<Scalar>(threads);
  }

  /// Number of rows n of Z.
  Index rows() const noexcept { return z().rows(); }
  /// Number of prepared columns q.
  Index cols() const noexcept { return z().cols(); }

  /// z_j^T z_j for prepared column j in [0, q); O(n).
  Scalar squared_norm(Index j) const { return z().col(j).squaredNorm(); }
  /// y^T y of the prepared response; O(n).
  Scalar response_squared_norm() const { return y_.squaredNorm(); }

  /// out = Z^T y (resized to q); O(n q).
  void response_correlations(Vector<Scalar>& out) const {
    out.resize(z().cols());
    for (Index j = 0; j < z().cols(); ++j) out(j) = z().col(j).dot(y_);
  }

  /// out(i) = z_{active[i]}^T z_j for i < |active| (`out` is the caller's,
  /// of length >= |active|, not resized); O(n |active|).
  void cross_products(Index j, std::span<const Index> active, Eigen::Ref<Vector<Scalar>> out) const {
    for (std::size_t i = 0; i < active.size(); ++i)
      out(static_cast<Index>(i)) = z().col(active[i]).dot(z().col(j));
  }

  /// out = Z^T (Z_A d) with A = `active` and d of length |A|: one pass to
  /// form u = Z_A d (O(n |A|)), one product Z^T u (O(n q)). Uses the scratch
  /// vector (see the class note on thread safety).
  void direction_correlations(std::span<const Index> active, const Eigen::Ref<const Vector<Scalar>>& d,
                              Vector<Scalar>& out) const {
    work_.setZero();
    for (std::size_t i = 0; i < active.size(); ++i) {
      const Scalar coefficient = d(static_cast<Index>(i));
      const auto column = z().col(active[i]);
      for (Index r = 0; r < z().rows(); ++r) work_(r) += coefficient * column(r);
    }
    out.resize(z().cols());
    const double entries = static_cast<double>(z().rows()) * static_cast<double>(z().cols());
    detail::for_each_column_block(threads_, z().cols(), entries, [&](Index begin, Index end) {
      if constexpr (std::is_floating_point_v<Scalar>) {
        // blocked, vectorized product for hardware types
        out.segment(begin, end - begin).noalias() = z().middleCols(begin, end - begin).transpose() * work_;
      } else {
        for (Index j = begin; j < end; ++j) out(j) = z().col(j).dot(work_);
      }
    });
  }

  /// The prepared columns (for tests and diagnostics).
  const Matrix<Scalar>& columns() const noexcept { return z(); }
  /// The prepared response.
  const Vector<Scalar>& response() const noexcept { return y_; }

 private:
  const Matrix<Scalar>& z() const noexcept { return *shared_; }
  std::shared_ptr<const Matrix<Scalar>> shared_ = std::make_shared<const Matrix<Scalar>>();  // prepared columns, never null
  Vector<Scalar> y_;               // prepared response
  mutable Vector<Scalar> work_;    // u = Z_A d, reused at every knot
  std::size_t threads_ = 1;        // threads for Z^T u
};

}  // namespace knotpath
