// The three SVG charts: activity lanes, coefficient traces, selection curve.
//
// Every chart is built from the same parts: a Canvas that writes SVG 1.1
// elements with coordinates rounded to 0.01, a horizontal Scale for the
// penalty (log or linear, either direction, with penalty 0 beyond an axis
// break on a log scale) or the L1 budget, and an axis painter that writes
// round-number ticks and says in words which way the penalty runs.
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <functional>
#include <map>
#include <set>
#include <sstream>

#include <knotpath/errors.hpp>
#include <knotpath/io/charts.hpp>

namespace knotpath::charts {

namespace {

using detail::xml_escape;

// Okabe & Ito (2008) palette without the yellow, which is unreadable as text
// on white: blue, vermillion, bluish green, reddish purple, orange, sky blue, black.
const char* const kPalette[] = {"#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#000000"};
constexpr int kPaletteSize = 7;
// The same hues darkened for text on white (contrast of labels).
const char* const kTextPalette[] = {"#005A8C", "#B34700", "#007A5A", "#A0507F", "#8F6200", "#2A7DB0", "#000000"};
// Dash patterns that tell apart lines sharing a colour (every 7th line).
const char* const kDashes[] = {"", "7 3", "2 2.5", "9 3 2 3"};
constexpr int kDashCount = 4;

const char* const kFont = "DejaVu Sans, Verdana, Helvetica, Arial, sans-serif";
const char* const kPositive = "#0072B2";  // blue: coefficient > 0
const char* const kNegative = "#E69F00";  // orange with dark hatching: coefficient < 0
const char* const kNegativeHatch = "#8A5A00";
const char* const kInk = "#1B1B1B";
const char* const kMuted = "#5A5A5A";
const char* const kGrid = "#E3E3E3";

std::string num(double v) {
  if (!std::isfinite(v)) v = 0;
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.2f", v);
  std::string s = buf;
  while (s.back() == '0') s.pop_back();
  if (s.back() == '.') s.pop_back();
  if (s == "-0") s = "0";
  return s;
}

// Approximate advance width of text in DejaVu Sans (wide among sans fonts,
// so layouts sized with it also fit narrower fallbacks): 0.62 em a character.
double text_width(const std::string& s, double size) {
  std::size_t chars = 0;
  for (unsigned char c : s)
    if ((c & 0xC0) != 0x80) ++chars;  // count UTF-8 code points
  return 0.62 * size * static_cast<double>(chars);
}

std::string shorten(const std::string& s, std::size_t max_chars) {
  std::size_t chars = 0, cut = s.size();
  for (std::size_t i = 0; i < s.size(); ++i) {
    if ((static_cast<unsigned char>(s[i]) & 0xC0) != 0x80) {
      if (chars == max_chars - 1) cut = i;
      ++chars;
    }
  }
  if (chars <= max_chars) return s;
  return s.substr(0, cut) + "\xE2\x80\xA6";  // ellipsis
}

std::string format_value(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.4g", v);
  return buf;
}

// SVG 1.1 writer. Coordinates are clamped into the view box so a stray value
// can never draw outside it.
class Canvas {
 public:
  Canvas(double width, double height) : width_(width), height_(height) {}

  double width() const { return width_; }
  double height() const { return height_; }
  void set_height(double h) { height_ = h; }

  double cx(double x) const { return std::clamp(x, 0.0, width_); }
  double cy(double y) const { return std::clamp(y, 0.0, height_); }

  void raw(const std::string& s) { body_ << s; }
  void open_group(const std::string& attributes) { body_ << "<g " << attributes << ">\n"; }
  void close_group() { body_ << "</g>\n"; }
  void title(const std::string& text) { body_ << "<title>" << xml_escape(text) << "</title>\n"; }

  void rect(double x, double y, double w, double h, const std::string& style) {
    const double x0 = cx(x), y0 = cy(y), x1 = cx(x + w), y1 = cy(y + h);
    body_ << "<rect x=\"" << num(x0) << "\" y=\"" << num(y0) << "\" width=\"" << num(std::max(0.0, x1 - x0))
          << "\" height=\"" << num(std::max(0.0, y1 - y0)) << "\" " << style << "/>\n";
  }
  void line(double x1, double y1, double x2, double y2, const std::string& style) {
    body_ << "<line x1=\"" << num(cx(x1)) << "\" y1=\"" << num(cy(y1)) << "\" x2=\"" << num(cx(x2))
          << "\" y2=\"" << num(cy(y2)) << "\" " << style << "/>\n";
  }
  void circle(double x, double y, double r, const std::string& style) {
    body_ << "<circle cx=\"" << num(cx(x)) << "\" cy=\"" << num(cy(y)) << "\" r=\"" << num(r) << "\" " << style
          << "/>\n";
  }
  void polyline(const std::vector<std::pair<double, double>>& points, const std::string& style) {
    if (points.size() < 2) return;
    body_ << "<polyline points=\"";
    for (std::size_t i = 0; i < points.size(); ++i)
      body_ << (i ? " " : "") << num(cx(points[i].first)) << "," << num(cy(points[i].second));
    body_ << "\" fill=\"none\" " << style << "/>\n";
  }
  void polygon(const std::vector<std::pair<double, double>>& points, const std::string& style) {
    if (points.size() < 3) return;
    body_ << "<polygon points=\"";
    for (std::size_t i = 0; i < points.size(); ++i)
      body_ << (i ? " " : "") << num(cx(points[i].first)) << "," << num(cy(points[i].second));
    body_ << "\" " << style << "/>\n";
  }
  // anchor: start, middle or end.
  void text(double x, double y, const std::string& s, const std::string& anchor = "start", double size = 12,
            const std::string& extra = "") {
    body_ << "<text x=\"" << num(cx(x)) << "\" y=\"" << num(cy(y)) << "\" font-size=\"" << num(size)
          << "\" text-anchor=\"" << anchor << "\"" << (extra.empty() ? "" : " " + extra) << ">" << xml_escape(s)
          << "</text>\n";
  }

