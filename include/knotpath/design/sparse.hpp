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
#include "concept.hpp"

namespace knotpath {

/// Compressed-column sparse matrix of the scalar type (any index type is
/// accepted: Eigen's default int as well as this one).
template <class Scalar, class StorageIndex = Index>
using SparseMatrix = Eigen::SparseMatrix<Scalar, Eigen::ColMajor, StorageIndex>;

/// Sparse design operator (a DesignOperator) over the included columns of a
/// user's matrix; usually built by prepare_sparse(). Each product costs
/// O(nnz + n) per knot, each Gram entry O(nnz of the two columns).
///
/// Thread safety: the products write a mutable n-vector of scratch space, so
/// one design object must not be used by two concurrent traces.
template <class ScalarT, class StorageIndex = Index>
class SparseDesign {
 public:
  /// The arithmetic type (a floating type; see prepare_sparse()).
  using Scalar = ScalarT;
  /// The user's matrix type, read in place.
  using Sparse = SparseMatrix<Scalar, StorageIndex>;

  /// `x` is referenced, not copied: it must outlive the design. `columns`
  /// maps design column k to the user's column; `means` and `scales` are m_k
  /// and s_k per design column; `sqrt_weights` holds sqrt(w_r) per row (0
  /// drops a row); `response` is the prepared response sqrt(w) o (y - ybar).
  /// Computes the q squared column norms, O(nnz).
  SparseDesign(const Sparse& x, std::vector<Index> columns, Vector<Scalar> means,
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
      for (typename Sparse::InnerIterator it(*x_, j); it; ++it) scratch_(it.row()) += t * it.value();
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
        for (typename Sparse::InnerIterator it(*x_, j); it; ++it) s += it.value() * vw(it.row());
        out(k) = (s - means_(k) * total) / scales_(k);
      }
    });
  }

  // z_a^T z_b from the sparse columns (merge of two sorted index lists).
  Scalar raw_cross(Index a, Index b) const {
    const Index ja = columns_[static_cast<std::size_t>(a)], jb = columns_[static_cast<std::size_t>(b)];
    typename Sparse::InnerIterator ia(*x_, ja), ib(*x_, jb);
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

  const Sparse* x_;                 // the user's matrix (not owned)
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

}  // namespace knotpath
