#pragma once
/// \file cross_validation.hpp
/// \brief Choosing a penalty by exact K-fold (or leave-one-out)
/// cross-validation: the folds, the exact curve and the penalty choices.
///
/// Reference:
///  - T. Hastie, R. Tibshirani & J. Friedman, The Elements of Statistical
///    Learning (2nd ed., 2009), section 7.10 (K-fold cross-validation, the
///    standard error of the fold errors and the one-standard-error rule).
///  - N. Meinshausen & P. Buhlmann, Stability selection, Journal of the Royal
///    Statistical Society B 72(4) (2010), 417-473 (the selection probability
///    of a predictor: how often it is selected across resamples of the data).
///
/// What it computes.
///
/// Size-free penalty. Folds have fewer rows than the whole data, and the
/// penalty lambda grows with the sample size, so folds are compared on the
/// size-free penalty mu = lambda / penalty_scale (scaling.hpp): lambda /
/// sqrt(n) when standardizing, lambda / n without standardization (n = sum
/// of weights). Without standardization a ridge weight is also rescaled per
/// fold (ridge * n_fold / n) so every fold solves the same per-observation
/// problem; with standardization it is already size-free.
///
/// Exact cross-validation. Each fold's path is traced on its training rows
/// (on the Gram route from their statistics: trace_folds()).
/// Between two consecutive knots of that path every coefficient is affine in
/// the fold's lambda, hence in mu, so the fold's held-out mean squared error
///     e_k(mu) = sum_{i held out} w_i (y_i - yhat_i(mu))^2 / W_k
/// is a quadratic in mu on each of its segments (W_k = held-out weight).
/// Merging every fold's knots gives a grid on which the cross-validation
/// error
///     CV(mu) = sum_k W_k e_k(mu) / W    (the held-out error of all rows)
/// is one quadratic per interval. Its exact global minimum is the least of
/// the interval minima (a quadratic with nonnegative curvature: endpoint or
/// stationary point). The standard error of the fold errors at mu is
///     SE(mu) = sqrt( sum_k W_k (e_k - CV)^2 / W / (K - 1) ),
/// which is the usual sd / sqrt(K) when the folds have equal weight.
/// The "parsimonious" choice is the largest mu whose CV error does not exceed
/// CV(mu_min) + SE(mu_min) (the one-standard-error rule of Hastie et al.),
/// found exactly by solving the quadratic of each interval.
///
/// Repeated cross-validation. With CrossValidationOptions::repeats = R > 1
/// the seeded fold assignment is drawn R times, repeat r from the seed
/// repeat_seed(seed, r) = seed + r, and each repeat's K folds are traced.
/// Every repeat holds out every row with positive weight once, so the R
/// curves have the same total weight W and their mean is
///     CV(mu) = sum over all R K folds of W_rk e_rk(mu) / (R W),
/// again one quadratic per interval of the union of every fold's knots: the
/// pieces, the minimum and the choices below are those of this averaged
/// curve. Its standard error is the mean over repeats of each repeat's SE
/// above (the folds of different repeats reuse the same rows, so pooling the
/// R K fold errors as if independent would understate it); the spread
/// across repeats is the standard deviation of the R curves CV_r(mu)
/// (common practice). With R = 1 everything is today's single
/// cross-validation, computed by the same operations.
///
/// Stability counts. predictor_activity() counts, for each predictor, the
/// fold paths (R K of them) whose coefficient is nonzero at a size-free
/// penalty mu, and whether the full path's is. This is the cross-validation
/// fold analogue of Meinshausen & Buhlmann's selection probability (the
/// fraction of resamples in which a predictor is selected at a penalty): the
/// resamples here are the training sets of the folds (K - 1 of K parts of
/// the rows, not their subsamples of half the rows), and no threshold is
/// applied, so no error bound of theirs is claimed.

#include <algorithm>
#include <cstdint>
#include <exception>
#include <limits>
#include <map>
#include <optional>
#include <span>
#include <string>
#include <utility>
#include <vector>

#include "detail/parallel.hpp"
#include "detail/random.hpp"
#include "detail/scalar.hpp"
#include "errors.hpp"
#include "options.hpp"
#include "path.hpp"
#include "prepare.hpp"
#include "problem.hpp"
#include "statistics.hpp"
#include "trace.hpp"

namespace knotpath {

/// The seed of repeat r of a repeated cross-validation (repeat 0 uses the
/// base seed itself): base + r, wrapping modulo 2^64.
inline std::uint64_t repeat_seed(std::uint64_t base, std::size_t r) {
  return base + static_cast<std::uint64_t>(r);
}

/// Options of a cross-validation. Plain struct; validate() checks it.
struct CrossValidationOptions {
  /// Number of folds K >= 2 for folds drawn from the seed. Ignored when
  /// leave_one_out is set or fold_of is given.
  std::size_t folds = 10;
  /// Leave one out: every row with positive weight is its own fold.
  bool leave_one_out = false;
  /// Seed of the fold assignment (a balanced random permutation drawn with
  /// SplitMix64, identical on every platform).
  std::uint64_t seed = 20261201;
  /// The user's folds, one entry per row: fold numbers 0..K-1, or a negative
  /// number for a row that is never held out (always trained on). Empty: use
  /// the seed. Every fold must hold a row with positive weight.
  std::vector<long> fold_of;
  /// Threads that trace folds in parallel (0: the hardware's count). The
  /// results do not depend on it.
  std::size_t threads = 1;
  /// Repeats R >= 1 of the seeded fold assignment, repeat r drawn from
  /// repeat_seed(seed, r); the curve is the mean of the R curves (see the
  /// file comment). Only for folds drawn from the seed: R > 1 is refused
  /// with fold_of or leave_one_out, whose folds are not random.
  std::size_t repeats = 1;