  std::string document(const std::string& title, const std::string& description, const std::string& defs,
                       const std::string& css_class) const {
    std::ostringstream out;
    out << "<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" class=\"" << css_class << "\" width=\""
        << num(width_) << "\" height=\"" << num(height_) << "\" viewBox=\"0 0 " << num(width_) << " "
        << num(height_) << "\" font-family=\"" << kFont << "\" fill=\"" << kInk << "\">\n"
        << "<title>" << xml_escape(title) << "</title>\n<desc>" << xml_escape(description) << "</desc>\n";
    if (!defs.empty()) out << "<defs>\n" << defs << "</defs>\n";
    out << "<rect x=\"0\" y=\"0\" width=\"" << num(width_) << "\" height=\"" << num(height_)
        << "\" fill=\"#FFFFFF\"/>\n"
        << body_.str() << "</svg>\n";
    return out.str();
  }

 private:
  double width_, height_;
  std::ostringstream body_;
};

// Horizontal scale. Log scales reserve a slot beyond an axis break for the
// value 0 (the end of a completed path).
struct Scale {
  bool log = false;
  double lo = 0, hi = 1;          // domain of the continuous part, lo < hi
  double left = 0, right = 1;     // pixels of the whole axis
  bool reversed = false;          // hi drawn on the left
  bool zero_slot = false;         // log scale with a slot for 0
  static constexpr double kSlot = 34;  // pixels taken by the break and the 0 slot

