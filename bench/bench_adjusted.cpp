// The cost of the selection-adjusted inference (issue 22) against tracing
// the path to the same point. One benchmark times, in the same run:
//  - reference_s: trace() of the table down to the point (TraceOptions::
//    min_penalty set to the point's penalty), preparation included;
//  - path_s: the adjusted inference for every predictor active there, on
//    a prepared problem of the path (prepared once outside the timing, as
//    a caller who traced it holds it): the dense columns (`dense`), or the
//    Gram matrix of the sufficient statistics (`gram`, the problem trace()
//    itself prepares on a table this tall), with a given noise
//    variance (the least-squares estimate, one QR of the n x p design, is a
//    separate cost shared with the criteria and the entry tests).
// Two conditionings: `penalty` (the fixed-penalty lasso, Lee et al. 2016:
// the m x m Gram block of the active set, O(n m^2 + m^3)) and `steps` (the
// path's first k events, Tibshirani et al. 2016: one Gram column per
// predictor ever active, O(n p k), formed on dense columns as blocked
// matrix products, then O(p m^2) per step). Counters
// (medians): ratio = path / reference (goal of issue 22: <= 1 at n = 5000,
// p = 200), path_s, reference_s, active. Args: n, p, k (the point lies
// halfway between knot rows k and k + 1 of the full path).
//
// `quick` keeps the code compiling and running (CTest
// bench_adjusted_quick); `full` is the size. Run in a Release build
// (bench/README.md).
#include <benchmark/benchmark.h>

#include <algorithm>
#include <random>
#include <vector>

#include <knotpath/adjusted_inference.hpp>
#include <knotpath/core.hpp>

#include "tables.hpp"
#include "timing.hpp"

namespace {

namespace kp = knotpath;
using kp::Index;
using Mat = kp::Matrix<double>;
using Vec = kp::Vector<double>;

using knotpath::bench::RatioLog;
using knotpath::bench::seconds;

// Gaussian design, AR(1) correlation 0.5 between neighbouring columns, and a
// response on its first 20 columns with unit noise.
void table(Index n, Index p, Mat& x, Vec& y) { knotpath::bench::ar1_table(n, p, 20, 0.05, 2201, x, y); }

template <bool Steps, bool Gram>
void adjusted(benchmark::State& state) {
  Mat x;
  Vec y;
  table(state.range(0), state.range(1), x, y);
  const Index k = state.range(2);
  const kp::Path<double> full = kp::trace<double>(x, y);
  const auto& knots = full.knots();
  const Index rows = std::min<Index>(k, static_cast<Index>(knots.size()) - 2);
  const double lambda = 0.5 * (knots[static_cast<std::size_t>(rows)].penalty + knots[static_cast<std::size_t>(rows) + 1].penalty);
  kp::TraceOptions to_point;
  to_point.min_penalty = lambda;
  const auto dense = kp::prepare_dense<double>(x, y, full.options());
  const auto gram = kp::prepare_gram(kp::SufficientStatistics<double>::from_rows(x, y), full.options());
  RatioLog log;
  std::size_t active = 0;
  for (auto _ : state) {
    kp::Path<double> path;
    const double t_trace = seconds([&] { path = kp::trace<double>(x, y, to_point); });
    const double t_inference = seconds([&] {
      auto run = [&](const auto& design) {
        return Steps ? kp::adjusted_inference_after_steps(design, full, rows, 0.9, 1.0)
                     : kp::adjusted_inference_at_penalty(design, full, lambda, 0.9, 1.0);
      };
      active = (Gram ? run(gram.design) : run(dense.design)).coefficients.size();
    });
    log.path.push_back(t_inference);
    log.reference.push_back(t_trace);
    state.SetIterationTime(t_inference);
  }
  log.report(state);
  state.counters["active"] = static_cast<double>(active);
  state.counters["steps"] = static_cast<double>(rows);
}

}  // namespace

#define KNOTPATH_ADJUSTED_BENCH(STEPS, GRAM, NAME, N, P, K, ITERATIONS)                                          \
  BENCHMARK(adjusted<STEPS, GRAM>)                                                                                \
      ->Name(NAME)                                                                                                \
      ->Args({N, P, K})                                                                                           \
      ->UseManualTime()                                                                                           \
      ->Iterations(ITERATIONS)                                                                                    \
      ->Unit(benchmark::kMillisecond)

KNOTPATH_ADJUSTED_BENCH(false, false, "adjusted/penalty/dense/quick", 500, 20, 5, 1);
KNOTPATH_ADJUSTED_BENCH(true, true, "adjusted/steps/gram/quick", 500, 20, 5, 1);
KNOTPATH_ADJUSTED_BENCH(false, false, "adjusted/penalty/dense/full", 5000, 200, 50, 5);
KNOTPATH_ADJUSTED_BENCH(true, false, "adjusted/steps/dense/full", 5000, 200, 50, 5);
KNOTPATH_ADJUSTED_BENCH(false, true, "adjusted/penalty/gram/full", 5000, 200, 50, 5);
KNOTPATH_ADJUSTED_BENCH(true, true, "adjusted/steps/gram/full", 5000, 200, 50, 5);
KNOTPATH_ADJUSTED_BENCH(false, false, "adjusted/penalty/dense/full-long", 5000, 200, 180, 3);
KNOTPATH_ADJUSTED_BENCH(true, false, "adjusted/steps/dense/full-long", 5000, 200, 180, 3);
KNOTPATH_ADJUSTED_BENCH(false, true, "adjusted/penalty/gram/full-long", 5000, 200, 180, 3);
KNOTPATH_ADJUSTED_BENCH(true, true, "adjusted/steps/gram/full-long", 5000, 200, 180, 3);

BENCHMARK_MAIN();
