#pragma once
/// \file charts.hpp
/// \brief Charts of a traced path, drawn as SVG 1.1 text by knotpath itself
/// (no plotting dependency), and a one-page offline HTML report.
///
/// Four pictures:
///  1. activity lanes: one lane per predictor that is ever active, ordered
///     by first entry, with bars over the penalty intervals where it is
///     active (tone and hatching give the sign: colour-blind safe), entry
///     and leave markers;
///  2. coefficient traces against the penalty (log or linear, either
///     direction) or against the L1 budget, with knots marked and names
///     placed without overlap (leader lines when a label had to move);
///  3. the selection curve: cross-validated error with its standard-error
///     band, the minimizer and the one-standard-error choice, information
///     criteria on a second panel;
///  4. an XHTML-compatible report that embeds 1-3 and the audit of events,
///     with no external scripts, fonts or images.
///
/// The charts read plain double data (ChartPath, SelectionCurve), so the
/// compiled library (target knotpath_charts) does not depend on the scalar
/// type of the trace; chart_path() takes the snapshot of any Path<Scalar>.
///
/// Axis ticks use the "nice numbers" rule of P. S. Heckbert, "Nice numbers
/// for graph labels", Graphics Gems (1990): steps of 1, 2 or 5 times a power
/// of ten. Colours are from the palette of M. Okabe & K. Ito, "Color
/// Universal Design" (2002, 2008), which stays distinguishable under the
/// common colour-vision deficiencies; the sign is also carried by a hatch
/// pattern so the lanes read in grey print too.

#include <cmath>
#include <cstddef>
#include <filesystem>
#include <limits>
#include <string>
#include <utility>
#include <vector>

#include "../detail/scalar.hpp"
#include "../criteria.hpp"
#include "../cross_validation.hpp"
#include "../path.hpp"
#include "../scaling.hpp"

namespace knotpath::charts {

/// One knot of the path, in doubles.
struct ChartKnot {
  double penalty = 0;                  ///< lambda at this knot
  EventKind event = EventKind::start;  ///< what happened at this knot
  Index predictor = -1;                ///< predictor of an enter/leave event, else -1
  int sign = 0;                        ///< sign of the entering (or leaving) coefficient
  Index active = 0;                    ///< active predictors after the event
  double penalized_l1 = 0;             ///< sum_j f_j s_j |beta_j| (Knot::penalized_l1)
  double r_squared = 0;                ///< 1 - RSS / TSS (0 when TSS is 0)
  std::vector<std::pair<Index, double>> coefficients;  ///< nonzero beta_j, original scale
};

/// A path as the charts see it: names, knots and what the labels need.
struct ChartPath {
  std::vector<std::string> names;    ///< one per predictor (p)
  std::vector<ChartKnot> knots;      ///< penalties non-increasing
  std::vector<double> predictor_sd;  ///< per predictor (1/n weighted) standard deviation; empty
                                     ///< when unknown (then coefficients are drawn as given)
  double weight_sum = 0;             ///< n (sum of weights), for mu = lambda / penalty_scale
  /// Whether the path was traced on standardized columns: then mu = lambda /
  /// sqrt(n), else mu = lambda / n (knotpath::penalty_scale, scaling.hpp).
  bool standardized = true;
  /// Name of the response, used in titles and labels.
  std::string response_name = "response";
  std::string variant = "lasso";   ///< "lasso" or "least angle"
  std::string end = "end";         ///< how the path ended: "end" or "stop-..."
  std::vector<std::string> notes;  ///< excluded and held-out predictors, one line each

