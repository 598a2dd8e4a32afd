// The cost of `knotpath select` against `knotpath trace` on a tall table
// (issue 18). One benchmark times, in the same run, trace() of the table
// (reference_s) and the computations select makes on it (path_s), in the
// order of lib/cli/select_command.cpp run_selection(): cross_validate() (the
// full path and K folds; on a tall table the full path is traced from the
// table's sufficient statistics, kept in CrossValidation::statistics),
// information_criteria() from those statistics (one least-squares fit by the
// normal equations, guarded), and the covariance and spacing tests from the
// same statistics with the criteria's noise variance (entry_significance()
// on SufficientStatistics). Counters (medians over the iterations): ratio =
// select / trace (goal of issue 18: <= 5 at n = 200000, p = 100, K = 10,
// tests on), path_s, reference_s, and the phases' seconds folds_s,
// criteria_s, tests_s. Table reading and printing are not timed (they are
// the same for both commands). Args: n, p, K, tests (0/1).
//
// `quick` keeps the code compiling and running (CTest bench_select_quick);
// `full` is the size. Run in a Release build (bench/README.md).
#include <benchmark/benchmark.h>

#include <algorithm>
#include <optional>
#include <random>
#include <vector>

#include <knotpath/criteria.hpp>
#include <knotpath/cross_validation.hpp>
#include <knotpath/inference.hpp>
#include <knotpath/knotpath.hpp>

#include "tables.hpp"
#include "timing.hpp"

namespace {

namespace kp = knotpath;
using kp::Index;
using Mat = kp::Matrix<double>;
using Vec = kp::Vector<double>;

using knotpath::bench::median;
using knotpath::bench::RatioLog;
using knotpath::bench::seconds;

// Gaussian design, AR(1) correlation 0.5 between neighbouring columns, and a
// response on its first 10 columns with unit noise.
void table(Index n, Index p, Mat& x, Vec& y) { knotpath::bench::ar1_table(n, p, 10, 0.2, 1801, x, y); }

void select(benchmark::State& state) {
  Mat x;
  Vec y;
  table(state.range(0), state.range(1), x, y);
  kp::CrossValidationOptions cv_options;
  cv_options.folds = static_cast<std::size_t>(state.range(2));
  const bool tests = state.range(3) != 0;
  RatioLog log;
  std::vector<double> folds_s, criteria_s, tests_s;
  std::size_t entries = 0;
  for (auto _ : state) {
    const double t_trace = seconds([&] { benchmark::DoNotOptimize(kp::trace<double>(x, y).knots().size()); });
    kp::CrossValidation<double> cv;
    const double t_folds = seconds([&] { cv = kp::cross_validate<double>(x, y, {}, cv_options); });
    // As select on a tall table: the statistics the full path was traced
    // from serve the criteria and the tests (select_command.cpp).
    std::optional<kp::InformationCriteria<double>> ic;
    const double t_criteria = seconds([&] { ic = kp::information_criteria(*cv.statistics, cv.full_path); });
    const double t_tests = !tests ? 0.0 : seconds([&] {
      entries = kp::entry_significance(*cv.statistics, cv.full_path, ic->noise_variance, ic->residual_df)
                    .entries.size();
    });
    log.path.push_back(t_folds + t_criteria + t_tests);
    log.reference.push_back(t_trace);
    folds_s.push_back(t_folds);
    criteria_s.push_back(t_criteria);
    tests_s.push_back(t_tests);
    state.SetIterationTime(t_folds + t_criteria + t_tests);
  }
  log.report(state);
  state.counters["folds_s"] = median(folds_s);
  state.counters["criteria_s"] = median(criteria_s);
  state.counters["tests_s"] = median(tests_s);
  state.counters["entries"] = static_cast<double>(entries);
}

}  // namespace

BENCHMARK(select)->Name("select/quick")->Args({2000, 20, 5, 1})->UseManualTime()->Iterations(1)->Unit(benchmark::kMillisecond);
BENCHMARK(select)->Name("select/full")->Args({200000, 100, 10, 1})->UseManualTime()->Iterations(1)->Unit(benchmark::kMillisecond);
BENCHMARK(select)->Name("select/medium")->Args({50000, 100, 10, 1})->UseManualTime()->Iterations(1)->Unit(benchmark::kMillisecond);

BENCHMARK_MAIN();
