#pragma once
/// \file design/dense_view.hpp
/// \brief Dense design operator over the user's own matrix, without a copy:
/// centring, scaling and weights are applied implicitly, so memory beyond X
/// is O(n + p). Chosen for wide designs (see Storage::view in options.hpp).
///
/// The prepared column is z_j = sqrt(w) o (x_j - m_j 1) / s_j. With
/// v' = sqrt(w) o v:
///     Z^T v = S^{-1} (X^T v' - m (1^T v')),        one dense X^T v' per knot,
///     Z_A d = sqrt(w) o (sum_i (d_i / s_i) (x_i - m_i 1)),   O(n k),
///     z_a^T z_b = sum_r w_r (x_ra - m_a)(x_rb - m_b) / (s_a s_b),   O(n), centred on the fly.
/// Accuracy: the vectors v the tracer multiplies are combinations of centred
/// columns, so 1^T v' is at rounding level and X^T v' carries a rounding
/// error of order eps |m_j| ||v'||_1 against a true value of order
/// s_j ||v'||: columns whose mean is many times their spread lose that factor
/// in the correlation updates. Every storage loses it once when centring
/// (the copy and Gram mode subtract the means explicitly), so each knot's
/// estimated error includes it (Preparation::centring_amplification, applied by
/// the tracer); here the products lose it again at every knot, which the
/// measured drift shows. The copying dense design (Storage::dense) or Gram
/// mode is the better choice for such data.

#include <algorithm>
#include <cmath>
#include <span>
#include <vector>

#include "../detail/parallel.hpp"
#include "../detail/scalar.hpp"
#include "concept.hpp"

namespace knotpath {

/// Dense view design, a DesignOperator: references the user's matrix (it
/// must outlive the design) and applies centring, scaling and weights on the
/// fly. Usually built by prepare_view(). Per knot: one X^T v (O(n p) over
/// all user columns) plus O(n |A|); each Gram entry O(n).
///
/// Thread safety: the products write mutable scratch vectors (length n and
/// p), so one design object must not be used by two concurrent traces.
template <class ScalarT>
class DenseViewDesign {
 public:
  /// The arithmetic type (a floating type; see prepare_view()).
  using Scalar = ScalarT;

  /// The user's matrix as the design reads it: column-major with any outer
  /// stride (a Matrix, an Eigen::Map over the caller's memory, a block of
  /// columns), never copied.
  using MatrixView = Eigen::Map<const Matrix<Scalar>, Eigen::Unaligned, Eigen::OuterStride<>>;

  /// \param x            the user's n x p matrix, viewed (not copied): its memory
  ///                     must outlive the design
  /// \param columns      user column of each design column k (the included predictors)
  /// \param means        m_k per design column (0 without intercept)
  /// \param scales       s_k > 0 per design column (1 without standardization)
  /// \param sqrt_weights sqrt(w_r) per row (length n; 0 drops a row)
  /// \param response     the prepared response sqrt(w) o (y - ybar), length n
  /// \param weighted     true when some weight differs from 1
  /// Computes the q squared column norms, O(n q).
  DenseViewDesign(MatrixView x, std::vector<Index> columns, Vector<Scalar> means, Vector<Scalar> scales,
                  Vector<Scalar> sqrt_weights, Vector<Scalar> response, bool weighted)
      : data_(x.data()),
        rows_(x.rows()),
        cols_(x.cols()),
        stride_(x.outerStride()),
        columns_(std::move(columns)),
        means_(std::move(means)),
        scales_(std::move(scales)),
        sqrt_w_(std::move(sqrt_weights)),
        y_(std::move(response)),
        weighted_(weighted) {
    rows_used_ = 0;
    for (Index r = 0; r < sqrt_w_.size(); ++r) rows_used_ += sqrt_w_(r) > Scalar(0);
    u_.resize(x.rows());
    full_.resize(x.cols());
    norms_.resize(cols());
    for (Index k = 0; k < cols(); ++k) norms_(k) = centred_cross(k, k);
  }

  /// Threads for the one X^T v per knot (1 by default; 0: all hardware
  /// threads). Fixed column blocks: the result does not depend on it.
  void set_threads(std::size_t threads) {
    threads_ = detail::threads_for<Scalar>(threads);
  }

