#pragma once
/// \file path.hpp
/// \brief The traced path: its knots (one row per event), the audit of
/// events, and exact queries at any penalty, L1 budget or fraction of the
/// final L1 norm, plus predictions.
///
/// Between consecutive knots every coefficient (and the intercept) is an
/// affine function of the penalty, so linear interpolation between the two
/// surrounding knots is exact. Coefficients are on the original scale of the
/// data; the L1 norm is the penalized one, sum_j f_j s_j |beta_j|.
///
/// Penalty units: lambda is the penalty of the objective (TraceOptions)
///     0.5 sum_i w_i (y_i - b0 - x_i^T b)^2 + lambda sum_j f_j s_j |b_j|,
/// with s_j the column scale (standardization: root weighted sum of squares
/// of the centred column, so s_j b_j and lambda are in response units and
/// lambda grows like sqrt(n); otherwise s_j = 1). The size-free penalty of
/// scaling.hpp is mu = lambda / sqrt(n) (lambda / n without standardization).

#include <algorithm>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "detail/scalar.hpp"
#include "errors.hpp"
#include "knot.hpp"
#include "options.hpp"
#include "prepare.hpp"

namespace knotpath {

/// The solution at one point of the path, on the original scale.
template <class Scalar>
struct Solution {
  Scalar penalty{0};         ///< lambda of this point
  Scalar l1_norm{0};         ///< sum_j f_j s_j |beta_j|
  Scalar intercept{0};       ///< b0 on the original scale (0 without intercept)
  Vector<Scalar> coefficients;  ///< length p (user's predictors; excluded ones are 0)
  bool beyond_path = false;  ///< asked below the last knot of a path that stopped early (or for
                             ///< a budget it never reached): this is the last knot's solution
};

/// A traced path. Built by trace(); immutable afterwards and safe to query
/// from several threads at once (every member is const and uses no shared
/// scratch space). K below is the number of knots, p the number of
/// predictors. Queries on an empty (default-constructed) path throw
/// invalid_query.
template <class Scalar>
class Path {
 public:
  /// An empty path (no knots); queries throw invalid_query.
  Path() = default;
  /// Assembles a path from the homotopy's results (used by trace_design();
  /// users normally do not call it). `knots` must have non-increasing
  /// penalties; `ridge` is the ridge weight the path was traced with.
  Path(Preparation<Scalar> preparation, TraceOptions options, std::vector<Knot<Scalar>> knots,
       std::vector<HeldOut<Scalar>> held_out, StopReason reason, Scalar ridge)
      : prep_(std::move(preparation)),
        options_(std::move(options)),
        knots_(std::move(knots)),
        held_out_(std::move(held_out)),
        reason_(reason),
        ridge_(std::move(ridge)) {
    l1_weight_ = Vector<Scalar>::Zero(prep_.predictors);
    for (std::size_t k = 0; k < prep_.columns.size(); ++k) {
      const Index j = prep_.columns[k];
      l1_weight_(j) = Scalar(prep_.penalty_factors[k]) * prep_.scales(j);
    }
  }

  /// The rows of the knot table, penalties non-increasing.
  const std::vector<Knot<Scalar>>& knots() const noexcept { return knots_; }
  /// The first knot's penalty, lambda_max (0 when nothing can enter).
  Scalar lambda_max() const { return knots_.empty() ? Scalar(0) : knots_.front().penalty; }
  /// Why the path ended.
  StopReason stop_reason() const noexcept { return reason_; }
  /// True when the path stopped before penalty 0.
  bool stopped_early() const noexcept { return reason_ != StopReason::completed; }
  /// Number of predictors given.
  Index predictors() const noexcept { return prep_.predictors; }
  /// What the preparation did (means, scales, excluded predictors, ...).
  const Preparation<Scalar>& preparation() const noexcept { return prep_; }
  /// The options the path was traced with.
  const TraceOptions& options() const noexcept { return options_; }
  /// Predictors that reached the boundary but were held out as collinear.
  const std::vector<HeldOut<Scalar>>& held_out() const noexcept { return held_out_; }
  /// Predictors excluded before the trace (constant, all-zero, infinite factor).
  const std::vector<ExcludedPredictor>& excluded() const noexcept { return prep_.excluded; }
  /// Step of the first knot at which the active set saturated: as many
  /// active predictors as usable rows (rows of positive weight, minus one
  /// with an intercept), the largest rank the centred design can have. From
  /// there on no predictor can enter unless one leaves (attempts are held out
  /// with HeldOut::saturated set). nullopt when the path never saturated; a
  /// design whose rank is below that bound shows its dependencies as held-out
  /// columns instead.
  std::optional<Index> saturation_step() const {
    const Index rank_bound = prep_.used_observations - (prep_.intercept ? 1 : 0);
    for (const auto& k : knots_)
      if (rank_bound > 0 && k.active >= rank_bound) return k.step;
    return std::nullopt;
  }