  /// Checks a repeat count as a front end received it (signed, before it is
  /// stored in `repeats`): R >= 1. Throws invalid_option("repeats").
  static void validate_repeat_count(long long count) {
    if (count < 1) throw invalid_option("repeats", "must be >= 1 (got " + std::to_string(count) + ")");
  }
  /// Checks `repeats` alone, before any row is read: R >= 1, and R > 1
  /// only with folds drawn from the seed (not leave_one_out, and no fold
  /// column: `fold_column` says one will fill fold_of). validate() calls it
  /// with !fold_of.empty(); a front end can call it before reading a table.
  /// Throws invalid_option("repeats").
  void validate_repeats(bool fold_column) const {
    if (repeats < 1) validate_repeat_count(0);
    if (repeats > 1 && (leave_one_out || fold_column))
      throw invalid_option("repeats", std::string("needs folds drawn from the seed; ") +
                                          (leave_one_out ? "leave-one-out" : "a fold column (fold_of)") +
                                          " gives the same folds on every repeat");
  }
  /// Checks the fields against the number of rows; throws invalid_option.
  void validate(Index rows) const {
    validate_repeats(!fold_of.empty());
    if (!fold_of.empty()) {
      if (static_cast<Index>(fold_of.size()) != rows)
        throw invalid_option("fold_of", "has " + std::to_string(fold_of.size()) + " entries for " +
                                            std::to_string(rows) + " rows");
      if (leave_one_out) throw invalid_option("fold_of", "cannot be combined with leave_one_out");
      long top = -1;
      for (long f : fold_of) top = std::max(top, f);
      if (top < 1) throw invalid_option("fold_of", "needs at least two folds (numbers 0 and 1)");
    } else if (!leave_one_out && folds < 2) {
      throw invalid_option("folds", "must be >= 2 (got " + std::to_string(folds) + ")");
    }
  }
};

/// One segment of a fold's path on the size-free axis: for mu in
/// [mu_low, mu_high], with t = (mu - mu_low) / (mu_high - mu_low), the
/// held-out mean squared error is (a - 2 b t + c t^2) / held_out_weight.
template <class Scalar>
struct FoldSegment {
  Scalar mu_high{0};  ///< upper end of the segment (size-free penalty of the upper knot)
  Scalar mu_low{0};   ///< lower end (the lower knot), < mu_high
  Scalar a{0};        ///< sum w r^2 of the held-out residuals r at mu_low
  Scalar b{0};        ///< sum w r d, d = change of the predictions from mu_low to mu_high
  Scalar c{0};        ///< sum w d^2
};

/// One fold of a cross-validation.
template <class Scalar>
struct Fold {
  std::vector<Index> held_out;  ///< rows held out (ascending)
  Scalar training_weight{0};    ///< sum of the training rows' weights
  Scalar held_out_weight{0};    ///< W_k
  Scalar scale{0};              ///< penalty_scale of the training data: lambda_fold = mu * scale
  Path<Scalar> path;            ///< path traced on the training rows
  Scalar error_above{0};        ///< held-out MSE for mu >= the first knot (constant)
  std::vector<FoldSegment<Scalar>> segments;  ///< descending in mu, no zero-length ones

  /// The fold's first knot on the size-free axis.
  Scalar mu_max() const { return path.lambda_max() / scale; }
  /// The fold's last knot on the size-free axis (0 for a completed path).
  Scalar mu_min() const { return path.knots().back().penalty / scale; }

  /// Held-out mean squared error e_k(mu) for mu >= mu_min().
  Scalar error_at_mu(const Scalar& mu) const {
    if (segments.empty() || mu >= segments.front().mu_high) return error_above;
    // First segment whose lower end is <= mu (segments descend).
    auto it = std::partition_point(segments.begin(), segments.end(),
                                   [&](const FoldSegment<Scalar>& s) { return s.mu_low > mu; });
    if (it == segments.end()) --it;
    const Scalar t = (mu - it->mu_low) / (it->mu_high - it->mu_low);
    return (it->a - Scalar(2) * it->b * t + it->c * t * t) / held_out_weight;
  }
};

/// One interval of the merged grid: for mu = mu_low + s (mu_high - mu_low),
/// s in [0, 1], the cross-validation error is constant + linear s + quadratic s^2.
template <class Scalar>
struct CurvePiece {
  Scalar mu_high{0};    ///< upper end of the interval (s = 1)
  Scalar mu_low{0};     ///< lower end of the interval (s = 0), < mu_high
  Scalar constant{0};   ///< CV(mu_low)
  Scalar linear{0};     ///< coefficient of s
  Scalar quadratic{0};  ///< coefficient of s^2; >= 0 up to rounding (a sum of squares)

  /// CV error at mu = mu_low + s (mu_high - mu_low), s in [0, 1]; O(1).
  Scalar at(const Scalar& s) const { return constant + s * (linear + s * quadratic); }
};

/// A point of the cross-validation curve; the penalties cross-validation
/// chooses are points of it.
template <class Scalar>
struct CurvePoint {
  Scalar mu{0};              ///< size-free penalty
  Scalar lambda{0};          ///< the full data's penalty at this mu
  Scalar error{0};           ///< CV(mu)
  Scalar standard_error{0};  ///< SE(mu), the standard error of the fold errors
};

/// The curve at one penalty with the repeats' own curves there
/// (CrossValidation::detail_at_mu()).
template <class Scalar>
struct CurveDetail {
  CurvePoint<Scalar> point;          ///< the (averaged) curve and its standard error
  Scalar spread{0};                  ///< standard deviation of the repeats' curves (0 for one repeat)
  std::vector<Scalar> repeat_error;  ///< CV_r(mu) of each repeat r = 0 .. R - 1
};

/// The result of cross_validate(): the folds, the exact curve and the choices.
template <class Scalar>
struct CrossValidation {
  std::vector<long> fold_of;        ///< fold of each row (-1: never held out); of repeat 0 when repeated
  /// In fold order; with R repeats, repeat r's K folds are folds[r K .. r K + K - 1].
  std::vector<Fold<Scalar>> folds;
  std::size_t repeats = 1;          ///< R, the repeats of the fold assignment
  Path<Scalar> full_path;           ///< the path of all the data
  /// The sufficient statistics of all the data when the full path took the
  /// Gram route (choose_storage(): tall tables), from which it was traced;
  /// empty otherwise. The criteria and the entry tests can reuse them
  /// (information_criteria and entry_significance of SufficientStatistics).
  std::optional<SufficientStatistics<Scalar>> statistics;
  Scalar full_scale{0};             ///< penalty_scale of all the data: lambda = mu * full_scale
  Scalar total_weight{0};           ///< W = sum of the held-out weights of all folds
  Scalar mu_high{0};                ///< top of the curve's domain (every fit is empty above it)
  Scalar mu_low{0};                 ///< bottom of the domain (0 unless a path stopped early)
  std::vector<CurvePiece<Scalar>> pieces;  ///< the exact curve, descending in mu
  CurvePoint<Scalar> minimum;              ///< exact global minimizer (the largest mu among ties)
  CurvePoint<Scalar> parsimonious;         ///< largest mu with CV <= CV(min) + SE(min)