  /// Checks sizes and ordering; throws invalid_option naming the problem.
  void validate() const;
};

/// Snapshot of a traced path for the charts. `names` must have one entry per
/// predictor (empty: x1, x2, ...).
template <class Scalar>
ChartPath chart_path(const Path<Scalar>& path, std::vector<std::string> names = {},
                     std::string response_name = "response") {
  using knotpath::detail::to_double;
  ChartPath out;
  const Index p = path.predictor_count();
  if (names.empty())
    for (Index j = 0; j < p; ++j) names.push_back("x" + std::to_string(j + 1));
  out.names = std::move(names);
  out.response_name = std::move(response_name);
  const auto& prep = path.preparation();
  out.weight_sum = to_double(prep.weight_sum);
  out.standardized = prep.standardized;
  // s_j is the root weighted sum of squares of the centred column when the
  // columns are standardized with an intercept, so s_j / sqrt(n) is the
  // (1/n) standard deviation; in other set-ups the charts show raw slopes.
  if (prep.standardized && prep.intercept && out.weight_sum > 0) {
    out.predictor_sd.resize(static_cast<std::size_t>(p), 0.0);
    for (Index j = 0; j < p; ++j)
      out.predictor_sd[static_cast<std::size_t>(j)] =
          to_double(prep.scales(j)) / std::sqrt(out.weight_sum);
    for (const auto& e : prep.excluded)
      out.predictor_sd[static_cast<std::size_t>(e.predictor)] = 0.0;
  }
  out.variant = path.options().variant == Variant::lasso ? "lasso" : "least angle";
  out.end = to_string(path.stop_reason());
  const double tss = to_double(prep.total_sum_of_squares);
  for (const auto& k : path.knots()) {
    ChartKnot c;
    c.penalty = to_double(k.penalty);
    c.event = k.event;
    c.predictor = k.predictor;
    c.sign = k.sign;
    c.active = k.active_count;
    c.penalized_l1 = to_double(k.penalized_l1);
    c.r_squared = tss > 0 ? 1.0 - to_double(k.rss) / tss : 0.0;
    for (const auto& [j, b] : k.coefficients) c.coefficients.emplace_back(j, to_double(b));
    out.knots.push_back(std::move(c));
  }
  auto name_of = [&](Index j) {
    return j >= 0 && static_cast<std::size_t>(j) < out.names.size()
               ? out.names[static_cast<std::size_t>(j)]
               : std::to_string(j);
  };
  for (const auto& e : prep.excluded)
    out.notes.push_back(name_of(e.predictor) + " excluded: " + e.reason);
  // Collinear columns one note each; those held out after saturation (many
  // when p > n) one note together, as in the audit (HeldOut::step is a knot).
  std::size_t saturated = 0;  // distinct predictors
  Index first_saturated_step = -1;
  std::vector<char> seen(static_cast<std::size_t>(path.predictor_count()), 0);
  for (const auto& h : path.held_out()) {
    if (h.saturated) {
      if (first_saturated_step < 0) first_saturated_step = h.step;
      auto& mark = seen[static_cast<std::size_t>(h.predictor)];
      if (!mark) ++saturated;
      mark = 1;
      continue;
    }
    out.notes.push_back(name_of(h.predictor) + " held out as collinear at knot " +
                        std::to_string(h.step));
  }
  if (saturated > 0)
    out.notes.push_back(std::to_string(saturated) +
                        " predictors held out after the active set had as many columns as "
                        "usable rows, "
                        "from knot " + std::to_string(first_saturated_step));
  return out;
}

/// What the horizontal axis of the path charts measures.
enum class HorizontalAxis {
  penalty,    ///< the penalty (lambda, or the size-free mu)
  l1_budget,  ///< the penalized L1 norm sum_j f_j s_j |beta_j| of the solution
};

/// Which penalty the axis shows.
enum class PenaltyUnit {
  lambda,  ///< lambda of the objective 0.5 RSS + lambda sum f_j s_j |b_j|
  mu,      ///< the size-free mu = lambda / penalty_scale: lambda / sqrt(n) for standardized
           ///< columns, lambda / n otherwise (scaling.hpp)
};

/// How coefficient traces are scaled.
enum class CoefficientScale {
  per_sd,    ///< beta_j times the standard deviation of x_j: response units per SD of x_j,
             ///< comparable across predictors (needs ChartPath::predictor_sd)
  original,  ///< beta_j as fitted: response units per unit of x_j
};

/// Options of the path charts. Plain data with documented defaults; the
/// chart functions call validate().
struct ChartOptions {
  /// Width of the drawing in SVG user units (pixels); the height follows.
  double width = 880;
  /// Predictors that get a lane and a labelled trace: the first this many
  /// to enter. The rest are counted in a note (and drawn grey, unlabelled,
  /// in the traces). Must be >= 1.
  std::size_t max_predictors = 25;
  /// Penalty or L1 budget along the horizontal axis.
  HorizontalAxis axis = HorizontalAxis::penalty;
  /// Log scale for the penalty (ignored for the L1 budget). The end of the
  /// path at penalty 0 then sits beyond a break in the axis, labelled 0.
  bool log_penalty = true;
  /// true: strong penalty on the left, so the model grows from left to
  /// right; false: penalty increasing from left to right. Either way the
  /// axis title says which.
  bool decreasing_penalty_left_to_right = true;
  /// lambda or mu on the penalty axis.
  PenaltyUnit penalty_unit = PenaltyUnit::lambda;
  /// Scale of the traced coefficients.
  CoefficientScale coefficient_scale = CoefficientScale::per_sd;
  /// Prefix of every id inside the SVG, so several charts can share one page.
  /// Letters, digits, '-' and '_' only, starting with a letter.
  std::string id_prefix = "kp";
  /// Title above the chart; empty gives a default.
  std::string title;

