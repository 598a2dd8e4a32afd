#pragma once
// Calibration helpers shared by the Monte Carlo tests of the p-values
// (test_adjusted_inference.cpp, test_first_step_t.cpp). Test code only.

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <string>
#include <vector>

#include <knotpath/detail/random.hpp>
#include <knotpath/detail/scalar.hpp>

namespace knotpath::testing {

/// Kolmogorov-Smirnov p-value of a sample against U(0, 1), with Stephens'
/// (1970, JRSS B 32, 115-122) small-sample correction of the asymptotic
/// Kolmogorov distribution (formula from memory).
inline double ks_uniform_p_value(std::vector<double> sample) {
  std::sort(sample.begin(), sample.end());
  const double n = static_cast<double>(sample.size());
  double d = 0;
  for (std::size_t i = 0; i < sample.size(); ++i) {
    const double f = std::clamp(sample[i], 0.0, 1.0);
    d = std::max({d, (static_cast<double>(i) + 1) / n - f, f - static_cast<double>(i) / n});
  }
  const double lambda = (std::sqrt(n) + 0.12 + 0.11 / std::sqrt(n)) * d;
  double q = 0;
  for (int k = 1; k <= 100; ++k) q += 2.0 * ((k % 2) ? 1.0 : -1.0) * std::exp(-2.0 * k * k * lambda * lambda);
  return std::clamp(q, 0.0, 1.0);
}

/// A fixed design: n rows, p columns of standard normals with pairwise
/// correlation about rho (a shared factor), from a fixed seed.
inline Matrix<double> equicorrelated_design(Index n, Index p, double rho, std::uint64_t seed) {
  detail::SplitMix64 rng(seed);
  Matrix<double> x(n, p);
  for (Index i = 0; i < n; ++i) {
    const double shared = rng.normal();
    for (Index j = 0; j < p; ++j) x(i, j) = std::sqrt(rho) * shared + std::sqrt(1 - rho) * rng.normal();
  }
  return x;
}

/// The Python that carries the Debian archive's SciPy (the reference
/// scripts' interpreter; not a virtual environment's).
inline const char* const reference_python = "/usr/bin/python3";

/// Whether reference_python can import `modules` (e.g. "scipy.stats,
/// scipy.optimize"); the reference checks skip with a message when not.
inline bool python_has(const std::string& modules) {
  const std::string cmd = std::string(reference_python) + " -c \"import " + modules + "\" > /dev/null 2>&1";
  return std::system(cmd.c_str()) == 0;
}

}  // namespace knotpath::testing
