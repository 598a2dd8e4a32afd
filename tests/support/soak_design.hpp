#pragma once
// The random designs of the numerical soak (tests/test_soak.cpp): varied
// shape (n from 2 to 200, p from 1 to 300), correlation (independent to
// AR(1) rho = 0.999), column scales (norms from about 1e-6 to 1e6),
// duplicated columns and tied integer-valued columns, and options. Each
// design is a function of its seed and of the standard library in use
// (std::mt19937_64's sequence is fixed by the standard, but
// uniform_real_distribution and normal_distribution are implementation-
// defined). Shared with the golden corpus (tests/golden/golden_dump.cpp).
// Test code only.

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <random>
#include <string>

#include <knotpath/knotpath.hpp>

namespace knotpath::testing {

/// One soak design: trace<double>(x, y, options).
struct SoakDesign {
  Matrix<double> x;
  Vector<double> y;
  TraceOptions options;
  std::string summary;  ///< seed, sizes and kind, for failure messages
};

/// The soak design of `seed` (the soak draws seeds 1000, 1001, ...).
inline SoakDesign random_design(unsigned seed) {
  std::mt19937_64 gen(seed);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  std::normal_distribution<double> normal(0.0, 1.0);
  SoakDesign d;
  // Log-uniform sizes: most designs small, some near the bounds.
  const Index n =
      std::clamp<Index>(static_cast<Index>(std::exp(u(gen) * std::log(201.0))) + 1, 2, 200);
  const Index p = std::clamp<Index>(static_cast<Index>(std::exp(u(gen) * std::log(301.0))), 1, 300);
  const double rhos[] = {0.0, 0.0, 0.5, 0.9, 0.99, 0.999};
  const double rho = rhos[gen() % 6];
  const int kind =
      static_cast<int>(gen() % 8);  // 0..4 Gaussian AR(1), 5 ties, 6 duplicates, 7 both
  d.x.resize(n, p);
  const double tail = std::sqrt(1.0 - rho * rho);
  for (Index i = 0; i < n; ++i) {
    double prev = normal(gen);
    for (Index j = 0; j < p; ++j) {
      if (j > 0) prev = rho * prev + tail * normal(gen);
      d.x(i, j) = prev;
    }
  }
  if (kind == 5 || kind == 7)  // tied, integer-valued columns
    for (Index j = 0; j < p; j += 2)
      for (Index i = 0; i < n; ++i) d.x(i, j) = static_cast<double>(gen() % 3);
  if ((kind == 6 || kind == 7) && p >= 2)  // duplicated (possibly rescaled) columns
    for (Index j = 1; j < p; j += 3) {
      // Scale first, then source, in separate statements: inside one
      // expression the two draws are unsequenced (GCC and Clang order them
      // differently), and the soak's figures and the golden corpus assume
      // this order.
      const double factor = gen() % 2 ? 1.0 : -2.5;
      const Index source = static_cast<Index>(gen() % static_cast<std::size_t>(j));
      d.x.col(j) = d.x.col(source) * factor;
    }
  // Column scales 10^U(-6, 6): norms from about 1e-6 to 1e6 times sqrt(n).
  for (Index j = 0; j < p; ++j) d.x.col(j) *= std::pow(10.0, -6.0 + 12.0 * u(gen));
  Vector<double> beta = Vector<double>::Zero(p);
  for (Index k = 0; k < std::min<Index>(p, 5); ++k) {
    const Index j = static_cast<Index>(gen() % static_cast<std::size_t>(p));
    const double norm = d.x.col(j).norm();  // 0 for an all-zero tied column
    if (norm > 0) beta(j) = normal(gen) / norm * std::sqrt(double(n));
  }
  d.y = d.x * beta;
  const double noise = u(gen) < 0.2 ? 0.0 : 1.0;
  for (Index i = 0; i < n; ++i) d.y(i) += noise * normal(gen) + 2.0;
  if (kind == 5) d.y = d.y.array().round();  // tied response values
  const int options = static_cast<int>(gen() % 10);
  d.options.variant = options == 0 ? Variant::least_angle : Variant::lasso;
  d.options.with_intercept = options != 1;
  d.options.standardize = options != 2;
  if (options == 3) d.options.ridge = 0.05 + u(gen);
  d.options.storage = static_cast<Storage>(gen() % 4);  // automatic, dense copy, Gram, view
  char text[200];
  std::snprintf(text, sizeof text, "seed %u: n %ld p %ld rho %g kind %d options %d storage %d",
                seed, static_cast<long>(n), static_cast<long>(p), rho, kind, options,
                static_cast<int>(d.options.storage));
  d.summary = text;
  return d;
}

}  // namespace knotpath::testing
