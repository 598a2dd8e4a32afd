// Verify an ill-conditioned design in 50-digit precision. The design is an
// invented near-collinear polynomial (powers 1..8 of a narrow-range input),
// the kind of design where a double-precision path quietly loses digits.
#include <cstdio>

#include <knotpath/knotpath.hpp>
#include <knotpath/precision.hpp>

int main() {
  knotpath::demo::detail::SplitMix64 rng(42);
  const knotpath::Index n = 60, degree = 8;
  knotpath::Matrix<double> x(n, degree);
  knotpath::Vector<double> y(n);
  for (knotpath::Index i = 0; i < n; ++i) {
    const double t = 10.0 + 0.05 * static_cast<double>(i);  // inputs 10.00 .. 12.95
    double power = 1;
    for (knotpath::Index j = 0; j < degree; ++j) x(i, j) = power *= t;
    y(i) = 2.0 + 0.5 * t - 0.02 * t * t + 0.01 * rng.normal();
  }
  const knotpath::Path<double> quick = knotpath::trace<double>(x, y);
  std::printf("double path: %zu knots, worst condition estimate %.3g, %s\n", quick.knots().size(),
              quick.worst_condition_estimate(), quick.suspect() ? "SUSPECT" : "clean");

  const knotpath::CrossCheck check = knotpath::cross_check<knotpath::float50>(x, y);
  std::printf("same events in double and 50 digits: %s\n", check.same_events ? "yes" : "no");
  if (check.first_difference)
    std::printf("first difference at step %ld: double %s %ld at %.6g, 50-digit %s %ld at %.6g\n",
                static_cast<long>(check.first_difference->step), check.first_difference->low_event.c_str(),
                static_cast<long>(check.first_difference->low_predictor), check.first_difference->low_penalty,
                check.first_difference->high_event.c_str(), static_cast<long>(check.first_difference->high_predictor),
                check.first_difference->high_penalty);
  std::printf("largest relative knot difference %.3g, coefficient difference %.3g\n",
              check.max_relative_knot_difference, check.max_coefficient_difference);
  std::printf("verdict: %s\n", knotpath::to_string(check.verdict).c_str());
  // The double path of this design must be flagged by at least one of the two checks.
  return (quick.suspect() || check.verdict != knotpath::Verdict::trustworthy) ? 0 : 1;
}
