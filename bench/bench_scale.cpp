// Scale and speed benchmarks of issue 7 (see bench/README.md for the table,
// the targets and how to reproduce). Each benchmark times knotpath and its
// reference in the same run and reports their ratio as a counter (median
// over the iterations), so load on the machine cancels to first order.
// Every benchmark takes a size: the `quick` registrations run in CI only to
// keep the code compiling and running; `full` ones are the sizes.
//
// Counters: ratio (the figure of the table), path_s / reference_s (medians,
// seconds), knots, and benchmark-specific extras.
#include <benchmark/benchmark.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <fstream>
#include <random>
#include <string>
#include <vector>

#include <unistd.h>

#include <Eigen/Cholesky>
#include <Eigen/QR>
#include <knotpath/knotpath.hpp>

#include "timing.hpp"

#include "coordinate_descent.hpp"

namespace {

namespace kp = knotpath;
using kp::Index;
using Mat = kp::Matrix<double>;
using Vec = kp::Vector<double>;

using knotpath::bench::median;
using knotpath::bench::RatioLog;
using knotpath::bench::seconds;

// Gaussian design with AR(1) correlation rho between neighbouring columns
// (generated row by row into column-major storage, no temporary copy), and
// y = X beta + noise with every 10th coefficient +-1 (at most 50 nonzero).
struct Dense {
  Mat x;
  Vec y;
};

Dense ar1(Index n, Index p, double rho, unsigned seed) {
  std::mt19937_64 gen(seed);
  std::normal_distribution<double> normal;
  Dense d{Mat(n, p), Vec(n)};
  const double tail = std::sqrt(1.0 - rho * rho);
  for (Index i = 0; i < n; ++i) {
    double prev = normal(gen);
    d.x(i, 0) = prev;
    for (Index j = 1; j < p; ++j) d.x(i, j) = prev = rho * prev + tail * normal(gen);
  }
  d.y = Vec::Zero(n);
  Index nonzero = 0;
  for (Index j = 0; j < p && nonzero < 50; j += 10, ++nonzero) d.y += (nonzero % 2 ? -1.0 : 1.0) * d.x.col(j);
  for (Index i = 0; i < n; ++i) d.y(i) += normal(gen);
  return d;
}

// Sparse design: each column holds about density * n nonzeros at uniform
// rows, values standard normal; y from 50 columns plus noise.
struct Sparse {
  kp::SparseMatrix<double> x;
  Vec y;
};

Sparse sparse_design(Index n, Index p, double density, unsigned seed) {
  std::mt19937_64 gen(seed);
  std::normal_distribution<double> normal;
  std::uniform_int_distribution<Index> row(0, n - 1);
  const Index per_column = std::max<Index>(1, static_cast<Index>(std::llround(density * static_cast<double>(n))));
  Sparse s;
  s.x.resize(n, p);
  s.x.reserve(Eigen::VectorXi::Constant(p, static_cast<int>(per_column)));
  std::vector<Index> rows;
  for (Index j = 0; j < p; ++j) {
    rows.clear();
    for (Index k = 0; k < per_column; ++k) rows.push_back(row(gen));
    std::sort(rows.begin(), rows.end());
    rows.erase(std::unique(rows.begin(), rows.end()), rows.end());
    for (Index r : rows) s.x.insert(r, j) = normal(gen);
  }
  s.x.makeCompressed();
  s.y = Vec::Zero(n);
  for (Index j = 0; j < std::min<Index>(p, 500); j += 10) s.y += (j % 20 ? -1.0 : 1.0) * Vec(s.x.col(j));
  for (Index i = 0; i < n; ++i) s.y(i) += 0.5 * normal(gen);
  return s;
}


// tall: Gram mode, full path / one Householder-QR least-squares solve.
void tall(benchmark::State& state) {
  const Dense d = ar1(state.range(0), state.range(1), 0.5, 11);
  kp::TraceOptions options;
  options.storage = kp::Storage::gram;
  RatioLog log;
  std::size_t knots = 0;
  for (auto _ : state) {
    const double t_path = seconds([&] {
      const auto path = kp::trace<double>(d.x, d.y, options);
      knots = path.knots().size();
    });
    Vec solution;
    const double t_qr = seconds([&] { solution = d.x.householderQr().solve(d.y); });
    benchmark::DoNotOptimize(solution.data());
    log.path.push_back(t_path);
    log.reference.push_back(t_qr);
    state.SetIterationTime(t_path);
  }
  log.report(state);
  state.counters["knots"] = static_cast<double>(knots);
}

// statistics: the sufficient statistics alone (SufficientStatistics::
// from_rows: the shift, a symmetric rank-k update per block of rows, the
// response's products), the formation that the tall trace starts with,
// against the machine's rate for the same kernel on the same matrix: one
// symmetric rank-k update of all the rows at once (Eigen's
// selfadjointView().rankUpdate(), the kernel from_rows calls per block),
// with no blocking, shift or response. Rates count n p (p + 1) flops (the
// lower triangle's multiply-adds, two flops each). Counters: gflops and
// kernel_gflops (from the medians), ratio = the formation's rate over the
// kernel's, share = the formation's time over a Gram-mode trace's.
void statistics(benchmark::State& state) {
  const Dense d = ar1(state.range(0), state.range(1), 0.5, 11);
  const double n = static_cast<double>(d.x.rows()), p = static_cast<double>(d.x.cols());
  kp::TraceOptions options;
  options.storage = kp::Storage::gram;
  std::vector<double> formation, kernel, trace;
  for (auto _ : state) {
    const double t_statistics = seconds([&] {
      const auto s = kp::SufficientStatistics<double>::from_rows(d.x, d.y);
      benchmark::DoNotOptimize(s.comoments.data());
    });
    Mat gram = Mat::Zero(d.x.cols(), d.x.cols());
    const double t_kernel = seconds([&] { gram.selfadjointView<Eigen::Lower>().rankUpdate(d.x.transpose()); });
    benchmark::DoNotOptimize(gram.data());
    const double t_trace = seconds([&] {
      const auto path = kp::trace<double>(d.x, d.y, options);
      benchmark::DoNotOptimize(path.knots().data());
    });
    formation.push_back(t_statistics);
    kernel.push_back(t_kernel);
    trace.push_back(t_trace);
    state.SetIterationTime(t_statistics);
  }
  const double flops = n * p * (p + 1.0);
  state.counters["gflops"] = flops / median(formation) / 1e9;
  state.counters["kernel_gflops"] = flops / median(kernel) / 1e9;
  state.counters["ratio"] = median(kernel) / median(formation);
  state.counters["share"] = median(formation) / median(trace);
  state.counters["statistics_s"] = median(formation);
  state.counters["trace_s"] = median(trace);
}

// Median time of one X^T v with a fresh v each time.
template <class X>
double one_product(const X& x, int repeats) {
  std::vector<double> times;
  Vec v = Vec::LinSpaced(x.rows(), -1.0, 1.0), out(x.cols());
  for (int r = 0; r < repeats; ++r) {
    v(r % v.size()) += 1.0;
    times.push_back(seconds([&] { out.noalias() = x.transpose() * v; }));
    benchmark::DoNotOptimize(out.data());
  }
  return median(times);
}

// wide: operator mode, first K knots / (K x one dense X^T v). Arguments n,
// p, K, threads (TraceOptions::threads; the reference product always runs
// on one thread, so a ratio below 1 with 2 threads is the threads' gain).
void wide(benchmark::State& state) {
  const Dense d = ar1(state.range(0), state.range(1), 0.5, 12);
  kp::TraceOptions options;
  options.storage = kp::Storage::view;  // what automatic picks for this shape: no copy of X
  options.max_knots = static_cast<std::size_t>(state.range(2));
  options.threads = static_cast<std::size_t>(state.range(3));
  RatioLog log;
  std::size_t knots = 0;
  for (auto _ : state) {
    const double t_path = seconds([&] { knots = kp::trace<double>(d.x, d.y, options).knots().size(); });
    log.path.push_back(t_path);
    log.reference.push_back(static_cast<double>(state.range(2)) * one_product(d.x, 15));
    state.SetIterationTime(t_path);
  }
  log.report(state);
  state.counters["knots"] = static_cast<double>(knots);
}

// sparse: first K knots / (K x one sparse X^T v). Arguments n, p, density
// in units of 1e-4, K, threads (the reference product runs on one thread).
void sparse(benchmark::State& state) {
  const Sparse s = sparse_design(state.range(0), state.range(1), 1e-4 * static_cast<double>(state.range(2)), 13);
  kp::TraceOptions options;
  options.max_knots = static_cast<std::size_t>(state.range(3));
  options.threads = static_cast<std::size_t>(state.range(4));
  RatioLog log;
  std::size_t knots = 0;
  for (auto _ : state) {
    const double t_path = seconds([&] { knots = kp::trace_sparse<double>(s.x, s.y, options).knots().size(); });
    log.path.push_back(t_path);
    log.reference.push_back(static_cast<double>(state.range(3)) * one_product(s.x, 15));
    state.SetIterationTime(t_path);
  }
  log.report(state);
  state.counters["knots"] = static_cast<double>(knots);
  state.counters["nnz"] = static_cast<double>(s.x.nonZeros());
}

// grid: exact path down to 1e-3 lambda_max / coordinate descent on the
// 100-penalty grid over the same range (bench/coordinate_descent.hpp).
void grid(benchmark::State& state) {
  const Dense d = ar1(state.range(0), state.range(1), 0.5, 14);
  // lambda_max from a one-knot trace (setup, not timed; both methods compute
  // it again inside their timed part).
  kp::TraceOptions probe;
  probe.max_knots = 1;
  const double lambda_max = kp::trace<double>(d.x, d.y, probe).lambda_max();
  kp::TraceOptions options;
  options.min_penalty = 1e-3 * lambda_max;
  RatioLog log;
  std::size_t knots = 0, sweeps = 0;
  bool converged = true;
  for (auto _ : state) {
    const double t_path = seconds([&] { knots = kp::trace<double>(d.x, d.y, options).knots().size(); });
    const double t_cd = seconds([&] {
      const auto fit = knotpath::bench::coordinate_descent_grid(d.x, d.y);
      sweeps = fit.sweeps;
      converged = converged && fit.converged;
    });
    log.path.push_back(t_path);
    log.reference.push_back(t_cd);
    state.SetIterationTime(t_path);
  }
  log.report(state);
  state.counters["knots"] = static_cast<double>(knots);
  state.counters["cd_sweeps"] = static_cast<double>(sweeps);
  state.counters["cd_converged"] = converged ? 1.0 : 0.0;
}

// factor: replay the events of a Gram-mode path up to K active predictors,
// (a) with knotpath's incremental Cholesky (add: one triangular solve; leave:
// Givens rotations) and (b) refactorizing the active Gram matrix from scratch
// with Eigen's LLT at every knot; both solve for the direction at each knot.
// ratio = (b) / (a), the speedup of incremental updates.
void factor(benchmark::State& state) {
  const Index n = state.range(0), p = state.range(1), k_max = state.range(2);
  const Dense d = ar1(n, p, 0.5, 15);
  const auto stats = kp::SufficientStatistics<double>::from_rows(d.x, d.y);
  kp::TraceOptions options;
  options.max_active = static_cast<std::size_t>(k_max);
  const auto prepared = kp::prepare_gram(stats, options);
  const auto path = kp::trace_statistics(stats, options);
  const Mat& g = prepared.design.gram();
  struct Event {
    bool enter;
    Index column;
  };
  std::vector<Event> events;
  Index largest = 0;
  for (const auto& knot : path.knots()) {
    if (knot.event != kp::EventKind::enter && knot.event != kp::EventKind::leave) continue;
    events.push_back({knot.event == kp::EventKind::enter, knot.predictor});  // no exclusions here: column = predictor
    largest = std::max(largest, knot.active_count);
  }
  RatioLog log;
  double checksum = 0;
  for (auto _ : state) {
    const double t_incremental = seconds([&] {
      kp::CholeskyFactor<double> chol(p);
      std::vector<Index> active;
      Vec cross(p), rhs(p), dir(p);
      for (const Event& e : events) {
        if (e.enter) {
          const Index k = static_cast<Index>(active.size());
          for (Index i = 0; i < k; ++i) cross(i) = g(active[static_cast<std::size_t>(i)], e.column);
          chol.add(cross.head(k), g(e.column, e.column), 1e-12);
          active.push_back(e.column);
        } else {
          const auto pos = std::find(active.begin(), active.end(), e.column);
          chol.remove(static_cast<Index>(pos - active.begin()));
          active.erase(pos);
        }
        const Index k = static_cast<Index>(active.size());
        rhs.head(k).setOnes();
        auto x = dir.head(k);
        chol.solve(rhs.head(k), x);
        checksum += x(0);
      }
    });
    const double t_refactor = seconds([&] {
      std::vector<Index> active;
      Mat ga;
      Vec x;
      for (const Event& e : events) {
        if (e.enter) {
          active.push_back(e.column);
        } else {
          active.erase(std::find(active.begin(), active.end(), e.column));
        }
        const Index k = static_cast<Index>(active.size());
        ga.resize(k, k);
        for (Index b = 0; b < k; ++b)
          for (Index a = 0; a < k; ++a) ga(a, b) = g(active[static_cast<std::size_t>(a)], active[static_cast<std::size_t>(b)]);
        Eigen::LLT<Mat> llt(ga);
        x = llt.solve(Vec::Ones(k));
        checksum -= x(0);
      }
    });
    log.path.push_back(t_incremental);
    log.reference.push_back(t_refactor);
    state.SetIterationTime(t_incremental);
  }
  // Report the speedup (refactor / incremental), not its inverse.
  std::vector<double> speedups;
  for (std::size_t i = 0; i < log.path.size(); ++i) speedups.push_back(log.reference[i] / log.path[i]);
  state.counters["ratio"] = median(speedups);
  state.counters["incremental_s"] = median(log.path);
  state.counters["refactor_s"] = median(log.reference);
  state.counters["events"] = static_cast<double>(events.size());
  state.counters["largest_k"] = static_cast<double>(largest);
  benchmark::DoNotOptimize(checksum);
}

// Least-squares slope of log(time) on log(size): the fitted exponent.
double fitted_exponent(const std::vector<double>& sizes, const std::vector<double>& times) {
  double mx = 0, my = 0;
  for (std::size_t i = 0; i < sizes.size(); ++i) {
    mx += std::log(sizes[i]);
    my += std::log(times[i]);
  }
  mx /= static_cast<double>(sizes.size());
  my /= static_cast<double>(sizes.size());
  double sxy = 0, sxx = 0;
  for (std::size_t i = 0; i < sizes.size(); ++i) {
    sxy += (std::log(sizes[i]) - mx) * (std::log(times[i]) - my);
    sxx += (std::log(sizes[i]) - mx) * (std::log(sizes[i]) - mx);
  }
  return sxy / sxx;
}

// scaling_p: operator mode at fixed n, first K knots, p = p0, 2 p0, 4 p0, 8 p0.
// scaling_n: Gram mode full path at fixed p, n = n0, 2 n0, 4 n0, 8 n0.
// Each size: median of 3 runs. Counters t0..t3 (s) and the fitted exponent.
void scaling(benchmark::State& state, bool along_p) {
  const Index fixed = state.range(0), base = state.range(1);
  const std::size_t knots_limit = static_cast<std::size_t>(state.range(2));
  std::vector<double> sizes, times;
  for (auto _ : state) {
    sizes.clear();
    times.clear();
    for (int s = 0; s < 4; ++s) {
      const Index size = base << s;
      const Dense d = along_p ? ar1(fixed, size, 0.5, 16) : ar1(size, fixed, 0.5, 16);
      kp::TraceOptions options;
      options.storage = along_p ? kp::Storage::dense : kp::Storage::gram;
      options.max_knots = knots_limit;
      std::vector<double> runs;
      for (int r = 0; r < 3; ++r)
        runs.push_back(seconds([&] { benchmark::DoNotOptimize(kp::trace<double>(d.x, d.y, options).knots().size()); }));
      sizes.push_back(static_cast<double>(size));
      times.push_back(median(runs));
    }
    state.SetIterationTime(times.back());
  }
  for (int s = 0; s < 4; ++s) state.counters["t" + std::to_string(s)] = times[static_cast<std::size_t>(s)];
  state.counters["exponent"] = fitted_exponent(sizes, times);
}
void scaling_p(benchmark::State& state) { scaling(state, true); }
void scaling_n(benchmark::State& state) { scaling(state, false); }

// Peak resident set (VmHWM) of this process, bytes.
double peak_resident_bytes() {
  std::ifstream status("/proc/self/status");
  std::string line;
  while (std::getline(status, line))
    if (line.rfind("VmHWM:", 0) == 0) return 1024.0 * std::strtod(line.c_str() + 6, nullptr);
  return 0;
}

// Child side of the memory probe: a fresh process generates X (n x p), traces
// the first K knots in operator mode and prints its peak resident set.
int memory_probe(Index n, Index p, std::size_t knots) {
  const Dense d = ar1(n, p, 0.5, 12);
  const double before = peak_resident_bytes();
  kp::TraceOptions options;
  options.storage = kp::Storage::view;  // what automatic picks for this shape: no copy of X
  options.max_knots = knots;
  const auto path = kp::trace<double>(d.x, d.y, options);
  std::printf("%.0f %.0f %zu\n", peak_resident_bytes(), before, path.knots().size());
  return 0;
}

// memory_wide: peak resident memory of the wide run in a fresh process
// (this benchmark process holds other data), relative to the bytes of X.
void memory_wide(benchmark::State& state) {
  // popen runs a shell, for which /proc/self/exe is the shell: resolve it here.
  char self[4096] = {};
  if (readlink("/proc/self/exe", self, sizeof self - 1) <= 0) {
    state.SkipWithError("cannot resolve /proc/self/exe");
    return;
  }
  const std::string command = std::string("'") + self + "' --memory-probe " + std::to_string(state.range(0)) + " " +
                              std::to_string(state.range(1)) + " " + std::to_string(state.range(2));
  double peak = 0, before = 0;
  std::size_t knots = 0;
  for (auto _ : state) {
    FILE* pipe = popen(command.c_str(), "r");
    if (!pipe || std::fscanf(pipe, "%lf %lf %zu", &peak, &before, &knots) != 3) {
      if (pipe) pclose(pipe);
      state.SkipWithError("memory probe failed");
      return;
    }
    pclose(pipe);
  }
  const double x_bytes = 8.0 * static_cast<double>(state.range(0)) * static_cast<double>(state.range(1));
  state.counters["ratio"] = peak / x_bytes;          // target <= 1.25
  state.counters["before_trace"] = before / x_bytes;  // X, y and the program itself
  state.counters["knots"] = static_cast<double>(knots);
}

}  // namespace