  /// CV(mu) for mu >= mu_low (constant above mu_high). Throws invalid_query below the domain.
  Scalar error_at_mu(const Scalar& mu) const { return weighted_error(fold_errors_at_mu(mu)); }
  /// Held-out mean squared error of each fold at mu.
  std::vector<Scalar> fold_errors_at_mu(const Scalar& mu) const {
    check(mu);
    std::vector<Scalar> out;
    out.reserve(folds.size());
    for (const auto& f : folds) out.push_back(f.error_at_mu(mu));
    return out;
  }
  /// SE(mu), the weighted standard error of the fold errors; with repeats,
  /// the mean over repeats of each repeat's SE (see the file comment). With
  /// one repeat the same operations as the single formula: sum / 1 is exact.
  Scalar standard_error_at_mu(const Scalar& mu) const { return detail_at_mu(mu).point.standard_error; }
  /// Folds per repeat, K.
  std::size_t folds_per_repeat() const { return folds.size() / repeats; }
  /// CV_r(mu), the curve of repeat r alone (0 <= r < repeats).
  Scalar repeat_error_at_mu(std::size_t r, const Scalar& mu) const {
    check(mu);
    const std::size_t k = folds_per_repeat();
    std::vector<Scalar> errors;
    errors.reserve(k);
    for (std::size_t i = r * k; i < r * k + k; ++i) errors.push_back(folds[i].error_at_mu(mu));
    return repeat_point(r, errors).first;
  }
  /// The spread of the repeats' curves at mu: the standard deviation of
  /// CV_0(mu), ..., CV_{R-1}(mu) (divisor R - 1); 0 when R = 1.
  Scalar spread_at_mu(const Scalar& mu) const { return detail_at_mu(mu).spread; }
  /// The curve at mu, its standard error, the repeats' curves and their
  /// spread, from each fold's error evaluated once: the numbers of
  /// point_at_mu(), spread_at_mu() and repeat_error_at_mu(), bit for bit
  /// (they are computed here).
  CurveDetail<Scalar> detail_at_mu(const Scalar& mu) const {
    const std::vector<Scalar> errors = fold_errors_at_mu(mu);
    const std::size_t k = folds_per_repeat();
    CurveDetail<Scalar> out;
    out.point.mu = mu;
    out.point.lambda = mu * full_scale;
    out.point.error = weighted_error(errors);
    Scalar standard_errors(0);
    for (std::size_t r = 0; r < repeats; ++r) {
      const auto [mean, standard_error] =
          repeat_point(r, std::span<const Scalar>(errors).subspan(r * k, k));
      out.repeat_error.push_back(mean);
      standard_errors += standard_error;
    }
    out.point.standard_error = standard_errors / Scalar(static_cast<double>(repeats));
    if (repeats > 1) {
      Scalar sum(0);
      for (const Scalar& e : out.repeat_error) {
        const Scalar d = e - out.point.error;
        sum += d * d;
      }
      out.spread = detail::square_root<Scalar>(Scalar(sum / Scalar(static_cast<double>(repeats - 1))));
    }
    return out;
  }
  /// The size-free penalties of the merged knots (descending): the ends of
  /// the curve's pieces.
  std::vector<Scalar> knot_mus() const {
    std::vector<Scalar> out;
    for (const auto& piece : pieces) out.push_back(piece.mu_high);
    if (!pieces.empty()) out.push_back(pieces.back().mu_low);
    return out;
  }
  /// The curve at the merged knots (descending mu): what a chart draws
  /// between exact points.
  std::vector<CurvePoint<Scalar>> knot_points() const {
    std::vector<CurvePoint<Scalar>> out;
    for (const Scalar& mu : knot_mus()) out.push_back(point_at_mu(mu));
    return out;
  }
  /// The curve at one size-free penalty mu.
  CurvePoint<Scalar> point_at_mu(const Scalar& mu) const { return detail_at_mu(mu).point; }
  /// The curve at a penalty lambda of the full data (converted by
  /// full_path.mu_of(), the one conversion).
  CurvePoint<Scalar> point_at_penalty(const Scalar& lambda) const { return point_at_mu(full_path.mu_of(lambda)); }
  /// CV error at a penalty lambda of the full data.
  Scalar error_at_penalty(const Scalar& lambda) const { return error_at_mu(full_path.mu_of(lambda)); }

 /// Throws invalid_query when mu lies below the curve's domain (mu <
  /// mu_low, where a fold path stopped early): every query at mu calls it.
  void check(const Scalar& mu) const {
    if (!(mu >= mu_low))
      throw invalid_query("the size-free penalty lies below the cross-validation curve's domain");
  }

