// Chart 5: selection-adjusted intervals beside naive ones. One panel per
// model (a point of the path), one row per active predictor; each row holds
// two bars on a shared axis in units of the estimate's standard error: the
// adjusted interval (thick, blue) above the naive one (thin, grey), the
// estimate as a dot on both, 0 (no effect) as a vertical rule. Numbers on
// the original scale are written at the right of each row.
#include <algorithm>
#include <cstdio>
#include <cmath>
#include <limits>
#include <string>

#include <knotpath/errors.hpp>
#include <knotpath/io/charts.hpp>

#include "axis.hpp"
#include "canvas.hpp"

namespace knotpath::charts {

namespace {

using namespace detail;

constexpr double kRow = 30;         // height of one predictor's row
constexpr double kPanelHead = 26;   // the panel's heading
constexpr double kLimit = 12;       // drawn range at most -+ 12 standard errors
constexpr const char* kAdjusted = "#0072B2";
constexpr const char* kNaive = "#8C8C8C";

std::string end_text(double v) {
  if (v == std::numeric_limits<double>::infinity()) return "\xE2\x88\x9E";
  if (v == -std::numeric_limits<double>::infinity()) return "\xE2\x88\x92\xE2\x88\x9E";
  return format_value(v);
}

std::string p_text(double p) {
  if (!std::isfinite(p)) return "-";
  if (p < 1e-4) return "<1e-4";
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.3g", p);
  return buffer;
}

std::string percent(double level) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%g%%", 100 * level);
  return buffer;
}

// "[lo, hi]  p P" of one interval.
std::string interval_words(double lo, double hi, double p) {
  return "[" + end_text(lo) + ", " + end_text(hi) + "]  p " + p_text(p);
}


// The drawn range in standard errors: every finite end, within -+ kLimit,
// and 0.
std::pair<double, double> range_of(const AdjustedIntervals& a) {
  double lo = -1, hi = 1;
  for (const auto& panel : a.panels)
    for (const auto& r : panel.rows)
      for (double v : {r.lower, r.upper, r.naive_lower, r.naive_upper, r.estimate}) {
        const double t = v / r.standard_error;
        if (!std::isfinite(t)) continue;
        lo = std::min(lo, std::max(t, -kLimit));
        hi = std::max(hi, std::min(t, kLimit));
      }
  return {lo, hi};
}

}  // namespace

void AdjustedIntervals::validate() const {
  if (!(level > 0 && level < 1)) throw invalid_option("adjusted_intervals.level", "must lie in (0, 1)");
  std::size_t rows = 0;
  for (const auto& panel : panels)
    for (const auto& r : panel.rows) {
      ++rows;
      if (!(r.standard_error > 0) || !std::isfinite(r.standard_error) || !std::isfinite(r.estimate))
        throw invalid_option("adjusted_intervals.rows",
                             "each row needs a finite estimate and a standard error > 0 (" + r.name + ")");
      if (!(r.lower <= r.upper) || !(r.naive_lower <= r.naive_upper))
        throw invalid_option("adjusted_intervals.rows", "an interval's ends are out of order (" + r.name + ")");
    }
  if (rows == 0) throw invalid_option("adjusted_intervals.panels", "no predictor to draw");
}

