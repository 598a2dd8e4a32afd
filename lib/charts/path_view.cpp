// What the path charts read off a ChartPath (path_view.hpp).
#include "path_view.hpp"

#include <algorithm>

#include <knotpath/scaling.hpp>

namespace knotpath::charts::detail {

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

double coefficient(const ChartKnot& k, Index j) {
  auto it =
      std::lower_bound(k.coefficients.begin(), k.coefficients.end(), j,
                       [](const std::pair<Index, double>& a, Index b) { return a.first < b; });
  return it != k.coefficients.end() && it->first == j ? it->second : 0.0;
}

double unit_factor(const ChartPath& p, const ChartOptions& o) {
  return o.penalty_unit == PenaltyUnit::mu && p.weight_sum > 0
             ? 1.0 / knotpath::penalty_scale<double>(p.standardized, p.weight_sum)
             : 1.0;
}

namespace {

void budget_axis(PathAxis& a, const ChartPath& p, double left, double right) {
  double top = 0;
  for (const auto& k : p.knots) top = std::max(top, k.penalized_l1);
  a.scale = budget_scale(top, left, right);
  for (const auto& k : p.knots) a.knot_x.push_back(a.scale(k.penalized_l1));
  // sum_j f_j s_j |b_j|; with standardized columns s_j b_j is in response units times sqrt(n).
  a.text.title = "L1 budget \xCE\xA3 f\xE2\xB1\xBC s\xE2\xB1\xBC |b\xE2\xB1\xBC| of the solution" +
                 (p.predictor_sd.empty() ? std::string(" (penalized L1 norm)")
                                         : " (" + p.response_name + " \xC3\x97 \xE2\x88\x9An)");
  a.text.left_hint = "\xE2\x86\x90 smaller budget, fewer predictors";
  a.text.right_hint = "larger budget, more predictors \xE2\x86\x92";
}

void penalty_axis(PathAxis& a, const ChartPath& p, const ChartOptions& o, double left,
                  double right) {
  const double u = unit_factor(p, o);
  std::vector<double> pens;
  for (const auto& k : p.knots) pens.push_back(k.penalty * u);
  a.scale = penalty_axis_scale(pens, o, left, right);
  for (double v : pens) a.knot_x.push_back(a.scale(v));
  a.text = penalty_axis_text(o, a.scale.log, p.standardized);
}

}  // namespace

PathAxis path_axis(const ChartPath& p, const ChartOptions& o, double left, double right) {
  PathAxis a;
  if (o.axis == HorizontalAxis::l1_budget)
    budget_axis(a, p, left, right);
  else
    penalty_axis(a, p, o, left, right);
  a.end_x = a.knot_x.back();
  return a;
}

std::string id(const ChartOptions& o, const std::string& name) {
  return o.id_prefix + "-" + name;
}

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

}  // namespace knotpath::charts::detail