  /// Throws invalid_option naming the first bad field.
  void validate() const;
};

/// One point of a cross-validation curve.
struct SelectionPoint {
  double penalty = 0;         ///< mu (or lambda) of this point
  double mean_error = 0;      ///< mean over folds of the held-out error
  double standard_error = 0;  ///< its standard error (>= 0)
};

/// An information criterion along the path.
struct CriterionCurve {
  std::string name;                               ///< e.g. "AIC", "BIC", "Mallows' Cp"
  std::vector<std::pair<double, double>> values;  ///< (penalty, criterion value)
};

/// A selection curve as the chart sees it; the selection code fills it.
struct SelectionCurve {
  std::string penalty_name = "mu";  ///< "mu" or "lambda": what `penalty` holds
  /// For mu: whether the path was standardized (mu = lambda / sqrt(n)) or
  /// not (mu = lambda / n); only the axis title reads it.
  bool standardized = true;
  /// Name of the error measure, shown on the chart.
  std::string error_name = "mean squared prediction error";
  std::string error_unit;              ///< e.g. "(kg/m2)^2"; empty: "response units squared"
  std::size_t folds = 0;               ///< cross-validation folds (0: unknown)
  std::size_t repeats = 1;             ///< fold assignments averaged (repeated cross-validation)
  std::vector<SelectionPoint> points;  ///< the curve, any order (sorted when drawn)
  double minimizer = std::numeric_limits<double>::quiet_NaN();      ///< penalty of least mean error
  double minimum_error = std::numeric_limits<double>::quiet_NaN();  ///< the least mean error
  double one_se = std::numeric_limits<double>::quiet_NaN();         ///< one-standard-error choice
  /// The standard error at the minimizer, which sets the one-standard-error
  /// threshold minimum_error + threshold_standard_error (NaN: read off the
  /// point nearest the minimizer).
  double threshold_standard_error = std::numeric_limits<double>::quiet_NaN();
  std::vector<CriterionCurve> criteria;  ///< drawn on the second panel (may be empty)

