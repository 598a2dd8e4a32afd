#pragma once
// Horizontal scales and the x axis of the charts (private to knotpath_charts).
#include <cmath>
#include <string>
#include <vector>

#include <knotpath/io/charts.hpp>

#include "canvas.hpp"

namespace knotpath::charts::detail {

/// Horizontal scale: the penalty (log or linear, either direction) or the L1
/// budget. Log scales reserve a slot beyond an axis break for the value 0
/// (the end of a completed path).
struct Scale {
  bool log = false;
  double lo = 0, hi = 1;               // domain of the continuous part, lo < hi
  double left = 0, right = 1;          // pixels of the whole axis
  bool reversed = false;               // hi drawn on the left
  bool zero_slot = false;              // log scale with a slot for 0
  static constexpr double kSlot = 34;  // pixels taken by the break and the 0 slot

  double main_left() const { return zero_slot && !reversed ? left + kSlot : left; }
  double main_right() const { return zero_slot && reversed ? right - kSlot : right; }
  double zero_x() const { return reversed ? right : left; }
  double operator()(double v) const {
    if (log && v <= 0) return zero_slot ? zero_x() : (reversed ? main_right() : main_left());
    double t =
        log ? (std::log(v) - std::log(lo)) / (std::log(hi) - std::log(lo)) : (v - lo) / (hi - lo);
    const double a = main_left(), b = main_right();
    return reversed ? b - t * (b - a) : a + t * (b - a);
  }
  // The break sits between the continuous part and the 0 slot.
  double break_x() const {
    return reversed ? main_right() + kSlot * 0.45 : main_left() - kSlot * 0.45;
  }
};

/// The penalty scale over the given penalties (already in display units),
/// from `left` to `right` pixels, as the options ask (log, direction).
Scale penalty_axis_scale(const std::vector<double>& penalties, const ChartOptions& o, double left,
                         double right);
/// A linear scale over [lo, hi] (lo < hi), from `left` to `right` pixels.
Scale linear_scale(double lo, double hi, double left, double right);
/// A linear scale over [0, max_l1] (with a little room), left to right.
Scale budget_scale(double max_l1, double left, double right);

/// The words of an x axis.
struct AxisText {
  std::string title;       // centred under the ticks
  std::string left_hint;   // small text at the left end
  std::string right_hint;  // and at the right end
};

/// Greek lambda or mu.
std::string penalty_symbol(PenaltyUnit unit);
/// The axis words of a penalty axis; `standardized` says which divisor mu
/// has (knotpath::penalty_scale).
AxisText penalty_axis_text(const ChartOptions& o, bool log, bool standardized);

/// Draws the horizontal axis at y (ticks below), vertical grid lines from
/// grid_top to y, and the axis title. Returns the y below the axis texts.
double draw_x_axis(Canvas& c, const Scale& s, double y, double grid_top, const AxisText& text);

/// Rotated title of a vertical axis, centred at (x, y).
void vertical_title(Canvas& c, double x, double y, const std::string& text, double size,
                    int degrees);

}  // namespace knotpath::charts::detail
