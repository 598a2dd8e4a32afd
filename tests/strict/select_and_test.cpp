// Instantiates selection (exact cross-validation, information criteria) and
// the entry tests, for the strict-warnings check (tools/strict-headers.sh).
// Also the "cross-validate with entry tests" file of the compile-time
// figures in DEVELOPERS.md. Never run: compiling it is the test.
#include <knotpath/core.hpp>
#include <knotpath/criteria.hpp>
#include <knotpath/cross_validation.hpp>
#include <knotpath/demo.hpp>
#include <knotpath/inference.hpp>

int main() {
  const auto data = knotpath::demo::greenhouse();
  const knotpath::Path<double> path = knotpath::trace<double>(data.x, data.y);

  knotpath::CrossValidationOptions folds;
  folds.folds = 5;
  const auto cv = knotpath::cross_validate<double>(data.x, data.y, {}, folds);
  // The same from statistics streamed per fold (FoldStatisticsAccumulator).
  knotpath::FoldStatisticsAccumulator<double> parts(data.x.cols(), false);
  parts.add(data.x, data.y, knotpath::Vector<double>(), cv.fold_of);
  const auto streamed = knotpath::cross_validate<double>(parts.finish(), {});
  const auto criteria = knotpath::information_criteria<double>(data.x, data.y, path);
  const auto significance = knotpath::entry_significance<double>(data.x, data.y, path);

  const double total = cv.minimum.mu + streamed.minimum.mu + cv.error_at_mu(cv.parsimonious.mu) + criteria.noise_variance +
                       significance.noise_variance + static_cast<double>(significance.entries.size());
  return total != total ? 1 : 0;
}
