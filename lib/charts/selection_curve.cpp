// Chart 3: the selection curve. Upper panel: cross-validated error with its
// standard-error band, the minimizer, the one-standard-error choice and the
// threshold between them; lower panel (when given): information criteria,
// each rescaled to its own range on the path.
#include <algorithm>
#include <cmath>
#include <functional>
#include <limits>

#include <knotpath/io/charts.hpp>

#include "axis.hpp"
#include "canvas.hpp"

namespace knotpath::charts {

namespace {

using namespace detail;

using Points = std::vector<std::pair<double, double>>;

// Greek letter of the curve's penalty, or its name as given.
std::string curve_symbol(const SelectionCurve& curve) {
  return curve.penalty_name == "lambda" ? "\xCE\xBB"
         : curve.penalty_name == "mu"   ? "\xCE\xBC"
                                        : curve.penalty_name;
}

std::vector<SelectionPoint> by_decreasing_penalty(const SelectionCurve& curve) {
  std::vector<SelectionPoint> pts = curve.points;
  std::sort(pts.begin(), pts.end(),
            [](const SelectionPoint& a, const SelectionPoint& b) { return a.penalty > b.penalty; });
  return pts;
}

// The error axis: round-number ticks over mean +- one standard error.
struct ErrorAxis {
  std::vector<double> ticks;
  double step = 1;
  double lo = 0, hi = 1;
  double top = 0, height = 1;
  double operator()(double v) const { return top + height - (v - lo) / (hi - lo) * height; }
};

ErrorAxis error_axis(const std::vector<SelectionPoint>& pts, double top, double height) {
  double lo = std::numeric_limits<double>::infinity(), hi = -lo;
  for (const auto& q : pts) {
    lo = std::min(lo, q.mean_error - q.standard_error);
    hi = std::max(hi, q.mean_error + q.standard_error);
  }
  if (!(hi > lo)) hi = lo + 1;
  ErrorAxis e;
  e.ticks = detail::linear_ticks(lo, hi, 6);
  e.step = e.ticks.size() > 1 ? e.ticks[1] - e.ticks[0] : 1;
  e.lo = std::floor(lo / e.step - 1e-9) * e.step;
  e.hi = std::ceil(hi / e.step + 1e-9) * e.step;
  e.ticks = detail::linear_ticks(e.lo, e.hi, 6);
  e.top = top;
  e.height = height;
  return e;
}

class SelectionChart {
 public:
  SelectionChart(const SelectionCurve& curve, const ChartOptions& o)
      : curve_(curve),
        o_(o),
        pts_(by_decreasing_penalty(curve)),
        sym_(curve_symbol(curve)),
        has_criteria_(!curve.criteria.empty()),
        crit_h_(has_criteria_ ? 170 : 0),
        bottom_(has_criteria_ ? crit_top_ + crit_h_ : top_ + panel_h_),
        s_(penalty_scale()),
        c_(o.width, bottom_ + 120),
        e_(error_axis(pts_, top_, panel_h_)) {}

  std::string draw();

 private:
  Scale penalty_scale() const;
  void draw_heading(const std::string& title);
  void draw_error_panel();
  void draw_markers();
  void marker(double pen, double other, const std::string& colour, const std::string& dash,
              const std::string& label, int row, const std::string& cls);
  void draw_threshold();
  void draw_criteria_panel();
  void draw_criterion(std::size_t i, double& legend_x, const std::function<double(double)>& cy);
  AxisText axis_text() const;

