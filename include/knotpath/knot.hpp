#pragma once
/// \file knot.hpp
/// \brief What the homotopy records: one Knot per row of the knot table
/// (the state of the path right after one event), the predictors held out
/// as collinear, and why the path ended. Path (path.hpp) answers queries
/// from these records.

#include <algorithm>
#include <cmath>
#include <string>
#include <utility>
#include <vector>

#include "detail/scalar.hpp"

namespace knotpath {

/// Kind of a row of the knot table.
enum class EventKind {
  start,  ///< first knot: penalty lambda_max, only unpenalized predictors active
  enter,  ///< a predictor joined the active set
  leave,  ///< a predictor's coefficient reached zero and it left (lasso only)
  end,    ///< the path reached penalty 0
  stop,   ///< the path stopped early; see Path::stop_reason()
};

/// Why the path ended.
enum class StopReason {
  completed,    ///< reached penalty 0
  max_knots,    ///< TraceOptions::max_knots
  min_penalty,  ///< TraceOptions::min_penalty
  max_active,   ///< TraceOptions::max_active
  step_limit,   ///< TraceOptions::max_steps (a safety bound; never expected on sane data)
};

/// The knot-table spelling of an event kind ("start", "enter", ...).
inline std::string to_string(EventKind kind) {
  switch (kind) {
    case EventKind::start: return "start";
    case EventKind::enter: return "enter";
    case EventKind::leave: return "leave";
    case EventKind::end: return "end";
    case EventKind::stop: return "stop";
  }
  return "?";
}

/// The knot-table spelling of a stop reason ("end", "stop-max-knots", ...).
inline std::string to_string(StopReason reason) {
  switch (reason) {
    case StopReason::completed: return "end";
    case StopReason::max_knots: return "stop-max-knots";
    case StopReason::min_penalty: return "stop-min-penalty";
    case StopReason::max_active: return "stop-max-active";
    case StopReason::step_limit: return "stop-step-limit";
  }
  return "?";
}

/// One row of the knot table: the state of the path right after one event.
template <class Scalar>
struct Knot {
  Index step = 0;             ///< 0 for the start, then 1, 2, ... per row
  Scalar penalty{0};          ///< lambda at this knot
  EventKind event = EventKind::start;  ///< what happened at this row
  Index predictor = -1;       ///< predictor of an enter/leave event (user's 0-based index), else -1
  int sign = 0;               ///< +1/-1: sign of the entering coefficient, or of the leaving one before it left
  double correlation = 0;     ///< enter/leave: correlation of the (prepared) predictor with the residual
  Index active_count = 0;     ///< number of active predictors after the event (unpenalized ones included)
  /// The penalized L1 norm sum_j f_j s_j |beta_j| (f_j the penalty weight,
  /// s_j the column scale): the norm the objective penalizes, on the
  /// standardized scale, and the one Path::at_budget() constrains.
  Scalar penalized_l1{0};
  /// The plain L1 norm sum_j |beta_j| of the original-scale coefficients
  /// beside it (unpenalized predictors included).
  Scalar plain_l1{0};
  Scalar rss{0};              ///< weighted residual sum of squares
  Scalar intercept{0};        ///< on the original scale (0 without intercept)
  std::vector<std::pair<Index, Scalar>> coefficients;  ///< nonzero beta_j, ascending j, original scale
  double condition_estimate = 1;  ///< factor health after the event (see FactorHealth)
  /// Estimated error of the prepared problem, relative: the largest of
  /// the active system's condition at this knot's solution * unit roundoff
  /// (at most condition_estimate * unit roundoff: the solution's own
  /// coefficients weight the factor's backward error), the correlation drift /
  /// lambda_max, the centring amplification
  /// (Preparation::centring_amplification) * unit roundoff, the condition of
  /// any factor that decided which tied entries stay out * unit roundoff,
  /// and the previous knot's value (carried forward: each knot inherits the
  /// state of the ones before it). It bounds the active correlations'
  /// error relative to lambda_max and the prepared coefficients' error
  /// relative to the largest of them, to first order.
  double prepared_error = 0;
  /// Estimated relative error of this row as reported: of the
  /// original-scale coefficients and the intercept, relative to the largest
  /// of them, the intercept's error at least to the response's spread
  /// (response_spread(); the measure of the cross-check, compare_paths()).
  /// prepared_error carried through the scales, the means and the factor's
  /// inverse, plus the rounding of the means themselves (which alone sets
  /// the intercept-only start knot's error when the response's mean is
  /// small against its spread) and of the knot penalties
  /// (Homotopy's reported_scale_error). It is a first-order bound,
  /// calibrated against 50-digit paths (RELIABILITY.md, "Health check
  /// calibration"); above first_order_limit it bounds nothing, because the
  /// order of the events themselves may differ from the exact path's.
  double estimated_error = 0;
  bool suspect = false;        ///< estimated_error > TraceOptions::suspect_threshold here or at an
                               ///< earlier knot (errors are inherited): cross-check
                               ///< with a higher precision (knotpath verify) before trusting it
};

/// max(|intercept|, max_j |beta_j|) of a knot's solution, as a double: the
/// size its errors are relative to (the health estimate, Homotopy's
/// reported_scale_error, and the cross-check, compare_paths, measure
/// against the same size).
template <class Scalar>
double solution_size(const Knot<Scalar>& knot) {
  double size = std::abs(detail::to_double(knot.intercept));
  for (const auto& [j, beta] : knot.coefficients) size = std::max(size, std::abs(detail::to_double(beta)));
  return size;
}

/// Largest Knot::estimated_error that is still a bound: beyond it a
/// first-order error analysis no longer holds. The estimate passes it when
/// the factor's condition passes 1 / (1e4 u), and when a column is held out
/// as collinear with a squared sine near the collinearity tolerance (a
/// column the exact problem adds). On the calibration corpus
/// (RELIABILITY.md) the paths above it are the ones whose events differ
/// from the exact path's (NIST StRD Filip; the cure-temperature polynomial).
inline constexpr double first_order_limit = 1e-4;

/// One entry of the audit (Path::events()): an enter or leave row of the
/// knot table without its coefficient vector.
template <class Scalar>
struct Event {
  std::size_t knot = 0;       ///< position of the row in Path::knots()
  Index step = 0;             ///< Knot::step of the row
  Scalar penalty{0};          ///< lambda at which it happened
  EventKind kind = EventKind::enter;  ///< enter or leave
  Index predictor = -1;       ///< the predictor (user's 0-based index)
  int sign = 0;               ///< sign of the entering coefficient, or of the leaving one before it left
  double correlation = 0;     ///< correlation of the prepared predictor with the residual
  Index active_count = 0;     ///< number of active predictors after the event
};

/// A predictor that reached the boundary but was not added because its
/// column is numerically in the span of the active columns.
template <class Scalar>
struct HeldOut {
  /// Step of the knot-table row where it happened: the last knot at or
  /// above its penalty (the last row at that penalty, or the knot before it
  /// when nothing else happened there).
  Index step = 0;
  Scalar penalty{0};        ///< penalty at which it happened
  Index predictor = 0;      ///< user's 0-based index
  double squared_sine = 0;  ///< squared sine of its angle to the active span (computed, >= 0; values
                            ///< near rounding level only say "below the collinearity tolerance")
  bool saturated = false;   ///< the active set had as many columns as usable rows
};

}  // namespace knotpath
