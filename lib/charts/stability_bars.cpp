// Chart 6: stability of the predictors across the fold paths of a repeated
// cross-validation. One row per predictor, two horizontal bars on a shared
// 0-100% axis: the share of fold paths in which it is active at the least
// CV error (upper) and at the parsimonious choice (lower). A square at each
// bar's end tells whether the path of all rows has the predictor there
// (filled) or not (hollow); the percentages are written at the right.
#include <cstdio>
#include <string>

#include <knotpath/errors.hpp>
#include <knotpath/io/charts.hpp>

#include "axis.hpp"
#include "canvas.hpp"

namespace knotpath::charts {

namespace {

using namespace detail;

constexpr double kRow = 30;  // height of one predictor's row
constexpr const char* kLeast = "#0072B2";
constexpr const char* kLean = "#D55E00";

std::string share(double fraction) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.1f%%", 100 * fraction);
  return buffer;
}

}  // namespace

void StabilityBars::validate() const {
  if (fold_paths == 0) throw invalid_option("stability.fold_paths", "must be > 0");
  if (rows.empty()) throw invalid_option("stability.rows", "no predictor to draw");
  for (const auto& r : rows)
    if (!(r.least >= 0 && r.least <= 1) || !(r.parsimonious >= 0 && r.parsimonious <= 1))
      throw invalid_option("stability.rows", "a share lies outside [0, 1] (" + r.name + ")");
}

std::string stability_bars_svg(const StabilityBars& b, const ChartOptions& o) {
  o.validate();
  b.validate();
  const double left = 170, right = o.width - 190, top = 62;
  const double plot_height = static_cast<double>(b.rows.size()) * kRow;
  Canvas c(o.width, top + plot_height + 96);
  const std::string title = o.title.empty() ? "Stability of the predictors across fold paths" : o.title;
  c.text(16, 24, title, "start", 16, "font-weight=\"bold\"");
  c.text(16, 43,
         "share of the " + std::to_string(b.fold_paths) + " fold paths (" + std::to_string(b.seeds) +
             " seeds) with a nonzero coefficient; blue: at the least CV error, orange: parsimonious",
         "start", 11.5, "fill=\"" + std::string(kMuted) + "\"");
  const Scale s = linear_scale(0, 1, left, right);
  const double bottom = top + plot_height;
  draw_x_axis(c, s, bottom + 6, top, {"share of fold paths where the predictor is active (0 to 1)", "", ""});
  c.text(right + 12, top - 6, "least CV error / parsimonious", "start", 10.5,
         "fill=\"" + std::string(kMuted) + "\"");
  auto bar = [&](double y, double value, bool full, const char* colour, const std::string& cls) {
    c.rect(s(0), y - 3.5, s(value) - s(0), 7,
           "class=\"" + cls + "\" fill=\"" + colour + "\" stroke=\"none\"");
    c.rect(s(value) - 4, y - 4, 8, 8,
           std::string("class=\"") + (full ? "full" : "not-full") + "\" fill=\"" + (full ? colour : "#FFFFFF") +
               "\" stroke=\"" + colour + "\" stroke-width=\"1.4\"");
  };
  double y = top;
  int index = 0;
  for (const auto& r : b.rows) {
    if (index++ % 2 == 0) c.rect(8, y, o.width - 16, kRow, "fill=\"#F5F7FA\" stroke=\"none\"");
    c.open_group("class=\"stability-row\"");
    c.title(r.name + ": active in " + share(r.least) + " of fold paths at the least CV error" +
            (r.least_full ? " (and in the full path)" : "") + ", " + share(r.parsimonious) +
            " at the parsimonious choice" + (r.parsimonious_full ? " (and in the full path)" : ""));
    c.text(left - 10, y + kRow / 2 + 4, shorten(r.name, 24), "end", 12);
    bar(y + kRow / 2 - 5, r.least, r.least_full, kLeast, "least");
    bar(y + kRow / 2 + 6, r.parsimonious, r.parsimonious_full, kLean, "parsimonious");
    c.text(right + 12, y + kRow / 2 + 4, share(r.least) + " / " + share(r.parsimonious), "start", 11,
           "fill=\"" + std::string(kInk) + "\"");
    c.close_group();
    y += kRow;
  }
  c.text(16, bottom + 62,
         "Filled square: the path of all rows has the predictor at that choice; hollow: it does not.",
         "start", 11, "fill=\"" + std::string(kMuted) + "\"");
  c.text(16, bottom + 78,
         "A fold analogue of the selection probability of Meinshausen & Buhlmann (2010): no threshold, no "
         "error bound.",
         "start", 11, "fill=\"" + std::string(kMuted) + "\"");
  return c.document(title, "share of fold paths in which each predictor is active at the two choices", "",
                    "knotpath-stability");
}

}  // namespace knotpath::charts
