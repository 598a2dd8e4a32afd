// Chart 1: activity lanes. One lane per predictor that is ever active, in
// order of first entry, with bars where its coefficient is nonzero (tone and
// hatching give the sign), entry and leave markers, and where it first
// enters in the right column.
#include <algorithm>
#include <cmath>
#include <set>

#include <knotpath/io/charts.hpp>

#include "axis.hpp"
#include "canvas.hpp"
#include "path_view.hpp"

namespace knotpath::charts {

namespace {

using namespace detail;

// Where things go: the lanes between `left` and `right`, from `top` down.
struct LanesLayout {
  EntryOrder entries;
  std::size_t ever = 0;   // predictors that ever enter
  std::size_t shown = 0;  // of them, those with a lane
  double left = 0, right = 0;
  double lane_h = 0, bar_h = 0;
  double top = 92;
  double lanes_bottom = 0;
  double lane_y(std::size_t i) const { return top + lane_h * static_cast<double>(i); }
};

LanesLayout lanes_layout(const ChartPath& p, const ChartOptions& o) {
  LanesLayout l;
  l.entries = entry_order(p);
  l.ever = l.entries.order.size();
  l.shown = std::min(l.ever, o.max_predictors);
  double label_width = 60;
  for (std::size_t i = 0; i < l.shown; ++i)
    label_width = std::max(
        label_width,
        text_width(shorten(p.names[static_cast<std::size_t>(l.entries.order[i])], 28), 12));
  l.left = std::min(label_width + 34, o.width * 0.4);
  const double right_column = 118;  // "enters at ..." column
  l.right = o.width - right_column;
  l.lane_h = l.shown > 40 ? 14 : 20;
  l.bar_h = l.lane_h * 0.6;
  l.lanes_bottom = l.top + l.lane_h * static_cast<double>(std::max<std::size_t>(l.shown, 1));
  return l;
}

std::string negative_fill(const ChartOptions& o) {
  return "fill=\"url(#" + id(o, "negative") + ")\" stroke=\"" + kNegativeHatch +
         "\" stroke-width=\"0.6\"";
}

void draw_legend(Canvas& c, const ChartOptions& o) {
  double x = 16;
  const double y = 66;
  c.open_group("class=\"legend\"");
  c.rect(x, y - 9, 22, 10, "fill=\"" + std::string(kPositive) + "\"");
  c.text(x + 28, y, "coefficient > 0", "start", 11);
  x += 28 + text_width("coefficient > 0", 11) + 18;
  c.rect(x, y - 9, 22, 10, negative_fill(o));
  c.text(x + 28, y, "coefficient < 0 (hatched)", "start", 11);
  x += 28 + text_width("coefficient < 0 (hatched)", 11) + 18;
  c.circle(x + 5, y - 4, 4.5,
           "fill=\"" + std::string(kInk) + "\" stroke=\"#FFFFFF\" stroke-width=\"1.2\"");
  c.text(x + 14, y, "enters", "start", 11);
  x += 14 + text_width("enters", 11) + 18;
  c.circle(x + 5, y - 4, 4,
           "fill=\"#FFFFFF\" stroke=\"" + std::string(kInk) + "\" stroke-width=\"1.8\"");
  c.text(x + 14, y, "leaves", "start", 11);
  c.close_group();
}

// Lane backgrounds and the knot rug, under the bars.
void draw_background(Canvas& c, const LanesLayout& l, const PathAxis& axis) {
  for (std::size_t i = 0; i < l.shown; ++i)
    if (i % 2 == 0) c.rect(l.left, l.lane_y(i), l.right - l.left, l.lane_h, "fill=\"#F4F6F8\"");
  std::set<long long> rug;
  for (double x : axis.knot_x) {
    const long long key = std::llround(x * 2);
    if (rug.insert(key).second)
      c.line(x, l.top - 6, x, l.top - 1,
             "stroke=\"" + std::string(kMuted) + "\" stroke-width=\"0.8\"");
  }
  c.text(l.left - 6, l.top - 1, "knots", "end", 9, "fill=\"" + std::string(kMuted) + "\"");
}

// A bar: a stretch of constant sign between two x positions.
struct Piece {
  double x0, x1;
  int sign;
};

// The bars of predictor j: pieces of constant sign between knots, merged
// when they touch.
std::vector<Piece> lane_pieces(const ChartPath& p, Index j, const ChartOptions& o,
                               const PathAxis& axis) {
  const double u = unit_factor(p, o);
  std::vector<Piece> pieces;
  auto add = [&](double x0, double x1, int sign) {
    if (!pieces.empty() && pieces.back().sign == sign && std::abs(pieces.back().x1 - x0) < 1e-9)
      pieces.back().x1 = x1;
    else
      pieces.push_back({x0, x1, sign});
  };
  for (std::size_t k = 0; k + 1 < p.knots.size(); ++k) {
    const double a = coefficient(p.knots[k], j), b = coefficient(p.knots[k + 1], j);
    const double xa = axis.knot_x[k], xb = axis.knot_x[k + 1];
    if ((a == 0 && b == 0) || xa == xb) continue;
    if (a * b < 0) {  // crosses zero inside the segment (least angle paths)
      const double t = a / (a - b);
      double lam = p.knots[k].penalty + t * (p.knots[k + 1].penalty - p.knots[k].penalty);
      double xm = o.axis == HorizontalAxis::l1_budget ? xa + t * (xb - xa) : axis.scale(lam * u);
      add(xa, xm, a > 0 ? 1 : -1);
      add(xm, xb, b > 0 ? 1 : -1);
    } else {
      add(xa, xb, (a + b) > 0 ? 1 : -1);
    }
  }
  return pieces;
}

void draw_bars(Canvas& c, const std::vector<Piece>& pieces, const ChartOptions& o, double mid,
               double bar_h) {
  for (const Piece& piece : pieces) {
    const double x0 = std::min(piece.x0, piece.x1), x1 = std::max(piece.x0, piece.x1);
    const std::string fill =
        piece.sign > 0 ? "fill=\"" + std::string(kPositive) + "\"" : negative_fill(o);
    c.rect(
        x0, mid - bar_h / 2, std::max(x1 - x0, 1.0), bar_h,
        "class=\"" + std::string(piece.sign > 0 ? "bar positive" : "bar negative") + "\" " + fill);
  }
}

// Entry and leave markers of predictor j at their knots.
void draw_events(Canvas& c, const ChartPath& p, Index j, const PathAxis& axis, double mid,
                 double lane_h) {
  for (std::size_t k = 0; k < p.knots.size(); ++k) {
    const ChartKnot& knot = p.knots[k];
    if (knot.predictor != j) continue;
    if (knot.event == EventKind::enter)
      c.circle(axis.knot_x[k], mid, lane_h > 14 ? 4.5 : 3.5,
               "class=\"enter\" fill=\"" + std::string(kInk) +
                   "\" stroke=\"#FFFFFF\" stroke-width=\"1.2\"");
    else if (knot.event == EventKind::leave)
      c.circle(axis.knot_x[k], mid, lane_h > 14 ? 4 : 3,
               "class=\"leave\" fill=\"#FFFFFF\" stroke=\"" + std::string(kInk) +
                   "\" stroke-width=\"1.8\"");
  }
}

// Where predictor j first enters, in words ("mu 0.123" or "L1 4.5").
std::string first_entry(const ChartPath& p, Index j, const ChartOptions& o,
                        const EntryOrder& entries) {
  const auto first = entries.first_knot.at(j);
  return o.axis == HorizontalAxis::l1_budget
             ? "L1 " + format_value(p.knots[first].penalized_l1)
             : penalty_symbol(o.penalty_unit) + " " +
                   format_value(p.knots[first].penalty * unit_factor(p, o));
}

// Lane i: its name, bars, markers and first entry.
void draw_lane(Canvas& c, const ChartPath& p, const ChartOptions& o, const LanesLayout& l,
               const PathAxis& axis, std::size_t i) {
  const Index j = l.entries.order[i];
  const std::string& name = p.names[static_cast<std::size_t>(j)];
  const double mid = l.lane_y(i) + l.lane_h / 2;
  c.open_group("class=\"lane\" id=\"" + id(o, "lane-" + std::to_string(i + 1)) + "\"");
  c.title(name);
  c.text(l.left - 8, mid + 4, shorten(name, 28), "end", 12);
  draw_bars(c, lane_pieces(p, j, o, axis), o, mid, l.bar_h);
  draw_events(c, p, j, axis, mid, l.lane_h);
  c.text(l.right + 10, mid + 4, first_entry(p, j, o, l.entries), "start", 11,
         "fill=\"" + std::string(kMuted) + "\"");
  c.close_group();
}

// The hatch pattern of negative bars.
std::string negative_pattern(const ChartOptions& o) {
  return "<pattern id=\"" + id(o, "negative") +
         "\" patternUnits=\"userSpaceOnUse\" width=\"6\" height=\"6\" "
         "patternTransform=\"rotate(45)\">\n"
         "<rect x=\"0\" y=\"0\" width=\"6\" height=\"6\" fill=\"" +
         std::string(kNegative) +
         "\"/>\n"
         "<line x1=\"0\" y1=\"0\" x2=\"0\" y2=\"6\" stroke=\"" +
         kNegativeHatch +
         "\" stroke-width=\"2.2\"/>\n"
         "</pattern>\n";
}

}  // namespace

std::string activity_lanes_svg(const ChartPath& p, const ChartOptions& o) {
  p.validate();
  o.validate();
  const LanesLayout l = lanes_layout(p, o);
  Canvas c(o.width, l.lanes_bottom + 200);  // trimmed to the content at the end
  const PathAxis axis = path_axis(p, o, l.left, l.right);

  const std::string title = o.title.empty() ? "When each predictor is in the model" : o.title;
  c.text(16, 24, title, "start", 16, "font-weight=\"bold\"");
  c.text(16, 43,
         p.variant + " path of " + p.response_name + ": " + std::to_string(p.names.size()) +
             " predictors, " + std::to_string(p.knots.size()) +
             " knots; one lane per predictor, in order of first entry",
         "start", 12, "fill=\"" + std::string(kMuted) + "\"");
  draw_legend(c, o);

  c.open_group("class=\"lanes\"");
  draw_background(c, l, axis);
  for (std::size_t i = 0; i < l.shown; ++i) draw_lane(c, p, o, l, axis, i);
  c.close_group();
  c.text(l.right + 10, l.top - 6, "enters at", "start", 10, "fill=\"" + std::string(kMuted) + "\"");
  if (l.shown == 0)
    c.text((l.left + l.right) / 2, l.top + 14, "no predictor enters this path", "middle", 12);

  const double y = draw_x_axis(c, axis.scale, l.lanes_bottom + 4, l.top, axis.text);
  const std::string note = hidden_note(l.shown, l.ever, p.names.size());
  c.text(16, y + 8, note + " " + end_note(p), "start", 11, "fill=\"" + std::string(kMuted) + "\"");
  c.set_height(y + 22);
  return c.document(title, note, negative_pattern(o), "knotpath-activity");
}

}  // namespace knotpath::charts