// Sizes: quick (CI, a few seconds in all) and full (the table).
BENCHMARK(tall)->Name("tall/quick")->Args({2000, 50})->Iterations(1)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(tall)->Name("tall/full")->Args({20000, 500})->Iterations(3)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(statistics)->Name("statistics/quick")->Args({2000, 50})->Iterations(1)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(statistics)->Name("statistics/full")->Args({20000, 500})->Iterations(5)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(wide)->Name("wide/quick")->Args({200, 2000, 50, 1})->Iterations(1)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(wide)->Name("wide/full")->Args({1000, 20000, 300, 1})->Iterations(3)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(wide)->Name("wide_2threads/quick")->Args({200, 2000, 50, 2})->Iterations(1)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(wide)->Name("wide_2threads/full")->Args({1000, 20000, 300, 2})->Iterations(3)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(memory_wide)->Name("memory_wide/quick")->Args({200, 2000, 50})->Iterations(1)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(memory_wide)->Name("memory_wide/full")->Args({1000, 20000, 300})->Iterations(1)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(sparse)->Name("sparse/quick")->Args({5000, 2000, 20, 50, 1})->Iterations(1)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(sparse)->Name("sparse/full")->Args({100000, 20000, 20, 300, 1})->Iterations(3)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(sparse)->Name("sparse_2threads/quick")->Args({5000, 2000, 20, 50, 2})->Iterations(1)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(sparse)->Name("sparse_2threads/full")->Args({100000, 20000, 20, 300, 2})->Iterations(3)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(grid)->Name("grid_tall/quick")->Args({500, 20})->Iterations(1)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(grid)->Name("grid_tall/full")->Args({5000, 200})->Iterations(5)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(grid)->Name("grid_wide/quick")->Args({50, 200})->Iterations(1)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(grid)->Name("grid_wide/full")->Args({500, 5000})->Iterations(1)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(factor)->Name("factor/quick")->Args({300, 100, 60})->Iterations(1)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(factor)->Name("factor/full")->Args({1500, 700, 500})->Iterations(3)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(scaling_p)->Name("scaling_p/quick")->Args({200, 250, 30})->Iterations(1)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(scaling_p)->Name("scaling_p/full")->Args({1000, 2500, 100})->Iterations(1)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(scaling_n)->Name("scaling_n/quick")->Args({20, 500, 0})->Iterations(1)->UseManualTime()->Unit(benchmark::kMillisecond);
BENCHMARK(scaling_n)->Name("scaling_n/full")->Args({200, 5000, 0})->Iterations(1)->UseManualTime()->Unit(benchmark::kMillisecond);

int main(int argc, char** argv) {
  if (argc == 5 && std::strcmp(argv[1], "--memory-probe") == 0)
    return memory_probe(std::atol(argv[2]), std::atol(argv[3]), static_cast<std::size_t>(std::atol(argv[4])));
  benchmark::Initialize(&argc, argv);
  if (benchmark::ReportUnrecognizedArguments(argc, argv)) return 1;
  benchmark::RunSpecifiedBenchmarks();
  benchmark::Shutdown();
  return 0;
}