  /// Number of rows with positive weight (rows of weight 0 do not count).
  Index rows() const noexcept { return rows_used_; }
  /// Number of design columns q (included predictors).
  Index cols() const noexcept { return static_cast<Index>(columns_.size()); }
  /// z_k^T z_k, precomputed; O(1).
  Scalar squared_norm(Index k) const { return norms_(k); }
  /// y^T y of the prepared response; O(n).
  Scalar response_squared_norm() const { return y_.squaredNorm(); }
  /// out = Z^T y (`out` must have length q); O(n p). Uses the scratch space.
  void response_correlations(Vector<Scalar>& out) const {
    u_ = y_;
    transpose_times_u(out);
  }
  /// out(i) = z_{active[i]}^T z_k for i < |active|, centred on the fly;
  /// O(n |active|).
  void cross_products(Index k, std::span<const Index> active, Eigen::Ref<Vector<Scalar>> out) const {
    for (std::size_t i = 0; i < active.size(); ++i) out(static_cast<Index>(i)) = centred_cross(active[i], k);
  }
  /// out = Z^T (Z_A d) with A = `active` (`out` of length q): O(n |A|) to form
  /// Z_A d, then one dense X^T v', O(n p). Uses the scratch space.
  void direction_correlations(std::span<const Index> active, const Eigen::Ref<const Vector<Scalar>>& d,
                              Vector<Scalar>& out) const {
    u_.setZero();
    Scalar shift(0);
    for (std::size_t i = 0; i < active.size(); ++i) {
      const Index k = active[i];
      const Scalar t = d(static_cast<Index>(i)) / scales_(k);
      shift += t * means_(k);
      u_.noalias() += t * x().col(columns_[static_cast<std::size_t>(k)]);
    }
    u_.array() -= shift;
    if (weighted_) u_.array() *= sqrt_w_.array();
    transpose_times_u(out);
  }

 private:
  // out = Z^T u_ (u_ holds v on entry; it is overwritten).
  void transpose_times_u(Vector<Scalar>& out) const {
    if (weighted_) u_.array() *= sqrt_w_.array();
    const Scalar total = u_.sum();
    // the one product per knot, in fixed column blocks (see set_threads())
    const double entries = static_cast<double>(x().rows()) * static_cast<double>(x().cols());
    detail::for_each_column_block(threads_, x().cols(), entries, [&](Index begin, Index end) {
      full_.segment(begin, end - begin).noalias() = x().middleCols(begin, end - begin).transpose() * u_;
    });
    for (Index k = 0; k < cols(); ++k)
      out(k) = (full_(columns_[static_cast<std::size_t>(k)]) - means_(k) * total) / scales_(k);
  }

  Scalar centred_cross(Index a, Index b) const {
    const auto xa = x().col(columns_[static_cast<std::size_t>(a)]);
    const auto xb = x().col(columns_[static_cast<std::size_t>(b)]);
    const Scalar ma = means_(a), mb = means_(b);
    Scalar sum(0);
    if (weighted_) {
      for (Index r = 0; r < xa.size(); ++r) sum += sqrt_w_(r) * sqrt_w_(r) * (xa(r) - ma) * (xb(r) - mb);
    } else {
      for (Index r = 0; r < xa.size(); ++r) sum += (xa(r) - ma) * (xb(r) - mb);
    }
    return sum / (scales_(a) * scales_(b));
  }

  MatrixView x() const { return MatrixView(data_, rows_, cols_, Eigen::OuterStride<>(stride_)); }

  const Scalar* data_;            // the user's matrix (not owned): column k at data_ + k * stride_
  Index rows_, cols_, stride_;
  std::vector<Index> columns_;    // design column k -> user column
  Vector<Scalar> means_;          // m per design column
  Vector<Scalar> scales_;         // s per design column
  Vector<Scalar> sqrt_w_;         // sqrt of row weights
  Vector<Scalar> y_;              // prepared response (n)
  Vector<Scalar> norms_;          // z_k^T z_k
  bool weighted_ = false;         // any weight differs from 1
  Index rows_used_ = 0;
  std::size_t threads_ = 1;       // threads for X^T v'
  mutable Vector<Scalar> u_;      // n-vector work space
  mutable Vector<Scalar> full_;   // X^T v' for all user columns
};

}  // namespace knotpath