 private:
  // CV(mu) from the folds' errors at mu (in fold order).
  Scalar weighted_error(const std::vector<Scalar>& errors) const {
    Scalar sum(0);
    for (std::size_t f = 0; f < folds.size(); ++f) sum += folds[f].held_out_weight * errors[f];
    return sum / total_weight;
  }
  // Repeat r's CV error CV_r(mu) and SE at mu from its K fold errors: the
  // single-run formulas on its folds.
  std::pair<Scalar, Scalar> repeat_point(std::size_t r, std::span<const Scalar> errors) const {
    const std::size_t k = errors.size();
    Scalar weight(0), sum(0);
    for (std::size_t i = 0; i < k; ++i) {
      weight += folds[r * k + i].held_out_weight;
      sum += folds[r * k + i].held_out_weight * errors[i];
    }
    const Scalar mean = sum / weight;
    Scalar squares(0);
    for (std::size_t i = 0; i < k; ++i) {
      const Scalar d = errors[i] - mean;
      squares += folds[r * k + i].held_out_weight * d * d;
    }
    const Scalar kk(static_cast<double>(k));
    return {mean, detail::square_root<Scalar>(Scalar(squares / weight / (kk - Scalar(1))))};
  }
};

/// How often each predictor is active at one size-free penalty mu across
/// the fold paths of a cross-validation (R K of them) and in the full path:
/// the stability counts of predictor_activity() (see the file comment).
struct PredictorActivity {
  std::size_t fold_paths = 0;                 ///< R K, the fold paths counted
  std::vector<std::size_t> active_in_folds;   ///< per predictor: fold paths with a nonzero coefficient
  std::vector<bool> active_in_full_path;      ///< per predictor: nonzero in the full path
  /// The fraction of fold paths in which predictor j is active:
  /// active_in_folds[j] / fold_paths.
  double fraction(std::size_t j) const {
    return static_cast<double>(active_in_folds.at(j)) / static_cast<double>(fold_paths);
  }
};

/// The stability counts at the size-free penalty mu (>= cv.mu_low, where
/// every fold path is defined): each fold path is read at its own penalty
/// mu * scale and the full path at mu * full_scale (Path::active_at: a
/// nonzero coefficient). O(R K (log knots + p)). Throws invalid_query below
/// the curve's domain.
template <class Scalar>
PredictorActivity predictor_activity(const CrossValidation<Scalar>& cv, const Scalar& mu) {
  cv.check(mu);
  const auto p = static_cast<std::size_t>(cv.full_path.preparation().predictors);
  PredictorActivity out;
  out.fold_paths = cv.folds.size();
  out.active_in_folds.assign(p, 0);
  out.active_in_full_path.assign(p, false);
  for (const auto& f : cv.folds)
    for (Index j : f.path.active_at(Scalar(mu * f.scale))) ++out.active_in_folds[static_cast<std::size_t>(j)];
  for (Index j : cv.full_path.active_at(Scalar(mu * cv.full_scale)))
    out.active_in_full_path[static_cast<std::size_t>(j)] = true;
  return out;
}

namespace detail {

/// Seeded balanced folds over the rows with positive weight: a Fisher-Yates
/// shuffle driven by SplitMix64, then fold = position mod K.
inline std::vector<long> seeded_folds(const std::vector<Index>& usable, Index rows, std::size_t k,
                                      std::uint64_t seed) {
  std::vector<Index> order = usable;
  SplitMix64 rng(seed);
  for (std::size_t i = order.size(); i > 1; --i) {
    // Uniform integer in [0, i) from the top 53 bits: portable and fully specified.
    const auto j = static_cast<std::size_t>(static_cast<double>(rng.next() >> 11) *
                                            (1.0 / 9007199254740992.0) * static_cast<double>(i));
    std::swap(order[i - 1], order[std::min(j, i - 1)]);
  }
  std::vector<long> fold(static_cast<std::size_t>(rows), -1);
  for (std::size_t pos = 0; pos < order.size(); ++pos)
    fold[static_cast<std::size_t>(order[pos])] = static_cast<long>(pos % k);
  return fold;
}

/// The quadratic segments of a traced fold, from the held-out residuals at
/// each of its knots (simultaneous events share a point: no segment). The
/// held-out predictions are made for blocks of knots at once (one matrix
/// product per block: the held-out rows are read once per block, not once
/// per knot).
template <class Scalar>
void build_segments(Fold<Scalar>& fold, const Matrix<Scalar>& x, const Vector<Scalar>& y,
                    const Vector<Scalar>& w) {
  const auto& knots = fold.path.knots();
  const Index m = static_cast<Index>(fold.held_out.size());
  Matrix<Scalar> xv(m, x.cols());
  Vector<Scalar> yv(m), wv(m);
  for (Index r = 0; r < m; ++r) {
    const Index i = fold.held_out[static_cast<std::size_t>(r)];
    yv(r) = y(i);
    wv(r) = w(i);
  }
  for (Index j = 0; j < x.cols(); ++j)  // column by column: x is column-major
    for (Index r = 0; r < m; ++r) xv(r, j) = x(fold.held_out[static_cast<std::size_t>(r)], j);
  constexpr std::size_t knots_per_block = 64;
  std::size_t block_start = 0;
  Matrix<Scalar> fitted;  // xv times the coefficients of knots block_start, block_start + 1, ...
  auto residual = [&](std::size_t knot) {  // knots are asked for in ascending order
    if (fitted.cols() == 0 || knot >= block_start + static_cast<std::size_t>(fitted.cols())) {
      block_start = knot;
      const std::size_t count = std::min(knots_per_block, knots.size() - knot);
      Matrix<Scalar> coefficients(x.cols(), static_cast<Index>(count));
      for (std::size_t c = 0; c < count; ++c)
        coefficients.col(static_cast<Index>(c)) = fold.path.dense_coefficients(knot + c);
      fitted.noalias() = xv * coefficients;
    }
    Vector<Scalar> r = yv - fitted.col(static_cast<Index>(knot - block_start));
    r.array() -= knots[knot].intercept;
    return r;
  };
  Vector<Scalar> upper = residual(0);
  fold.error_above = (wv.array() * upper.array().square()).sum() / fold.held_out_weight;
  for (std::size_t j = 1; j < knots.size(); ++j) {
    if (knots[j].penalty == knots[j - 1].penalty) {
      upper = residual(j);  // a simultaneous event: same point, possibly new rounding
      continue;
    }
    Vector<Scalar> lower = residual(j);
    Vector<Scalar> change = lower - upper;  // prediction at mu_high minus prediction at mu_low
    FoldSegment<Scalar> s;
    s.mu_high = knots[j - 1].penalty / fold.scale;
    s.mu_low = knots[j].penalty / fold.scale;
    s.a = (wv.array() * lower.array().square()).sum();
    s.b = (wv.array() * lower.array() * change.array()).sum();
    s.c = (wv.array() * change.array().square()).sum();
    fold.segments.push_back(s);
    upper.swap(lower);
  }
}

/// Largest error, relative to the held-out sum of squares it concerns, that
/// build_segments_from_statistics() may estimate for a segment's sums
/// before the fold's segments are built from its rows instead.
inline constexpr double segment_sum_tolerance = 1e-8;

/// The same segments from the statistics of the fold's held-out rows
/// (`held_out`), without reading a row: with r = y - b0 - x^T beta,
/// e = ybar - b0 - m^T beta, C, s, S_yy the held-out comoments, cross
/// products and response comoment, and W the held-out weight,
///     sum w r^2 = S_yy - 2 s^T beta + beta^T C beta + W e^2,
/// and for a segment from knot l (below) to u (above), delta = beta_u -
/// beta_l and d0 = e_l - e_u (the change of the predictions is x~^T delta +
/// d0 with x~ the centred row),
///     b = s^T delta - beta_l^T C delta + W e_l d0,  c = delta^T C delta + W d0^2.
/// O(p k) per knot instead of O(m p). The first form cancels when the
/// held-out residuals are small against y's spread: when any knot's
/// rounding estimate (8 u (S_yy + 2 |s^T beta| + beta^T C beta + W e^2))
/// exceeds segment_sum_tolerance times its sum, nothing is built and false
/// is returned (the caller builds from the rows).
template <class Scalar>
bool build_segments_from_statistics(Fold<Scalar>& fold, const SufficientStatistics<Scalar>& held_out) {
  const auto& knots = fold.path.knots();
  const Index p = held_out.predictors();
  const Scalar u = epsilon<Scalar>() / Scalar(2);
  const Scalar w = held_out.weight_sum;
  std::vector<Vector<Scalar>> beta(knots.size()), c_beta(knots.size());
  std::vector<Scalar> sums(knots.size()), residual_mean(knots.size());
  for (std::size_t j = 0; j < knots.size(); ++j) {
    beta[j] = Vector<Scalar>::Zero(p);
    c_beta[j] = Vector<Scalar>::Zero(p);
    for (const auto& [col, value] : knots[j].coefficients) {
      beta[j](col) = value;
      c_beta[j] += value * held_out.comoments.col(col);
    }
    const Scalar e = held_out.response_mean - knots[j].intercept - held_out.means.dot(beta[j]);
    const Scalar cross = held_out.cross.dot(beta[j]), quadratic = beta[j].dot(c_beta[j]);
    residual_mean[j] = e;
    sums[j] = held_out.response_comoment - Scalar(2) * cross + quadratic + w * e * e;
    const Scalar rounding = Scalar(8) * u *
                            (held_out.response_comoment + Scalar(2) * abs_value<Scalar>(cross) + quadratic + w * e * e);
    if (!(rounding <= Scalar(segment_sum_tolerance) * sums[j])) return false;
  }
  fold.error_above = sums[0] / fold.held_out_weight;
  for (std::size_t j = 1; j < knots.size(); ++j) {
    if (knots[j].penalty == knots[j - 1].penalty) continue;  // a simultaneous event: no segment
    std::size_t upper = j - 1;  // the last knot at the upper point (simultaneous events: its latest)
    const Vector<Scalar> delta = beta[upper] - beta[j];
    const Vector<Scalar> c_delta = c_beta[upper] - c_beta[j];
    const Scalar d0 = residual_mean[j] - residual_mean[upper];
    FoldSegment<Scalar> seg;
    seg.mu_high = knots[j - 1].penalty / fold.scale;
    seg.mu_low = knots[j].penalty / fold.scale;
    seg.a = sums[j];
    seg.b = held_out.cross.dot(delta) - beta[j].dot(c_delta) + w * residual_mean[j] * d0;
    seg.c = delta.dot(c_delta) + w * d0 * d0;
    fold.segments.push_back(seg);
  }
  return true;
}

/// A fold before its path is traced: its held-out rows and weight, its
/// training weights (the held-out rows' set to 0) and the options its path
/// is traced with (the size-free rescaling of the file comment).
template <class Scalar>
struct FoldPlan {
  Fold<Scalar> fold;
  Vector<Scalar> training;
  TraceOptions options;
};

/// Sets fold k's training weight and scale and returns the options its
/// path is traced with (the size-free rescaling of the file comment): the
/// one home of that rescaling for the rows route (plan_fold) and the
/// statistics route (cross_validate of FoldParts). Throws invalid_data when
/// the training rows weigh nothing.
template <class Scalar>
TraceOptions fold_trace_options(Fold<Scalar>& fold, long k, const Scalar& training_weight,
                                const TraceOptions& options, const Scalar& full_weight,
                                const Scalar& full_scale) {
  TraceOptions out = options;
  fold.training_weight = training_weight;
  if (!(fold.training_weight > Scalar(0)))
    throw invalid_data("fold " + std::to_string(k) +
                       " leaves no training row with positive weight");
  fold.scale = penalty_scale<Scalar>(options.standardize, fold.training_weight);
  if (!options.standardize && options.ridge != 0.0)
    out.ridge = options.ridge * to_double(Scalar(fold.training_weight / full_weight));
  if (options.min_penalty != 0.0)
    out.min_penalty = options.min_penalty * to_double(Scalar(fold.scale / full_scale));
  return out;
}

template <class Scalar>
FoldPlan<Scalar> plan_fold(const Vector<Scalar>& w, const std::vector<long>& fold_of, long k,
                           const TraceOptions& options, const Scalar& full_weight,
                           const Scalar& full_scale) {
  FoldPlan<Scalar> plan{{}, w, options};
  Fold<Scalar>& fold = plan.fold;
  for (Index i = 0; i < w.size(); ++i)
    if (fold_of[static_cast<std::size_t>(i)] == k) {
      plan.training(i) = Scalar(0);
      if (w(i) > Scalar(0)) {
        fold.held_out.push_back(i);
        fold.held_out_weight += w(i);
      }
    }
  plan.options = fold_trace_options(fold, k, plan.training.sum(), options, full_weight, full_scale);
  return plan;
}

/// Traces fold k on its training rows (the held-out rows get weight 0) and
/// builds its quadratic segments. With `training_statistics` (the
/// statistics of exactly those rows, fold_statistics()) the path is traced
/// from them, as trace() would on the Gram route; else by trace(). With
/// `held_out_statistics` (those of the held-out rows) the segments are
/// built from them when their sums keep segment_sum_tolerance; else from
/// the held-out rows.
template <class Scalar>
Fold<Scalar> trace_fold(const Matrix<Scalar>& x, const Vector<Scalar>& y, const Vector<Scalar>& w,
                        const std::vector<long>& fold_of, long k, const TraceOptions& options,
                        const Scalar& full_weight, const Scalar& full_scale,
                        const SufficientStatistics<Scalar>* training_statistics = nullptr,
                        const SufficientStatistics<Scalar>* held_out_statistics = nullptr) {
  FoldPlan<Scalar> plan = plan_fold(w, fold_of, k, options, full_weight, full_scale);
  if (training_statistics)
    plan.fold.path = trace_rows_statistics(*training_statistics, x.rows(), plan.options);
  else
    plan.fold.path = trace<Scalar>(x, y, plan.options, plan.training);
  if (!held_out_statistics || !build_segments_from_statistics(plan.fold, *held_out_statistics))
    build_segments(plan.fold, x, y, w);
  return std::move(plan.fold);
}

/// Largest s in [0, 1] with q(s) <= threshold, if any.
///
/// With positive curvature q(s) <= threshold exactly on the interval between
/// the two roots; that interval must meet [0, 1]. When it lies wholly above
/// s = 1 (the curve of this piece, continued past its upper end, would dip
/// under the threshold) the piece holds no such s: the continuation belongs
/// to no piece (RELIABILITY.md, "parsimonious choice above its threshold").
template <class Scalar>
std::optional<Scalar> largest_at_most(const CurvePiece<Scalar>& q, const Scalar& threshold) {
  if (q.at(Scalar(1)) <= threshold) return Scalar(1);
  const Scalar c0 = q.constant - threshold, c1 = q.linear, c2 = q.quadratic;
  std::optional<Scalar> root;
  if (c2 > Scalar(0)) {
    const Scalar disc = c1 * c1 - Scalar(4) * c2 * c0;
    if (disc < Scalar(0)) return std::nullopt;
    // Stable roots of c2 s^2 + c1 s + c0.
    const Scalar sq = square_root<Scalar>(disc);
    const Scalar h = Scalar(-0.5) * (c1 + (c1 >= Scalar(0) ? sq : Scalar(-sq)));
    Scalar r1 = h / c2;
    Scalar r2 = h != Scalar(0) ? Scalar(c0 / h) : r1;
    if (std::min(r1, r2) > Scalar(1)) return std::nullopt;  // the dip lies above the piece
    root = std::max(r1, r2);
  } else if (c1 > Scalar(0)) {
    root = -c0 / c1;
  } else {
    return q.at(Scalar(0)) <= threshold ? std::optional<Scalar>(Scalar(0)) : std::nullopt;
  }
  if (*root < Scalar(0))
    return q.at(Scalar(0)) <= threshold ? std::optional<Scalar>(Scalar(0)) : std::nullopt;
  if (*root > Scalar(1)) root = Scalar(1);
  return root;
}

}  // namespace detail

/// The fold of each row that cross_validate() would use with these options
/// (rows of weight 0 are never held out: -1).
template <class Scalar>
std::vector<long> make_folds(Index rows, const CrossValidationOptions& cv,
                             const Vector<Scalar>& weights = Vector<Scalar>()) {
  cv.validate(rows);
  if (!cv.fold_of.empty()) return cv.fold_of;
  std::vector<Index> usable;
  for (Index i = 0; i < rows; ++i)
    if (weights.size() == 0 || weights(i) > Scalar(0)) usable.push_back(i);
  const std::size_t k = cv.leave_one_out ? usable.size() : cv.folds;
  if (k > usable.size() || k < 2)
    throw invalid_option(cv.leave_one_out ? "leave_one_out" : "folds",
                         "needs between 2 and " + std::to_string(usable.size()) +
                             " folds (the rows with positive weight), got " + std::to_string(k));
  if (cv.leave_one_out) {
    std::vector<long> fold(static_cast<std::size_t>(rows), -1);
    for (std::size_t pos = 0; pos < usable.size(); ++pos)
      fold[static_cast<std::size_t>(usable[pos])] = static_cast<long>(pos);
    return fold;
  }
  return detail::seeded_folds(usable, rows, k, cv.seed);
}

namespace detail {

/// The number of folds K of an assignment. Throws invalid_option when a
/// fold holds no row with positive weight.
template <class Scalar>
std::size_t checked_fold_count(const std::vector<long>& fold_of, const Vector<Scalar>& w) {
  long top = -1;
  for (long f : fold_of) top = std::max(top, f);
  const std::size_t k = static_cast<std::size_t>(top + 1);
  std::vector<char> seen(k, 0);
  for (std::size_t i = 0; i < fold_of.size(); ++i) {
    const long f = fold_of[i];
    if (f >= 0 && w(static_cast<Index>(i)) > Scalar(0)) seen[static_cast<std::size_t>(f)] = 1;
  }
  for (std::size_t f = 0; f < k; ++f)
    if (!seen[f])
      throw invalid_option("fold_of",
                           "fold " + std::to_string(f) + " holds no row with positive weight");
  return k;
}

/// Memory the fold statistics of fold_statistics() may take (bytes):
/// K + 1 parts and one training set per thread, p x p each.
inline constexpr double fold_statistics_budget = 1073741824.0;

/// Bytes the fold statistics of K folds take while they are formed and
/// traced on `threads` threads: K + 1 parts and one training set per
/// thread, p x p each (the measure fold_statistics_budget bounds).
template <class Scalar>
double fold_statistics_bytes(std::size_t k, std::size_t threads, Index p) {
  const double matrices = static_cast<double>(k + 1 + threads);
  return matrices * static_cast<double>(p) * static_cast<double>(p) * static_cast<double>(sizeof(Scalar));
}

/// Whether the folds are traced from statistics (fold_statistics()): when
/// trace() would take the Gram route on the whole table (choose_storage(),
/// the same choice for every fold: the folds keep every row, with weight 0
/// for the held-out ones) and the statistics fit in fold_statistics_budget.
/// Cost then: one O(n p^2) pass for all the folds' statistics and O(K^2 p^2)
/// to merge them, against K passes of O(n p^2) when each fold forms its own
/// Gram matrix.
template <class Scalar>
bool folds_by_statistics(Index n, Index p, std::size_t k, std::size_t threads,
                         const TraceOptions& options) {
  return choose_storage<Scalar>(n, p, options) == Storage::gram &&
         fold_statistics_bytes<Scalar>(k, threads, p) <= fold_statistics_budget;
}

/// The statistics of each fold's rows (parts 0..K-1) and of the rows never
/// held out (part K: fold_of < 0 with positive weight; empty when none),
/// each from the rows in ascending order (SufficientStatistics::from_rows
/// with the other rows' weights set to 0), on up to `threads` threads.
template <class Scalar>
std::vector<SufficientStatistics<Scalar>> fold_statistics(const Matrix<Scalar>& x, const Vector<Scalar>& y,
                                                          const Vector<Scalar>& w,
                                                          const std::vector<long>& fold_of,
                                                          std::size_t k, std::size_t threads) {
  std::vector<SufficientStatistics<Scalar>> parts(k + 1);
  detail::for_each_task(k + 1, threads, [&](std::size_t f) {
    const long part = f == k ? -1 : static_cast<long>(f);
    Vector<Scalar> mask = w;
    for (Index i = 0; i < w.size(); ++i) {
      const long of = fold_of[static_cast<std::size_t>(i)];
      if ((part < 0 ? of >= 0 : of != part)) mask(i) = Scalar(0);
    }
    parts[f] = SufficientStatistics<Scalar>::from_rows(x, y, mask);
  });
  return parts;
}

/// The statistics of fold f's training rows: every part but f, merged in
/// ascending order (Chan, Golub & LeVeque's update; the order is fixed, so
/// the result does not depend on the thread count).
template <class Scalar>
SufficientStatistics<Scalar> training_statistics(const std::vector<SufficientStatistics<Scalar>>& parts,
                                                 std::size_t f, Index p) {
  SufficientStatistics<Scalar> training = SufficientStatistics<Scalar>::empty(p);
  for (std::size_t j = 0; j < parts.size(); ++j)
    if (j != f) training.merge(parts[j]);
  return training;
}

/// Traces the k folds of the assignment `fold_of` (cv's full path already set) with
/// `threads` threads (0: the hardware's count); nothing depends on the
/// count, and the first failure in fold order is rethrown. On the Gram
/// route the folds are traced from statistics (folds_by_statistics()): the
/// same problems as trace() on the training rows, rounded differently (the
/// training rows' products are summed fold by fold and merged, not block by
/// block).
template <class Scalar>
std::vector<Fold<Scalar>> trace_folds(const Matrix<Scalar>& x, const Vector<Scalar>& y,
                                      const Vector<Scalar>& w, const CrossValidation<Scalar>& cv,
                                      const std::vector<long>& fold_of, std::size_t k,
                                      const TraceOptions& options, std::size_t threads) {
  std::vector<Fold<Scalar>> folds(k);
  const Scalar full_weight = cv.full_path.preparation().weight_sum;
  threads = std::min(resolve_threads(threads), k);
  TraceOptions fold_options = options;
  if (threads > 1) fold_options.threads = 1;  // folds in parallel: no threads inside a fold
  std::vector<SufficientStatistics<Scalar>> parts;
  if (folds_by_statistics<Scalar>(x.rows(), x.cols(), k, threads, options))
    parts = fold_statistics(x, y, w, fold_of, k, threads);
  detail::for_each_task(k, threads, [&](std::size_t f) {
    if (parts.empty()) {
      folds[f] = trace_fold<Scalar>(x, y, w, fold_of, static_cast<long>(f), fold_options,
                                    full_weight, cv.full_scale);
    } else {
      const SufficientStatistics<Scalar> training = training_statistics(parts, f, x.cols());
      folds[f] = trace_fold<Scalar>(x, y, w, fold_of, static_cast<long>(f), fold_options,
                                    full_weight, cv.full_scale, &training, &parts[f]);
    }
  });
  return folds;
}

/// Sets the curve's domain [mu_low, mu_high] and the total held-out weight
/// from the full path and the folds. Every fit is empty above mu_high; below
/// the last knot of any path that stopped early nothing is known.
template <class Scalar>
void set_domain(CrossValidation<Scalar>& cv) {
  cv.total_weight = Scalar(0);
  cv.mu_high = cv.full_path.lambda_max() / cv.full_scale;
  cv.mu_low = cv.full_path.stopped_early()
                  ? Scalar(cv.full_path.knots().back().penalty / cv.full_scale)
                  : Scalar(0);
  for (const auto& f : cv.folds) {
    cv.total_weight += f.held_out_weight;
    cv.mu_high = std::max<Scalar>(cv.mu_high, f.mu_max());
    cv.mu_low = std::max<Scalar>(cv.mu_low, f.mu_min());
  }
}

/// Every fold's knots inside the domain and its two ends, descending, without repeats.
template <class Scalar>
std::vector<Scalar> merged_grid(const CrossValidation<Scalar>& cv) {
  std::vector<Scalar> grid{cv.mu_high, cv.mu_low};
  for (const auto& f : cv.folds)
    for (const auto& s : f.segments)
      for (const Scalar& m : {s.mu_high, s.mu_low})
        if (m > cv.mu_low && m < cv.mu_high) grid.push_back(m);
  std::sort(grid.begin(), grid.end(), [](const Scalar& a, const Scalar& b) { return a > b; });
  grid.erase(std::unique(grid.begin(), grid.end()), grid.end());
  return grid;
}

/// One quadratic per interval of the descending grid: the sum over folds of
/// (W_k / W) e_k, each e_k re-expressed in s = (mu - lo) / (hi - lo). A
/// pointer per fold walks down its segments as the intervals descend.
template <class Scalar>
std::vector<CurvePiece<Scalar>> curve_pieces(const std::vector<Fold<Scalar>>& folds,
                                             const Scalar& total_weight,
                                             const std::vector<Scalar>& grid) {
  std::vector<CurvePiece<Scalar>> pieces;
  std::vector<std::size_t> at(folds.size(), 0);
  for (std::size_t g = 0; g + 1 < grid.size(); ++g) {
    CurvePiece<Scalar> piece;
    piece.mu_high = grid[g];
    piece.mu_low = grid[g + 1];
    const Scalar width = piece.mu_high - piece.mu_low;
    for (std::size_t f = 0; f < folds.size(); ++f) {
      const Fold<Scalar>& fold = folds[f];
      const Scalar share = fold.held_out_weight / total_weight;
      const auto& segs = fold.segments;
      while (at[f] < segs.size() && segs[at[f]].mu_low >= piece.mu_high) ++at[f];
      if (segs.empty() || (at[f] == 0 && piece.mu_low >= segs.front().mu_high)) {
        piece.constant += share * fold.error_above;
        continue;
      }
      const FoldSegment<Scalar>& s = segs[std::min(at[f], segs.size() - 1)];
      const Scalar span = s.mu_high - s.mu_low;
      const Scalar t0 = (piece.mu_low - s.mu_low) / span;
      const Scalar dt = width / span;
      const Scalar scale = share / fold.held_out_weight;
      piece.constant += scale * (s.a - Scalar(2) * s.b * t0 + s.c * t0 * t0);
      piece.linear += scale * Scalar(2) * dt * (s.c * t0 - s.b);
      piece.quadratic += scale * s.c * dt * dt;
    }
    pieces.push_back(piece);
  }
  return pieces;
}

/// The exact global minimum of the curve: each piece's ends and stationary
/// point, scanned from the largest mu (ties keep the larger mu).
template <class Scalar>
CurvePoint<Scalar> curve_minimum(const CrossValidation<Scalar>& cv) {
  Scalar best_mu = cv.mu_high, best = std::numeric_limits<Scalar>::infinity();
  for (const auto& piece : cv.pieces) {
    auto consider = [&](const Scalar& s) {
      const Scalar v = piece.at(s);
      if (v < best) {
        best = v;
        best_mu = piece.mu_low + s * (piece.mu_high - piece.mu_low);
      }
    };
    consider(Scalar(1));
    if (piece.quadratic > Scalar(0)) {
      const Scalar s = -piece.linear / (Scalar(2) * piece.quadratic);
      if (s > Scalar(0) && s < Scalar(1)) consider(s);
    }
    consider(Scalar(0));
  }
  if (cv.pieces.empty()) best = cv.error_at_mu(best_mu);  // a one-point domain
  return {best_mu, Scalar(best_mu * cv.full_scale), best, cv.standard_error_at_mu(best_mu)};
}

/// The largest mu with CV(mu) <= CV(min) + SE(min) (cv.minimum set).
template <class Scalar>
CurvePoint<Scalar> parsimonious_choice(const CrossValidation<Scalar>& cv) {
  const Scalar threshold = cv.minimum.error + cv.minimum.standard_error;
  for (const auto& piece : cv.pieces) {
    if (piece.mu_high < cv.minimum.mu) break;
    if (auto s = largest_at_most(piece, threshold)) {
      const Scalar mu =
          std::max<Scalar>(cv.minimum.mu, piece.mu_low + *s * (piece.mu_high - piece.mu_low));
      return cv.point_at_mu(mu);
    }
  }
  return cv.minimum;
}

/// Once the full path and the folds are set: the domain, the exact curve,
/// its minimum and the parsimonious choice (both routes of cross_validate).
template <class Scalar>
void finish_curve(CrossValidation<Scalar>& cv) {
  set_domain(cv);
  cv.pieces = curve_pieces(cv.folds, cv.total_weight, merged_grid(cv));
  cv.minimum = curve_minimum(cv);
  cv.parsimonious = parsimonious_choice(cv);
}

}  // namespace detail

/// Exact K-fold cross-validation of the path of y on x (see the file
/// comment). Every fold is traced with `options` on its training rows
/// (weights of held-out rows set to 0). Throws invalid_option, invalid_data.
/// Cost: on the Gram route (tall designs, folds_by_statistics()) two
/// O(n p^2) passes over the rows (the full data's statistics, kept in
/// CrossValidation::statistics, and every fold's), then per fold an O(K p^2)
/// merge, a trace from statistics and O(p k) per knot for its segments;
/// otherwise K path traces from the rows (in parallel with cv.threads).
/// Plus O(K^2 knots) for the curve; memory: the K paths (and K + 1 + T
/// p x p statistics on the Gram route). With cv.repeats = R every fold
/// cost is paid R times (R K fold paths, R passes for the folds'
/// statistics) and the curve costs O(R^2 K^2 knots).
template <class Scalar>
CrossValidation<Scalar> cross_validate(const Matrix<Scalar>& x, const Vector<Scalar>& y,
                                       const TraceOptions& options,
                                       const CrossValidationOptions& cv,
                                       const Vector<Scalar>& weights = Vector<Scalar>()) {
  static_assert(!detail::is_exact_v<Scalar>,
                "cross-validation needs square roots (the size-free penalty): use a floating type");
  const Index n = x.rows();
  if (weights.size() != 0 && weights.size() != n)
    throw invalid_data("there are " + std::to_string(weights.size()) + " weights for " +
                       std::to_string(n) + " rows");
  CrossValidation<Scalar> result;
  if (choose_storage<Scalar>(n, x.cols(), options) == Storage::gram) {  // as trace(), keeping the statistics
    options.validate(static_cast<std::size_t>(x.cols()));
    result.full_path = detail::trace_rows_gram(x, y, options, weights, &result.statistics);
  } else {
    result.full_path = trace<Scalar>(x, y, options, weights);  // validates options and data
  }
  result.full_scale = penalty_scale(result.full_path.preparation());
  result.fold_of = make_folds<Scalar>(n, cv, weights);
  const Vector<Scalar> w = weights.size() == 0 ? Vector<Scalar>(Vector<Scalar>::Ones(n)) : weights;
  const std::size_t k = detail::checked_fold_count(result.fold_of, w);
  result.folds = detail::trace_folds(x, y, w, result, result.fold_of, k, options, cv.threads);
  result.repeats = cv.repeats;
  for (std::size_t r = 1; r < cv.repeats; ++r) {  // repeat r: the folds of seed + r
    CrossValidationOptions again = cv;
    again.seed = repeat_seed(cv.seed, r);
    const std::vector<long> fold_of = make_folds<Scalar>(n, again, weights);
    std::vector<Fold<Scalar>> more = detail::trace_folds(x, y, w, result, fold_of, k, options, cv.threads);
    for (auto& f : more) result.folds.push_back(std::move(f));
  }
  detail::finish_curve(result);
  return result;
}

/// The statistics a cross-validation needs, with no row kept: those of each
/// fold's rows, of the rows never held out, and (optionally) of all the
/// rows. FoldStatisticsAccumulator makes them from rows streamed once.
template <class Scalar>
struct FoldParts {
  /// Statistics of each fold's rows, folds 0..K-1 (K >= 2).
  std::vector<SufficientStatistics<Scalar>> folds;
  /// Statistics of the rows never held out (weight_sum 0 when there are none).
  SufficientStatistics<Scalar> never_held_out;
  /// Statistics of all the rows as trace() forms them (one accumulator over
  /// every row); empty: the parts merged in order (folds, then the rows
  /// never held out), which rounds differently.
  std::optional<SufficientStatistics<Scalar>> full;
  /// Rows of the table, weight-0 rows included (Preparation::observations).
  Index observations = 0;
};

/// The per-fold statistics of rows streamed in pieces of any size (one
/// pass, memory independent of the number of rows: K + 2 accumulators of
/// one block and p x p each). Each row goes to its fold's accumulator; the
/// other parts skip it (StatisticsAccumulator::skip), so every part's blocks
/// have the boundaries of the whole table and finish() returns, bit for
/// bit, what fold_statistics() forms from the rows in memory (each part is
/// from_rows() with the other rows weighing 0), and `full` what trace()
/// forms from all of them. Fold numbers are any whole numbers: those >= 0
/// are the folds, in ascending order (a fold column's labels), negative
/// ones the rows never held out. Not thread-safe.
template <class Scalar>
class FoldStatisticsAccumulator {
 public:
  /// Rows with `predictors` columns; `weighted`: each add() gives weights.
  FoldStatisticsAccumulator(Index predictors, bool weighted)
      : predictors_(predictors), weighted_(weighted), full_(predictors, weighted) {}

