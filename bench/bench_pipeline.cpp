// The pipeline API (issue 17): each benchmark times knotpath's pipeline
// form and its reference in the same run and reports their ratio as the
// counter `ratio` (median over the iterations), so load on the machine
// cancels to first order. Counters: ratio, path_s / reference_s (medians,
// seconds) and benchmark-specific extras. Every benchmark has a `quick`
// size (CTest bench_pipeline_quick keeps it compiling and running) and a
// `full` size (the issue's).
//
//  - solver/...:   R responses against one n x p design: one PathSolver and
//                  trace_block() on one thread (path_s) against R independent
//                  trace() calls (reference_s). Goal: ratio <= 0.5.
//  - solver2/...:  the same with trace_block() on 2 threads against the same
//                  single-threaded trace() loop (the block's parallel gain).
//  - budget/...:   at_budget() against at_penalty() on one path (ratio of
//                  the median times per query; the index makes the budget
//                  search O(log K + p log p) where it walked O(K p)).
//  - storage/...:  a path stopped at max_active = a on a tall design, with
//                  the automatic storage (path_s) against the Gram route
//                  forced (reference_s): choose_storage() weighs the stopping rule.
#include <benchmark/benchmark.h>

#include <algorithm>
#include <chrono>
#include <random>
#include <vector>

#include <knotpath/knotpath.hpp>

#include "timing.hpp"

namespace {

namespace kp = knotpath;
using kp::Index;
using Mat = kp::Matrix<double>;
using Vec = kp::Vector<double>;

using knotpath::bench::median;
using knotpath::bench::RatioLog;
using knotpath::bench::seconds;

// Gaussian design, AR(1) correlation 0.5 between neighbouring columns.
Mat design(Index n, Index p, unsigned seed) {
  std::mt19937_64 gen(seed);
  std::normal_distribution<double> normal;
  Mat x(n, p);
  for (Index i = 0; i < n; ++i) {
    double prev = normal(gen);
    x(i, 0) = prev;
    for (Index j = 1; j < p; ++j) x(i, j) = prev = 0.5 * prev + 0.866 * normal(gen);
  }
  return x;
}

// R responses, each from its own few predictors plus noise (a screening
// pipeline: one outcome per column).
Mat responses(const Mat& x, Index r_count, unsigned seed) {
  std::mt19937_64 gen(seed);
  std::normal_distribution<double> normal;
  Mat y(x.rows(), r_count);
  for (Index r = 0; r < r_count; ++r) {
    y.col(r) = 1.5 * x.col(r % x.cols()) - x.col((7 * r + 3) % x.cols());
    for (Index i = 0; i < x.rows(); ++i) y(i, r) += normal(gen);
  }
  return y;
}


// Args: n, p, R, threads of the block.
void solver(benchmark::State& state) {
  const Mat x = design(state.range(0), state.range(1), 17);
  const Mat ys = responses(x, state.range(2), 23);
  const auto threads = static_cast<std::size_t>(state.range(3));
  RatioLog log;
  std::size_t knots = 0;
  for (auto _ : state) {
    std::size_t reference_knots = 0, solver_knots = 0;
    const double t_reference = seconds([&] {
      for (Index r = 0; r < ys.cols(); ++r) reference_knots += kp::trace<double>(x, Vec(ys.col(r))).knots().size();
    });
    const double t_solver = seconds([&] {
      const kp::PathSolver<double> prepared(x, {}, {}, static_cast<std::size_t>(ys.cols()));
      for (const auto& path : prepared.trace_block(ys, threads)) solver_knots += path.knots().size();
    });
    if (solver_knots != reference_knots) state.SkipWithError("the solver's paths differ from trace()'s");
    knots = solver_knots;
    log.path.push_back(t_solver);
    log.reference.push_back(t_reference);
    state.SetIterationTime(t_solver);
  }
  log.report(state);
  state.counters["knots_per_path"] = static_cast<double>(knots) / static_cast<double>(ys.cols());
}

// Args: n, p (a wide design gives about n knots), queries per iteration.
void budget(benchmark::State& state) {
  const Mat x = design(state.range(0), state.range(1), 5);
  const Vec y = responses(x, 1, 6).col(0);
  const kp::Path<double> path = kp::trace<double>(x, y);
  const double top = path.knots().back().penalized_l1, lambda_max = path.lambda_max();
  const Index queries = state.range(2);
  RatioLog log;
  double sink = 0;
  for (auto _ : state) {
    const double t_budget = seconds([&] {
      for (Index q = 0; q < queries; ++q)
        sink += path.at_budget(top * static_cast<double>(q + 1) / static_cast<double>(queries + 1)).penalty;
    });
    const double t_penalty = seconds([&] {
      for (Index q = 0; q < queries; ++q)
        sink += path.at_penalty(lambda_max * static_cast<double>(q + 1) / static_cast<double>(queries + 1)).penalty;
    });
    log.path.push_back(t_budget / static_cast<double>(queries));
    log.reference.push_back(t_penalty / static_cast<double>(queries));
    state.SetIterationTime(t_budget);
  }
  benchmark::DoNotOptimize(sink);
  log.report(state);
  state.counters["knots"] = static_cast<double>(path.knots().size());
}

// Args: n, p, max_active.
void storage(benchmark::State& state) {
  const Mat x = design(state.range(0), state.range(1), 3);
  const Vec y = responses(x, 1, 4).col(0);
  kp::TraceOptions automatic, gram;
  automatic.max_active = gram.max_active = static_cast<std::size_t>(state.range(2));
  gram.storage = kp::Storage::gram;
  RatioLog log;
  for (auto _ : state) {
    std::size_t a = 0, b = 0;
    const double t_auto = seconds([&] { a = kp::trace<double>(x, y, automatic).knots().size(); });
    const double t_gram = seconds([&] { b = kp::trace<double>(x, y, gram).knots().size(); });
    if (a != b) state.SkipWithError("the two storages traced different numbers of knots");
    log.path.push_back(t_auto);
    log.reference.push_back(t_gram);
    state.SetIterationTime(t_auto);
  }
  log.report(state);
  state.counters["dense_chosen"] =
      kp::choose_storage<double>(x.rows(), x.cols(), automatic) == kp::Storage::dense ? 1 : 0;
}

}  // namespace

