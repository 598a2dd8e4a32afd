#pragma once
/// \file statistics.hpp
/// \brief Sufficient statistics of (X, y): weighted means and centred
/// co-moments of the predictors and the response, computed in row blocks and
/// merged exactly. The Gram design (design/gram.hpp) is built from them.
///
/// References:
///  - T. F. Chan, G. H. Golub & R. J. LeVeque (1979), "Updating formulae and
///    a pairwise algorithm for computing sample variances", Stanford CS report
///    STAN-CS-79-773 (pairwise merge of means and co-moments).
///  - B. P. Welford (1962), "Note on a method for calculating corrected sums
///    of squares and products", Technometrics 4(3), 419-420.
///
/// Statistics of a block of rows are computed two-pass inside the block
/// (block means, then the centred cross-products with one matrix product) and
/// blocks are merged with Chan et al.'s update
///     n = na + nb,  delta = mean_b - mean_a,
///     mean = mean_a + delta * nb / n,
///     C = C_a + C_b + (na nb / n) delta delta^T,
/// which never forms raw sums of squares, so large means do not cancel the
/// spread. Any engine that can add these records across machines can feed the
/// tracer. Once the statistics exist the path costs O(p k) per knot,
/// independent of n.

#include <algorithm>
#include <string>
#include <utility>
#include <vector>

#include "detail/scalar.hpp"
#include "errors.hpp"

namespace knotpath {

/// Weighted sufficient statistics of (X, y): everything the Gram design needs.
/// Mergeable: statistics of disjoint row blocks combine exactly as if the
/// rows had been processed together.
template <class Scalar>
struct SufficientStatistics {
  Scalar weight_sum{0};        ///< sum of weights of the rows seen
  Index rows = 0;              ///< rows with positive weight
  Vector<Scalar> means;        ///< weighted predictor means (p)
  Scalar response_mean{0};     ///< weighted response mean
  Matrix<Scalar> comoments;    ///< sum_i w_i (x_i - mean)(x_i - mean)^T (p x p)
  Vector<Scalar> cross;        ///< sum_i w_i (x_i - mean)(y_i - ybar) (p)
  Scalar response_comoment{0}; ///< sum_i w_i (y_i - ybar)^2
  Vector<Scalar> minimum;      ///< smallest value per predictor, over rows with positive weight (p)
  Vector<Scalar> maximum;      ///< largest value per predictor, over rows with positive weight (p)

  /// Number of predictors.
  Index predictors() const noexcept { return means.size(); }