  /// Adds rows x (m x p), responses y and (weighted) weights w, with each
  /// row's fold number in `fold` (m entries). Throws invalid_data as
  /// StatisticsAccumulator::add does.
  template <class Derived>
  void add(const Eigen::MatrixBase<Derived>& x, const Vector<Scalar>& y, const Vector<Scalar>& w,
           const std::vector<long>& fold) {
    if (static_cast<Index>(fold.size()) != x.rows())
      throw invalid_data("fold numbers for " + std::to_string(fold.size()) + " rows added with " +
                         std::to_string(x.rows()));
    full_.add(x, y, w);  // checks the values and the sizes first
    for (Index i = 0; i < x.rows();) {  // runs of rows of one fold
      Index j = i + 1;
      while (j < x.rows() && fold[static_cast<std::size_t>(j)] == fold[static_cast<std::size_t>(i)]) ++j;
      const long f = fold[static_cast<std::size_t>(i)];
      Part& part = part_of(f < 0 ? -1 : f);
      part.statistics.skip(rows_ + i - part.seen);
      const Vector<Scalar> weights = weighted_ ? Vector<Scalar>(w.segment(i, j - i))
                                               : Vector<Scalar>(Vector<Scalar>::Ones(j - i));
      part.statistics.add(x.middleRows(i, j - i), y.segment(i, j - i), weights);
      part.seen = rows_ + j;
      i = j;
    }
    rows_ += x.rows();
  }