  /// Largest factor condition estimate seen along the path.
  double worst_condition_estimate() const {
    double worst = 1;
    for (const auto& k : knots_) worst = std::max(worst, k.condition_estimate);
    return worst;
  }

  /// True when any knot is suspect: double precision may not be enough for
  /// this design; run the high-precision cross-check (cross_check(), or the
  /// `knotpath verify` command) before relying on the path.
  bool suspect() const {
    for (const auto& k : knots_)
      if (k.suspect) return true;
    return false;
  }
  /// Largest estimated relative error over the knots.
  double worst_estimated_error() const {
    double worst = 0;
    for (const auto& k : knots_) worst = std::max(worst, k.estimated_error);
    return worst;
  }

  /// The enter and leave rows, in path order: the audit log.
  std::vector<Knot<Scalar>> events() const {
    std::vector<Knot<Scalar>> out;
    for (const auto& k : knots_)
      if (k.event == EventKind::enter || k.event == EventKind::leave) out.push_back(k);
    return out;
  }

  /// Exact solution at penalty `lambda >= 0`. Above lambda_max: the first
  /// knot (all penalized coefficients 0). Below the last knot: the last
  /// knot's solution, with beyond_path set when the path stopped early.
  /// O(log K + p). Throws invalid_query for a negative or NaN penalty.
  Solution<Scalar> at_penalty(const Scalar& lambda) const {
    if (!(lambda >= Scalar(0))) throw invalid_query("the penalty must be >= 0");
    require_knots();
    if (lambda >= knots_.front().penalty) return solution_of(0);
    const Knot<Scalar>& last = knots_.back();
    if (lambda <= last.penalty) {
      Solution<Scalar> s = solution_of(knots_.size() - 1);
      s.beyond_path = stopped_early() && lambda < last.penalty;
      if (s.beyond_path) s.penalty = last.penalty;
      return s;
    }
    // First knot with penalty < lambda; the segment is (upper, lower).
    auto it = std::partition_point(knots_.begin(), knots_.end(),
                                   [&](const Knot<Scalar>& k) { return k.penalty >= lambda; });
    const std::size_t lower = static_cast<std::size_t>(it - knots_.begin());
    const std::size_t upper = lower - 1;
    const Scalar t = (knots_[upper].penalty - lambda) /
                     (knots_[upper].penalty - knots_[lower].penalty);
    return interpolate(upper, lower, t, lambda);
  }

  /// Exact solution whose penalized L1 norm equals `budget` (the constrained
  /// view: least RSS subject to sum_j f_j s_j |beta_j| <= budget). Walks the
  /// path from lambda_max downward and returns the first point where the L1
  /// norm reaches the budget; along the lasso path the norm is
  /// non-decreasing, so this is the unique solution of the constrained
  /// problem. A budget the path never reaches gives the last knot with
  /// beyond_path set. O(K p). Throws invalid_query for a negative budget.
  Solution<Scalar> at_budget(const Scalar& budget) const {
    if (!(budget >= Scalar(0))) throw invalid_query("the L1 budget must be >= 0");
    require_knots();
    if (knots_.front().l1_norm >= budget) return solution_of(0);
    Vector<Scalar> a = dense_coefficients(0), b;
    for (std::size_t k = 1; k < knots_.size(); ++k) {
      b = dense_coefficients(k);
      if (knots_[k].penalty == knots_[k - 1].penalty) {
        a.swap(b);
        continue;
      }
      // Breakpoints in (0, 1) where a coefficient crosses zero (least angle
      // paths can cross inside a segment); the norm is linear between them.
      std::vector<Scalar> ts{Scalar(0), Scalar(1)};
      for (Index j = 0; j < a.size(); ++j)
        if ((a(j) < Scalar(0) && b(j) > Scalar(0)) || (a(j) > Scalar(0) && b(j) < Scalar(0)))
          ts.push_back(Scalar(a(j) / (a(j) - b(j))));
      std::sort(ts.begin(), ts.end());
      Scalar prev_norm = weighted_l1(a);
      for (std::size_t i = 1; i < ts.size(); ++i) {
        Vector<Scalar> at_t = a + ts[i] * (b - a);
        Scalar norm = weighted_l1(at_t);
        if (norm >= budget) {
          // Linear in t on [ts[i-1], ts[i]].
          Scalar t = ts[i - 1];
          if (norm != prev_norm) t += (ts[i] - ts[i - 1]) * (budget - prev_norm) / (norm - prev_norm);
          const Scalar lambda =
              knots_[k - 1].penalty - t * (knots_[k - 1].penalty - knots_[k].penalty);
          return interpolate(k - 1, k, t, lambda);
        }
        prev_norm = norm;
      }
      a.swap(b);
    }
    Solution<Scalar> s = solution_of(knots_.size() - 1);
    s.beyond_path = true;
    return s;
  }