  /// Statistics of the rows of (x, y) with weights (empty: all 1). One pass
  /// over the data in blocks of `block_rows` rows (0: automatic, about 2^20
  /// entries per block and at least 1024 rows: 8 MB of doubles, few enough
  /// blocks that the per-block cost of the product stays small; measured in
  /// bench/README.md), O(n p^2) with a symmetric
  /// rank update per block (half the flops of a general product) into one
  /// accumulator; buffers are allocated once. Rows are shifted by the
  /// weighted means of the first block before their products are summed and
  /// the shift is removed at the end (the shifted-data algorithm: with a shift
  /// close to the mean the correction is tiny, so large means do not cancel
  /// the spread; Chan, Golub & LeVeque 1979, section 3).
  template <class Derived>
  static SufficientStatistics from_rows(const Eigen::MatrixBase<Derived>& x, const Vector<Scalar>& y,
                                        const Vector<Scalar>& weights = Vector<Scalar>(),
                                        Index block_rows = 0) {
    if (y.size() != x.rows()) throw invalid_data("response length differs from the design's rows");
    if (weights.size() != 0 && weights.size() != x.rows())
      throw invalid_data("weights length differs from the design's rows");
    const Index n = x.rows(), p = x.cols();
    const bool weighted = weights.size() != 0;
    for (Index i = 0; weighted && i < n; ++i)
      if (!(weights(i) >= Scalar(0))) throw invalid_data("a weight is negative or not a number");
    SufficientStatistics s = empty(p);
    if (block_rows <= 0) block_rows = std::max<Index>(1024, (Index(1) << 20) / std::max<Index>(p, 1));
    block_rows = std::max<Index>(1, std::min(block_rows, n));
    Matrix<Scalar> xb(block_rows, p);              // shifted (and sqrt(w)-scaled) rows of a block
    Vector<Scalar> yb(block_rows), wb(block_rows);
    Vector<Scalar> shift = Vector<Scalar>::Zero(p);  // K: weighted means of the first used rows
    Scalar shift_y(0);
    Vector<Scalar> sum_x = Vector<Scalar>::Zero(p);  // sum w (x - K)
    Scalar sum_y(0), sum_yy(0);
    bool have_shift = false;
    std::vector<Index> used;
    used.reserve(static_cast<std::size_t>(block_rows));
    for (Index start = 0; start < n; start += block_rows) {
      const Index len = std::min(block_rows, n - start);
      used.clear();
      for (Index i = 0; i < len; ++i)
        if (!weighted || weights(start + i) > Scalar(0)) used.push_back(start + i);
      const Index m = static_cast<Index>(used.size());
      if (m == 0) continue;
      if (m == len) {
        xb.topRows(m) = x.middleRows(start, m);
        yb.head(m) = y.segment(start, m);
        if (weighted) wb.head(m) = weights.segment(start, m); else wb.head(m).setOnes();
      } else {
        for (Index r = 0; r < m; ++r) {
          const Index i = used[static_cast<std::size_t>(r)];
          xb.row(r) = x.row(i);
          yb(r) = y(i);
          wb(r) = weights(i);
        }
      }
      auto xm = xb.topRows(m);
      auto ym = yb.head(m);
      auto wm = wb.head(m);
      for (Index j = 0; j < p; ++j) {
        const Scalar lo = xm.col(j).minCoeff(), hi = xm.col(j).maxCoeff();
        s.minimum(j) = s.rows == 0 ? lo : std::min<Scalar>(s.minimum(j), lo);
        s.maximum(j) = s.rows == 0 ? hi : std::max<Scalar>(s.maximum(j), hi);
      }
      if (!have_shift) {
        const Scalar wsum = wm.sum();
        for (Index j = 0; j < p; ++j) shift(j) = xm.col(j).dot(wm) / wsum;
        shift_y = ym.dot(wm) / wsum;
        have_shift = true;
      }
      for (Index j = 0; j < p; ++j) xm.col(j).array() -= shift(j);
      ym.array() -= shift_y;
      s.rows += m;
      s.weight_sum += wm.sum();
      for (Index j = 0; j < p; ++j) sum_x(j) += xm.col(j).dot(wm);
      sum_y += ym.dot(wm);
      for (Index r = 0; r < m; ++r) sum_yy += wm(r) * ym(r) * ym(r);
      if constexpr (std::is_floating_point_v<Scalar>) {
        if (weighted) {
          for (Index r = 0; r < m; ++r) {
            const Scalar root = std::sqrt(wm(r));
            xm.row(r) *= root;
            ym(r) *= root;
          }
        }
        s.comoments.template selfadjointView<Eigen::Lower>().rankUpdate(xm.transpose());
        s.cross.noalias() += xm.transpose() * ym;
      } else {
        for (Index j = 0; j < p; ++j) {
          for (Index i = j; i < p; ++i) {
            Scalar acc(0);
            for (Index r = 0; r < m; ++r) acc += wm(r) * xm(r, i) * xm(r, j);
            s.comoments(i, j) += acc;
          }
          Scalar acc(0);
          for (Index r = 0; r < m; ++r) acc += wm(r) * xm(r, j) * ym(r);
          s.cross(j) += acc;
        }
      }
    }
    if (s.rows == 0) return s;
    // Remove the shift: C = S - sum_x sum_x^T / W, mean = K + sum_x / W.
    const Scalar wsum = s.weight_sum;
    for (Index j = 0; j < p; ++j)
      for (Index i = j; i < p; ++i) {
        s.comoments(i, j) -= sum_x(i) * sum_x(j) / wsum;
        s.comoments(j, i) = s.comoments(i, j);
      }
    for (Index j = 0; j < p; ++j) {
      s.cross(j) -= sum_x(j) * sum_y / wsum;
      s.means(j) = shift(j) + sum_x(j) / wsum;
    }
    s.response_comoment = sum_yy - sum_y * sum_y / wsum;
    s.response_mean = shift_y + sum_y / wsum;
    return s;
  }

  /// Statistics with no rows yet.
  static SufficientStatistics empty(Index p) {
    SufficientStatistics s;
    s.means = Vector<Scalar>::Zero(p);
    s.comoments = Matrix<Scalar>::Zero(p, p);
    s.cross = Vector<Scalar>::Zero(p);
    s.minimum = Vector<Scalar>::Zero(p);
    s.maximum = Vector<Scalar>::Zero(p);
    return s;
  }

  /// Adds the statistics of other rows (Chan, Golub & LeVeque 1979).
  void merge(const SufficientStatistics& other) {
    if (other.predictors() != predictors()) throw invalid_data("merging statistics of different widths");
    if (other.weight_sum == Scalar(0)) return;
    if (weight_sum == Scalar(0)) {
      *this = other;
      return;
    }
    const Scalar n = weight_sum + other.weight_sum;
    const Scalar factor = weight_sum * other.weight_sum / n;
    const Vector<Scalar> dx = other.means - means;
    const Scalar dy = other.response_mean - response_mean;
    for (Index j = 0; j < predictors(); ++j)
      for (Index i = 0; i < predictors(); ++i)
        comoments(i, j) += other.comoments(i, j) + factor * dx(i) * dx(j);
    for (Index j = 0; j < predictors(); ++j) cross(j) += other.cross(j) + factor * dx(j) * dy;
    response_comoment += other.response_comoment + factor * dy * dy;
    for (Index j = 0; j < predictors(); ++j) means(j) += dx(j) * other.weight_sum / n;
    response_mean += dy * other.weight_sum / n;
    for (Index j = 0; j < predictors(); ++j) {
      minimum(j) = std::min<Scalar>(minimum(j), other.minimum(j));
      maximum(j) = std::max<Scalar>(maximum(j), other.maximum(j));
    }
    weight_sum = n;
    rows += other.rows;
  }

};

}  // namespace knotpath
