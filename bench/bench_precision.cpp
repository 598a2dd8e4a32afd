// Cost of the arithmetics beyond double. precision/ratio traces the same
// generated dense design (Gaussian, AR(1) correlation 0.5, sparse truth; the
// generator of bench_path.cpp) in double and in 50 significant digits inside
// each iteration and reports both times and their ratio as counters, so the
// ratio comes from one run on one machine state. precision/exact_diabetes
// traces the diabetes data (../shared/data/open/diabetes.csv; Efron et al.
// 2004) in exact rational arithmetic with standardization off, the table's
// decimals parsed exactly. The "quick" registrations run in CI only.
#include <benchmark/benchmark.h>

#include <chrono>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include <knotpath/knotpath.hpp>
#include <knotpath/precision.hpp>

namespace {

using knotpath::Index;

struct Data {
  knotpath::Matrix<double> x;
  knotpath::Vector<double> y;
};

Data generate(Index n, Index p, unsigned seed) {
  std::mt19937_64 gen(seed);
  std::normal_distribution<double> normal;
  Data d{knotpath::Matrix<double>(n, p), knotpath::Vector<double>(n)};
  for (Index i = 0; i < n; ++i) {
    double prev = normal(gen);
    d.x(i, 0) = prev;
    for (Index j = 1; j < p; ++j) d.x(i, j) = prev = 0.5 * prev + 0.866 * normal(gen);
  }
  knotpath::Vector<double> beta = knotpath::Vector<double>::Zero(p);
  for (Index j = 0; j < p; j += 10) beta(j) = (j % 20 ? -1.0 : 1.0);
  d.y = d.x * beta;
  for (Index i = 0; i < n; ++i) d.y(i) += normal(gen);
  return d;
}

double seconds_since(std::chrono::steady_clock::time_point start) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

void ratio_50_digits_to_double(benchmark::State& state) {
  const Data d = generate(state.range(0), state.range(1), 2024);
  const auto x50 = knotpath::convert<knotpath::float50>(d.x);  // doubles convert exactly
  const auto y50 = knotpath::convert<knotpath::float50>(d.y);
  double double_seconds = 0, high_seconds = 0;
  std::size_t knots = 0, knots50 = 0;
  for (auto _ : state) {
    auto start = std::chrono::steady_clock::now();
    auto low = knotpath::trace<double>(d.x, d.y);
    double_seconds += seconds_since(start);
    start = std::chrono::steady_clock::now();
    auto high = knotpath::trace<knotpath::float50>(x50, y50);
    high_seconds += seconds_since(start);
    knots = low.knots().size();
    knots50 = high.knots().size();
    benchmark::DoNotOptimize(knots);
    benchmark::DoNotOptimize(knots50);
  }
  const double iterations = static_cast<double>(state.iterations());
  state.counters["double_ms"] = 1e3 * double_seconds / iterations;
  state.counters["digits50_ms"] = 1e3 * high_seconds / iterations;
  state.counters["ratio"] = double_seconds > 0 ? high_seconds / double_seconds : 0.0;
  state.counters["knots"] = static_cast<double>(knots);
  if (knots != knots50) state.SkipWithError("the double and 50-digit paths have different knot counts");
}

std::filesystem::path data_dir() {
  if (const char* env = std::getenv("KNOTPATH_DATA_DIR"); env && *env) return env;
  return KNOTPATH_DEFAULT_DATA_DIR;
}

void exact_diabetes(benchmark::State& state) {
  const auto file = data_dir() / "open" / "diabetes.csv";
  std::ifstream in(file);
  if (!in) {
    state.SkipWithError(("diabetes data not found at " + file.string() +
                         " (set KNOTPATH_DATA_DIR to the folder holding ../shared/data); skipped")
                            .c_str());
    for (auto _ : state) {
    }
    return;
  }
  // Header age,...,s6,progression: ten predictors, the response last.
  std::string line, cell;
  std::getline(in, line);
  std::vector<std::vector<std::string>> rows;
  while (std::getline(in, line)) {
    if (line.empty()) continue;
    std::vector<std::string> row;
    for (std::stringstream s(line); std::getline(s, cell, ',');) row.push_back(cell);
    rows.push_back(std::move(row));
  }
  const Index n = static_cast<Index>(rows.size()), p = static_cast<Index>(rows.front().size()) - 1;
  knotpath::Matrix<knotpath::rational> x(n, p);
  knotpath::Vector<knotpath::rational> y(n);
  for (Index i = 0; i < n; ++i) {
    const auto& row = rows[static_cast<std::size_t>(i)];
    for (Index j = 0; j < p; ++j)
      x(i, j) = knotpath::parse_decimal<knotpath::rational>(row[static_cast<std::size_t>(j)]);
    y(i) = knotpath::parse_decimal<knotpath::rational>(row[static_cast<std::size_t>(p)]);
  }
  knotpath::TraceOptions options;
  options.standardize = false;  // exact arithmetic has no square roots
  std::size_t knots = 0;
  for (auto _ : state) {
    auto path = knotpath::trace<knotpath::rational>(x, y, options);
    knots = path.knots().size();
    benchmark::DoNotOptimize(knots);
  }
  state.counters["knots"] = static_cast<double>(knots);
}

}  // namespace

BENCHMARK(ratio_50_digits_to_double)
    ->Name("precision/ratio/quick")
    ->Args({100, 10})
    ->Unit(benchmark::kMillisecond);
BENCHMARK(ratio_50_digits_to_double)
    ->Name("precision/ratio/full")
    ->Args({500, 50})
    ->Unit(benchmark::kMillisecond);
BENCHMARK(exact_diabetes)->Name("precision/exact_diabetes")->Unit(benchmark::kMillisecond);

BENCHMARK_MAIN();