  /// Number of folds seen so far (fold numbers >= 0).
  std::size_t folds() const { return parts_.size() - parts_.count(-1); }

  /// The parts of every row added; the accumulator takes no rows after it.
  /// Throws invalid_data for no rows or the magnitudes trace() refuses.
  FoldParts<Scalar> finish() {
    FoldParts<Scalar> out;
    out.full = full_.finish();
    out.observations = static_cast<Index>(rows_);
    out.never_held_out = SufficientStatistics<Scalar>::empty(predictors_);
    for (auto& [f, part] : parts_) {  // ascending fold number: the folds' order
      part.statistics.skip(rows_ - part.seen);
      if (f < 0)
        out.never_held_out = finish_part(part);
      else
        out.folds.push_back(finish_part(part));
    }
    return out;
  }

 private:
  struct Part {
    StatisticsAccumulator<Scalar> statistics;
    Index seen = 0;  // rows added or skipped
  };

  Part& part_of(long f) {
    auto it = parts_.find(f);
    if (it == parts_.end()) it = parts_.emplace(f, Part{StatisticsAccumulator<Scalar>(predictors_, true), 0}).first;
    return it->second;
  }

  // A part's statistics without the whole data's magnitude checks (full_
  // made them; a part's rows are some of its rows, and a column tiny on
  // them alone is no reason to refuse). A part whose rows all weigh 0 is
  // empty, as from_rows() gives it; any other refusal propagates.
  SufficientStatistics<Scalar> finish_part(Part& part) {
    SufficientStatistics<Scalar> s = part.statistics.finish_part_of_checked_whole();
    if (s.rows == 0) return SufficientStatistics<Scalar>::empty(predictors_);
    return s;
  }

