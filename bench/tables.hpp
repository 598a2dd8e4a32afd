#pragma once
// Invented tables the benchmarks share (fixed seeds: the same table on every
// run of one build).

#include <algorithm>
#include <cstdint>
#include <random>

#include <knotpath/core.hpp>

namespace knotpath::bench {

/// An n x p Gaussian design with AR(1) correlation 0.5 between neighbouring
/// columns, and a response with unit noise on its first `signals` columns,
/// coefficient step * (j + 1) on column j. Drawn from std::mt19937_64(seed).
inline void ar1_table(Index n, Index p, Index signals, double step, std::uint64_t seed, Matrix<double>& x,
                      Vector<double>& y) {
  std::mt19937_64 gen(seed);
  std::normal_distribution<double> normal;
  x.resize(n, p);
  y.resize(n);
  for (Index i = 0; i < n; ++i) {
    double prev = normal(gen);
    x(i, 0) = prev;
    for (Index j = 1; j < p; ++j) x(i, j) = prev = 0.5 * prev + 0.866 * normal(gen);
    y(i) = normal(gen);
    for (Index j = 0; j < std::min<Index>(signals, p); ++j) y(i) += step * static_cast<double>(j + 1) * x(i, j);
  }
}

}  // namespace knotpath::bench
