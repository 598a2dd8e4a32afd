// Full lasso path on a generated dense design (Gaussian, AR(1) correlation
// 0.5 between neighbouring columns, sparse truth). The argument pair is
// (n, p); the "quick" registration runs in CI to keep the harness alive.
#include <benchmark/benchmark.h>

#include <random>

#include <knotpath/knotpath.hpp>

namespace {

struct Data {
  knotpath::Matrix<double> x;
  knotpath::Vector<double> y;
};

Data generate(knotpath::Index n, knotpath::Index p, unsigned seed) {
  std::mt19937_64 gen(seed);
  std::normal_distribution<double> normal;
  Data d{knotpath::Matrix<double>(n, p), knotpath::Vector<double>(n)};
  for (knotpath::Index i = 0; i < n; ++i) {
    double prev = normal(gen);
    d.x(i, 0) = prev;
    for (knotpath::Index j = 1; j < p; ++j) d.x(i, j) = prev = 0.5 * prev + 0.866 * normal(gen);
  }
  knotpath::Vector<double> beta = knotpath::Vector<double>::Zero(p);
  for (knotpath::Index j = 0; j < p; j += 10) beta(j) = (j % 20 ? -1.0 : 1.0);
  d.y = d.x * beta;
  for (knotpath::Index i = 0; i < n; ++i) d.y(i) += normal(gen);
  return d;
}

void full_path(benchmark::State& state) {
  const Data d = generate(state.range(0), state.range(1), 2024);
  std::size_t knots = 0;
  for (auto _ : state) {
    auto path = knotpath::trace<double>(d.x, d.y);
    knots = path.knots().size();
    benchmark::DoNotOptimize(knots);
  }
  state.counters["knots"] = static_cast<double>(knots);
}

}  // namespace

BENCHMARK(full_path)->Name("path/quick")->Args({200, 20})->Unit(benchmark::kMillisecond);
BENCHMARK(full_path)->Name("path/full")->Args({2000, 200})->Unit(benchmark::kMillisecond);

BENCHMARK_MAIN();