  const SelectionCurve& curve_;
  const ChartOptions& o_;
  const std::vector<SelectionPoint> pts_;  // by decreasing penalty
  const std::string sym_;
  const double left_ = 76, right_ = o_.width - 30;
  const double top_ = 84, panel_h_ = 290;
  const bool has_criteria_;
  const double crit_top_ = top_ + panel_h_ + 40, crit_h_;
  const double bottom_;
  const Scale s_;
  Canvas c_;
  const ErrorAxis e_;
  // Marker labels, painted after every line on a light box so lines never cross them.
  std::vector<std::function<void()>> pending_;
};

// The curve's penalties (and the criteria's) are drawn as given.
Scale SelectionChart::penalty_scale() const {
  std::vector<double> pens;
  for (const auto& q : pts_) pens.push_back(q.penalty);
  for (const auto& cc : curve_.criteria)
    for (const auto& [x, v] : cc.values) pens.push_back(x);
  ChartOptions xo = o_;
  xo.penalty_unit = PenaltyUnit::lambda;
  return penalty_axis_scale(pens, xo, left_, right_);
}

void SelectionChart::draw_heading(const std::string& title) {
  c_.text(16, 24, title, "start", 16, "font-weight=\"bold\"");
  c_.text(16, 43,
          "cross-validated " + curve_.error_name +
              (curve_.folds ? " (" + std::to_string(curve_.folds) + " folds" +
                                  (curve_.repeats > 1 ? ", averaged over " +
                                                            std::to_string(curve_.repeats) + " seeds"
                                                      : std::string()) +
                                  ")"
                            : std::string()) +
              ", with a band of \xC2\xB1" + "1 standard error",
          "start", 12, "fill=\"" + std::string(kMuted) + "\"");
}

// Upper panel: frame, error ticks, axis title, the band and the curve.
void SelectionChart::draw_error_panel() {
  c_.rect(left_, top_, right_ - left_, panel_h_,
          "fill=\"#FBFBFC\" stroke=\"" + std::string(kGrid) + "\"");
  c_.open_group("class=\"y-axis\"");
  for (double v : e_.ticks) {
    c_.line(left_, e_(v), right_, e_(v), "stroke=\"" + std::string(kGrid) + "\"");
    c_.open_group("class=\"y-tick\"");
    c_.line(left_ - 5, e_(v), left_, e_(v), "stroke=\"" + std::string(kInk) + "\"");
    c_.text(left_ - 8, e_(v) + 4, detail::tick_label(v, e_.step), "end", 11);
    c_.close_group();
  }
  c_.close_group();
  const std::string unit = curve_.error_unit.empty() ? "response units squared" : curve_.error_unit;
  vertical_title(c_, 18, top_ + panel_h_ / 2, "held-out error, " + unit, 12, -90);
  Points band, line;
  for (const auto& q : pts_) band.emplace_back(s_(q.penalty), e_(q.mean_error + q.standard_error));
  for (auto it = pts_.rbegin(); it != pts_.rend(); ++it)
    band.emplace_back(s_(it->penalty), e_(it->mean_error - it->standard_error));
  for (const auto& q : pts_) line.emplace_back(s_(q.penalty), e_(q.mean_error));
  c_.polygon(band, "class=\"se-band\" fill=\"#56B4E9\" fill-opacity=\"0.32\" stroke=\"none\"");
  c_.polyline(line, "class=\"cv-error\" stroke=\"#0072B2\" stroke-width=\"2\"");
  if (pts_.size() == 1) c_.circle(line[0].first, line[0].second, 3, "fill=\"#0072B2\"");
}

// A vertical marker at penalty `pen`; its label goes on the side away from
// the other marker at `other` (when it fits), so no label crosses the other line.
void SelectionChart::marker(double pen, double other, const std::string& colour,
                            const std::string& dash, const std::string& label, int row,
                            const std::string& cls) {
  const double x = s_(pen);
  c_.open_group("class=\"" + cls + "\"");
  c_.line(x, top_, x, bottom_,
          "stroke=\"" + colour + "\" stroke-width=\"1.6\"" +
              (dash.empty() ? "" : " stroke-dasharray=\"" + dash + "\""));
  const double w = text_width(label, 11) + 8;
  bool on_left = std::isfinite(other) ? s_(other) > x : x > (left_ + right_) / 2;
  if (on_left && x - w < left_) on_left = false;
  if (!on_left && x + w > right_) on_left = true;
  c_.close_group();
  const double ty = top_ + 16 + 16 * row;
  Canvas& c = c_;
  pending_.push_back([&c, on_left, x, w, ty, label, colour, cls] {
    c.open_group("class=\"" + cls + "-label\"");
    c.rect(on_left ? x - 6 - w + 4 : x + 2, ty - 11, w, 15, "fill=\"#FFFFFF\"");
    c.text(on_left ? x - 6 : x + 6, ty, label, on_left ? "end" : "start", 11,
           "fill=\"" + colour + "\" font-weight=\"bold\"");
    c.close_group();
  });
}

// The one-SE threshold: least error plus the standard error there (dotted).
void SelectionChart::draw_threshold() {
  double se_at_min = curve_.threshold_standard_error, best = std::numeric_limits<double>::infinity();
  if (!std::isfinite(se_at_min))
    for (const auto& q : pts_)
      if (std::abs(q.penalty - curve_.minimizer) < best) {
        best = std::abs(q.penalty - curve_.minimizer);
        se_at_min = q.standard_error;
      }
  const double ty = e_(curve_.minimum_error + se_at_min);
  c_.line(left_, ty, right_, ty,
          "class=\"one-se-threshold\" stroke=\"#009E73\" stroke-width=\"1\" "
          "stroke-dasharray=\"1.5 3\"");
  c_.text(right_ - 4, ty - 4, "least error + 1 SE", "end", 10, "fill=\"#006B4F\"");
}

// Minimizer (solid vermillion), one-SE choice (dashed green) and the
// threshold between them; the labels last, over every line.
void SelectionChart::draw_markers() {
  if (std::isfinite(curve_.minimizer)) {
    std::string label = "least error";
    if (std::isfinite(curve_.minimum_error)) label += " " + format_value(curve_.minimum_error);
    label += " at " + sym_ + " = " + format_value(curve_.minimizer);
    marker(curve_.minimizer, curve_.one_se, "#D55E00", "", label, 0, "minimizer");
    if (std::isfinite(curve_.minimum_error)) draw_threshold();
  }
  if (std::isfinite(curve_.one_se))
    marker(curve_.one_se, curve_.minimizer, "#009E73", "6 4",
           "one-SE choice " + sym_ + " = " + format_value(curve_.one_se), 1, "one-se");
  for (auto& draw : pending_) draw();
}

// Criterion i: its line, a dot where it is least, and its legend entry.
void SelectionChart::draw_criterion(std::size_t i, double& legend_x,
                                    const std::function<double(double)>& cy) {
  const CriterionCurve& cc = curve_.criteria[i];
  std::vector<std::pair<double, double>> values = cc.values;
  std::sort(values.begin(), values.end(),
            [](const auto& a, const auto& b) { return a.first > b.first; });
  double m = std::numeric_limits<double>::infinity(), at = 0, top_value = -m;
  for (const auto& [x, v] : values) {
    if (v < m) {
      m = v;
      at = x;
    }
    top_value = std::max(top_value, v);
  }
  const double range = top_value > m ? top_value - m : 1.0;
  const std::string colour = kPalette[(i + 2) % kPaletteSize];
  const std::string dash = kDashes[(i + 1) % kDashCount];
  Points pl;
  for (const auto& [x, v] : values) pl.emplace_back(s_(x), cy((v - m) / range));
  c_.open_group("class=\"criterion\"");
  c_.title(cc.name);
  c_.polyline(pl,
              "stroke=\"" + colour + "\" stroke-width=\"1.8\" stroke-dasharray=\"" + dash + "\"");
  c_.circle(s_(at), cy(0), 4, "fill=\"" + colour + "\" stroke=\"#FFFFFF\" stroke-width=\"1\"");
  const std::string legend = cc.name + ": least at " + sym_ + " = " + format_value(at);
  c_.line(legend_x, crit_top_ + 14, legend_x + 22, crit_top_ + 14,
          "stroke=\"" + colour + "\" stroke-width=\"1.8\" stroke-dasharray=\"" + dash + "\"");
  c_.text(legend_x + 27, crit_top_ + 18, legend, "start", 11);
  legend_x += 27 + text_width(legend, 11) + 18;
  c_.close_group();
}

// Lower panel: each criterion rescaled to its own range on the path (0 at
// its least value, 1 at its largest), since Cp, AIC and BIC are measured on
// different scales; only where each is least matters for the choice.
void SelectionChart::draw_criteria_panel() {
  const double c_hi = 1.2;  // headroom for the legend row
  const std::vector<double> ct = {0, 0.25, 0.5, 0.75, 1};
  const double cstep = 0.25;
  const double crit_top = crit_top_, crit_h = crit_h_;
  const std::function<double(double)> cy = [=](double v) {
    return crit_top + crit_h - v / c_hi * crit_h;
  };
  c_.rect(left_, crit_top_, right_ - left_, crit_h_,
          "fill=\"#FBFBFC\" stroke=\"" + std::string(kGrid) + "\"");
  c_.open_group("class=\"y-axis criteria\"");
  for (double v : ct) {
    c_.line(left_, cy(v), right_, cy(v), "stroke=\"" + std::string(kGrid) + "\"");
    c_.line(left_ - 5, cy(v), left_, cy(v), "stroke=\"" + std::string(kInk) + "\"");
    c_.text(left_ - 8, cy(v) + 4, detail::tick_label(v, cstep), "end", 11);
  }
  c_.close_group();
  vertical_title(c_, 18, crit_top_ + crit_h_ / 2, "criterion, 0 = least, 1 = largest", 11, -90);
  double legend_x = left_ + 8;
  for (std::size_t i = 0; i < curve_.criteria.size(); ++i) draw_criterion(i, legend_x, cy);
}

AxisText SelectionChart::axis_text() const {
  ChartOptions ao = o_;
  ao.penalty_unit = curve_.penalty_name == "lambda" ? PenaltyUnit::lambda : PenaltyUnit::mu;
  AxisText text = penalty_axis_text(ao, s_.log, curve_.standardized);
  if (curve_.penalty_name != "lambda" && curve_.penalty_name != "mu") {
    text.title = "penalty " + curve_.penalty_name + (s_.log ? " (log scale)" : "") +
                 (o_.decreasing_penalty_left_to_right ? ", decreasing to the right"
                                                      : ", increasing to the right");
  }
  return text;
}

std::string SelectionChart::draw() {
  const std::string title = o_.title.empty() ? "Choosing the penalty" : o_.title;
  draw_heading(title);
  draw_error_panel();
  draw_markers();
  if (has_criteria_) draw_criteria_panel();
  const double y = draw_x_axis(c_, s_, bottom_, top_, axis_text());
  c_.set_height(y + 10);
  return c_.document(title, "cross-validation curve with standard-error band", "",
                     "knotpath-selection");
}

}  // namespace

std::string selection_curve_svg(const SelectionCurve& curve, const ChartOptions& o) {
  curve.validate();
  o.validate();
  return SelectionChart(curve, o).draw();
}

}  // namespace knotpath::charts