  Index predictors_;
  bool weighted_;
  StatisticsAccumulator<Scalar> full_;
  std::map<long, Part> parts_;
  Index rows_ = 0;
};

/// Exact cross-validation from statistics alone (FoldParts: no row is
/// read). The full path is traced from parts.full (else from the parts
/// merged in order), fold f's path from every part but f merged in
/// ascending order (training_statistics()) and its segments from part f
/// (build_segments_from_statistics()), with the rescaled options of the
/// rows route: given the parts fold_statistics() forms, the result is the
/// rows route's on the Gram route (folds_by_statistics()) bit for bit when
/// every weight is 1 (the weight sums are then exact in either order); with
/// other weights the folds' weights are summed in another order, so the
/// result agrees to rounding. Where the rows route builds a fold's segments
/// from its held-out rows (their sums from the statistics lose
/// segment_sum_tolerance: held-out residuals tiny against the response's
/// spread) this route has no rows and refuses: invalid_data naming the
/// fold. The folds hold no row indices (Fold::held_out and
/// CrossValidation::fold_of are empty); one assignment only (repeats = 1).
/// Throws invalid_option for fewer than two folds or a fold of no positive
/// weight. Cost: O(K^2 p^2) merges, K + 1 traces from statistics, O(p k)
/// per knot; no O(n) term.
template <class Scalar>
CrossValidation<Scalar> cross_validate(const FoldParts<Scalar>& parts, const TraceOptions& options,
                                       std::size_t threads = 1) {
  static_assert(!detail::is_exact_v<Scalar>,
                "cross-validation needs square roots (the size-free penalty): use a floating type");
  const std::size_t k = parts.folds.size();
  if (k < 2) throw invalid_option("fold_of", "needs at least two folds (numbers 0 and 1)");
  for (std::size_t f = 0; f < k; ++f)
    if (!(parts.folds[f].weight_sum > Scalar(0)))
      throw invalid_option("fold_of", "fold " + std::to_string(f) + " holds no row with positive weight");
  const Index p = parts.folds.front().predictors();
  std::vector<SufficientStatistics<Scalar>> all = parts.folds;  // K + 1 parts, as fold_statistics()
  all.push_back(parts.never_held_out);
  options.validate(static_cast<std::size_t>(p));
  CrossValidation<Scalar> result;
  result.statistics = parts.full ? *parts.full : detail::training_statistics(all, all.size(), p);
  result.full_path = detail::trace_rows_statistics(*result.statistics, parts.observations, options);
  result.full_scale = penalty_scale(result.full_path.preparation());
  const Scalar full_weight = result.full_path.preparation().weight_sum;
  result.folds.resize(k);
  threads = std::min(detail::resolve_threads(threads), k);
  TraceOptions fold_options = options;
  if (threads > 1) fold_options.threads = 1;  // folds in parallel: no threads inside a fold
  detail::for_each_task(k, threads, [&](std::size_t f) {
    Fold<Scalar>& fold = result.folds[f];
    const SufficientStatistics<Scalar> training = detail::training_statistics(all, f, p);
    const TraceOptions traced = detail::fold_trace_options(fold, static_cast<long>(f), training.weight_sum,
                                                           fold_options, full_weight, result.full_scale);
    fold.held_out_weight = parts.folds[f].weight_sum;
    fold.path = detail::trace_rows_statistics(training, parts.observations, traced);
    if (!detail::build_segments_from_statistics(fold, parts.folds[f]))
      throw invalid_data("fold " + std::to_string(f) +
                         ": its held-out error cannot be formed from its statistics to the "
                         "tolerance the rows route keeps (the held-out residuals are tiny against the "
                         "response's spread); cross-validate from the rows");
  });
  detail::finish_curve(result);
  return result;
}

}  // namespace knotpath
