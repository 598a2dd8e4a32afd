// Chart 2: coefficient traces against the penalty (log or linear, either
// direction) or the L1 budget, and each shown predictor named at the end of
// its trace, labels spread without overlap (leader lines when a label had to
// move). Knots are marked on the curves themselves: a ring where a predictor
// enters (filled) or leaves (open), on hidden traces too, and while the
// knots are few a dot on every trace at every knot. No marks outside the
// plotting area and no lines across it: the chart's look is our own.
#include <algorithm>
#include <cmath>

#include <knotpath/io/charts.hpp>

#include "axis.hpp"
#include "canvas.hpp"
#include "path_view.hpp"

namespace knotpath::charts {

namespace {

using namespace detail;

using Points = std::vector<std::pair<double, double>>;

// Where things go, and how coefficients are scaled.
struct TracesLayout {
  EntryOrder entries;
  std::size_t ever = 0;   // predictors that ever enter
  std::size_t shown = 0;  // of them, those labelled
  bool per_sd = false;    // coefficients times the SD of their predictor
  // Labels sit at the end of the path: on the right unless the penalty
  // increases to the right (then the path ends on the left).
  bool labels_right = true;
  double left = 0, right = 0;
  double top = 60;  // below the heading: nothing is drawn between it and the plot
  double label_gap = 13;
  double plot_h = 0, bottom = 0;
};

TracesLayout traces_layout(const ChartPath& p, const ChartOptions& o) {
  TracesLayout l;
  l.entries = entry_order(p);
  l.ever = l.entries.order.size();
  l.shown = std::min(l.ever, o.max_predictors);
  l.per_sd = o.coefficient_scale == CoefficientScale::per_sd && !p.predictor_sd.empty();
  l.labels_right = o.axis == HorizontalAxis::l1_budget || o.decreasing_penalty_left_to_right;
  double label_width = 40;
  for (std::size_t i = 0; i < l.shown; ++i)
    label_width = std::max(
        label_width,
        text_width(shorten(p.names[static_cast<std::size_t>(l.entries.order[i])], 24), 11));
  const double label_column = label_width + 34;
  const double axis_column = 70;
  l.left = l.labels_right ? axis_column : label_column + 8;
  l.right = l.labels_right ? o.width - label_column - 8 : o.width - axis_column;
  l.plot_h = std::clamp(l.label_gap * static_cast<double>(l.shown) + 40, 340.0, 1600.0);
  l.bottom = l.top + l.plot_h;
  return l;
}

// The vertical axis: round-number ticks over every drawn coefficient (0 included).
struct Vertical {
  std::vector<double> ticks;
  double step = 1;
  double lo = 0, hi = 1;
  double bottom = 0, height = 1;
  double operator()(double v) const { return bottom - (v - lo) / (hi - lo) * height; }
};

class TracesChart {
 public:
  TracesChart(const ChartPath& p, const ChartOptions& o)
      : p_(p),
        o_(o),
        l_(traces_layout(p, o)),
        c_(o.width, l_.bottom + 120),
        axis_(path_axis(p, o, l_.left, l_.right)),
        y_(vertical()),
        few_knots_(p.knots.size() <= 40) {}

  std::string draw();

 private:
  double scale_of(Index j) const {
    return l_.per_sd ? p_.predictor_sd[static_cast<std::size_t>(j)] : 1.0;
  }
  Vertical vertical() const;
  void draw_heading(const std::string& title);
  void draw_y_axis();
  void draw_hidden_traces();
  Points trace_points(Index j) const;
  void draw_trace(std::size_t ii, double end_y, double label_y);