  /// Solution at a fraction f in [0, 1] of the last knot's L1 norm
  /// (f = 0: the start; f = 1: the end of the path). O(K p). Throws
  /// invalid_query for f outside [0, 1] (or NaN).
  Solution<Scalar> at_fraction(double fraction) const {
    if (!(fraction >= 0.0 && fraction <= 1.0))
      throw invalid_query("the fraction must lie in [0, 1]");
    require_knots();
    if (fraction == 1.0) return solution_of(knots_.size() - 1);
    return at_budget(Scalar(fraction) * knots_.back().l1_norm);
  }

  /// Predictors with a nonzero coefficient at penalty lambda (ascending user
  /// indices). O(log K + p). Throws invalid_query as at_penalty().
  std::vector<Index> active_at(const Scalar& lambda) const {
    Solution<Scalar> s = at_penalty(lambda);
    std::vector<Index> out;
    for (Index j = 0; j < s.coefficients.size(); ++j)
      if (s.coefficients(j) != Scalar(0)) out.push_back(j);
    return out;
  }

  /// Predictions intercept + X_new beta(lambda) for new rows (original
  /// scale, one row per observation, p columns). O(log K + m p) for m rows.
  /// Throws invalid_query when the width is not p or lambda is negative/NaN.
  Vector<Scalar> predict(const Matrix<Scalar>& new_rows, const Scalar& lambda) const {
    if (new_rows.cols() != prep_.predictors)
      throw invalid_query("new rows have " + std::to_string(new_rows.cols()) +
                          " columns, the path has " + std::to_string(prep_.predictors));
    Solution<Scalar> s = at_penalty(lambda);
    Vector<Scalar> out = new_rows * s.coefficients;
    out.array() += s.intercept;
    return out;
  }

  /// Dense coefficient vector (length p) of knot k, O(p). Throws
  /// invalid_query when k >= knots().size().
  Vector<Scalar> dense_coefficients(std::size_t k) const {
    if (k >= knots_.size())
      throw invalid_query("knot " + std::to_string(k) + " asked of a path with " +
                          std::to_string(knots_.size()) + " knots");
    Vector<Scalar> v = Vector<Scalar>::Zero(prep_.predictors);
    for (const auto& [j, value] : knots_[k].coefficients) v(j) = value;
    return v;
  }

  /// The penalized L1 norm sum_j f_j s_j |beta_j| of an original-scale vector
  /// of length p (excluded predictors weigh 0). O(p).
  Scalar weighted_l1(const Vector<Scalar>& beta) const {
    Scalar sum(0);
    for (Index j = 0; j < beta.size(); ++j) sum += l1_weight_(j) * detail::abs_value<Scalar>(beta(j));
    return sum;
  }

  /// The ridge weight the path was traced with (TraceOptions::ridge).
  const Scalar& ridge() const noexcept { return ridge_; }

 private:
  void require_knots() const {
    if (knots_.empty()) throw invalid_query("the path is empty");
  }

  Solution<Scalar> solution_of(std::size_t k) const {
    Solution<Scalar> s;
    s.penalty = knots_[k].penalty;
    s.l1_norm = knots_[k].l1_norm;
    s.intercept = knots_[k].intercept;
    s.coefficients = dense_coefficients(k);
    return s;
  }

  // Point at fraction t of the way from knot `upper` to knot `lower`.
  Solution<Scalar> interpolate(std::size_t upper, std::size_t lower, const Scalar& t,
                               const Scalar& lambda) const {
    Solution<Scalar> s;
    s.penalty = lambda;
    Vector<Scalar> a = dense_coefficients(upper);
    Vector<Scalar> b = dense_coefficients(lower);
    s.coefficients = a + t * (b - a);
    s.intercept = knots_[upper].intercept + t * (knots_[lower].intercept - knots_[upper].intercept);
    s.l1_norm = weighted_l1(s.coefficients);
    return s;
  }

  Preparation<Scalar> prep_;
  TraceOptions options_;
  std::vector<Knot<Scalar>> knots_;
  std::vector<HeldOut<Scalar>> held_out_;
  StopReason reason_ = StopReason::completed;
  Scalar ridge_{0};
  Vector<Scalar> l1_weight_;  // f_j s_j per predictor (0 when excluded or unpenalized)
};

/// mu = lambda / penalty_scale of the path's data (scaling.hpp).
template <class Scalar>
Scalar size_free_penalty(const Path<Scalar>& path, const Scalar& lambda) {
  return lambda / penalty_scale(path.preparation());
}

/// lambda = mu * penalty_scale of the path's data (scaling.hpp).
template <class Scalar>
Scalar penalty_from_size_free(const Path<Scalar>& path, const Scalar& mu) {
  return mu * penalty_scale(path.preparation());
}

}  // namespace knotpath
