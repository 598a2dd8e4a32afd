// Axis ticks, tick labels, label spreading, XML escaping, the horizontal
// scales and the x axis of the charts (axis.hpp).
#include "axis.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <limits>
#include <numeric>

#include <knotpath/errors.hpp>
#include <knotpath/io/charts.hpp>

namespace knotpath::charts {

namespace detail {

namespace {
// Heckbert's nice number: 1, 2, 5 or 10 times a power of ten near `x`.
double nice_step(double x) {
  const double exponent = std::floor(std::log10(x));
  const double base = std::pow(10.0, exponent);
  const double f = x / base;
  double nice = 10;
  if (f < 1.5)
    nice = 1;
  else if (f < 3)
    nice = 2;
  else if (f < 7)
    nice = 5;
  return nice * base;
}
}  // namespace

std::vector<double> linear_ticks(double lo, double hi, int target) {
  std::vector<double> ticks;
  if (!std::isfinite(lo) || !std::isfinite(hi)) return ticks;
  if (hi < lo) std::swap(lo, hi);
  if (hi == lo) return {lo};
  const double step = nice_step((hi - lo) / std::max(1, target - 1));
  // Tolerance for "inside": a millionth of a step absorbs rounding of k*step.
  const double slack = step * 1e-6;
  const double first = std::ceil((lo - slack) / step);
  for (double k = first;; k += 1) {
    double v = k * step;
    if (v > hi + slack) break;
    if (std::abs(v) < slack) v = 0;  // no "-0" or 1e-17 at the origin
    ticks.push_back(v);
  }
  return ticks;
}

std::vector<double> log_ticks(double lo, double hi) {
  std::vector<double> ticks;
  if (!(lo > 0) || !(hi > lo) || !std::isfinite(hi)) return ticks;
  const double decades = std::log10(hi / lo);
  // Short ranges also get 2 and 5 times each power of ten; very long ones
  // keep every second or third power so labels do not crowd.
  std::vector<double> mantissas =
      decades < 2.5 ? std::vector<double>{1, 2, 5} : std::vector<double>{1};
  const int stride = decades > 14 ? 3 : decades > 7 ? 2 : 1;
  const int e0 = static_cast<int>(std::floor(std::log10(lo))) - 1;
  const int e1 = static_cast<int>(std::ceil(std::log10(hi))) + 1;
  const double slack = 1e-9;
  for (int e = e0; e <= e1; ++e) {
    if (stride > 1 && ((e % stride) + stride) % stride != 0) continue;
    for (double m : mantissas) {
      // Parse the decimal text so 5e-3 is the double nearest 0.005.
      char buf[32];
      std::snprintf(buf, sizeof buf, "%ge%d", m, e);
      const double v = std::strtod(buf, nullptr);
      if (v >= lo * (1 - slack) && v <= hi * (1 + slack)) ticks.push_back(v);
    }
  }
  // A range narrower than one 1-2-5 step: fall back to linear ticks.
  if (ticks.size() < 2) return linear_ticks(lo, hi, 4);
  return ticks;
}

std::string tick_label(double value, double step) {
  if (value == 0) return "0";
  const double a = std::abs(value);
  char buf[40];
  if (a >= 1e-4 && a < 1e7) {
    // Enough decimals to show the step, no trailing zeros.
    int decimals = 0;
    if (step > 0 && std::isfinite(step))
      decimals = std::max(0, static_cast<int>(std::ceil(-std::log10(step) - 1e-9)));
    // More decimals while the text does not read back as the value (a step
    // of 0.25 needs two although its size suggests one).
    for (; decimals < 12; ++decimals) {
      std::snprintf(buf, sizeof buf, "%.*f", decimals, value);
      if (std::abs(std::strtod(buf, nullptr) - value) <= std::abs(step) * 1e-6) break;
    }
    std::snprintf(buf, sizeof buf, "%.*f", decimals, value);
    std::string s = buf;
    if (s.find('.') != std::string::npos) {
      while (!s.empty() && s.back() == '0') s.pop_back();
      if (!s.empty() && s.back() == '.') s.pop_back();
    }
    return s;
  }
  for (int precision = 1; precision <= 17; ++precision) {
    std::snprintf(buf, sizeof buf, "%.*g", precision, value);
    const double back = std::strtod(buf, nullptr);
    if (std::abs(back - value) <= std::max(step, a) * 1e-3) break;
  }
  return buf;
}

std::vector<double> spread_labels(const std::vector<double>& wanted, double gap, double lo,
                                  double hi) {
  const std::size_t m = wanted.size();
  std::vector<double> out(m);
  if (m == 0) return out;
  std::vector<std::size_t> order(m);
  std::iota(order.begin(), order.end(), 0);
  std::stable_sort(order.begin(), order.end(),
                   [&](std::size_t a, std::size_t b) { return wanted[a] < wanted[b]; });
  if (m > 1 && (hi - lo) < gap * static_cast<double>(m - 1))
    gap = (hi - lo) / static_cast<double>(m - 1);
  // Least squares positions z with z[i+1] - z[i] >= gap: with u[i] = z[i] -
  // i*gap this is isotonic regression of v[i] = wanted[i] - i*gap, solved by
  // pooling adjacent violators (Ayer et al. 1955; Barlow et al. 1972).
  std::vector<double> level, weight;
  std::vector<std::size_t> count;
  for (std::size_t i = 0; i < m; ++i) {
    level.push_back(wanted[order[i]] - static_cast<double>(i) * gap);
    weight.push_back(1);
    count.push_back(1);
    while (level.size() > 1 && level[level.size() - 2] > level.back()) {
      const double w = weight[weight.size() - 2] + weight.back();
      const double v =
          (level[level.size() - 2] * weight[weight.size() - 2] + level.back() * weight.back()) / w;
      const std::size_t c = count[count.size() - 2] + count.back();
      level.pop_back();
      weight.pop_back();
      count.pop_back();
      level.back() = v;
      weight.back() = w;
      count.back() = c;
    }
  }
  // Clipping a non-decreasing u into the box keeps it optimal for the box.
  const double u_hi = hi - static_cast<double>(m - 1) * gap;
  std::size_t i = 0;
  for (std::size_t b = 0; b < level.size(); ++b)
    for (std::size_t c = 0; c < count[b]; ++c, ++i)
      out[order[i]] = std::clamp(level[b], lo, std::max(lo, u_hi)) + static_cast<double>(i) * gap;
  return out;
}

std::string xml_escape(const std::string& text) {
  std::string out;
  out.reserve(text.size());
  for (char c : text) {
    switch (c) {
      case '&':
        out += "&amp;";
        break;
      case '<':
        out += "&lt;";
        break;
      case '>':
        out += "&gt;";
        break;
      case '"':
        out += "&quot;";
        break;
      case '\'':
        out += "&#39;";
        break;
      default:
        // Control characters are not allowed in XML 1.0 text.
        if (static_cast<unsigned char>(c) < 0x20 && c != '\n' && c != '\t')
          out += ' ';
        else
          out += c;
    }
  }
  return out;
}

Scale penalty_axis_scale(const std::vector<double>& penalties, const ChartOptions& o, double left,
                         double right) {
  Scale s;
  s.left = left;
  s.right = right;
  s.reversed = o.decreasing_penalty_left_to_right;
  double top = 0, smallest_positive = std::numeric_limits<double>::infinity();
  bool has_zero = false;
  for (double v : penalties) {
    top = std::max(top, v);
    if (v > 0) smallest_positive = std::min(smallest_positive, v);
    if (v <= 0) has_zero = true;
  }
  if (!(top > 0)) {  // nothing to scale: a unit linear axis
    s.log = false;
    s.lo = 0;
    s.hi = 1;
    return s;
  }
  if (o.log_penalty) {
    s.log = true;
    s.zero_slot = has_zero;
    if (!(smallest_positive < top)) smallest_positive = top / 10;
    // Pad a little so the first and last knots do not sit on the frame.
    s.lo = smallest_positive / 1.3;
    s.hi = top * 1.15;
  } else {
    s.log = false;
    s.lo = 0;
    s.hi = top * 1.04;
  }
  return s;
}

Scale linear_scale(double lo, double hi, double left, double right) {
  Scale s;
  s.lo = lo;
  s.hi = hi;
  s.left = left;
  s.right = right;
  return s;
}

Scale budget_scale(double max_l1, double left, double right) {
  return linear_scale(0, max_l1 > 0 ? max_l1 * 1.03 : 1, left, right);
}

std::string penalty_symbol(PenaltyUnit unit) {
  return unit == PenaltyUnit::mu ? "\xCE\xBC" : "\xCE\xBB";
}

namespace {
// How mu is defined, for the axis title (the divisor of penalty_scale).
std::string size_free_definition(bool standardized) {
  return standardized ? " = \xCE\xBB/\xE2\x88\x9An" : " = \xCE\xBB/n";
}
}  // namespace

AxisText penalty_axis_text(const ChartOptions& o, bool log, bool standardized) {
  AxisText t;
  const std::string sym = penalty_symbol(o.penalty_unit);
  t.title = "penalty " + sym +
            (o.penalty_unit == PenaltyUnit::mu ? size_free_definition(standardized) : "") +
            (log ? " (log scale)" : "") +
            (o.decreasing_penalty_left_to_right ? ", decreasing to the right"
                                                : ", increasing to the right");
  const std::string strong = "stronger penalty, fewer predictors";
  const std::string weak = "weaker penalty, more predictors";
  if (o.decreasing_penalty_left_to_right) {
    t.left_hint = "\xE2\x86\x90 " + strong;
    t.right_hint = weak + " \xE2\x86\x92";
  } else {
    t.left_hint = "\xE2\x86\x90 " + weak;
    t.right_hint = strong + " \xE2\x86\x92";
  }
  return t;
}

namespace {

// Ticks in left-to-right order, each with a grid line; a label that would
// collide with the previous one is skipped but kept in the tick's title.
void draw_x_ticks(Canvas& c, const Scale& s, double y, double grid_top) {
  std::vector<double> ticks =
      s.log ? detail::log_ticks(s.lo, s.hi) : detail::linear_ticks(s.lo, s.hi, 7);
  const double step = ticks.size() > 1 ? ticks[1] - ticks[0] : 1;
  double last_label_edge = -1e9;
  std::vector<double> order = ticks;
  std::sort(order.begin(), order.end(), [&](double a, double b) { return s(a) < s(b); });
  for (double v : order) {
    const double x = s(v);
    const std::string label = detail::tick_label(v, s.log ? v : step);
    const double w = text_width(label, 11);
    const bool show_label = x - w / 2 > last_label_edge + 6;
    c.line(x, grid_top, x, y, "stroke=\"" + std::string(kGrid) + "\" stroke-width=\"1\"");
    c.open_group("class=\"x-tick\"");
    c.line(x, y, x, y + 5, "stroke=\"" + std::string(kInk) + "\"");
    if (show_label) {
      c.text(x, y + 18, label, "middle", 11);
      last_label_edge = x + w / 2;
    } else {
      c.title(label);
    }
    c.close_group();
  }
}

// Axis break of a log scale: two short slanted strokes, then the 0 tick.
void draw_zero_slot(Canvas& c, const Scale& s, double y) {
  const double bx = s.break_x();
  c.rect(bx - 5, y - 4, 10, 8, "fill=\"#FFFFFF\"");
  c.line(bx - 5, y + 5, bx - 1, y - 5, "stroke=\"" + std::string(kInk) + "\"");
  c.line(bx + 1, y + 5, bx + 5, y - 5, "stroke=\"" + std::string(kInk) + "\"");
  const double x = s.zero_x();
  c.open_group("class=\"x-tick zero\"");
  c.line(x, y, x, y + 5, "stroke=\"" + std::string(kInk) + "\"");
  c.text(x, y + 18, "0", "middle", 11);
  c.close_group();
}

}  // namespace

double draw_x_axis(Canvas& c, const Scale& s, double y, double grid_top, const AxisText& text) {
  c.open_group("class=\"x-axis\"");
  c.line(s.left, y, s.right, y, "stroke=\"" + std::string(kInk) + "\" stroke-width=\"1\"");
  draw_x_ticks(c, s, y, grid_top);
  if (s.log && s.zero_slot) draw_zero_slot(c, s, y);
  c.close_group();
  c.text((s.left + s.right) / 2, y + 36, text.title, "middle", 12, "font-weight=\"bold\"");
  if (!text.left_hint.empty())
    c.text(s.left, y + 52, text.left_hint, "start", 11, "fill=\"" + std::string(kMuted) + "\"");
  if (!text.right_hint.empty())
    c.text(s.right, y + 52, text.right_hint, "end", 11, "fill=\"" + std::string(kMuted) + "\"");
  return y + 60;
}

void vertical_title(Canvas& c, double x, double y, const std::string& text, double size,
                    int degrees) {
  c.text(x, y, text, "middle", size,
         "font-weight=\"bold\" transform=\"rotate(" + std::to_string(degrees) + " " + num(x) + " " +
             num(y) + ")\"");
}

}  // namespace detail

}  // namespace knotpath::charts
