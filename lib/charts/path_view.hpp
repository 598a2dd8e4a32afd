#pragma once
// What the two path charts (activity lanes, coefficient traces) read off a
// ChartPath: the order of entry, coefficients by predictor, the horizontal
// axis with the x of every knot, and the notes under the charts (private to
// knotpath_charts).
#include <cstddef>
#include <map>
#include <string>
#include <vector>

#include <knotpath/io/charts.hpp>

#include "axis.hpp"

namespace knotpath::charts::detail {

/// The order in which predictors first become active, and the first knot of each.
struct EntryOrder {
  std::vector<Index> order;                 // predictors by first entry
  std::map<Index, std::size_t> first_knot;  // predictor -> knot index of first nonzero/entry
};

/// Entry order of a path; unpenalized predictors are active from the start.
EntryOrder entry_order(const ChartPath& p);

/// Coefficient of predictor j at a knot (0 when inactive).
double coefficient(const ChartKnot& k, Index j);

/// Factor that turns lambda into the penalty shown: 1 for lambda, the
/// reciprocal of knotpath::penalty_scale for mu.
double unit_factor(const ChartPath& p, const ChartOptions& o);

/// The horizontal scale of a path chart and the x of each knot.
struct PathAxis {
  Scale scale;
  std::vector<double> knot_x;
  AxisText text;
  double end_x = 0;  // x of the last knot (the end of the path)
};

/// The penalty or L1-budget axis of a path chart between `left` and `right`.
PathAxis path_axis(const ChartPath& p, const ChartOptions& o, double left, double right);

/// An id inside the SVG: the options' prefix, '-', `name`.
std::string id(const ChartOptions& o, const std::string& name);

/// "Showing N of M predictors that enter ..." note under a path chart.
std::string hidden_note(std::size_t shown, std::size_t ever, std::size_t p);

/// Whether the path is complete or stopped early, in words.
std::string end_note(const ChartPath& p);

}  // namespace knotpath::charts::detail