BENCHMARK(solver)->Name("solver/quick")->Args({200, 20, 20, 1})->UseManualTime()->Iterations(3)->Unit(benchmark::kMillisecond);
BENCHMARK(solver)->Name("solver/full")->Args({1000, 200, 500, 1})->UseManualTime()->Iterations(3)->Unit(benchmark::kMillisecond);
BENCHMARK(solver)->Name("solver2/quick")->Args({200, 20, 20, 2})->UseManualTime()->Iterations(3)->Unit(benchmark::kMillisecond);
BENCHMARK(solver)->Name("solver2/full")->Args({1000, 200, 500, 2})->UseManualTime()->Iterations(3)->Unit(benchmark::kMillisecond);
BENCHMARK(budget)->Name("budget/quick")->Args({50, 100, 20})->UseManualTime()->Iterations(3)->Unit(benchmark::kMicrosecond);
BENCHMARK(budget)->Name("budget/full")->Args({500, 1000, 200})->UseManualTime()->Iterations(5)->Unit(benchmark::kMicrosecond);
BENCHMARK(storage)->Name("storage/quick")->Args({2000, 200, 4})->UseManualTime()->Iterations(3)->Unit(benchmark::kMillisecond);
BENCHMARK(storage)->Name("storage/full")->Args({20000, 2000, 40})->UseManualTime()->Iterations(3)->Unit(benchmark::kMillisecond);

BENCHMARK_MAIN();
