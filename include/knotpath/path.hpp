#pragma once
/// \file path.hpp
/// \brief The traced path: its knots (one row per event), the audit of
/// events, and exact queries at any penalty (lambda or the size-free mu), L1
/// budget or relative budget (a share of the final L1 norm), one point or many at once, plus
/// predictions and named coefficients.
///
/// Between consecutive knots every coefficient (and the intercept) is an
/// affine function of the penalty, so linear interpolation between the two
/// surrounding knots is exact. Coefficients are on the original scale of the
/// data. Two L1 norms are reported and named apart: penalized_l1 =
/// sum_j f_j s_j |beta_j| (the norm the objective penalizes, on the
/// standardized scale; budgets constrain this one) and plain_l1 =
/// sum_j |beta_j| (the original-scale coefficients as printed).
///
/// Penalty units: lambda is the penalty of the objective (TraceOptions)
///     0.5 sum_i w_i (y_i - b0 - x_i^T b)^2 + lambda sum_j f_j s_j |b_j|,
/// with s_j the column scale (standardization: root weighted sum of squares
/// of the centred column, so s_j b_j and lambda are in response units and
/// lambda grows like sqrt(n); otherwise s_j = 1). The size-free penalty of
/// scaling.hpp is mu = lambda / sqrt(n) (lambda / n without standardization);
/// Path::mu_of() and Path::lambda_of() are the conversion, and every query
/// says its unit in its name (at_penalty() takes lambda, at_mu() takes mu).

#include <algorithm>
#include <cstddef>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
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
  Scalar penalty{0};         ///< lambda of the point answered
  Scalar penalized_l1{0};    ///< sum_j f_j s_j |beta_j| (standardized scale; what budgets constrain)
  Scalar plain_l1{0};        ///< sum_j |beta_j| of `coefficients`
  Scalar intercept{0};       ///< b0 on the original scale (0 without intercept)
  Vector<Scalar> coefficients;  ///< length p (user's predictors; excluded ones are 0)
  /// The point asked for lies outside the traced stretch: below the last
  /// knot of a path that stopped early, or a budget it never reached. The
  /// answer is then the last knot's solution (and `penalty` its lambda),
  /// not the point asked for.
  bool beyond_path = false;
  /// The path stopped early (Path::stopped_early()): "the end of the path"
  /// and relative budgets refer to its last knot, not to penalty 0.
  bool stopped_path = false;
};

/// A coefficient with its predictor's name and index (Path::named_coefficients()).
template <class Scalar>
struct NamedCoefficient {
  std::string name;     ///< the predictor's name (TraceOptions::predictor_names or default_predictor_name())
  Index predictor = 0;  ///< its 0-based index in the user's design
  Scalar value{0};      ///< beta_j on the original scale
};

/// Predictions at one penalty (Path::predict()): the fitted values with the
/// flags of the Solution they come from.
template <class Scalar>
struct Prediction {
  Vector<Scalar> values;     ///< intercept + x_i^T beta, one per new row
  Scalar penalty{0};         ///< lambda answered (the last knot's when beyond_path)
  bool beyond_path = false;  ///< as Solution::beyond_path
  bool stopped_path = false; ///< as Solution::stopped_path
};

/// Answers at m points at once (Path::solutions_at()): column i belongs to
/// the i-th point asked for.
template <class Scalar>
struct SolutionBlock {
  std::vector<Scalar> penalties;  ///< lambda answered per point (the last knot's when beyond)
  Matrix<Scalar> coefficients;    ///< p x m, original scale
  Vector<Scalar> intercepts;      ///< m
  std::vector<bool> beyond_path;  ///< per point, as Solution::beyond_path
  bool stopped_path = false;      ///< as Solution::stopped_path
};

/// Predictions at m penalties at once (Path::predict_many()).
template <class Scalar>
struct PredictionBlock {
  Matrix<Scalar> values;          ///< rows x m: column i at the i-th penalty
  std::vector<Scalar> penalties;  ///< lambda answered per column
  std::vector<bool> beyond_path;  ///< per column, as Solution::beyond_path
  bool stopped_path = false;      ///< as Solution::stopped_path
};

