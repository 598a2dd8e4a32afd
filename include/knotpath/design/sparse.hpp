#pragma once
/// \file design/sparse.hpp
/// \brief Sparse design operator: an Eigen compressed-column matrix used as
/// given, with centring, scaling and weights applied implicitly (never
/// densified).
///
/// The prepared column is z_j = sqrt(w) o (x_j - m_j 1) / s_j. With
/// v' = sqrt(w) o v and t = d / s_A:
///     Z^T v     = S^{-1} (X^T v' - m (sqrt(w)^T v)),
///     Z_A d     = sqrt(w) o (X_A t - 1 (m_A^T t)),
///     z_i^T z_j = (x_i^T W x_j - W m_i m_j) / (s_i s_j),
/// where W = sum of weights (the identity sum_r w_r (x_ri - m_i) = 0 removes
/// the cross terms). Each product costs O(nnz + n). The last formula
/// subtracts W m_i m_j from the raw cross-product: accurate when the means
/// are small relative to the spread, which is the usual case for sparse
/// data; centre dense-looking columns with the dense or Gram designs instead.

#include <Eigen/SparseCore>
#include <algorithm>
#include <cmath>
#include <span>
#include <string>
#include <utility>
#include <vector>

#include "../detail/parallel.hpp"
#include "../detail/scalar.hpp"
#include "../errors.hpp"
#include "../options.hpp"
#include "../prepare.hpp"
#include "concept.hpp"

namespace knotpath {

/// Compressed-column sparse matrix of the scalar type.
template <class Scalar>
using SparseMatrix = Eigen::SparseMatrix<Scalar, Eigen::ColMajor, Index>;

/// Sparse design operator (a DesignOperator) over the included columns of a
/// user's matrix; usually built by prepare_sparse(). Each product costs
/// O(nnz + n) per knot, each Gram entry O(nnz of the two columns).
///
/// Thread safety: the products write a mutable n-vector of scratch space, so
/// one design object must not be used by two concurrent traces.
template <class ScalarT>
class SparseDesign {
 public:
  /// The arithmetic type (a floating type; see prepare_sparse()).
  using Scalar = ScalarT;

  /// `x` is referenced, not copied: it must outlive the design. `columns`
  /// maps design column k to the user's column; `means` and `scales` are m_k
  /// and s_k per design column; `sqrt_weights` holds sqrt(w_r) per row (0
  /// drops a row); `response` is the prepared response sqrt(w) o (y - ybar).
  /// Computes the q squared column norms, O(nnz).
  SparseDesign(const SparseMatrix<Scalar>& x, std::vector<Index> columns, Vector<Scalar> means,
               Vector<Scalar> scales, Vector<Scalar> sqrt_weights, Vector<Scalar> response)
      : x_(&x),
        columns_(std::move(columns)),
        means_(std::move(means)),
        scales_(std::move(scales)),
        sqrt_w_(std::move(sqrt_weights)),
        y_(std::move(response)) {
    weight_sum_ = sqrt_w_.squaredNorm();
    weights_ = sqrt_w_.cwiseAbs2();
    weighted_ = (weights_.array() != Scalar(1)).any();
    rows_used_ = 0;
    for (Index i = 0; i < sqrt_w_.size(); ++i) rows_used_ += sqrt_w_(i) > Scalar(0);
    scratch_.resize(x.rows());
    norms_.resize(static_cast<Index>(columns_.size()));
    for (Index k = 0; k < norms_.size(); ++k) norms_(k) = raw_cross(k, k);
  }

  /// Threads for the one X^T v per knot (1 by default; 0: all hardware
  /// threads). Each column's sum is formed in the same order on any thread:
  /// the result does not depend on it.
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

  /// out = Z^T y (`out` of length q); O(nnz + n). Uses the scratch space.
  void response_correlations(Vector<Scalar>& out) const {
    // y_ is already sqrt(w)-scaled; one more sqrt(w) gives w o y for the product.
    for (Index r = 0; r < y_.size(); ++r) scratch_(r) = weighted_ ? Scalar(sqrt_w_(r) * y_(r)) : y_(r);
    weighted_transpose_times(scratch_, out);
  }

  /// out(i) = z_{active[i]}^T z_k for i < |active| (merge of the two
  /// columns' stored entries; see the file comment on accuracy).
  void cross_products(Index k, std::span<const Index> active, Eigen::Ref<Vector<Scalar>> out) const {
    for (std::size_t i = 0; i < active.size(); ++i) out(static_cast<Index>(i)) = raw_cross(active[i], k);
  }