std::string adjusted_intervals_svg(const AdjustedIntervals& a, const ChartOptions& o) {
  o.validate();
  a.validate();
  const double left = 170, right = o.width - 250, top = 58;
  std::size_t rows = 0;
  for (const auto& panel : a.panels) rows += panel.rows.size();
  const double plot_height = static_cast<double>(a.panels.size()) * kPanelHead + static_cast<double>(rows) * kRow;
  Canvas c(o.width, top + plot_height + 110);
  const std::string title =
      o.title.empty() ? "Selection-adjusted " + percent(a.level) + " intervals beside naive ones" : o.title;
  c.text(16, 24, title, "start", 16, "font-weight=\"bold\"");
  c.text(16, 43,
         "blue: adjusted for the selection; grey: ignoring it; dot: estimate; units: standard errors of each "
         "estimate",
         "start", 11.5, "fill=\"" + std::string(kMuted) + "\"");
  const auto [lo, hi] = range_of(a);
  const Scale s = linear_scale(lo - 0.04 * (hi - lo), hi + 0.04 * (hi - lo), left, right);
  const double bottom = top + plot_height;
  draw_x_axis(c, s, bottom + 6, top, {"coefficient / its standard error (0: no effect)", "", ""});
  c.line(s(0), top, s(0), bottom + 6, "class=\"zero\" stroke=\"" + std::string(kInk) + "\" stroke-width=\"1\"");
  c.text(right + 12, top - 6, "original scale: adjusted [naive]", "start", 10.5, "fill=\"" + std::string(kMuted) + "\"");
  // One bar: its ends clipped to the drawn range, an arrow where clipped.
  auto bar = [&](double y, double from, double to, const char* colour, double width, const std::string& cls) {
    const double x0 = std::clamp(from, s.lo, s.hi), x1 = std::clamp(to, s.lo, s.hi);
    c.line(s(x0), y, s(x1), y,
           "class=\"" + cls + "\" stroke=\"" + colour + "\" stroke-width=\"" + num(width) + "\" stroke-linecap=\"butt\"");
    const double head = width + 4;
    if (!(from >= s.lo)) c.polygon({{s(s.lo) - head, y}, {s(s.lo), y - head}, {s(s.lo), y + head}}, std::string("fill=\"") + colour + "\"");
    if (!(to <= s.hi)) c.polygon({{s(s.hi) + head, y}, {s(s.hi), y - head}, {s(s.hi), y + head}}, std::string("fill=\"") + colour + "\"");
  };
  double y = top;
  int panel_index = 0;
  for (const auto& panel : a.panels) {
    c.text(16, y + 17, panel.heading, "start", 12.5, "font-weight=\"bold\"");
    y += kPanelHead;
    for (const auto& r : panel.rows) {
      const double se = r.standard_error;
      if (panel_index++ % 2 == 0) c.rect(8, y, o.width - 16, kRow, "fill=\"#F5F7FA\" stroke=\"none\"");
      c.open_group("class=\"interval-row\"");
      c.title(r.name + ": estimate " + format_value(r.estimate) + ", adjusted " +
              interval_words(r.lower, r.upper, r.p_value) + ", naive " +
              interval_words(r.naive_lower, r.naive_upper, r.naive_p_value));
      c.text(left - 10, y + kRow / 2 + 4, shorten(r.name, 24), "end", 12);
      const double ya = y + kRow / 2 - 4, yn = y + kRow / 2 + 6;
      bar(ya, r.lower / se, r.upper / se, kAdjusted, 4.5, "adjusted");
      bar(yn, r.naive_lower / se, r.naive_upper / se, kNaive, 2, "naive");
      const double xe = std::clamp(r.estimate / se, s.lo, s.hi);
      c.circle(s(xe), ya, 3.6, "fill=\"#FFFFFF\" stroke=\"" + std::string(kInk) + "\" stroke-width=\"1.4\"");
      c.circle(s(xe), yn, 2.4, "fill=\"" + std::string(kInk) + "\" stroke=\"none\"");
      c.text(right + 12, y + kRow / 2 - 1, interval_words(r.lower, r.upper, r.p_value), "start", 10.5,
             "fill=\"" + std::string(kTextPalette[0]) + "\"");
      c.text(right + 12, y + kRow / 2 + 11, interval_words(r.naive_lower, r.naive_upper, r.naive_p_value), "start",
             10.5, "fill=\"" + std::string(kMuted) + "\"");
      c.close_group();
      y += kRow;
    }
  }
  c.text(16, bottom + 66,
         "Both intervals at level " + percent(a.level) +
             " for the coefficient in the least-squares fit on the selected predictors (not in a model with all "
             "of them).",
         "start", 11, "fill=\"" + std::string(kMuted) + "\"");
  c.text(16, bottom + 82,
         "Arrows: the interval reaches beyond the drawn range (" + format_value(kLimit) +
             " standard errors) or is unbounded on that side.",
         "start", 11, "fill=\"" + std::string(kMuted) + "\"");
  return c.document(title, "selection-adjusted and naive confidence intervals per predictor", "",
                    "knotpath-intervals");
}

}  // namespace knotpath::charts