  const ChartPath& p_;
  const ChartOptions& o_;
  const TracesLayout l_;
  Canvas c_;
  const PathAxis axis_;
  const Vertical y_;
  const bool few_knots_;  // a dot on every trace at every knot while readable
};

Vertical TracesChart::vertical() const {
  double ymin = 0, ymax = 0;
  for (const auto& k : p_.knots)
    for (const auto& [j, b] : k.coefficients) {
      ymin = std::min(ymin, b * scale_of(j));
      ymax = std::max(ymax, b * scale_of(j));
    }
  if (ymin == ymax) ymax = 1;
  Vertical v;
  v.ticks = detail::linear_ticks(ymin, ymax, 7);
  v.step = v.ticks.size() > 1 ? v.ticks[1] - v.ticks[0] : 1;
  v.lo = std::floor(ymin / v.step - 1e-9) * v.step;
  v.hi = std::ceil(ymax / v.step + 1e-9) * v.step;
  v.ticks = detail::linear_ticks(v.lo, v.hi, 7);
  v.bottom = l_.bottom;
  v.height = l_.plot_h;
  return v;
}

void TracesChart::draw_heading(const std::string& title) {
  c_.text(16, 24, title, "start", 16, "font-weight=\"bold\"");
  const std::string what =
      l_.per_sd ? "coefficient \xC3\x97 SD of its predictor" : "coefficient as fitted";
  c_.text(16, 43,
          p_.variant + " path of " + p_.response_name + "; " + what +
              "; rings mark entries (filled) and exits (open)" +
              (few_knots_ ? "; dots mark the other knots" : ""),
          "start", 12, "fill=\"" + std::string(kMuted) + "\"");
}

// Frame, horizontal grid and the vertical axis with its title.
void TracesChart::draw_y_axis() {
  const double left = l_.left, right = l_.right;
  const bool labels_right = l_.labels_right;
  c_.rect(left, l_.top, right - left, l_.plot_h,
          "fill=\"#FBFBFC\" stroke=\"" + std::string(kGrid) + "\"");
  const double axis_x = labels_right ? left : right;
  c_.open_group("class=\"y-axis\"");
  for (double v : y_.ticks) {
    const double y = y_(v);
    c_.line(left, y, right, y,
            "stroke=\"" + std::string(v == 0 ? "#9A9A9A" : kGrid) + "\" stroke-width=\"" +
                (v == 0 ? "1.2" : "1") + "\"");
    c_.open_group("class=\"y-tick\"");
    c_.line(axis_x - (labels_right ? 5 : 0), y, axis_x + (labels_right ? 0 : 5), y,
            "stroke=\"" + std::string(kInk) + "\"");
    c_.text(labels_right ? axis_x - 8 : axis_x + 8, y + 4, detail::tick_label(v, y_.step),
            labels_right ? "end" : "start", 11);
    c_.close_group();
  }
  c_.close_group();
  const std::string ytitle = l_.per_sd ? p_.response_name + " per SD of predictor"
                                       : p_.response_name + " per unit of predictor";
  vertical_title(c_, labels_right ? 16 : o_.width - 16, l_.top + l_.plot_h / 2, ytitle, 12,
                 labels_right ? -90 : 90);
}

// Hidden predictors, grey and thin under the labelled ones, with small grey
// rings at their entries and exits so that every event knot is marked on a curve.
void TracesChart::draw_hidden_traces() {
  if (l_.ever <= l_.shown) return;
  c_.open_group("class=\"hidden-traces\"");
  for (std::size_t i = l_.shown; i < l_.ever; ++i)
    c_.polyline(trace_points(l_.entries.order[i]), "stroke=\"#C4C4C4\" stroke-width=\"0.8\"");
  for (std::size_t i = l_.shown; i < l_.ever; ++i) {
    const Index j = l_.entries.order[i];
    for (std::size_t k = l_.entries.first_knot.at(j); k < p_.knots.size(); ++k) {
      const ChartKnot& knot = p_.knots[k];
      if (knot.predictor != j) continue;
      const double x = axis_.knot_x[k], y = y_(coefficient(knot, j) * scale_of(j));
      if (knot.event == EventKind::enter)
        c_.circle(x, y, 2.4, "class=\"enter\" fill=\"#A8A8A8\"");
      else if (knot.event == EventKind::leave)
        c_.circle(x, y, 2.4, "class=\"leave\" fill=\"#FFFFFF\" stroke=\"#A8A8A8\"");
    }
  }
  c_.close_group();
}

// One trace: the points of predictor j from its first entry to the end.
Points TracesChart::trace_points(Index j) const {
  const Scale& s = axis_.scale;
  const double u = unit_factor(p_, o_);
  Points pts;
  const std::size_t first = l_.entries.first_knot.at(j);
  const double sc = scale_of(j);
  for (std::size_t k = first; k < p_.knots.size(); ++k) {
    const double b = coefficient(p_.knots[k], j) * sc;
    if (k > first && s.log && o_.axis == HorizontalAxis::penalty && p_.knots[k].penalty > 0) {
      // Coefficients are linear in the penalty; on a log axis that is a
      // curve, so sample the segment geometrically.
      const double la = p_.knots[k - 1].penalty, lb = p_.knots[k].penalty;
      const double a = coefficient(p_.knots[k - 1], j) * sc;
      if (la > lb && la / lb > 1.05 && a != b) {
        for (int i = 1; i < 12; ++i) {
          const double lam = la * std::pow(lb / la, i / 12.0);
          pts.emplace_back(s(lam * u), y_(a + (la - lam) / (la - lb) * (b - a)));
        }
      }
    }
    pts.emplace_back(axis_.knot_x[k], y_(b));
  }
  return pts;
}

// Trace ii (in order of entry): line, event rings, knot dots, and its label
// at `label_y` joined by a leader to the end of the trace at `end_y`.
void TracesChart::draw_trace(std::size_t ii, double end_y, double label_y) {
  const Index j = l_.entries.order[ii];
  const std::string colour = kPalette[ii % kPaletteSize];
  const std::string dash = kDashes[(ii / kPaletteSize) % kDashCount];
  const std::string& name = p_.names[static_cast<std::size_t>(j)];
  c_.open_group("class=\"trace\" id=\"" + id(o_, "trace-" + std::to_string(ii + 1)) + "\"");
  c_.title(name);
  c_.polyline(trace_points(j),
              "stroke=\"" + colour + "\" stroke-width=\"2\"" +
                  (dash[0] ? " stroke-dasharray=\"" + std::string(dash) + "\"" : ""));
  for (std::size_t k = l_.entries.first_knot.at(j); k < p_.knots.size(); ++k) {
    const ChartKnot& knot = p_.knots[k];
    const double x = axis_.knot_x[k], y = y_(coefficient(knot, j) * scale_of(j));
    if (knot.predictor == j && knot.event == EventKind::enter)
      c_.circle(x, y, 4,
                "class=\"enter\" fill=\"" + colour + "\" stroke=\"#FFFFFF\" stroke-width=\"1.2\"");
    else if (knot.predictor == j && knot.event == EventKind::leave)
      c_.circle(x, y, 4,
                "class=\"leave\" fill=\"#FFFFFF\" stroke=\"" + colour + "\" stroke-width=\"1.8\"");
    else if (few_knots_)
      c_.circle(x, y, 1.9, "class=\"knot-dot\" fill=\"" + colour + "\"");
  }
  const bool labels_right = l_.labels_right;
  const double lx = labels_right ? l_.right + 22 : l_.left - 22;
  const double stub = labels_right ? l_.right + 6 : l_.left - 6;
  c_.polyline({{axis_.end_x, end_y}, {stub, end_y}, {lx - (labels_right ? 4 : -4), label_y}},
              "class=\"leader\" stroke=\"" + colour + "\" stroke-width=\"0.8\" opacity=\"0.8\"");
  c_.text(lx, label_y + 4, shorten(name, 24), labels_right ? "start" : "end", 11,
          "fill=\"" + std::string(kTextPalette[ii % kPaletteSize]) + "\"");
  c_.close_group();
}

std::string TracesChart::draw() {
  const std::string title =
      o_.title.empty() ? "How each coefficient moves along the path" : o_.title;
  draw_heading(title);
  draw_y_axis();
  draw_hidden_traces();  // first: under the labelled ones
  // Label positions at the end of the path, spread without overlap.
  std::vector<double> wanted;
  for (std::size_t i = 0; i < l_.shown; ++i) {
    const Index j = l_.entries.order[i];
    wanted.push_back(y_(coefficient(p_.knots.back(), j) * scale_of(j)));
  }
  const std::vector<double> placed =
      detail::spread_labels(wanted, l_.label_gap, l_.top + 6, l_.bottom - 2);
  for (std::size_t ii = l_.shown; ii-- > 0;)  // first entrants drawn last, on top
    draw_trace(ii, wanted[ii], placed[ii]);

  const double y = draw_x_axis(c_, axis_.scale, l_.bottom, l_.top, axis_.text);
  std::string note = hidden_note(l_.shown, l_.ever, p_.names.size());
  if (l_.ever > l_.shown) note += " Hidden ones are drawn thin grey, without labels.";
  c_.text(16, y + 8, note, "start", 11, "fill=\"" + std::string(kMuted) + "\"");
  c_.text(16, y + 24,
          end_note(p_) + (l_.per_sd ? "" : " Slopes are in the units of their own predictors."),
          "start", 11, "fill=\"" + std::string(kMuted) + "\"");
  c_.set_height(y + 36);
  return c_.document(title, note, "", "knotpath-traces");
}

}  // namespace

std::string coefficient_traces_svg(const ChartPath& p, const ChartOptions& o) {
  p.validate();
  o.validate();
  return TracesChart(p, o).draw();
}

}  // namespace knotpath::charts