  /// out = Z^T (Z_A d) with A = `active` (`out` of length q); O(nnz + n).
  /// Uses the scratch space.
  void direction_correlations(std::span<const Index> active, const Eigen::Ref<const Vector<Scalar>>& d,
                              Vector<Scalar>& out) const {
    // u = Z_A d, built in scratch_ (length n).
    scratch_.setZero();
    Scalar shift(0);
    for (std::size_t i = 0; i < active.size(); ++i) {
      const Index k = active[i];
      const Index j = columns_[static_cast<std::size_t>(k)];
      const Scalar t = d(static_cast<Index>(i)) / scales_(k);
      shift += means_(k) * t;
      for (typename SparseMatrix<Scalar>::InnerIterator it(*x_, j); it; ++it) scratch_(it.row()) += t * it.value();
    }
    // u = sqrt(w) o (X_A t - shift); the product below needs sqrt(w) o u = w o (...).
    if (weighted_) {
      for (Index r = 0; r < scratch_.size(); ++r) scratch_(r) = weights_(r) * (scratch_(r) - shift);
    } else {
      scratch_.array() -= shift;
    }
    weighted_transpose_times(scratch_, out);
  }

 private:
  // out = Z^T v given vw = sqrt(w) o v: S^{-1} (X^T vw - m (1^T vw)). One
  // read of each stored entry and one gather per entry.
  void weighted_transpose_times(const Vector<Scalar>& vw, Vector<Scalar>& out) const {
    const Scalar total = vw.sum();
    detail::for_each_column_block(threads_, cols(), static_cast<double>(x_->nonZeros()), [&](Index begin, Index end) {
      for (Index k = begin; k < end; ++k) {
        const Index j = columns_[static_cast<std::size_t>(k)];
        Scalar s(0);
        for (typename SparseMatrix<Scalar>::InnerIterator it(*x_, j); it; ++it) s += it.value() * vw(it.row());
        out(k) = (s - means_(k) * total) / scales_(k);
      }
    });
  }

  // z_a^T z_b from the sparse columns (merge of two sorted index lists).
  Scalar raw_cross(Index a, Index b) const {
    const Index ja = columns_[static_cast<std::size_t>(a)], jb = columns_[static_cast<std::size_t>(b)];
    typename SparseMatrix<Scalar>::InnerIterator ia(*x_, ja), ib(*x_, jb);
    Scalar s(0);
    while (ia && ib) {
      if (ia.row() < ib.row()) {
        ++ia;
      } else if (ib.row() < ia.row()) {
        ++ib;
      } else {
        s += sqrt_w_(ia.row()) * sqrt_w_(ia.row()) * ia.value() * ib.value();
        ++ia;
        ++ib;
      }
    }
    return (s - weight_sum_ * means_(a) * means_(b)) / (scales_(a) * scales_(b));
  }