  double main_left() const { return zero_slot && !reversed ? left + kSlot : left; }
  double main_right() const { return zero_slot && reversed ? right - kSlot : right; }
  double zero_x() const { return reversed ? right : left; }
  double operator()(double v) const {
    if (log && v <= 0) return zero_slot ? zero_x() : (reversed ? main_right() : main_left());
    double t = log ? (std::log(v) - std::log(lo)) / (std::log(hi) - std::log(lo)) : (v - lo) / (hi - lo);
    const double a = main_left(), b = main_right();
    return reversed ? b - t * (b - a) : a + t * (b - a);
  }
  // The break sits between the continuous part and the 0 slot.
  double break_x() const { return reversed ? main_right() + kSlot * 0.45 : main_left() - kSlot * 0.45; }
};

// Builds the penalty scale over the given penalties (already in display units).
Scale penalty_scale(const std::vector<double>& penalties, const ChartOptions& o, double left, double right) {
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

Scale budget_scale(double max_l1, double left, double right) {
  Scale s;
  s.left = left;
  s.right = right;
  s.lo = 0;
  s.hi = max_l1 > 0 ? max_l1 * 1.03 : 1;
  return s;
}

struct AxisText {
  std::string title;       // centred under the ticks
  std::string left_hint;   // small text at the left end
  std::string right_hint;  // and at the right end
};

std::string penalty_symbol(PenaltyUnit unit) { return unit == PenaltyUnit::mu ? "\xCE\xBC" : "\xCE\xBB"; }

// How mu is defined, for the axis title (the divisor of penalty_scale).
std::string size_free_definition(bool standardized) {
  return standardized ? " = \xCE\xBB/\xE2\x88\x9An" : " = \xCE\xBB/n";
}

AxisText penalty_axis_text(const ChartOptions& o, bool log, bool standardized) {
  AxisText t;
  const std::string sym = penalty_symbol(o.penalty_unit);
  t.title = "penalty " + sym + (o.penalty_unit == PenaltyUnit::mu ? size_free_definition(standardized) : "") +
            (log ? " (log scale)" : "") +
            (o.decreasing_penalty_left_to_right ? ", decreasing to the right" : ", increasing to the right");
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

// Draws the horizontal axis at y (ticks below), vertical grid lines from
// grid_top to y, and the axis title. Returns the y below the axis texts.
double draw_x_axis(Canvas& c, const Scale& s, double y, double grid_top, const AxisText& text) {
  std::vector<double> ticks = s.log ? detail::log_ticks(s.lo, s.hi) : detail::linear_ticks(s.lo, s.hi, 7);
  const double step = ticks.size() > 1 ? ticks[1] - ticks[0] : 1;
  c.open_group("class=\"x-axis\"");
  c.line(s.left, y, s.right, y, "stroke=\"" + std::string(kInk) + "\" stroke-width=\"1\"");
  double last_label_edge = -1e9;
  // Draw ticks in left-to-right order so label collisions can be skipped.
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
    // A label skipped for room still carries its value in the tick's title.
    if (show_label) {
      c.text(x, y + 18, label, "middle", 11);
      last_label_edge = x + w / 2;
    } else {
      c.title(label);
    }
    c.close_group();
  }
  if (s.log && s.zero_slot) {
    // Axis break: two short slanted strokes, then the 0 tick.
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
  c.close_group();
  c.text((s.left + s.right) / 2, y + 36, text.title, "middle", 12, "font-weight=\"bold\"");
  if (!text.left_hint.empty()) c.text(s.left, y + 52, text.left_hint, "start", 11, "fill=\"" + std::string(kMuted) + "\"");
  if (!text.right_hint.empty())
    c.text(s.right, y + 52, text.right_hint, "end", 11, "fill=\"" + std::string(kMuted) + "\"");
  return y + 60;
}

// The order in which predictors first become active, and the first knot of each.
struct EntryOrder {
  std::vector<Index> order;         // predictors by first entry
  std::map<Index, std::size_t> first_knot;  // predictor -> knot index of first nonzero/entry
};

EntryOrder entry_order(const ChartPath& p) {
  EntryOrder e;
  for (std::size_t k = 0; k < p.knots.size(); ++k) {
    const ChartKnot& knot = p.knots[k];
    // Unpenalized predictors are active from the start (no enter row).
    std::vector<Index> now;
    if (knot.event == EventKind::enter && knot.predictor >= 0) now.push_back(knot.predictor);
    for (const auto& [j, b] : knot.coefficients)
      if (b != 0) now.push_back(j);
    for (Index j : now)
      if (!e.first_knot.count(j)) {
        e.first_knot[j] = k;
        e.order.push_back(j);
      }
  }
  return e;
}

// Dense coefficient lookup per knot.
double coefficient(const ChartKnot& k, Index j) {
  auto it = std::lower_bound(k.coefficients.begin(), k.coefficients.end(), j,
                             [](const std::pair<Index, double>& a, Index b) { return a.first < b; });
  return it != k.coefficients.end() && it->first == j ? it->second : 0.0;
}

double unit_factor(const ChartPath& p, const ChartOptions& o) {
  return o.penalty_unit == PenaltyUnit::mu && p.weight_sum > 0
             ? 1.0 / knotpath::penalty_scale<double>(p.standardized, p.weight_sum)
             : 1.0;
}

// The horizontal scale of a path chart and the x of each knot.
struct PathAxis {
  Scale scale;
  std::vector<double> knot_x;
  AxisText text;
  double end_x = 0;  // x of the last knot (the end of the path)
};

PathAxis path_axis(const ChartPath& p, const ChartOptions& o, double left, double right) {
  PathAxis a;
  const double u = unit_factor(p, o);
  if (o.axis == HorizontalAxis::l1_budget) {
    double top = 0;
    for (const auto& k : p.knots) top = std::max(top, k.l1_norm);
    a.scale = budget_scale(top, left, right);
    for (const auto& k : p.knots) a.knot_x.push_back(a.scale(k.l1_norm));
    // sum_j f_j s_j |b_j|; with standardized columns s_j b_j is in response units times sqrt(n).
    a.text.title = "L1 budget \xCE\xA3 f\xE2\xB1\xBC s\xE2\xB1\xBC |b\xE2\xB1\xBC| of the solution" +
                   (p.predictor_sd.empty() ? std::string(" (penalized L1 norm)")
                                           : " (" + p.response_name + " \xC3\x97 \xE2\x88\x9An)");
    a.text.left_hint = "\xE2\x86\x90 smaller budget, fewer predictors";
    a.text.right_hint = "larger budget, more predictors \xE2\x86\x92";
  } else {
    std::vector<double> pens;
    for (const auto& k : p.knots) pens.push_back(k.penalty * u);
    a.scale = penalty_scale(pens, o, left, right);
    for (double v : pens) a.knot_x.push_back(a.scale(v));
    a.text = penalty_axis_text(o, a.scale.log, p.standardized);
  }
  a.end_x = a.knot_x.back();
  return a;
}

std::string id(const ChartOptions& o, const std::string& name) { return o.id_prefix + "-" + name; }

std::string hidden_note(std::size_t shown, std::size_t ever, std::size_t p) {
  std::string s = "Showing " + std::to_string(shown) + " of " + std::to_string(ever) +
                  " predictors that enter, in order of entry";
  if (ever > shown) s += "; " + std::to_string(ever - shown) + " later entrants hidden";
  if (p > ever) s += "; " + std::to_string(p - ever) + " never enter";
  return s + ".";
}

std::string end_note(const ChartPath& p) {
  if (p.end == "end") return "The path is complete (it reaches penalty 0).";
  return "The path stopped early (" + p.end + ").";
}

}  // namespace

// ---------------------------------------------------------------- chart 1
std::string activity_lanes_svg(const ChartPath& p, const ChartOptions& o) {
  p.validate();
  o.validate();
  const EntryOrder entries = entry_order(p);
  const std::size_t ever = entries.order.size();
  const std::size_t shown = std::min(ever, o.max_predictors);

  double label_width = 60;
  for (std::size_t i = 0; i < shown; ++i)
    label_width = std::max(label_width, text_width(shorten(p.names[static_cast<std::size_t>(entries.order[i])], 28), 12));
  const double left = std::min(label_width + 34, o.width * 0.4);
  const double right_column = 118;  // "enters at ..." column
  const double right = o.width - right_column;
  const double lane_h = shown > 40 ? 14 : 20;
  const double bar_h = lane_h * 0.6;
  const double top = 92;
  const double lanes_bottom = top + lane_h * static_cast<double>(std::max<std::size_t>(shown, 1));

  Canvas c(o.width, lanes_bottom + 200);  // trimmed to the content at the end
  const PathAxis axis = path_axis(p, o, left, right);
  const Scale& s = axis.scale;
  const std::string sym = penalty_symbol(o.penalty_unit);
  const double u = unit_factor(p, o);

  // Title, subtitle and legend.
  const std::string title = o.title.empty() ? "When each predictor is in the model" : o.title;
  c.text(16, 24, title, "start", 16, "font-weight=\"bold\"");
  c.text(16, 43,
         p.variant + " path of " + p.response_name + ": " + std::to_string(p.names.size()) + " predictors, " +
             std::to_string(p.knots.size()) + " knots; one lane per predictor, in order of first entry",
         "start", 12, "fill=\"" + std::string(kMuted) + "\"");
  {
    double x = 16;
    const double y = 66;
    c.open_group("class=\"legend\"");
    c.rect(x, y - 9, 22, 10, "fill=\"" + std::string(kPositive) + "\"");
    c.text(x + 28, y, "coefficient > 0", "start", 11);
    x += 28 + text_width("coefficient > 0", 11) + 18;
    c.rect(x, y - 9, 22, 10, "fill=\"url(#" + id(o, "negative") + ")\" stroke=\"" + kNegativeHatch + "\" stroke-width=\"0.6\"");
    c.text(x + 28, y, "coefficient < 0 (hatched)", "start", 11);
    x += 28 + text_width("coefficient < 0 (hatched)", 11) + 18;
    c.circle(x + 5, y - 4, 4.5, "fill=\"" + std::string(kInk) + "\" stroke=\"#FFFFFF\" stroke-width=\"1.2\"");
    c.text(x + 14, y, "enters", "start", 11);
    x += 14 + text_width("enters", 11) + 18;
    c.circle(x + 5, y - 4, 4, "fill=\"#FFFFFF\" stroke=\"" + std::string(kInk) + "\" stroke-width=\"1.8\"");
    c.text(x + 14, y, "leaves", "start", 11);
    c.close_group();
  }

  // Lane backgrounds, grid and knot rug go under the bars.
  c.open_group("class=\"lanes\"");
  for (std::size_t i = 0; i < shown; ++i) {
    const double y = top + lane_h * static_cast<double>(i);
    if (i % 2 == 0) c.rect(left, y, right - left, lane_h, "fill=\"#F4F6F8\"");
  }
  std::set<long long> rug;
  for (double x : axis.knot_x) {
    const long long key = std::llround(x * 2);
    if (rug.insert(key).second) c.line(x, top - 6, x, top - 1, "stroke=\"" + std::string(kMuted) + "\" stroke-width=\"0.8\"");
  }
  c.text(left - 6, top - 1, "knots", "end", 9, "fill=\"" + std::string(kMuted) + "\"");

  for (std::size_t i = 0; i < shown; ++i) {
    const Index j = entries.order[i];
    const std::string& name = p.names[static_cast<std::size_t>(j)];
    const double y = top + lane_h * static_cast<double>(i);
    const double mid = y + lane_h / 2;
    c.open_group("class=\"lane\" id=\"" + id(o, "lane-" + std::to_string(i + 1)) + "\"");
    c.title(name);
    c.text(left - 8, mid + 4, shorten(name, 28), "end", 12);

    // Bars: pieces of constant sign between knots, merged when they touch.
    struct Piece {
      double x0, x1;
      int sign;
    };
    std::vector<Piece> pieces;
    for (std::size_t k = 0; k + 1 < p.knots.size(); ++k) {
      const double a = coefficient(p.knots[k], j), b = coefficient(p.knots[k + 1], j);
      const double xa = axis.knot_x[k], xb = axis.knot_x[k + 1];
      if ((a == 0 && b == 0) || xa == xb) continue;
      auto add = [&](double x0, double x1, int sign) {
        if (!pieces.empty() && pieces.back().sign == sign && std::abs(pieces.back().x1 - x0) < 1e-9)
          pieces.back().x1 = x1;
        else
          pieces.push_back({x0, x1, sign});
      };
      if (a * b < 0) {  // crosses zero inside the segment (least angle paths)
        const double t = a / (a - b);
        double lam = p.knots[k].penalty + t * (p.knots[k + 1].penalty - p.knots[k].penalty);
        double xm = o.axis == HorizontalAxis::l1_budget
                        ? xa + t * (xb - xa)
                        : s(lam * u);
        add(xa, xm, a > 0 ? 1 : -1);
        add(xm, xb, b > 0 ? 1 : -1);
      } else {
        add(xa, xb, (a + b) > 0 ? 1 : -1);
      }
    }
    for (const Piece& piece : pieces) {
      const double x0 = std::min(piece.x0, piece.x1), x1 = std::max(piece.x0, piece.x1);
      const std::string fill = piece.sign > 0 ? "fill=\"" + std::string(kPositive) + "\""
                                              : "fill=\"url(#" + id(o, "negative") + ")\" stroke=\"" +
                                                    kNegativeHatch + "\" stroke-width=\"0.6\"";
      c.rect(x0, mid - bar_h / 2, std::max(x1 - x0, 1.0), bar_h,
             "class=\"" + std::string(piece.sign > 0 ? "bar positive" : "bar negative") + "\" " + fill);
    }
    // Entry and leave markers at their knots.
    for (std::size_t k = 0; k < p.knots.size(); ++k) {
      const ChartKnot& knot = p.knots[k];
      if (knot.predictor != j) continue;
      if (knot.event == EventKind::enter)
        c.circle(axis.knot_x[k], mid, lane_h > 14 ? 4.5 : 3.5,
                 "class=\"enter\" fill=\"" + std::string(kInk) + "\" stroke=\"#FFFFFF\" stroke-width=\"1.2\"");
      else if (knot.event == EventKind::leave)
        c.circle(axis.knot_x[k], mid, lane_h > 14 ? 4 : 3,
                 "class=\"leave\" fill=\"#FFFFFF\" stroke=\"" + std::string(kInk) + "\" stroke-width=\"1.8\"");
    }
    // Where it first enters, in words, in the right column.
    const auto first = entries.first_knot.at(j);
    const std::string where = o.axis == HorizontalAxis::l1_budget
                                  ? "L1 " + format_value(p.knots[first].l1_norm)
                                  : sym + " " + format_value(p.knots[first].penalty * u);
    c.text(right + 10, mid + 4, where, "start", 11, "fill=\"" + std::string(kMuted) + "\"");
    c.close_group();
  }
  c.close_group();
  c.text(right + 10, top - 6, "enters at", "start", 10, "fill=\"" + std::string(kMuted) + "\"");
  if (shown == 0) c.text((left + right) / 2, top + 14, "no predictor enters this path", "middle", 12);

  double y = draw_x_axis(c, s, lanes_bottom + 4, top, axis.text);
  c.text(16, y + 8, hidden_note(shown, ever, p.names.size()) + " " + end_note(p), "start", 11,
         "fill=\"" + std::string(kMuted) + "\"");
  c.set_height(y + 22);

  const std::string defs =
      "<pattern id=\"" + id(o, "negative") +
      "\" patternUnits=\"userSpaceOnUse\" width=\"6\" height=\"6\" patternTransform=\"rotate(45)\">\n"
      "<rect x=\"0\" y=\"0\" width=\"6\" height=\"6\" fill=\"" + std::string(kNegative) + "\"/>\n"
      "<line x1=\"0\" y1=\"0\" x2=\"0\" y2=\"6\" stroke=\"" + kNegativeHatch + "\" stroke-width=\"2.2\"/>\n"
      "</pattern>\n";
  return c.document(title, hidden_note(shown, ever, p.names.size()), defs, "knotpath-activity");
}

// ---------------------------------------------------------------- chart 2
std::string coefficient_traces_svg(const ChartPath& p, const ChartOptions& o) {
  p.validate();
  o.validate();
  const EntryOrder entries = entry_order(p);
  const std::size_t ever = entries.order.size();
  const std::size_t shown = std::min(ever, o.max_predictors);
  const bool per_sd = o.coefficient_scale == CoefficientScale::per_sd && !p.predictor_sd.empty();
  auto scale_of = [&](Index j) { return per_sd ? p.predictor_sd[static_cast<std::size_t>(j)] : 1.0; };

  // Labels sit at the end of the path: on the right unless the penalty
  // increases to the right (then the path ends on the left).
  const bool labels_right = o.axis == HorizontalAxis::l1_budget || o.decreasing_penalty_left_to_right;
  double label_width = 40;
  for (std::size_t i = 0; i < shown; ++i)
    label_width = std::max(label_width, text_width(shorten(p.names[static_cast<std::size_t>(entries.order[i])], 24), 11));
  const double label_column = label_width + 34;
  const double axis_column = 70;
  const double left = labels_right ? axis_column : label_column + 8;
  const double right = labels_right ? o.width - label_column - 8 : o.width - axis_column;
  const double top = 76;
  const double label_gap = 13;
  const double plot_h = std::clamp(label_gap * static_cast<double>(shown) + 40, 340.0, 1600.0);
  const double bottom = top + plot_h;

  Canvas c(o.width, bottom + 120);
  const PathAxis axis = path_axis(p, o, left, right);
  const Scale& s = axis.scale;
  const double u = unit_factor(p, o);

  // Vertical range over every drawn coefficient (0 included).
  double ymin = 0, ymax = 0;
  for (const auto& k : p.knots)
    for (const auto& [j, b] : k.coefficients) {
      ymin = std::min(ymin, b * scale_of(j));
      ymax = std::max(ymax, b * scale_of(j));
    }
  if (ymin == ymax) ymax = 1;
  std::vector<double> yt = detail::linear_ticks(ymin, ymax, 7);
  const double ystep = yt.size() > 1 ? yt[1] - yt[0] : 1;
  const double y_lo = std::floor(ymin / ystep - 1e-9) * ystep, y_hi = std::ceil(ymax / ystep + 1e-9) * ystep;
  yt = detail::linear_ticks(y_lo, y_hi, 7);
  auto Y = [&](double v) { return bottom - (v - y_lo) / (y_hi - y_lo) * plot_h; };

  const std::string title = o.title.empty() ? "How each coefficient moves along the path" : o.title;
  c.text(16, 24, title, "start", 16, "font-weight=\"bold\"");
  const std::string what = per_sd ? "coefficient \xC3\x97 SD of its predictor" : "coefficient as fitted";
  c.text(16, 43,
         p.variant + " path of " + p.response_name + "; " + what +
             (p.knots.size() <= 40 ? "; dots mark knots" : "; ticks above the plot mark knots") +
             "; rings mark entries (filled) and exits (open)",
         "start", 12, "fill=\"" + std::string(kMuted) + "\"");

  // Frame, horizontal grid and the vertical axis.
  c.rect(left, top, right - left, plot_h, "fill=\"#FBFBFC\" stroke=\"" + std::string(kGrid) + "\"");
  const double axis_x = labels_right ? left : right;
  c.open_group("class=\"y-axis\"");
  for (double v : yt) {
    const double y = Y(v);
    c.line(left, y, right, y, "stroke=\"" + std::string(v == 0 ? "#9A9A9A" : kGrid) + "\" stroke-width=\"" +
                                  (v == 0 ? "1.2" : "1") + "\"");
    c.open_group("class=\"y-tick\"");
    c.line(axis_x - (labels_right ? 5 : 0), y, axis_x + (labels_right ? 0 : 5), y, "stroke=\"" + std::string(kInk) + "\"");
    c.text(labels_right ? axis_x - 8 : axis_x + 8, y + 4, detail::tick_label(v, ystep), labels_right ? "end" : "start", 11);
    c.close_group();
  }
  c.close_group();
  {
    const std::string ytitle = per_sd ? p.response_name + " per SD of predictor" : p.response_name + " per unit of predictor";
    const double tx = labels_right ? 16 : o.width - 16;
    const double ty = top + plot_h / 2;
    c.text(tx, ty, ytitle, "middle", 12,
           "font-weight=\"bold\" transform=\"rotate(" + std::string(labels_right ? "-90 " : "90 ") + num(tx) + " " +
               num(ty) + ")\"");
  }
  // Knots: a rug of ticks along the top edge, and faint vertical lines
  // (and dots on the traces) while there are few enough to stay readable.
  const bool few_knots = p.knots.size() <= 40;
  std::set<long long> seen;
  for (double x : axis.knot_x)
    if (seen.insert(std::llround(x * 2)).second) {
      c.line(x, top - 6, x, top, "class=\"knot\" stroke=\"" + std::string(kMuted) + "\" stroke-width=\"0.8\"");
      if (few_knots) c.line(x, top, x, bottom, "stroke=\"#D0D4DA\" stroke-width=\"0.7\" stroke-dasharray=\"2 3\"");
    }
  c.text(labels_right ? left : right, top - 9, "knots", labels_right ? "start" : "end", 9,
         "fill=\"" + std::string(kMuted) + "\"");

  // One trace: the points of predictor j from its first entry to the end.
  auto trace_points = [&](Index j) {
    std::vector<std::pair<double, double>> pts;
    const std::size_t first = entries.first_knot.at(j);
    const double sc = scale_of(j);
    for (std::size_t k = first; k < p.knots.size(); ++k) {
      const double b = coefficient(p.knots[k], j) * sc;
      if (k > first && s.log && o.axis == HorizontalAxis::penalty && p.knots[k].penalty > 0) {
        // Coefficients are linear in the penalty; on a log axis that is a
        // curve, so sample the segment geometrically.
        const double la = p.knots[k - 1].penalty, lb = p.knots[k].penalty;
        const double a = coefficient(p.knots[k - 1], j) * sc;
        if (la > lb && la / lb > 1.05 && a != b) {
          for (int i = 1; i < 12; ++i) {
            const double lam = la * std::pow(lb / la, i / 12.0);
            pts.emplace_back(s(lam * u), Y(a + (la - lam) / (la - lb) * (b - a)));
          }
        }
      }
      pts.emplace_back(axis.knot_x[k], Y(b));
    }
    return pts;
  };

  // Hidden predictors first, grey and thin, under the labelled ones.
  if (ever > shown) {
    c.open_group("class=\"hidden-traces\"");
    for (std::size_t i = shown; i < ever; ++i)
      c.polyline(trace_points(entries.order[i]), "stroke=\"#C4C4C4\" stroke-width=\"0.8\"");
    c.close_group();
  }

  // Label positions at the end of the path, spread without overlap.
  std::vector<double> wanted;
  for (std::size_t i = 0; i < shown; ++i) {
    const Index j = entries.order[i];
    wanted.push_back(Y(coefficient(p.knots.back(), j) * scale_of(j)));
  }
  const std::vector<double> placed = detail::spread_labels(wanted, label_gap, top + 6, bottom - 2);

  for (std::size_t ii = shown; ii-- > 0;) {  // first entrants drawn last, on top
    const Index j = entries.order[ii];
    const std::string colour = kPalette[ii % kPaletteSize];
    const std::string dash = kDashes[(ii / kPaletteSize) % kDashCount];
    const std::string& name = p.names[static_cast<std::size_t>(j)];
    c.open_group("class=\"trace\" id=\"" + id(o, "trace-" + std::to_string(ii + 1)) + "\"");
    c.title(name);
    c.polyline(trace_points(j), "stroke=\"" + colour + "\" stroke-width=\"2\"" +
                                    (dash[0] ? " stroke-dasharray=\"" + std::string(dash) + "\"" : ""));
    for (std::size_t k = entries.first_knot.at(j); k < p.knots.size(); ++k) {
      const ChartKnot& knot = p.knots[k];
      const double x = axis.knot_x[k], y = Y(coefficient(knot, j) * scale_of(j));
      if (knot.predictor == j && knot.event == EventKind::enter)
        c.circle(x, y, 4, "class=\"enter\" fill=\"" + colour + "\" stroke=\"#FFFFFF\" stroke-width=\"1.2\"");
      else if (knot.predictor == j && knot.event == EventKind::leave)
        c.circle(x, y, 4, "class=\"leave\" fill=\"#FFFFFF\" stroke=\"" + colour + "\" stroke-width=\"1.8\"");
      else if (few_knots)
        c.circle(x, y, 1.9, "fill=\"" + colour + "\"");
    }
    // Leader from the end of the trace to its label.
    const double ex = axis.end_x, ey = wanted[ii], ly = placed[ii];
    const double lx = labels_right ? right + 22 : left - 22;
    const double stub = labels_right ? right + 6 : left - 6;
    c.polyline({{ex, ey}, {stub, ey}, {lx - (labels_right ? 4 : -4), ly}},
               "class=\"leader\" stroke=\"" + colour + "\" stroke-width=\"0.8\" opacity=\"0.8\"");
    c.text(lx, ly + 4, shorten(name, 24), labels_right ? "start" : "end", 11,
           "fill=\"" + std::string(kTextPalette[ii % kPaletteSize]) + "\"");
    c.close_group();
  }

  double y = draw_x_axis(c, s, bottom, top, axis.text);
  std::string note = hidden_note(shown, ever, p.names.size());
  if (ever > shown) note += " Hidden ones are drawn thin grey, without labels.";
  c.text(16, y + 8, note, "start", 11, "fill=\"" + std::string(kMuted) + "\"");
  c.text(16, y + 24, end_note(p) + (per_sd ? "" : " Slopes are in the units of their own predictors."), "start", 11,
         "fill=\"" + std::string(kMuted) + "\"");
  c.set_height(y + 36);
  return c.document(title, note, "", "knotpath-traces");
}

// ---------------------------------------------------------------- chart 3
std::string selection_curve_svg(const SelectionCurve& curve, const ChartOptions& o) {
  curve.validate();
  o.validate();
  std::vector<SelectionPoint> pts = curve.points;
  std::sort(pts.begin(), pts.end(), [](const SelectionPoint& a, const SelectionPoint& b) { return a.penalty > b.penalty; });
  const std::string sym = curve.penalty_name == "lambda" ? "\xCE\xBB" : curve.penalty_name == "mu" ? "\xCE\xBC" : curve.penalty_name;

  const double left = 76, right = o.width - 30;
  const double top = 84, panel_h = 290;
  const bool has_criteria = !curve.criteria.empty();
  const double crit_top = top + panel_h + 40, crit_h = has_criteria ? 170 : 0;
  const double bottom = has_criteria ? crit_top + crit_h : top + panel_h;

  std::vector<double> pens;
  for (const auto& q : pts) pens.push_back(q.penalty);
  for (const auto& cc : curve.criteria)
    for (const auto& [x, v] : cc.values) pens.push_back(x);
  ChartOptions xo = o;
  xo.penalty_unit = PenaltyUnit::lambda;  // the curve's penalties are drawn as given
  const Scale s = penalty_scale(pens, xo, left, right);

  Canvas c(o.width, bottom + 120);
  const std::string title = o.title.empty() ? "Choosing the penalty" : o.title;
  c.text(16, 24, title, "start", 16, "font-weight=\"bold\"");
  c.text(16, 43,
         "cross-validated " + curve.error_name +
             (curve.folds ? " (" + std::to_string(curve.folds) + " folds)" : std::string()) +
             ", with a band of \xC2\xB1" + "1 standard error",
         "start", 12, "fill=\"" + std::string(kMuted) + "\"");

  // Upper panel: error and band.
  double lo = std::numeric_limits<double>::infinity(), hi = -lo;
  for (const auto& q : pts) {
    lo = std::min(lo, q.mean_error - q.standard_error);
    hi = std::max(hi, q.mean_error + q.standard_error);
  }
  if (!(hi > lo)) hi = lo + 1;
  std::vector<double> yt = detail::linear_ticks(lo, hi, 6);
  double ystep = yt.size() > 1 ? yt[1] - yt[0] : 1;
  const double e_lo = std::floor(lo / ystep - 1e-9) * ystep, e_hi = std::ceil(hi / ystep + 1e-9) * ystep;
  yt = detail::linear_ticks(e_lo, e_hi, 6);
  auto Y = [&](double v) { return top + panel_h - (v - e_lo) / (e_hi - e_lo) * panel_h; };

  c.rect(left, top, right - left, panel_h, "fill=\"#FBFBFC\" stroke=\"" + std::string(kGrid) + "\"");
  c.open_group("class=\"y-axis\"");
  for (double v : yt) {
    c.line(left, Y(v), right, Y(v), "stroke=\"" + std::string(kGrid) + "\"");
    c.open_group("class=\"y-tick\"");
    c.line(left - 5, Y(v), left, Y(v), "stroke=\"" + std::string(kInk) + "\"");
    c.text(left - 8, Y(v) + 4, detail::tick_label(v, ystep), "end", 11);
    c.close_group();
  }
  c.close_group();
  {
    const double tx = 18, ty = top + panel_h / 2;
    const std::string unit = curve.error_unit.empty() ? "response units squared" : curve.error_unit;
    c.text(tx, ty, "held-out error, " + unit, "middle", 12,
           "font-weight=\"bold\" transform=\"rotate(-90 " + num(tx) + " " + num(ty) + ")\"");
  }
  std::vector<std::pair<double, double>> band, line;
  for (const auto& q : pts) band.emplace_back(s(q.penalty), Y(q.mean_error + q.standard_error));
  for (auto it = pts.rbegin(); it != pts.rend(); ++it) band.emplace_back(s(it->penalty), Y(it->mean_error - it->standard_error));
  for (const auto& q : pts) line.emplace_back(s(q.penalty), Y(q.mean_error));
  c.polygon(band, "class=\"se-band\" fill=\"#56B4E9\" fill-opacity=\"0.32\" stroke=\"none\"");
  c.polyline(line, "class=\"cv-error\" stroke=\"#0072B2\" stroke-width=\"2\"");
  if (pts.size() == 1) c.circle(line[0].first, line[0].second, 3, "fill=\"#0072B2\"");

  // Markers: minimizer (solid vermillion), one-SE choice (dashed green) and
  // the threshold minimum + 1 SE (dotted).
  // Each label goes on the side of its line away from the other marker
  // (when it fits), so no label crosses the other line.
  std::vector<std::function<void()>> pending;
  auto marker = [&](double pen, double other, const std::string& colour, const std::string& dash,
                    const std::string& label, int row, const std::string& cls) {
    const double x = s(pen);
    c.open_group("class=\"" + cls + "\"");
    c.line(x, top, x, bottom, "stroke=\"" + colour + "\" stroke-width=\"1.6\"" +
                                  (dash.empty() ? "" : " stroke-dasharray=\"" + dash + "\""));
    const double w = text_width(label, 11) + 8;
    bool on_left = std::isfinite(other) ? s(other) > x : x > (left + right) / 2;
    if (on_left && x - w < left) on_left = false;
    if (!on_left && x + w > right) on_left = true;
    c.close_group();
    const double ty = top + 16 + 16 * row;
    // Labels are painted after every line, on a light box, so lines never cross them.
    pending.push_back([&c, on_left, x, w, ty, label, colour, cls] {
      c.open_group("class=\"" + cls + "-label\"");
      c.rect(on_left ? x - 6 - w + 4 : x + 2, ty - 11, w, 15, "fill=\"#FFFFFF\"");
      c.text(on_left ? x - 6 : x + 6, ty, label, on_left ? "end" : "start", 11,
             "fill=\"" + colour + "\" font-weight=\"bold\"");
      c.close_group();
    });
  };
  if (std::isfinite(curve.minimizer)) {
    std::string label = "least error";
    if (std::isfinite(curve.minimum_error)) label += " " + format_value(curve.minimum_error);
    label += " at " + sym + " = " + format_value(curve.minimizer);
    marker(curve.minimizer, curve.one_se, "#D55E00", "", label, 0, "minimizer");
    if (std::isfinite(curve.minimum_error)) {
      // The one-SE threshold: least error plus the standard error there.
      double se_at_min = 0, best = std::numeric_limits<double>::infinity();
      for (const auto& q : pts)
        if (std::abs(q.penalty - curve.minimizer) < best) {
          best = std::abs(q.penalty - curve.minimizer);
          se_at_min = q.standard_error;
        }
      const double ty = Y(curve.minimum_error + se_at_min);
      c.line(left, ty, right, ty, "class=\"one-se-threshold\" stroke=\"#009E73\" stroke-width=\"1\" stroke-dasharray=\"1.5 3\"");
      c.text(right - 4, ty - 4, "least error + 1 SE", "end", 10, "fill=\"#006B4F\"");
    }
  }
  if (std::isfinite(curve.one_se))
    marker(curve.one_se, curve.minimizer, "#009E73", "6 4", "one-SE choice " + sym + " = " + format_value(curve.one_se), 1, "one-se");
  for (auto& draw : pending) draw();

  // Lower panel: each criterion rescaled to its own range on the path (0 at
  // its least value, 1 at its largest), since Cp, AIC and BIC are measured
  // on different scales; only where each is least matters for the choice.
  if (has_criteria) {
    const double c_hi = 1.2;  // headroom for the legend row
    const std::vector<double> ct = {0, 0.25, 0.5, 0.75, 1};
    const double cstep = 0.25;
    auto CY = [&](double v) { return crit_top + crit_h - v / c_hi * crit_h; };
    c.rect(left, crit_top, right - left, crit_h, "fill=\"#FBFBFC\" stroke=\"" + std::string(kGrid) + "\"");
    c.open_group("class=\"y-axis criteria\"");
    for (double v : ct) {
      c.line(left, CY(v), right, CY(v), "stroke=\"" + std::string(kGrid) + "\"");
      c.line(left - 5, CY(v), left, CY(v), "stroke=\"" + std::string(kInk) + "\"");
      c.text(left - 8, CY(v) + 4, detail::tick_label(v, cstep), "end", 11);
    }
    c.close_group();
    {
      const double tx = 18, ty = crit_top + crit_h / 2;
      c.text(tx, ty, "criterion, 0 = least, 1 = largest", "middle", 11,
             "font-weight=\"bold\" transform=\"rotate(-90 " + num(tx) + " " + num(ty) + ")\"");
    }
    double legend_x = left + 8;
    for (std::size_t i = 0; i < curve.criteria.size(); ++i) {
      const CriterionCurve& cc = curve.criteria[i];
      std::vector<std::pair<double, double>> values = cc.values;
      std::sort(values.begin(), values.end(), [](const auto& a, const auto& b) { return a.first > b.first; });
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
      std::vector<std::pair<double, double>> pl;
      for (const auto& [x, v] : values) pl.emplace_back(s(x), CY((v - m) / range));
      c.open_group("class=\"criterion\"");
      c.title(cc.name);
      c.polyline(pl, "stroke=\"" + colour + "\" stroke-width=\"1.8\" stroke-dasharray=\"" + dash + "\"");
      c.circle(s(at), CY(0), 4, "fill=\"" + colour + "\" stroke=\"#FFFFFF\" stroke-width=\"1\"");
      const std::string legend = cc.name + ": least at " + sym + " = " + format_value(at);
      c.line(legend_x, crit_top + 14, legend_x + 22, crit_top + 14,
             "stroke=\"" + colour + "\" stroke-width=\"1.8\" stroke-dasharray=\"" + dash + "\"");
      c.text(legend_x + 27, crit_top + 18, legend, "start", 11);
      legend_x += 27 + text_width(legend, 11) + 18;
      c.close_group();
    }
  }

  ChartOptions ao = o;
  ao.penalty_unit = curve.penalty_name == "lambda" ? PenaltyUnit::lambda : PenaltyUnit::mu;
  AxisText text = penalty_axis_text(ao, s.log, curve.standardized);
  if (curve.penalty_name != "lambda" && curve.penalty_name != "mu") {
    text.title = "penalty " + curve.penalty_name + (s.log ? " (log scale)" : "") +
                 (o.decreasing_penalty_left_to_right ? ", decreasing to the right" : ", increasing to the right");
  }
  double y = draw_x_axis(c, s, bottom, top, text);
  c.set_height(y + 10);
  return c.document(title, "cross-validation curve with standard-error band", "", "knotpath-selection");
}

}  // namespace knotpath::charts