  /// Throws invalid_option naming the first problem.
  void validate() const;
};

/// The selection curve of an exact cross-validation (cross_validation.hpp) on the
/// size-free axis mu: the curve at every merged knot plus
/// `samples_per_piece` points inside each piece (the curve is quadratic in
/// mu there), the exact minimizer and the one-standard-error choice, and,
/// when `criteria` is given, Mallows' Cp, AIC and BIC at the path's knots.
template <class Scalar>
SelectionCurve selection_curve(const CrossValidation<Scalar>& cv,
                               const InformationCriteria<Scalar>* criteria = nullptr,
                               int samples_per_piece = 6) {
  using knotpath::detail::to_double;
  SelectionCurve out;
  out.penalty_name = "mu";
  out.standardized = cv.full_path.preparation().standardized;
  out.folds = cv.folds_per_repeat();
  out.repeats = cv.repeats;
  auto add = [&](const Scalar& mu) {
    const CurvePoint<Scalar> q = cv.point_at_mu(mu);
    out.points.push_back({to_double(q.mu), to_double(q.error), to_double(q.standard_error)});
  };
  for (const auto& piece : cv.pieces) {
    add(piece.mu_high);
    const double hi = to_double(piece.mu_high), lo = to_double(piece.mu_low);
    for (int i = 1; i < samples_per_piece; ++i) {
      const double t = static_cast<double>(i) / samples_per_piece;
      // Geometric spacing suits the log axis; linear when the piece reaches 0.
      const double mu = lo > 0 ? hi * std::pow(lo / hi, t) : hi + t * (lo - hi);
      add(Scalar(mu));
    }
  }
  if (!cv.pieces.empty()) add(cv.pieces.back().mu_low);
  add(cv.minimum.mu);
  add(cv.parsimonious.mu);
  out.minimizer = to_double(cv.minimum.mu);
  out.minimum_error = to_double(cv.minimum.error);
  out.one_se = to_double(cv.parsimonious.mu);
  out.threshold_standard_error = to_double(cv.minimum.standard_error);
  if (criteria) {
    CriterionCurve cp{"Mallows' Cp", {}}, aic{"AIC", {}}, bic{"BIC", {}};
    for (const auto& k : criteria->knots) {
      const double mu = to_double(k.mu);
      cp.values.emplace_back(mu, to_double(k.mallows_cp));
      if (std::isfinite(to_double(k.aic)))  // AIC is not defined where RSS = 0 or d >= n
        aic.values.emplace_back(mu, to_double(k.aic));
      bic.values.emplace_back(mu, to_double(k.bic));
    }
    out.criteria = {cp, aic, bic};
  }
  return out;
}

/// Chart 1: activity lanes (SVG 1.1 document text).
std::string activity_lanes_svg(const ChartPath& path, const ChartOptions& options = {});
/// Chart 2: coefficient traces (SVG 1.1 document text).
std::string coefficient_traces_svg(const ChartPath& path, const ChartOptions& options = {});
/// Chart 3: selection curve (SVG 1.1 document text). The horizontal axis
/// follows options.log_penalty and options.decreasing_penalty_left_to_right.
std::string selection_curve_svg(const SelectionCurve& curve, const ChartOptions& options = {});

/// One predictor's intervals in the adjusted-inference chart (original scale).
struct IntervalRow {
  std::string name;            ///< the predictor
  double estimate = 0;         ///< least-squares coefficient on the selected set
  double standard_error = 0;   ///< its standard error (> 0)
  double lower = 0;            ///< selection-adjusted interval (ends may be infinite)
  double upper = 0;            ///< (see lower)
  double naive_lower = 0;      ///< the interval that ignores the selection
  double naive_upper = 0;      ///< (see naive_lower)
  double p_value = 1;          ///< adjusted p-value
  double naive_p_value = 1;    ///< naive p-value
};

/// The predictors of one model (a point of the path) in the chart.
struct IntervalPanel {
  std::string heading;            ///< e.g. "least CV error, lambda 3.2, 4 active"
  std::vector<IntervalRow> rows;  ///< one per active predictor
};

/// Chart 5's data: selection-adjusted intervals beside naive ones, one panel
/// per model; the selection code fills it.
struct AdjustedIntervals {
  double level = 0.90;               ///< confidence level of both kinds of interval
  std::vector<IntervalPanel> panels;  ///< at least one row in all

  /// Throws invalid_option naming the first problem.
  void validate() const;
};

/// Chart 5: selection-adjusted intervals beside the naive ones (SVG 1.1
/// document text). The predictors have their own units, so each interval is
/// drawn in units of its estimate's standard error (value / SE): the naive
/// interval is then estimate/SE -+ z, and the distance of the adjusted one
/// from it shows what the selection costs. Ends beyond the drawn range, or
/// infinite, end in an arrow; 0 (no effect) is marked; the original-scale
/// numbers and both p-values are written beside each row.
std::string adjusted_intervals_svg(const AdjustedIntervals& intervals, const ChartOptions& options = {});

/// One predictor of chart 6: its share of active fold paths at the two
/// choices of a repeated cross-validation.
struct StabilityRow {
  std::string name;                ///< the predictor
  double least = 0;                ///< share of fold paths active at the least CV error, in [0, 1]
  double parsimonious = 0;         ///< share at the parsimonious choice, in [0, 1]
  bool least_full = false;         ///< active in the full path at the least CV error
  bool parsimonious_full = false;  ///< active in the full path at the parsimonious choice
};

/// Chart 6's data: how often each predictor is active across the fold
/// paths (cross_validation.hpp, predictor_activity); the selection code fills it.
struct StabilityBars {
  std::size_t fold_paths = 0;      ///< R K, the fold paths counted (> 0)
  std::size_t seeds = 0;           ///< R, the fold assignments
  std::vector<StabilityRow> rows;  ///< drawn top to bottom in this order (at least one)