/// A traced path. Built by trace() or PathSolver; immutable afterwards and
/// safe to query from several threads at once (every member is const and
/// uses no shared scratch space). K below is the number of knots, p the
/// number of predictors. Queries on an empty (default-constructed) path
/// throw invalid_query.
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
      l1_weight_(j) = Scalar(prep_.penalty_weights[k]) * prep_.scales(j);
    }
    index_budgets();
  }

  /// The rows of the knot table, penalties non-increasing.
  const std::vector<Knot<Scalar>>& knots() const noexcept { return knots_; }
  /// The first knot's penalty, lambda_max (0 when nothing can enter).
  Scalar lambda_max() const { return knots_.empty() ? Scalar(0) : knots_.front().penalty; }
  /// Why the path ended.
  StopReason stop_reason() const noexcept { return reason_; }
  /// True when the path stopped before penalty 0.
  bool stopped_early() const noexcept { return reason_ != StopReason::completed; }
  /// Number of predictors given (p), traced or excluded.
  Index predictor_count() const noexcept { return prep_.predictors; }
  /// What the preparation did (means, scales, excluded predictors, ...).
  const Preparation<Scalar>& preparation() const noexcept { return prep_; }
  /// The options the path was traced with.
  const TraceOptions& options() const noexcept { return options_; }
  /// Predictors that reached the boundary but were held out as collinear.
  const std::vector<HeldOut<Scalar>>& held_out() const noexcept { return held_out_; }
  /// Predictors excluded before the trace (constant, all-zero, infinite factor).
  const std::vector<ExcludedPredictor>& excluded() const noexcept { return prep_.excluded; }

  /// Name of predictor j (0-based): TraceOptions::predictor_names[j], or
  /// default_predictor_name(j) when none were given. Throws invalid_query
  /// for j outside [0, p).
  std::string predictor_name(Index j) const {
    if (j < 0 || j >= prep_.predictors)
      throw invalid_query("predictor " + std::to_string(j) + " asked of a path with " +
                          std::to_string(prep_.predictors) + " predictors");
    const auto u = static_cast<std::size_t>(j);
    return options_.predictor_names.empty() ? default_predictor_name(u) : options_.predictor_names[u];
  }
  /// Index of the predictor named `name`. O(p). Throws invalid_query when
  /// no predictor has that name.
  Index predictor_index(std::string_view name) const {
    for (Index j = 0; j < prep_.predictors; ++j)
      if (predictor_name(j) == name) return j;
    throw invalid_query("the path has no predictor named \"" + std::string(name) + "\"");
  }
  /// The nonzero coefficients of a solution of this path with their names,
  /// ascending index. O(p).
  std::vector<NamedCoefficient<Scalar>> named_coefficients(const Solution<Scalar>& s) const {
    require_width(s.coefficients.size());
    std::vector<NamedCoefficient<Scalar>> out;
    for (Index j = 0; j < s.coefficients.size(); ++j)
      if (s.coefficients(j) != Scalar(0)) out.push_back({predictor_name(j), j, s.coefficients(j)});
    return out;
  }
  /// The coefficient of the predictor named `name` in a solution of this
  /// path. Throws invalid_query for an unknown name.
  Scalar coefficient(const Solution<Scalar>& s, std::string_view name) const {
    require_width(s.coefficients.size());
    return s.coefficients(predictor_index(name));
  }

  /// The size-free penalty mu of a penalty lambda of this path's data:
  /// lambda / penalty_scale (scaling.hpp, the one home of the convention).
  Scalar mu_of(const Scalar& lambda) const { return lambda / penalty_scale(prep_); }
  /// The penalty lambda of a size-free mu: mu * penalty_scale (scaling.hpp).
  Scalar lambda_of(const Scalar& mu) const { return mu * penalty_scale(prep_); }

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
      if (rank_bound > 0 && k.active_count >= rank_bound) return k.step;
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

  /// The audit log: the enter and leave rows, in path order, without their
  /// coefficient vectors (Event::knot points at the full row). O(K).
  std::vector<Event<Scalar>> events() const {
    std::vector<Event<Scalar>> out;
    for (std::size_t i = 0; i < knots_.size(); ++i) {
      const Knot<Scalar>& k = knots_[i];
      if (k.event == EventKind::enter || k.event == EventKind::leave)
        out.push_back({i, k.step, k.penalty, k.event, k.predictor, k.sign, k.correlation, k.active_count});
    }
    return out;
  }

  /// Exact solution at penalty `lambda >= 0`. Above lambda_max: the first
  /// knot's solution, which is the exact answer there (every penalized
  /// coefficient is 0 at any penalty from lambda_max up), with `penalty`
  /// the lambda asked. Below the last knot: the last knot's solution, with
  /// beyond_path set (and `penalty` the last knot's) when the path stopped
  /// early. O(log K + p). Throws invalid_query for a negative or NaN penalty.
  Solution<Scalar> at_penalty(const Scalar& lambda) const {
    if (!(lambda >= Scalar(0))) throw invalid_query("the penalty must be >= 0");
    require_knots();
    if (lambda >= knots_.front().penalty) {
      Solution<Scalar> s = solution_of(0);
      s.penalty = lambda;
      return s;
    }
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

  /// at_penalty() at the size-free penalty mu (lambda_of(mu)). Throws
  /// invalid_query for a negative or NaN mu.
  Solution<Scalar> at_mu(const Scalar& mu) const {
    if (!(mu >= Scalar(0))) throw invalid_query("mu must be >= 0");
    return at_penalty(lambda_of(mu));
  }

  /// Exact solution at the first point, from lambda_max downward, where the
  /// penalized L1 norm (sum_j f_j s_j |beta_j|, see Knot::penalized_l1)
  /// reaches `budget`. What that point is depends on the path:
  ///  - the lasso (ridge 0): the constrained view, least RSS subject to
  ///    norm <= budget (and the sign constraints); the norm is
  ///    non-decreasing along the path, so the first point is that solution;
  ///  - the elastic net (ridge > 0): the point of the path with that norm,
  ///    which minimizes RSS plus the ridge term subject to it (not the RSS
  ///    alone);
  ///  - the least-angle variant: the first point whose norm reaches the
  ///    budget (the norm may fall inside a segment, where a coefficient
  ///    crosses zero; the crossings are taken into account). It solves no
  ///    constrained problem.
  /// A budget the path never reaches gives the last knot with beyond_path
  /// set: on a completed lasso path without ridge that is still the exact
  /// constrained answer (the budget does not bind), otherwise no point of
  /// the traced path answers it. O(log K + p log p): a
  /// search over the largest norm reached up to each knot (indexed when the
  /// path is built) finds the segment. Throws invalid_query for a negative
  /// or NaN budget.
  Solution<Scalar> at_budget(const Scalar& budget) const {
    if (!(budget >= Scalar(0))) throw invalid_query("the L1 budget must be >= 0");
    require_knots();
    if (knots_.front().penalized_l1 >= budget) return solution_of(0);
    // reach_[k]: the largest norm on the path up to knot k (segments of
    // equal penalties contribute nothing); non-decreasing in k.
    auto it = std::partition_point(reach_.begin() + 1, reach_.end(), [&](const Scalar& r) { return r < budget; });
    if (it != reach_.end()) {
      const auto k = static_cast<std::size_t>(it - reach_.begin());
      if (auto s = budget_in_segment(k, budget)) return *s;
    }
    Solution<Scalar> s = solution_of(knots_.size() - 1);
    s.beyond_path = true;
    return s;
  }

  /// Solution at the relative budget R in [0, 1]: the L1 budget R times the
  /// last knot's penalized L1 norm (R = 0: the start; R = 1: the last knot,
  /// which is penalty 0 unless the path stopped early: Solution::stopped_path
  /// says so). O(log K + p log p). Throws invalid_query for R outside [0, 1]
  /// (or NaN).
  Solution<Scalar> at_relative_budget(double relative) const {
    if (!(relative >= 0.0 && relative <= 1.0))
      throw invalid_query("the relative budget must lie in [0, 1]");
    require_knots();
    if (relative == 1.0) return solution_of(knots_.size() - 1);
    return at_budget(Scalar(relative) * knots_.back().penalized_l1);
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

  /// Solutions at many penalties (lambda) as one p x m matrix, in the order
  /// given. O(m (log K + p)). Throws invalid_query as at_penalty().
  SolutionBlock<Scalar> solutions_at(const std::vector<Scalar>& lambdas) const {
    SolutionBlock<Scalar> block;
    block.coefficients.resize(prep_.predictors, static_cast<Index>(lambdas.size()));
    block.intercepts.resize(static_cast<Index>(lambdas.size()));
    block.stopped_path = stopped_early();
    for (std::size_t i = 0; i < lambdas.size(); ++i) {
      const Solution<Scalar> s = at_penalty(lambdas[i]);
      block.coefficients.col(static_cast<Index>(i)) = s.coefficients;
      block.intercepts(static_cast<Index>(i)) = s.intercept;
      block.penalties.push_back(s.penalty);
      block.beyond_path.push_back(s.beyond_path);
    }
    return block;
  }

  /// Predictions intercept + X_new beta(lambda) for new rows (original
  /// scale, one row per observation, p columns), with the flags of the
  /// solution used. O(log K + m p) for m rows. Throws invalid_query when the
  /// width is not p or lambda is negative/NaN.
  Prediction<Scalar> predict(const Matrix<Scalar>& new_rows, const Scalar& lambda) const {
    require_width(new_rows.cols());
    const Solution<Scalar> s = at_penalty(lambda);
    Prediction<Scalar> out{new_rows * s.coefficients, s.penalty, s.beyond_path, s.stopped_path};
    out.values.array() += s.intercept;
    return out;
  }

  /// Predictions at many penalties at once: column i of the result holds
  /// the predictions at lambdas[i]. One product X_new B for the p x m block
  /// of coefficients. Throws invalid_query as predict().
  PredictionBlock<Scalar> predict_many(const Matrix<Scalar>& new_rows, const std::vector<Scalar>& lambdas) const {
    require_width(new_rows.cols());
    SolutionBlock<Scalar> block = solutions_at(lambdas);
    PredictionBlock<Scalar> out;
    out.values = new_rows * block.coefficients;
    for (Index i = 0; i < out.values.cols(); ++i) out.values.col(i).array() += block.intercepts(i);
    out.penalties = std::move(block.penalties);
    out.beyond_path = std::move(block.beyond_path);
    out.stopped_path = block.stopped_path;
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
  Scalar penalized_l1(const Vector<Scalar>& beta) const {
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
  void require_width(Index columns) const {
    if (columns != prep_.predictors)
      throw invalid_query("new rows have " + std::to_string(columns) + " columns, the path has " +
                          std::to_string(prep_.predictors));
  }

  Solution<Scalar> solution_of(std::size_t k) const {
    Solution<Scalar> s;
    s.penalty = knots_[k].penalty;
    s.penalized_l1 = knots_[k].penalized_l1;
    s.plain_l1 = knots_[k].plain_l1;
    s.intercept = knots_[k].intercept;
    s.coefficients = dense_coefficients(k);
    s.stopped_path = stopped_early();
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
    s.penalized_l1 = penalized_l1(s.coefficients);
    s.plain_l1 = Scalar(0);
    for (Index j = 0; j < s.coefficients.size(); ++j) s.plain_l1 += detail::abs_value<Scalar>(s.coefficients(j));
    s.stopped_path = stopped_early();
    return s;
  }

  // The points of segment (k-1, k) where the penalized norm may bend: its
  // ends (t = 0, 1) and the zero crossings of coefficients inside it, as
  // fractions t of the way from knot k-1, ascending.
  template <class AtUpper, class AtLower>
  std::vector<Scalar> bends(const AtUpper& a_of, const AtLower& b_of, const std::vector<Index>& support) const {
    std::vector<Scalar> ts{Scalar(0), Scalar(1)};
    for (Index j : support) {
      const Scalar a = a_of(j), b = b_of(j);
      if ((a < Scalar(0) && b > Scalar(0)) || (a > Scalar(0) && b < Scalar(0))) ts.push_back(Scalar(a / (a - b)));
    }
    std::sort(ts.begin(), ts.end());
    return ts;
  }

  // Predictors nonzero at knot k-1 or k, ascending: the only terms of the
  // norm on segment (k-1, k) (every other term is an exact 0).
  std::vector<Index> segment_support(std::size_t k) const {
    std::vector<Index> support;
    const auto& upper = knots_[k - 1].coefficients;
    const auto& lower = knots_[k].coefficients;
    support.reserve(upper.size() + lower.size());
    std::size_t a = 0, b = 0;  // both lists ascend: merge them
    while (a < upper.size() || b < lower.size()) {
      Index next;
      if (b == lower.size() || (a < upper.size() && upper[a].first < lower[b].first))
        next = upper[a++].first;
      else if (a == upper.size() || lower[b].first < upper[a].first)
        next = lower[b++].first;
      else {
        next = upper[a++].first;
        ++b;
      }
      support.push_back(next);
    }
    return support;
  }

  // reach_[k] = the largest penalized norm at the bends of segments 1..k,
  // computed term by term over the segment's support in ascending order, the
  // same operations budget_in_segment() performs on dense vectors (the
  // terms outside the support are exact zeros), so the segment the search
  // picks is the one a walk from the start would stop in. O(total nonzeros).
  void index_budgets() {
    reach_.assign(knots_.size(), Scalar(0));
    if (knots_.empty()) return;
    reach_[0] = knots_.front().penalized_l1;
    std::vector<Scalar> a_values(static_cast<std::size_t>(prep_.predictors)), b_values(a_values.size());
    for (std::size_t k = 1; k < knots_.size(); ++k) {
      reach_[k] = reach_[k - 1];
      if (knots_[k].penalty == knots_[k - 1].penalty) continue;
      const std::vector<Index> support = segment_support(k);
      for (Index j : support) a_values[static_cast<std::size_t>(j)] = b_values[static_cast<std::size_t>(j)] = Scalar(0);
      for (const auto& [j, v] : knots_[k - 1].coefficients) a_values[static_cast<std::size_t>(j)] = v;
      for (const auto& [j, v] : knots_[k].coefficients) b_values[static_cast<std::size_t>(j)] = v;
      auto a_of = [&](Index j) { return a_values[static_cast<std::size_t>(j)]; };
      auto b_of = [&](Index j) { return b_values[static_cast<std::size_t>(j)]; };
      const std::vector<Scalar> ts = bends(a_of, b_of, support);
      for (std::size_t i = 1; i < ts.size(); ++i) {
        Scalar norm(0);
        for (Index j : support) {
          const Scalar value = a_of(j) + ts[i] * (b_of(j) - a_of(j));
          norm += l1_weight_(j) * detail::abs_value<Scalar>(value);
        }
        if (norm > reach_[k]) reach_[k] = norm;
      }
    }
  }

  // The first point of segment (k-1, k) whose penalized norm reaches
  // `budget` (the norm is linear in t between bends), or nothing.
  std::optional<Solution<Scalar>> budget_in_segment(std::size_t k, const Scalar& budget) const {
    const Vector<Scalar> a = dense_coefficients(k - 1), b = dense_coefficients(k);
    std::vector<Index> all(static_cast<std::size_t>(a.size()));
    for (Index j = 0; j < a.size(); ++j) all[static_cast<std::size_t>(j)] = j;
    auto a_of = [&](Index j) { return a(j); };
    auto b_of = [&](Index j) { return b(j); };
    const std::vector<Scalar> ts = bends(a_of, b_of, all);
    Scalar prev_norm = penalized_l1(a);
    for (std::size_t i = 1; i < ts.size(); ++i) {
      const Vector<Scalar> at_t = a + ts[i] * (b - a);
      const Scalar norm = penalized_l1(at_t);
      if (norm >= budget) {
        Scalar t = ts[i - 1];
        if (norm != prev_norm) t += (ts[i] - ts[i - 1]) * (budget - prev_norm) / (norm - prev_norm);
        const Scalar lambda = knots_[k - 1].penalty - t * (knots_[k - 1].penalty - knots_[k].penalty);
        return interpolate(k - 1, k, t, lambda);
      }
      prev_norm = norm;
    }
    return std::nullopt;
  }

  Preparation<Scalar> prep_;
  TraceOptions options_;
  std::vector<Knot<Scalar>> knots_;
  std::vector<HeldOut<Scalar>> held_out_;
  StopReason reason_ = StopReason::completed;
  Scalar ridge_{0};
  Vector<Scalar> l1_weight_;  // f_j s_j per predictor (0 when excluded or unpenalized)
  std::vector<Scalar> reach_;  // largest penalized norm up to each knot (index_budgets())
};

}  // namespace knotpath
