#pragma once
/// \file cross_validation.hpp
/// \brief Choosing a penalty by exact K-fold (or leave-one-out)
/// cross-validation: the folds, the exact curve and the penalty choices.
///
/// Reference:
///  - T. Hastie, R. Tibshirani & J. Friedman, The Elements of Statistical
///    Learning (2nd ed., 2009), section 7.10 (K-fold cross-validation, the
///    standard error of the fold errors and the one-standard-error rule).
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
/// Exact cross-validation. Each fold's path is traced on its training rows.
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

#include <algorithm>
#include <cstdint>
#include <exception>
#include <limits>
#include <optional>
#include <string>
#include <thread>
#include <utility>
#include <vector>

#include "detail/random.hpp"
#include "detail/scalar.hpp"
#include "errors.hpp"
#include "options.hpp"
#include "path.hpp"
#include "prepare.hpp"
#include "trace.hpp"

namespace knotpath {

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

  /// Checks the fields against the number of rows; throws invalid_option.
  void validate(Index rows) const {
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

/// The result of cross_validate(): the folds, the exact curve and the choices.
template <class Scalar>
struct CrossValidation {
  std::vector<long> fold_of;        ///< fold of each row (-1: never held out)
  std::vector<Fold<Scalar>> folds;  ///< in fold order
  Path<Scalar> full_path;           ///< the path of all the data
  Scalar full_scale{0};             ///< penalty_scale of all the data: lambda = mu * full_scale
  Scalar total_weight{0};           ///< W = sum of the held-out weights of all folds
  Scalar mu_high{0};                ///< top of the curve's domain (every fit is empty above it)
  Scalar mu_low{0};                 ///< bottom of the domain (0 unless a path stopped early)
  std::vector<CurvePiece<Scalar>> pieces;  ///< the exact curve, descending in mu
  CurvePoint<Scalar> minimum;              ///< exact global minimizer (the largest mu among ties)
  CurvePoint<Scalar> parsimonious;         ///< largest mu with CV <= CV(min) + SE(min)

  /// CV(mu) for mu >= mu_low (constant above mu_high). Throws invalid_query below the domain.
  Scalar error_at_mu(const Scalar& mu) const {
    check(mu);
    Scalar sum(0);
    for (const auto& f : folds) sum += f.held_out_weight * f.error_at_mu(mu);
    return sum / total_weight;
  }
  /// Held-out mean squared error of each fold at mu.
  std::vector<Scalar> fold_errors_at_mu(const Scalar& mu) const {
    check(mu);
    std::vector<Scalar> out;
    out.reserve(folds.size());
    for (const auto& f : folds) out.push_back(f.error_at_mu(mu));
    return out;
  }
  /// SE(mu), the weighted standard error of the fold errors.
  Scalar standard_error_at_mu(const Scalar& mu) const {
    const Scalar mean = error_at_mu(mu);
    Scalar sum(0);
    for (const auto& f : folds) {
      const Scalar d = f.error_at_mu(mu) - mean;
      sum += f.held_out_weight * d * d;
    }
    const Scalar k(static_cast<double>(folds.size()));
    return detail::square_root<Scalar>(Scalar(sum / total_weight / (k - Scalar(1))));
  }
  /// The curve at the merged knots (descending mu): what a chart draws
  /// between exact points.
  std::vector<CurvePoint<Scalar>> knot_points() const {
    std::vector<CurvePoint<Scalar>> out;
    for (const auto& piece : pieces) out.push_back(point_at_mu(piece.mu_high));
    if (!pieces.empty()) out.push_back(point_at_mu(pieces.back().mu_low));
    return out;
  }
  /// The curve at one size-free penalty mu.
  CurvePoint<Scalar> point_at_mu(const Scalar& mu) const {
    return {mu, Scalar(mu * full_scale), error_at_mu(mu), standard_error_at_mu(mu)};
  }
  /// The curve at a penalty lambda of the full data (converted by
  /// full_path.mu_of(), the one conversion).
  CurvePoint<Scalar> point_at_penalty(const Scalar& lambda) const { return point_at_mu(full_path.mu_of(lambda)); }
  /// CV error at a penalty lambda of the full data.
  Scalar error_at_penalty(const Scalar& lambda) const { return error_at_mu(full_path.mu_of(lambda)); }

 private:
  void check(const Scalar& mu) const {
    if (!(mu >= mu_low))
      throw invalid_query("the size-free penalty lies below the cross-validation curve's domain");
  }
};

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
/// each of its knots (simultaneous events share a point: no segment).
template <class Scalar>
void build_segments(Fold<Scalar>& fold, const Matrix<Scalar>& x, const Vector<Scalar>& y,
                    const Vector<Scalar>& w) {
  const auto& knots = fold.path.knots();
  const Index m = static_cast<Index>(fold.held_out.size());
  Matrix<Scalar> xv(m, x.cols());
  Vector<Scalar> yv(m), wv(m);
  for (Index r = 0; r < m; ++r) {
    const Index i = fold.held_out[static_cast<std::size_t>(r)];
    xv.row(r) = x.row(i);
    yv(r) = y(i);
    wv(r) = w(i);
  }
  auto residual = [&](std::size_t knot) {
    Vector<Scalar> r = yv - xv * fold.path.dense_coefficients(knot);
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

/// Traces fold k on its training rows (the held-out rows get weight 0) and
/// builds its quadratic segments.
template <class Scalar>
Fold<Scalar> trace_fold(const Matrix<Scalar>& x, const Vector<Scalar>& y, const Vector<Scalar>& w,
                        const std::vector<long>& fold_of, long k, const TraceOptions& options,
                        const Scalar& full_weight, const Scalar& full_scale) {
  Fold<Scalar> fold;
  const Index n = x.rows();
  Vector<Scalar> training = w;
  for (Index i = 0; i < n; ++i)
    if (fold_of[static_cast<std::size_t>(i)] == k) {
      training(i) = Scalar(0);
      if (w(i) > Scalar(0)) {
        fold.held_out.push_back(i);
        fold.held_out_weight += w(i);
      }
    }
  TraceOptions fold_options = options;
  fold.training_weight = training.sum();
  if (!(fold.training_weight > Scalar(0)))
    throw invalid_data("fold " + std::to_string(k) +
                       " leaves no training row with positive weight");
  fold.scale = penalty_scale<Scalar>(options.standardize, fold.training_weight);
  if (!options.standardize && options.ridge != 0.0)
    fold_options.ridge = options.ridge * to_double(Scalar(fold.training_weight / full_weight));
  if (options.min_penalty != 0.0)
    fold_options.min_penalty = options.min_penalty * to_double(Scalar(fold.scale / full_scale));
  fold.path = trace<Scalar>(x, y, fold_options, training);
  build_segments(fold, x, y, w);
  return fold;
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

/// Traces the k folds of `cv` (its full path and fold_of already set) with
/// `threads` threads (0: the hardware's count). Fold f is traced by thread
/// f mod T, so nothing depends on T; the first failure in fold order is
/// rethrown.
template <class Scalar>
std::vector<Fold<Scalar>> trace_folds(const Matrix<Scalar>& x, const Vector<Scalar>& y,
                                      const Vector<Scalar>& w, const CrossValidation<Scalar>& cv,
                                      std::size_t k, const TraceOptions& options,
                                      std::size_t threads) {
  std::vector<Fold<Scalar>> folds(k);
  std::vector<std::exception_ptr> failure(k);
  const Scalar full_weight = cv.full_path.preparation().weight_sum;
  if (threads == 0) threads = std::max(1u, std::thread::hardware_concurrency());
  threads = std::min(threads, k);
  TraceOptions fold_options = options;
  if (threads > 1) fold_options.threads = 1;  // folds in parallel: no threads inside a fold
  auto work = [&](std::size_t first) {
    for (std::size_t f = first; f < k; f += threads) {
      try {
        folds[f] = trace_fold<Scalar>(x, y, w, cv.fold_of, static_cast<long>(f), fold_options,
                                      full_weight, cv.full_scale);
      } catch (...) {
        failure[f] = std::current_exception();
      }
    }
  };
  if (threads <= 1) {
    work(0);
  } else {
    std::vector<std::thread> pool;
    for (std::size_t t = 0; t < threads; ++t) pool.emplace_back(work, t);
    for (auto& t : pool) t.join();
  }
  for (const auto& e : failure)
    if (e) std::rethrow_exception(e);
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

}  // namespace detail

/// Exact K-fold cross-validation of the path of y on x (see the file
/// comment). Every fold is traced with `options` on its training rows
/// (weights of held-out rows set to 0). Throws invalid_option, invalid_data.
/// Cost: K path traces (in parallel with cv.threads) plus O(K^2 knots) for
/// the merge; memory: the K paths.
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
  result.full_path = trace<Scalar>(x, y, options, weights);  // validates options and data
  result.full_scale = penalty_scale(result.full_path.preparation());
  result.fold_of = make_folds<Scalar>(n, cv, weights);
  const Vector<Scalar> w = weights.size() == 0 ? Vector<Scalar>(Vector<Scalar>::Ones(n)) : weights;
  const std::size_t k = detail::checked_fold_count(result.fold_of, w);
  result.folds = detail::trace_folds(x, y, w, result, k, options, cv.threads);
  detail::set_domain(result);
  result.pieces =
      detail::curve_pieces(result.folds, result.total_weight, detail::merged_grid(result));
  result.minimum = detail::curve_minimum(result);
  result.parsimonious = detail::parsimonious_choice(result);
  return result;
}

}  // namespace knotpath
