// Draw the charts of the built-in demonstration path: activity lanes,
// coefficient traces (against the penalty and the L1 budget), a selection
// curve, and the one-page HTML report, all written into one folder.
//
//   example_render_charts [OUTPUT_DIR]      (default: ./knotpath-charts)
//
// docs/charts/regenerate.sh runs this and converts the SVGs to the PNGs shown
// in the README.
//
// The selection curve here is a plain K-fold cross-validation on a grid of
// mu = lambda / sqrt(n), computed in this file so the chart has something
// real to show; the library's own selection code fills the same
// SelectionCurve struct with the exact curve.
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <string>
#include <vector>

#include <knotpath/io/charts.hpp>
#include <knotpath/knotpath.hpp>

namespace {

using knotpath::Index;

// K-fold cross-validation of the lasso on a grid of mu (the size-free
// penalty, so folds of different sizes are compared at the same mu), plus
// AIC and BIC along the full path with the number of nonzero coefficients as
// the degrees of freedom (Zou, Hastie & Tibshirani 2007, "On the degrees of
// freedom of the lasso", Annals of Statistics 35(5)).
knotpath::charts::SelectionCurve demo_selection(const knotpath::demo::DemoData& data,
                                                const knotpath::Path<double>& full) {
  const Index n = data.x.rows(), p = data.x.cols();
  const int folds = 10;
  const double mu_max = full.lambda_max() / std::sqrt(static_cast<double>(n));
  std::vector<double> grid;
  for (int i = 0; i < 80; ++i) grid.push_back(mu_max * std::pow(10.0, -3.0 * i / 79.0));

  std::vector<std::vector<double>> fold_error(grid.size(), std::vector<double>(folds, 0.0));
  for (int f = 0; f < folds; ++f) {
    // Fold f holds rows i with i % folds == f (a fixed, documented split).
    std::vector<Index> train, test;
    for (Index i = 0; i < n; ++i) (i % folds == f ? test : train).push_back(i);
    knotpath::Matrix<double> xt(static_cast<Index>(train.size()), p), xv(static_cast<Index>(test.size()), p);
    knotpath::Vector<double> yt(static_cast<Index>(train.size())), yv(static_cast<Index>(test.size()));
    for (std::size_t r = 0; r < train.size(); ++r) {
      xt.row(static_cast<Index>(r)) = data.x.row(train[r]);
      yt(static_cast<Index>(r)) = data.y(train[r]);
    }
    for (std::size_t r = 0; r < test.size(); ++r) {
      xv.row(static_cast<Index>(r)) = data.x.row(test[r]);
      yv(static_cast<Index>(r)) = data.y(test[r]);
    }
    const knotpath::Path<double> path = knotpath::trace<double>(xt, yt);
    const double root_n = std::sqrt(static_cast<double>(train.size()));
    for (std::size_t g = 0; g < grid.size(); ++g) {
      const knotpath::Vector<double> residual = yv - path.predict(xv, grid[g] * root_n);
      fold_error[g][static_cast<std::size_t>(f)] = residual.squaredNorm() / static_cast<double>(test.size());
    }
  }

  knotpath::charts::SelectionCurve curve;
  curve.penalty_name = "mu";
  curve.error_unit = "(kg/m\xC2\xB2)\xC2\xB2";
  curve.folds = folds;
  std::size_t best = 0;
  for (std::size_t g = 0; g < grid.size(); ++g) {
    double mean = 0, sq = 0;
    for (double e : fold_error[g]) mean += e;
    mean /= folds;
    for (double e : fold_error[g]) sq += (e - mean) * (e - mean);
    const double se = std::sqrt(sq / (folds - 1) / folds);
    curve.points.push_back({grid[g], mean, se});
    if (mean < curve.points[best].mean_error) best = g;
  }
  curve.minimizer = curve.points[best].penalty;
  curve.minimum_error = curve.points[best].mean_error;
  // One-SE rule: the largest penalty whose error is within one SE of the least.
  const double threshold = curve.minimum_error + curve.points[best].standard_error;
  for (const auto& pt : curve.points)
    if (pt.mean_error <= threshold) {
      curve.one_se = pt.penalty;
      break;  // grid runs from the largest penalty down
    }

  knotpath::charts::CriterionCurve aic{"AIC", {}}, bic{"BIC", {}};
  const double nn = static_cast<double>(n);
  for (const auto& k : full.knots()) {
    if (k.penalty <= 0) continue;  // the log axis shows penalty 0 apart; keep the criteria on the grid's range
    const double df = static_cast<double>(k.active) + 1;  // + intercept
    const double fit = nn * std::log(k.rss / nn);
    aic.values.emplace_back(k.penalty / std::sqrt(nn), fit + 2 * df);
    bic.values.emplace_back(k.penalty / std::sqrt(nn), fit + std::log(nn) * df);
  }
  curve.criteria = {aic, bic};
  return curve;
}

}  // namespace

int main(int argc, char** argv) {
  const std::filesystem::path dir = argc > 1 ? argv[1] : "knotpath-charts";
  const knotpath::demo::DemoData data = knotpath::demo::greenhouse();
  const knotpath::Path<double> path = knotpath::trace<double>(data.x, data.y);
  const knotpath::charts::ChartPath chart = knotpath::charts::chart_path(path, data.predictor_names, data.response_name);
  const knotpath::charts::SelectionCurve selection = demo_selection(data, path);

  knotpath::charts::ReportOptions options;
  options.title = "knotpath demo: greenhouse tomato yield";
  options.summary = {{"data", "built-in demo (invented greenhouse data, fixed seed)"},
                     {"observations", std::to_string(data.x.rows())},
                     {"response", data.response_name}};
  const auto files = knotpath::charts::write_report(dir, chart, options, &selection);
  for (const auto& f : files) std::printf("wrote %s\n", f.string().c_str());
  return files.size() == 5 ? 0 : 1;
}