  /// Throws invalid_option naming the first problem.
  void validate() const;
};

/// Chart 6: one row per predictor with two bars on a 0-100% axis, its
/// share of active fold paths at the least CV error (upper, blue) and at
/// the parsimonious choice (lower, orange); a filled square at the bar's
/// end when the full path has the predictor there, a hollow one when not;
/// the percentages written at the right (SVG 1.1 document text).
std::string stability_bars_svg(const StabilityBars& bars, const ChartOptions& options = {});

/// A table of numbers in the HTML report, under its own heading. Plain
/// data: the caller formats every cell (the report prints them as given),
/// so a table shows the same digits as the caller's text output.
struct ReportTable {
  /// Heading of the section (an h2 element).
  std::string heading;
  /// id of the table element: letters, digits, '-' and '_', starting with a
  /// letter, unique on the page.
  std::string id;
  /// Sentences above the table, one paragraph each (may be empty).
  std::vector<std::string> lead;
  /// Header cells, one per column; empty (with no rows): the section shows
  /// only its sentences, e.g. why the numbers are missing.
  std::vector<std::string> columns;
  /// Whether each column holds text (left-aligned) rather than numbers
  /// (right-aligned); empty: the first column is text, the others numbers.
  std::vector<bool> text_columns;
  /// The rows, each with exactly one cell per column.
  std::vector<std::vector<std::string>> rows;
  /// Rows to highlight (indices into `rows`), e.g. where a criterion is least.
  std::vector<std::size_t> marked_rows;
  /// What a highlighted row means, shown under the table when some are marked.
  std::string marked_meaning;
  /// Notes under the table, one list item each.
  std::vector<std::string> notes;

  /// Throws invalid_option naming the first problem (a bad id, a row of the
  /// wrong width, a marked row out of range).
  void validate() const;
};

/// Options of the HTML report.
struct ReportOptions {
  /// Title of the page (HTML title and heading).
  std::string title = "knotpath report";
  /// Lines of the summary box, (label, value), e.g. ("data", "demo.csv").
  std::vector<std::pair<std::string, std::string>> summary;
  /// Options of the embedded charts (ids are prefixed per chart).
  ChartOptions charts;
  /// Also draw the traces against the L1 budget.
  bool include_budget_traces = true;
  /// Cautions shown in a box below the summary, one item each (e.g. the
  /// assumptions behind p-values); empty: no box.
  std::vector<std::string> cautions;
  /// Tables of numbers shown after the charts and before the audit of
  /// events (e.g. a selection's choices, criteria and tests), in this order.
  std::vector<ReportTable> tables;
  /// Selection-adjusted intervals (chart 5), drawn after the selection
  /// curve and written as intervals.svg; empty panels: none.
  AdjustedIntervals adjusted_intervals;
  /// Stability of the predictors across fold paths (chart 6), drawn after
  /// the intervals and written as stability.svg; no rows: none.
  StabilityBars stability;
};

/// Chart 4: the one-page report as XHTML-compatible HTML text: summary,
/// the charts inline as SVG, the tables of ReportOptions::tables, and the
/// audit table of events. `selection`
/// may be null (no selection section).
std::string report_html(const ChartPath& path, const ReportOptions& options = {},
                        const SelectionCurve* selection = nullptr);

/// Writes `dir`/report.html and the charts as separate files
/// (`dir`/activity.svg, traces.svg, budget.svg when asked, selection.svg
/// when `selection` is given), creating `dir` if needed. Returns the files
/// written. Throws io::output_error (io/report.hpp) when a file cannot be written.
std::vector<std::filesystem::path> write_report(const std::filesystem::path& dir,
                                                const ChartPath& path,
                                                const ReportOptions& options = {},
                                                const SelectionCurve* selection = nullptr);

namespace detail {

/// Ticks of a linear axis covering [lo, hi]: steps of 1, 2 or 5 x 10^k,
/// about `target` of them, ascending, all inside [lo, hi] (up to rounding).
std::vector<double> linear_ticks(double lo, double hi, int target = 6);
/// Ticks of a log axis over [lo, hi] (0 < lo < hi): powers of ten, with 2
/// and 5 between them when the range is short; ascending, inside [lo, hi].
std::vector<double> log_ticks(double lo, double hi);
/// Tick label: the shortest of %g-style forms that reads back as `value`
/// rounded to `step`/1000 (no 0.30000000000000004).
std::string tick_label(double value, double step);
/// Positions for labels wanted at `wanted` (any order) so that neighbours
/// are at least `gap` apart and all lie in [lo, hi] (as far as they fit);
/// each output moves its own input as little as the constraints allow
/// (pool-adjacent-violators on the sorted order). Same order as `wanted`.
std::vector<double> spread_labels(const std::vector<double>& wanted, double gap, double lo,
                                  double hi);
/// Escapes &, <, >, " and ' for XML text and attributes.
std::string xml_escape(const std::string& text);

}  // namespace detail

}  // namespace knotpath::charts
