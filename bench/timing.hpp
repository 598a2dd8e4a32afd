#pragma once
// Timing helpers shared by the benchmarks that time knotpath and a
// reference in the same run: wall-clock seconds of a call, the median, and
// the log whose report() sets the counters ratio, path_s and reference_s
// (medians over the iterations of the run).
#include <benchmark/benchmark.h>

#include <algorithm>
#include <chrono>
#include <vector>

namespace knotpath::bench {

/// Wall-clock seconds of one call of f.
template <class F>
double seconds(F&& f) {
  const auto start = std::chrono::steady_clock::now();
  f();
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

/// Median of the values (the mean of the middle two for an even count).
inline double median(std::vector<double> v) {
  std::sort(v.begin(), v.end());
  const std::size_t m = v.size() / 2;
  return v.size() % 2 ? v[m] : 0.5 * (v[m - 1] + v[m]);
}

/// Times of knotpath (path) and of its reference, one pair per iteration.
struct RatioLog {
  std::vector<double> path, reference;
  /// Sets the counters ratio (median of path / reference), path_s and reference_s.
  void report(benchmark::State& state) const {
    std::vector<double> ratios;
    for (std::size_t i = 0; i < path.size(); ++i) ratios.push_back(path[i] / reference[i]);
    state.counters["ratio"] = median(ratios);
    state.counters["path_s"] = median(path);
    state.counters["reference_s"] = median(reference);
  }
};

}  // namespace knotpath::bench
