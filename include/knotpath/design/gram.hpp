#pragma once
/// \file design/gram.hpp
/// \brief Sufficient statistics (weighted means and centred co-moments of the
/// predictors and the response) and the Gram design operator built on them.
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
#include <span>
#include <string>
#include <utility>
#include <vector>

#include "../detail/scalar.hpp"
#include "../errors.hpp"
#include "../options.hpp"
#include "../prepare.hpp"
#include "concept.hpp"

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
  static SufficientStatistics from_rows(const Matrix<Scalar>& x, const Vector<Scalar>& y,
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

/// A prepared Gram problem.
template <class Scalar>
struct PreparedGram {
  GramDesign<Scalar> design;        ///< owns the prepared statistics (no reference to the data)
  Preparation<Scalar> preparation;  ///< means, scales, exclusions; pass to trace_design()
};

/// Prepares a Gram problem from sufficient statistics, applying the same
/// centring, scaling and exclusions as prepare_dense (see prepare.hpp).
/// Without an intercept the raw (uncentred) cross-products are rebuilt from
/// the centred ones: C + n m m^T. O(p^2) time and memory. Throws
/// invalid_option (bad options; standardize with an exact rational type)
/// and invalid_data (no row with positive weight, statistics that are not
/// finite).
template <class Scalar>
PreparedGram<Scalar> prepare_gram(const SufficientStatistics<Scalar>& stats, const TraceOptions& options) {
  const Index p = stats.predictors();
  options.validate(static_cast<std::size_t>(p));
  if (stats.rows == 0) throw invalid_data("no observation has a positive weight");
  if constexpr (detail::is_exact_v<Scalar>) {
    if (options.standardize)
      throw invalid_option("standardize",
                           "exact rational arithmetic cannot take the square roots that scaling "
                           "columns to unit length needs; trace with standardize = false");
  }
  Preparation<Scalar> prep;
  prep.observations = stats.rows;
  prep.used_observations = stats.rows;
  prep.predictors = p;
  prep.intercept = options.fit_intercept;
  prep.standardized = options.standardize;
  prep.weight_sum = stats.weight_sum;
  prep.means = Vector<Scalar>::Zero(p);
  prep.scales = Vector<Scalar>::Ones(p);
  const Scalar n = stats.weight_sum;
  // Second moments about the centre in use (the means, or 0 without intercept).
  auto moment = [&](Index i, Index j) -> Scalar {
    if (options.fit_intercept) return stats.comoments(i, j);
    return stats.comoments(i, j) + n * stats.means(i) * stats.means(j);
  };
  auto moment_y = [&](Index j) -> Scalar {
    if (options.fit_intercept) return stats.cross(j);
    return stats.cross(j) + n * stats.means(j) * stats.response_mean;
  };
  prep.response_mean = options.fit_intercept ? stats.response_mean : Scalar(0);
  prep.total_sum_of_squares = options.fit_intercept
                                  ? stats.response_comoment
                                  : Scalar(stats.response_comoment + n * stats.response_mean * stats.response_mean);
  for (Index j = 0; j < p; ++j) {
    const bool constant = stats.minimum(j) == stats.maximum(j);
    const bool all_zero = constant && stats.minimum(j) == Scalar(0);
    if (const char* reason = detail::exclusion_reason(all_zero, constant, options, j)) {
      prep.excluded.push_back({j, reason});
      continue;
    }
    const Scalar m2 = moment(j, j);
    Scalar scale(1), spread(0);
    if constexpr (!detail::is_exact_v<Scalar>)
      if (m2 > Scalar(0)) spread = detail::square_root<Scalar>(m2);
    if (options.standardize) {
      if (!detail::is_finite_value(m2))
        throw invalid_data::of_predictor(static_cast<std::size_t>(j),
                                         ": its sum of squares is not finite in the sufficient statistics "
                           "(the data overflow double precision); rescale it");
      if (!(m2 > Scalar(0))) {
        prep.excluded.push_back({j, detail::unscalable_column});
        continue;
      }
      scale = spread;
    }
    detail::keep_column(prep, options, j, options.fit_intercept ? stats.means(j) : Scalar(0), scale, spread);
  }
  const Index q = static_cast<Index>(prep.columns.size());
  Matrix<Scalar> g(q, q);
  Vector<Scalar> c(q);
  for (Index b = 0; b < q; ++b) {
    const Index jb = prep.columns[static_cast<std::size_t>(b)];
    for (Index a = 0; a < q; ++a) {
      const Index ja = prep.columns[static_cast<std::size_t>(a)];
      g(a, b) = moment(ja, jb) / (prep.scales(ja) * prep.scales(jb));
    }
    c(b) = moment_y(jb) / prep.scales(jb);
  }
  // Statistics formed from values near the ends of the floating range hold
  // Inf/NaN (products overflow); refuse them rather than trace garbage.
  bool finite = detail::is_finite_value(prep.total_sum_of_squares);
  for (Index b = 0; b < q && finite; ++b) {
    finite = detail::is_finite_value(c(b)) && detail::is_finite_value(prep.scales(prep.columns[static_cast<std::size_t>(b)]));
    for (Index a = 0; a < q && finite; ++a) finite = detail::is_finite_value(g(a, b));
  }
  if (!finite)
    throw invalid_data("the sufficient statistics are not finite (squares or cross-products of the "
                       "data overflow double precision); rescale the predictors and the response");
  return {GramDesign<Scalar>(std::move(g), std::move(c), prep.total_sum_of_squares, stats.rows),
          std::move(prep)};
}

}  // namespace knotpath
