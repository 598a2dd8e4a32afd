// Draw the charts of the built-in demonstration path: activity lanes,
// coefficient traces (against the penalty and the L1 budget), a selection
// curve, and the one-page HTML report, all written into one folder.
//
//   example_render_charts [OUTPUT_DIR]      (default: ./knotpath-charts)
//
// docs/charts/regenerate.sh runs this and converts the SVGs to the PNGs shown
// in the README.
//
// The selection curve is the exact 10-fold cross-validation curve of
// cross_validation.hpp on the size-free penalty mu = lambda / sqrt(n), with Mallows' Cp,
// AIC and BIC along the path on the second panel.
#include <cstdio>
#include <filesystem>
#include <string>
#include <vector>

#include <knotpath/io/charts.hpp>
#include <knotpath/knotpath.hpp>

int main(int argc, char** argv) {
  const std::filesystem::path dir = argc > 1 ? argv[1] : "knotpath-charts";
  const knotpath::demo::DemoData data = knotpath::demo::greenhouse();
  const knotpath::Path<double> path = knotpath::trace<double>(data.x, data.y);
  const knotpath::charts::ChartPath chart = knotpath::charts::chart_path(path, data.predictor_names, data.response_name);
  knotpath::CrossValidationOptions cv_options;
  cv_options.folds = 10;
  const auto cv = knotpath::cross_validate<double>(data.x, data.y, path.options(), cv_options);
  const auto criteria = knotpath::information_criteria<double>(data.x, data.y, path);
  knotpath::charts::SelectionCurve selection = knotpath::charts::selection_curve(cv, &criteria);
  selection.error_unit = "(kg/m\xC2\xB2)\xC2\xB2";

  knotpath::charts::ReportOptions options;
  options.title = "knotpath demo: greenhouse tomato yield";
  options.summary = {{"data", "built-in demo (invented greenhouse data, fixed seed)"},
                     {"observations", std::to_string(data.x.rows())},
                     {"response", data.response_name}};
  const auto files = knotpath::charts::write_report(dir, chart, options, &selection);
  for (const auto& f : files) std::printf("wrote %s\n", f.string().c_str());
  return files.size() == 5 ? 0 : 1;
}