  const SparseMatrix<Scalar>* x_;   // the user's matrix (not owned)
  std::vector<Index> columns_;      // design column k -> user column
  Vector<Scalar> means_;            // m per design column (0 without intercept)
  Vector<Scalar> scales_;           // s per design column
  Vector<Scalar> sqrt_w_;           // sqrt of the row weights (0 drops a row)
  Vector<Scalar> y_;                // prepared response (dense)
  Vector<Scalar> norms_;            // z_k^T z_k
  Vector<Scalar> weights_;          // w
  bool weighted_ = false;           // any weight differs from 1
  Scalar weight_sum_{0};
  Index rows_used_ = 0;
  std::size_t threads_ = 1;         // threads for X^T v
  mutable Vector<Scalar> scratch_;  // u = Z_A d, reused at every knot
};

/// A prepared sparse problem (the design references the user's matrix).
template <class Scalar>
struct PreparedSparse {
  SparseDesign<Scalar> design;      ///< references the user's matrix: keep it alive while tracing
  Preparation<Scalar> preparation;  ///< means, scales, exclusions; pass to trace_design()
};

/// Prepares a sparse design: weighted means and scales from the stored
/// entries (implicit zeros included), exclusions as in prepare_dense.
/// Floating scalar types only (the row scaling needs square roots). `x`
/// must outlive the returned design; `weights` empty means all 1.
/// O(n + p + nnz) time. Throws invalid_option (bad options) and invalid_data
/// (sizes disagree, non-finite values, negative weights, no positive weight,
/// magnitudes outside the range of detail::check_magnitude()).
template <class Scalar>
PreparedSparse<Scalar> prepare_sparse(const SparseMatrix<Scalar>& x, const Vector<Scalar>& y,
                                      const TraceOptions& options,
                                      const Vector<Scalar>& weights = Vector<Scalar>()) {
  static_assert(!detail::is_exact_v<Scalar>, "sparse designs need a floating scalar type");
  const Index n = x.rows(), p = x.cols();
  options.validate(static_cast<std::size_t>(p));
  if (y.size() != n) throw invalid_data("the response length differs from the design's rows");
  if (weights.size() != 0 && weights.size() != n) throw invalid_data("weights length differs from rows");
  Vector<Scalar> w = weights.size() ? weights : Vector<Scalar>(Vector<Scalar>::Ones(n));
  Index used = 0;
  // Largest magnitudes over all rows and over rows of positive weight
  // (detail::check_magnitude, the rule every storage applies).
  Scalar top_y(0), top_y_used(0);
  for (Index i = 0; i < n; ++i) {
    if (!detail::is_finite_value(w(i)) || w(i) < Scalar(0))
      throw invalid_data("weight " + std::to_string(i) + " is negative or not finite");
    if (!detail::is_finite_value(y(i))) throw invalid_data("the response is not finite at row " + std::to_string(i));
    used += w(i) > Scalar(0);
    top_y = std::max<Scalar>(top_y, detail::abs_value<Scalar>(y(i)));
    if (w(i) > Scalar(0)) top_y_used = std::max<Scalar>(top_y_used, detail::abs_value<Scalar>(y(i)));
  }
  if (used == 0) throw invalid_data("no observation has a positive weight");
  for (Index j = 0; j < p; ++j) {
    Scalar top(0), top_used(0);
    for (typename SparseMatrix<Scalar>::InnerIterator it(x, j); it; ++it) {
      if (!detail::is_finite_value(it.value()))
        throw invalid_data("the design is not finite at row " + std::to_string(it.row()) + ", column " +
                           std::to_string(j));
      top = std::max<Scalar>(top, detail::abs_value<Scalar>(it.value()));
      if (w(it.row()) > Scalar(0)) top_used = std::max<Scalar>(top_used, detail::abs_value<Scalar>(it.value()));
    }
    detail::check_magnitude(top, top_used, std::string(), static_cast<std::size_t>(j));
  }
  detail::check_magnitude(top_y, top_y_used, std::string("the response"));
  if (weights.size() != 0) detail::check_magnitude(Scalar(w.maxCoeff()), Scalar(w.maxCoeff()), std::string("the weight vector"));
  Preparation<Scalar> prep;
  prep.observations = n;
  prep.used_observations = used;
  prep.predictors = p;
  prep.intercept = options.fit_intercept;
  prep.standardized = options.standardize;
  prep.weight_sum = w.sum();
  prep.means = Vector<Scalar>::Zero(p);
  prep.scales = Vector<Scalar>::Ones(p);
  const Scalar wsum = prep.weight_sum;
  if (options.fit_intercept) prep.response_mean = w.dot(y) / wsum;
  Vector<Scalar> sqrt_w = w.cwiseSqrt();
  Vector<Scalar> yc = (y.array() - prep.response_mean).matrix();
  prep.total_sum_of_squares = (w.array() * yc.array().square()).sum();
  yc = yc.cwiseProduct(sqrt_w);

  for (Index j = 0; j < p; ++j) {
    Scalar sum(0), stored_weight(0);
    Index stored_used = 0;
    bool any_nonzero = false, varies = false;
    Scalar first_value(0);
    bool have_first = false;
    for (typename SparseMatrix<Scalar>::InnerIterator it(x, j); it; ++it) {
      if (w(it.row()) == Scalar(0)) continue;
      sum += w(it.row()) * it.value();
      stored_weight += w(it.row());
      ++stored_used;
      if (it.value() != Scalar(0)) any_nonzero = true;
      if (!have_first) {
        first_value = it.value();
        have_first = true;
      } else if (it.value() != first_value) {
        varies = true;
      }
    }
    // Rows not stored hold zeros; they make the column vary when it has
    // stored nonzeros and some used rows are implicit.
    if (stored_used < used && any_nonzero) varies = true;
    if (const char* reason = detail::exclusion_reason(!any_nonzero, !varies, options, j)) {
      prep.excluded.push_back({j, reason});
      continue;
    }
    const Scalar mean = options.fit_intercept ? Scalar(sum / wsum) : Scalar(0);
    // sum_i w_i (x_i - m)^2 over stored entries plus the implicit zeros.
    Scalar ss(0);
    for (typename SparseMatrix<Scalar>::InnerIterator it(x, j); it; ++it) {
      if (w(it.row()) == Scalar(0)) continue;
      const Scalar dev = it.value() - mean;
      ss += w(it.row()) * dev * dev;
    }
    ss += (wsum - stored_weight) * mean * mean;
    const Scalar spread = detail::square_root<Scalar>(ss);
    Scalar scale(1);
    if (options.standardize) {
      scale = spread;
      if (!(scale > Scalar(0))) {
        prep.excluded.push_back({j, detail::unscalable_column});
        continue;
      }
    }
    detail::keep_column(prep, options, j, mean, scale, spread);
  }
  auto [m, s] = detail::traced_means_and_scales(prep);
  SparseDesign<Scalar> design(x, prep.columns, std::move(m), std::move(s), std::move(sqrt_w), std::move(yc));
  return {std::move(design), std::move(prep)};
}

}  // namespace knotpath
