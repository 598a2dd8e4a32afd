#pragma once
// Calibration helper shared by the Monte Carlo tests of the p-values
// (test_adjusted_inference.cpp, test_first_step_t.cpp). Test code only.

#include <algorithm>
#include <cmath>
#include <vector>

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

}  // namespace knotpath::testing
