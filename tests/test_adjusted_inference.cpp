// Tests of adjusted_inference.hpp and its tails (detail/truncated_gaussian.hpp):
// the truncated normal law against SciPy, the polyhedra against re-traced
// paths, and the published calibration of the method (Monte Carlo with
// fixed seeds): uniform p-values under the global null, nominal coverage of
// the projected coefficient with signal, and the naive intervals'
// undercoverage beside it.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <limits>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include <boost/math/special_functions/erf.hpp>
#include <boost/multiprecision/cpp_bin_float.hpp>
#include <Eigen/LU>
#include <Eigen/QR>

#include <knotpath/adjusted_inference.hpp>
#include <knotpath/precision.hpp>
#include <knotpath/detail/random.hpp>

#include "test_support.hpp"
#include "uniformity.hpp"

namespace kp = knotpath;
using kp::Index;
using kp::Matrix;
using kp::Vector;
namespace fs = std::filesystem;

namespace {

constexpr double inf = std::numeric_limits<double>::infinity();
using kp::testing::equicorrelated_design;
using kp::testing::ks_uniform_p_value;
using kp::testing::python_has;

/// The projected coefficients of mu on the intercept and the columns
/// `active` of x (original scale), by Householder QR: an independent route
/// to the interval's target.
Vector<double> projected(const Matrix<double>& x, const Vector<double>& mu, const std::vector<Index>& active) {
  Matrix<double> a(x.rows(), static_cast<Index>(active.size()) + 1);
  a.col(0).setOnes();
  for (std::size_t k = 0; k < active.size(); ++k) a.col(static_cast<Index>(k) + 1) = x.col(active[k]);
  const Vector<double> b = a.colPivHouseholderQr().solve(mu);
  return b.tail(static_cast<Index>(active.size()));
}

std::vector<Index> active_of(const kp::AdjustedInference& r) {
  std::vector<Index> out;
  for (const auto& c : r.coefficients) out.push_back(c.predictor);
  return out;
}

/// The direction c = eta / ||eta||^2 of predictor `target` of active set
/// `active` in the rows of y (centred, unit columns: the prepared problem
/// of the default options, built here from x directly).
Vector<double> contrast_direction(const Matrix<double>& x, const std::vector<Index>& active, std::size_t target) {
  Matrix<double> z(x.rows(), static_cast<Index>(active.size()));
  for (std::size_t k = 0; k < active.size(); ++k) {
    Vector<double> col = x.col(active[k]);
    col.array() -= col.mean();
    z.col(static_cast<Index>(k)) = col / col.norm();
  }
  const Matrix<double> inverse = (z.transpose() * z).inverse();
  const Vector<double> eta = z * inverse.col(static_cast<Index>(target));
  return eta / eta.squaredNorm();
}

/// Active predictors and signs of a lasso solution at lambda.
std::vector<std::pair<Index, int>> signed_support(const kp::Path<double>& path, double lambda) {
  const auto s = path.at_penalty(lambda);
  std::vector<std::pair<Index, int>> out;
  for (Index j = 0; j < s.coefficients.size(); ++j)
    if (s.coefficients(j) != 0.0) out.emplace_back(j, s.coefficients(j) > 0 ? 1 : -1);
  return out;
}

/// The first k events (predictor, sign, enter?) of a path.
std::vector<std::tuple<Index, int, bool>> first_events(const kp::Path<double>& path, Index k) {
  std::vector<std::tuple<Index, int, bool>> out;
  for (Index r = 1; r <= k && r < static_cast<Index>(path.knots().size()); ++r) {
    const auto& knot = path.knots()[static_cast<std::size_t>(r)];
    out.emplace_back(knot.predictor, knot.sign, knot.event == kp::EventKind::enter);
  }
  return out;
}

/// 50 decimal digits with a 64-bit binary exponent: erfc of 2e7 (about 1e-1.9e14) is representable.
using Big = boost::multiprecision::number<
    boost::multiprecision::backends::cpp_bin_float<50, boost::multiprecision::backends::digit_base_10, void,
                                                   std::int64_t, -(1LL << 58), (1LL << 58)>,
    boost::multiprecision::et_off>;

/// P(X > x | lower <= X <= upper) and P(X <= x | ...) for X ~ N(mean, sd^2)
/// in 50-digit arithmetic (Boost.Math's erfc, an independent general-purpose
/// implementation; the type's exponent range makes underflow impossible).
std::pair<double, double> big_tails(double x, double mean, double sd, double lower, double upper) {
  const Big s2 = boost::multiprecision::sqrt(Big(2));
  // Standardized; reflected when the interval lies mostly below the mean,
  // so that the tails subtracted are the small ones.
  const bool reflect = (Big(lower) + Big(upper)) / 2 < Big(mean);
  auto standard = [&](double v) { return (reflect ? -1 : 1) * (Big(v) - Big(mean)) / Big(sd); };
  auto q = [&](double v) {
    if (std::isinf(v)) return (v > 0) != reflect ? Big(0) : Big(1);
    return Big(boost::math::erfc(standard(v) / s2) / 2);
  };
  const Big near = reflect ? q(upper) : q(lower), far = reflect ? q(lower) : q(upper);
  const Big mass = near - far;
  const double beyond = static_cast<double>((q(x) - far) / mass), before = static_cast<double>((near - q(x)) / mass);
  return reflect ? std::pair{before, beyond} : std::pair{beyond, before};
}

}  // namespace

// The truncated normal tails and the interval's ends against SciPy
// (scipy.stats.truncnorm logcdf/logsf; the ends by scipy.optimize.brentq on
// them), at points where doubles underflow or cancel: limits 30 to 1000 sd
// out, widths of 1e-4 sd, the observed value next to a limit, one-sided and
// reflected truncation. tests/truncnorm_reference.py runs SciPy.
TEST(TruncatedNormal, TailsAndIntervalsMatchScipyAtStressedPoints) {
  if (!python_has("scipy.stats, scipy.optimize"))
    GTEST_SKIP() << "/usr/bin/python3 cannot import scipy (install the Debian package python3-scipy); "
                    "the external truncated-normal check is skipped";
  struct Case {
    double x, mean, sd, lower, upper, level;
  };
  const std::vector<Case> cases = {
      {30.5, 0, 1, 30, 31, 0.9},          {38.01, 0, 1, 38, inf, 0.9},
      {-40.2, 0, 1, -inf, -40, 0.9},      {1000.1, 0, 1, 1000, 1000.5, 0.9},
      {49.99, 0, 1, -2, 50, 0.95},        {8.00005, 0, 1, 8, 8.0001, 0.9},
      {5.0000001, 0, 1, 5, 6, 0.9},       {2.5, 1.0, 0.5, 2.0, inf, 0.8},
      {0.3, -0.2, 2.0, -1.0, 0.5, 0.9},   {-3.0, 4.0, 1.5, -inf, -2.9, 0.95},
      {12.0, 0.0, 3.0, 11.9, 40.0, 0.9},  {0.0, 0.0, 1.0, -inf, inf, 0.9},
      {-7.3, 2.0, 0.25, -7.5, -7.0, 0.9}, {1.2, 1.0, 1.0, 1.0, 1.3, 0.99},
  };
  const fs::path dir = fs::temp_directory_path();
  std::random_device rd;
  const std::string stem = "knotpath_truncnorm_" + std::to_string(rd()) + "_" + std::to_string(rd());
  const fs::path in = dir / (stem + ".in"), out = dir / (stem + ".out");
  {
    std::ofstream f(in);
    f.precision(17);
    for (const Case& c : cases) f << c.x << ' ' << c.mean << ' ' << c.sd << ' ' << c.lower << ' ' << c.upper << ' ' << c.level << '\n';
  }
  const std::string cmd = std::string(kp::testing::reference_python) + " \"" + KNOTPATH_SOURCE_DIR + "/tests/truncnorm_reference.py\" \"" +
                          in.string() + "\" \"" + out.string() + "\"";
  ASSERT_EQ(std::system(cmd.c_str()), 0) << cmd;
  std::ifstream g(out);
  for (const Case& c : cases) {
    double log_cdf = 0, log_sf = 0, low = 0, high = 0;
    ASSERT_TRUE(g >> log_cdf >> log_sf >> low >> high);
    const auto tails = kp::detail::truncated_normal_tails(c.x, c.mean, c.sd, c.lower, c.upper);
    // Logs of probabilities: both routes are accurate to ~1e-13 of the
    // standardized limits' squares (the exponent's rounding); 1e-9 relative
    // plus 1e-12 absolute leaves room for SciPy's own series.
    EXPECT_NEAR(tails.log_lower, log_cdf, 1e-9 * std::abs(log_cdf) + 1e-12) << c.x << " in [" << c.lower << ", " << c.upper << "]";
    EXPECT_NEAR(tails.log_upper, log_sf, 1e-9 * std::abs(log_sf) + 1e-12) << c.x << " in [" << c.lower << ", " << c.upper << "]";
    const auto [l, h] = kp::detail::truncated_normal_interval(c.x, c.sd, c.lower, c.upper, c.level);
    // The roots: both solvers stop at ~1e-12 relative to the larger of sd
    // and the ends; 1e-8 of that scale is a safe margin.
    // SciPy standardizes through the mean: with the mean |m| sd away and a
    // width w sd, its widths keep about 16 - log10(|m| / w) digits. Where
    // that leaves fewer than 9 (the 1e-4 and 1e-7 sd wide cases, whose ends
    // lie 6e4 and 3e7 sd out), the ends are checked in 50-digit arithmetic
    // instead: the tails there must be alpha/2.
    const double width = std::min(c.upper - c.lower, std::max(c.x - c.lower, c.upper - c.x));
    if (std::max(std::abs(low), std::abs(high)) * 1e-16 / width < 1e-9) {
      EXPECT_NEAR(l, low, 1e-8 * std::max({c.sd, std::abs(low), std::abs(high)})) << "lower end at " << c.x;
      EXPECT_NEAR(h, high, 1e-8 * std::max({c.sd, std::abs(low), std::abs(high)})) << "upper end at " << c.x;
    } else {
      const double half_alpha = (1 - c.level) / 2;
      // Our roots to 1e-12 relative move the tail by ~(|m| w / sd^2) 1e-12 relative.
      EXPECT_NEAR(big_tails(c.x, l, c.sd, c.lower, c.upper).first, half_alpha, 1e-6 * half_alpha) << c.x;
      EXPECT_NEAR(big_tails(c.x, h, c.sd, c.lower, c.upper).second, half_alpha, 1e-6 * half_alpha) << c.x;
    }
  }
  fs::remove(in);
  fs::remove(out);
}

// Without truncation the interval is x -+ z_{0.95} sd with z_{0.95} =
// 1.6448536269514722 (standard normal quantile; published tables, e.g.
// Abramowitz & Stegun 26.2, table 26.5); an observed value on its limit
// leaves that side of the mean unbounded (the tail does not move with it).
TEST(TruncatedNormal, IntervalIsTheNaiveOneWithoutTruncationAndUnboundedOnALimit) {
  const auto [l, h] = kp::detail::truncated_normal_interval(3.0, 2.0, -inf, inf, 0.90);
  EXPECT_NEAR(l, 3.0 - 2.0 * 1.6448536269514722, 1e-10);  // bisection to 1e-12 relative
  EXPECT_NEAR(h, 3.0 + 2.0 * 1.6448536269514722, 1e-10);
  const auto [l2, h2] = kp::detail::truncated_normal_interval(1.0, 1.0, 1.0, inf, 0.90);
  // On the limit exactly, the tail is 1 for every mean: no finite mean is
  // consistent, and both ends escape to that side.
  EXPECT_EQ(l2, -inf);
  EXPECT_EQ(h2, -inf);
  // Just above it, both ends are finite and far below: a value that close
  // to its lower limit says the mean is far below (about -log(alpha/2) sd^2 / gap
  // and -(alpha/2) sd^2 / gap for a gap of 1e-6: -3.0e6 and -5.1e4).
  const auto [l4, h4] = kp::detail::truncated_normal_interval(1.0 + 1e-6, 1.0, 1.0, inf, 0.90);
  EXPECT_TRUE(std::isfinite(l4) && std::isfinite(h4));
  EXPECT_LT(l4, -2.5e6);
  EXPECT_GT(l4, -3.5e6);
  EXPECT_LT(h4, -4e4);
  EXPECT_GT(h4, -6e4);
  // Far from the limit the truncation hardly matters: close to the naive interval.
  const auto [l3, h3] = kp::detail::truncated_normal_interval(20.0, 1.0, 0.0, inf, 0.90);
  EXPECT_NEAR(l3, 20.0 - 1.6448536269514722, 1e-6);
  EXPECT_NEAR(h3, 20.0 + 1.6448536269514722, 1e-6);
}

// log R(x), R = Q / phi the Mills ratio, against 50-digit values (Boost.Math's
// erfc in Boost.Multiprecision arithmetic, an independent general-purpose
// implementation) on x in [-40, 40]: the erfc product below 5 (with the
// rounding of x/sqrt2 put back) and the continued fraction with
// mills_fraction_terms(x) terms above. Measured worst error on a 0.001 grid:
// 5.4e-16 of max(1, |log R|) (the 120-term fraction it replaced: 1.5e-16 on
// [5, 40]); 1e-15 is the bound. The same grid checks that the term count
// leaves the fraction converged: with two terms fewer than the rule, it is
// still within 1e-15 (the rule's margin, measured), and with half the terms
// at x = 5 it is not (the count matters).
TEST(TruncatedNormal, LogMillsRatioMatchesFiftyDigits) {
  const Big s2 = boost::multiprecision::sqrt(Big(2));
  const Big log_sqrt_two_pi = boost::multiprecision::log(2 * boost::math::constants::pi<Big>()) / 2;
  auto reference = [&](double x) {
    const Big big(x);
    return Big(boost::multiprecision::log(boost::math::erfc(big / s2) / 2) + big * big / 2 + log_sqrt_two_pi);
  };
  auto fraction = [](double x, int terms) {
    double tail = x;
    for (int k = terms; k >= 1; --k) tail = x + k / tail;
    return -std::log(tail);
  };
  double worst = 0, worst_at = 0;
  for (int i = 0; i <= 4000; ++i) {
    const double x = -40.0 + 0.02 * i + 1e-7 * (i % 7);  // off the round values too
    const Big ref = reference(x);
    const double scale = std::max(1.0, std::abs(static_cast<double>(ref)));
    const double error = std::abs(static_cast<double>(Big(kp::detail::log_mills_ratio(x)) - ref)) / scale;
    if (error > worst) worst = error, worst_at = x;
    if (x >= 5.0) {
      const double shorter = fraction(x, kp::detail::mills_fraction_terms(x) - 2);
      EXPECT_LE(std::abs(static_cast<double>(Big(shorter) - ref)) / scale, 1e-15) << "x = " << x;
    }
  }
  EXPECT_LE(worst, 1e-15) << "at x = " << worst_at;
  const double half = fraction(5.0, kp::detail::mills_fraction_terms(5.0) / 2);
  EXPECT_GT(std::abs(static_cast<double>(Big(half) - reference(5.0))), 1e-14);
}

// At a fixed penalty the estimate is the least-squares fit on the active
// set (checked against an independent QR with the intercept), and the
// truncation limits are where the lasso's active set or signs change: just
// inside them the re-traced path has the same signed support at lambda,
// just outside it does not (Lee et al. 2016: the event is exactly the
// polyhedron).
TEST(AdjustedInference, FixedPenaltyLimitsAreWhereTheSignedSupportChanges) {
  const Matrix<double> x = equicorrelated_design(40, 8, 0.3, 11);
  kp::detail::SplitMix64 rng(5);
  Vector<double> y(40);
  for (Index i = 0; i < 40; ++i) y(i) = 1.5 * x(i, 0) - 1.0 * x(i, 3) + 0.7 * x(i, 5) + rng.normal();
  const kp::Path<double> path = kp::trace<double>(x, y);
  const double lambda = 0.5 * (kp::detail::to_double(path.knots()[3].penalty) + kp::detail::to_double(path.knots()[4].penalty));
  const auto prepared = kp::prepare_dense<double>(x, y, path.options());
  kp::AdjustedInferenceOptions options;
  options.noise_variance = 1.0;
  const kp::AdjustedInference r = kp::adjusted_inference_at_penalty(prepared, path, lambda, options);
  const auto support = signed_support(path, lambda);
  ASSERT_EQ(r.coefficients.size(), support.size());
  ASSERT_GE(support.size(), 2u);
  const std::vector<Index> active = active_of(r);
  const Vector<double> ls = projected(x, y, active);
  for (std::size_t i = 0; i < active.size(); ++i) {
    const auto& c = r.coefficients[i];
    EXPECT_NEAR(c.estimate, ls(static_cast<Index>(i)), 1e-10 * std::max(1.0, std::abs(ls(static_cast<Index>(i)))));
    EXPECT_LE(c.lower, c.estimate);
    EXPECT_GE(c.upper, c.estimate);
    EXPECT_LE(c.truncation_lower, c.estimate);
    EXPECT_GE(c.truncation_upper, c.estimate);
    EXPECT_GE(c.upper - c.lower, 0.99 * (c.naive_upper - c.naive_lower));  // conditioning never sharpens much
    // Along y + c (t - estimate), t on the original scale of predictor j.
    const double scale = kp::detail::to_double(path.preparation().scales(c.predictor));
    const Vector<double> direction = contrast_direction(x, active, i) * scale;
    auto support_at = [&](double t) {
      return signed_support(kp::trace<double>(x, Vector<double>(y + direction * (t - c.estimate))), lambda);
    };
    for (double end : {c.truncation_lower, c.truncation_upper}) {
      if (std::isinf(end)) continue;
      const double gap = std::abs(end - c.estimate);
      const double inside = end + (c.estimate - end) * 1e-6, outside = end - (c.estimate - end) * 1e-6;
      EXPECT_EQ(support_at(inside), support) << "inside the limit " << end << " (gap " << gap << ")";
      EXPECT_NE(support_at(outside), support) << "outside the limit " << end;
    }
  }
}

// At penalty 0 the lasso is the least-squares fit on every predictor: no
// selection, so the adjusted interval and p-value are the naive ones.
TEST(AdjustedInference, AtPenaltyZeroNothingIsConditionedOn) {
  const Matrix<double> x = equicorrelated_design(40, 5, 0.3, 8);
  kp::detail::SplitMix64 rng(3);
  Vector<double> y(40);
  for (Index i = 0; i < 40; ++i) y(i) = 0.5 * x(i, 0) + rng.normal();
  const kp::Path<double> path = kp::trace<double>(x, y);
  const auto r = kp::adjusted_inference_at_penalty(kp::prepare_dense<double>(x, y, path.options()).design, path, 0.0,
                                                   0.9, 1.0);
  ASSERT_EQ(r.coefficients.size(), 5u);
  for (const auto& c : r.coefficients) {
    EXPECT_EQ(c.truncation_lower, -inf);
    EXPECT_EQ(c.truncation_upper, inf);
    EXPECT_NEAR(c.lower, c.naive_lower, 1e-9 * c.standard_error);  // the same root, by two routes
    EXPECT_NEAR(c.upper, c.naive_upper, 1e-9 * c.standard_error);
    EXPECT_NEAR(c.p_value, c.naive_p_value, 1e-12);
  }
}

// After k steps every point of the truncation interval gives a path whose
// first k events are the same (Tibshirani et al. 2016: the polyhedron lies
// inside the event), and just past a finite limit they differ (it is the
// event: no extra conditioning); on a lasso path with a leave event.
TEST(AdjustedInference, StepLimitsAreWhereTheFirstEventsChange) {
  const Matrix<double> x = equicorrelated_design(30, 10, 0.6, 18);  // a design whose path has a leave at row 7
  kp::detail::SplitMix64 rng(9);
  Vector<double> y(30);
  for (Index i = 0; i < 30; ++i) y(i) = 1.0 * x(i, 1) + 0.8 * x(i, 2) - 0.6 * x(i, 7) + 0.8 * rng.normal();
  const kp::Path<double> path = kp::trace<double>(x, y);
  const auto prepared = kp::prepare_dense<double>(x, y, path.options());
  kp::AdjustedInferenceOptions options;
  options.noise_variance = 0.64;
  ASSERT_EQ(path.knots()[7].event, kp::EventKind::leave);
  for (Index k : {1, 3, 6, 7, 9}) {
    const kp::AdjustedInference r = kp::adjusted_inference_after_steps(prepared, path, k, options);
    const auto events = first_events(path, k);
    const std::vector<Index> active = active_of(r);
    const Vector<double> ls = projected(x, y, active);
    for (std::size_t i = 0; i < active.size(); ++i) {
      const auto& c = r.coefficients[i];
      EXPECT_NEAR(c.estimate, ls(static_cast<Index>(i)), 1e-10 * std::max(1.0, std::abs(ls(static_cast<Index>(i)))));
      const double scale = kp::detail::to_double(path.preparation().scales(c.predictor));
      const Vector<double> direction = contrast_direction(x, active, i) * scale;
      auto events_at = [&](double t) {
        return first_events(kp::trace<double>(x, Vector<double>(y + direction * (t - c.estimate))), k);
      };
      const double lo = std::isinf(c.truncation_lower) ? c.estimate - 50 * c.standard_error : c.truncation_lower;
      const double hi = std::isinf(c.truncation_upper) ? c.estimate + 50 * c.standard_error : c.truncation_upper;
      for (double f : {1e-6, 0.25, 0.5, 0.75, 1 - 1e-6})
        EXPECT_EQ(events_at(lo + f * (hi - lo)), events) << "k = " << k << ", predictor " << c.predictor << ", f = " << f;
      for (double end : {c.truncation_lower, c.truncation_upper}) {
        if (std::isinf(end)) continue;
        EXPECT_NE(events_at(end + (end - c.estimate) * 1e-6 + (end > c.estimate ? 1e-9 : -1e-9)), events)
            << "k = " << k << ", just past " << end;
      }
    }
  }
}

// The first entry's one-sided adjusted p-value is the spacing test's
// p-value (inference.hpp): at step 1 the least-angle polyhedron is the
// spacing test's event and the contrasts coincide (Tibshirani et al. 2016).
TEST(AdjustedInference, FirstEntryPValueEqualsTheSpacingTest) {
  const Matrix<double> x = equicorrelated_design(50, 12, 0.4, 31);
  for (std::uint64_t seed : {1u, 2u, 3u}) {
    kp::detail::SplitMix64 rng(seed);
    Vector<double> y(50);
    for (Index i = 0; i < 50; ++i) y(i) = 0.4 * x(i, 4) + rng.normal();
    const kp::Path<double> path = kp::trace<double>(x, y);
    const auto prepared = kp::prepare_dense<double>(x, y, path.options());
    kp::InferenceOptions known;
    known.noise_variance = 1.0;
    const auto spacing = kp::entry_significance(prepared, path, known);
    const auto entries = kp::entry_p_values(prepared.design, path, 1.0, 1);
    ASSERT_EQ(entries.size(), 1u);
    ASSERT_FALSE(std::isnan(spacing.entries[0].spacing_p_value)) << spacing.entries[0].note;
    // Two computations of the same truncated tail: 1e-8 covers the limits'
    // rounding amplified by the standardized values (< 10 here).
    EXPECT_NEAR(entries[0].p_value, spacing.entries[0].spacing_p_value, 1e-8);
  }
}

// Global null (mu = 0): the first entry's adjusted p-value is uniform
// (Tibshirani et al. 2016; exact at any step under the global null), KS at
// the 1% level over 2000 draws; so are the fixed-penalty p-values of the
// first active predictor (Lee et al. 2016). Fixed seed.
TEST(AdjustedInference, PValuesAreUniformUnderTheGlobalNull) {
  const Matrix<double> x = equicorrelated_design(25, 6, 0.3, 77);
  kp::detail::SplitMix64 rng(2016);
  const kp::TraceOptions trace_options;
  std::vector<double> first_entry, fixed_penalty;
  const int draws = 2000;
  for (int r = 0; r < draws; ++r) {
    Vector<double> y(25);
    for (Index i = 0; i < 25; ++i) y(i) = 2.0 * rng.normal();  // sigma = 2
    const kp::Path<double> path = kp::trace<double>(x, y, trace_options);
    const auto prepared = kp::prepare_dense<double>(x, y, trace_options);
    const auto entries = kp::entry_p_values(prepared.design, path, 4.0, 1);
    ASSERT_EQ(entries.size(), 1u);
    first_entry.push_back(entries[0].p_value);
    // A fixed penalty: 0.6 of lambda_max's typical size under the null.
    const auto at = kp::adjusted_inference_at_penalty(prepared.design, path, 2.0 * 1.5, 0.9, 4.0);
    if (!at.coefficients.empty()) fixed_penalty.push_back(at.coefficients[0].p_value);
  }
  EXPECT_GT(ks_uniform_p_value(first_entry), 0.01);
  ASSERT_GT(fixed_penalty.size(), 500u);
  EXPECT_GT(ks_uniform_p_value(fixed_penalty), 0.01);
}

// With signal, the adjusted 90% intervals cover the projected coefficient
// of the selected set within 2 percentage points of 90% over 2000 draws
// (Lee et al. 2016 at a fixed penalty; Tibshirani et al. 2016 after two
// steps), while the naive intervals, which ignore the selection, cover
// clearly less in the same draws. Fixed seed.
TEST(AdjustedInference, IntervalsCoverTheProjectedCoefficientAndNaiveOnesDoNot) {
  const Index n = 30, p = 6;
  const Matrix<double> x = equicorrelated_design(n, p, 0.3, 101);
  Vector<double> beta = Vector<double>::Zero(p);
  beta(0) = 0.5;
  beta(1) = -0.35;
  beta(2) = 0.25;
  const Vector<double> mu = x * beta;
  kp::detail::SplitMix64 rng(7);
  const kp::TraceOptions trace_options;
  struct Tally {
    long adjusted = 0, naive = 0, total = 0, draws = 0;
  } at_penalty, after_steps;
  auto tally = [&](Tally& t, const kp::AdjustedInference& r) {
    if (r.coefficients.empty()) return;
    const Vector<double> target = projected(x, mu, active_of(r));
    ++t.draws;
    for (std::size_t i = 0; i < r.coefficients.size(); ++i) {
      const auto& c = r.coefficients[i];
      const double b = target(static_cast<Index>(i));
      t.adjusted += c.lower <= b && b <= c.upper;
      t.naive += c.naive_lower <= b && b <= c.naive_upper;
      ++t.total;
    }
  };
  // Draws until each kind has 2000 with a nonempty selection (a draw may
  // select nothing at the fixed penalty).
  for (int r = 0; r < 4000 && std::min(at_penalty.draws, after_steps.draws) < 2000; ++r) {
    Vector<double> y(n);
    for (Index i = 0; i < n; ++i) y(i) = mu(i) + rng.normal();
    const kp::Path<double> path = kp::trace<double>(x, y, trace_options);
    const auto prepared = kp::prepare_dense<double>(x, y, trace_options);
    if (at_penalty.draws < 2000) tally(at_penalty, kp::adjusted_inference_at_penalty(prepared.design, path, 2.0, 0.9, 1.0));
    if (after_steps.draws < 2000) tally(after_steps, kp::adjusted_inference_after_steps(prepared.design, path, 2, 0.9, 1.0));
  }
  for (const Tally* t : {&at_penalty, &after_steps}) {
    ASSERT_EQ(t->draws, 2000);
    const double adjusted = static_cast<double>(t->adjusted) / static_cast<double>(t->total);
    const double naive = static_cast<double>(t->naive) / static_cast<double>(t->total);
    std::printf("coverage over %ld intervals (%ld draws): adjusted %.4f, naive %.4f\n", t->total, t->draws, adjusted,
                naive);
    EXPECT_NEAR(adjusted, 0.90, 0.02);  // the tolerance: 2 points (about 3 binomial sd at 2000)
    // The naive intervals undercover after selection: measured 0.836 (fixed
    // penalty) and 0.861 (two steps); 0.87 is more than 4 binomial sd
    // (0.0067 at 2000 draws) below the nominal 0.90.
    EXPECT_LT(naive, 0.87);
    EXPECT_LT(naive, adjusted - 0.03);
  }
}

// ForwardStop (G'Sell et al. 2016): the rule's statistic and choice on a
// hand-computed sequence.
TEST(AdjustedInference, ForwardStopKeepsTheLongestPrefixUnderAlpha) {
  const std::vector<double> p = {0.001, 0.01, 0.4, 0.02, 0.9, 0.8};
  const kp::ForwardStopChoice f = kp::forward_stop(p, 0.1);
  ASSERT_EQ(f.statistic.size(), p.size());
  // -1/k sum log(1 - p_i), by hand: k = 1: 0.0010005; k = 2: (0.0010005 + 0.0100503) / 2;
  // k = 3 adds 0.5108256: 0.1739588 > 0.1; k = 4 adds 0.0202027: 0.1355198.
  EXPECT_NEAR(f.statistic[0], -std::log(0.999), 1e-15);
  EXPECT_NEAR(f.statistic[2], (-std::log(0.999) - std::log(0.99) - std::log(0.6)) / 3, 1e-15);
  EXPECT_EQ(f.chosen, 2u);
  EXPECT_EQ(kp::forward_stop({0.5, 0.6}, 0.1).chosen, 0u);
  EXPECT_THROW(kp::forward_stop(p, 1.5), kp::invalid_option);
}

// On a path whose first entries are three strong predictors and the rest
// noise, the entries' sequential adjusted p-values are tiny for the three
// and ForwardStop at 0.1 keeps at least those three, and not every entry
// (G'Sell et al. 2016: the rule stops once the null p-values accumulate).
TEST(AdjustedInference, ForwardStopOnTheEntriesKeepsTheStrongPredictors) {
  const Matrix<double> x = equicorrelated_design(80, 10, 0.2, 41);
  kp::detail::SplitMix64 rng(12);
  Vector<double> y(80);
  for (Index i = 0; i < 80; ++i) y(i) = 1.2 * x(i, 2) - 1.0 * x(i, 5) + 0.9 * x(i, 8) + rng.normal();
  const kp::Path<double> path = kp::trace<double>(x, y);
  const auto prepared = kp::prepare_dense<double>(x, y, path.options());
  const auto entries = kp::entry_p_values(prepared.design, path, 1.0);
  ASSERT_GE(entries.size(), 5u);
  std::vector<Index> first;
  std::vector<double> p;
  for (const auto& e : entries) p.push_back(e.p_value);
  for (std::size_t i = 0; i < 3; ++i) {
    first.push_back(entries[i].predictor);
    // Conditioning on the earlier steps costs power (the second entry measured 0.0047).
    EXPECT_LT(entries[i].p_value, 0.01) << "entry " << i;
  }
  std::sort(first.begin(), first.end());
  EXPECT_EQ(first, (std::vector<Index>{2, 5, 8}));
  const kp::ForwardStopChoice f = kp::forward_stop(p, 0.1);
  EXPECT_GE(f.chosen, 3u);
  EXPECT_LT(f.chosen, entries.size());
}

// Unsupported settings are refused with the option named.
TEST(AdjustedInference, UnsupportedSettingsAreRefused) {
  const Matrix<double> x = equicorrelated_design(30, 5, 0.2, 3);
  Vector<double> y = x.col(0) + x.col(1);
  kp::TraceOptions lar;
  lar.variant = kp::Variant::least_angle;
  const auto path = kp::trace<double>(x, y, lar);
  const auto prepared = kp::prepare_dense<double>(x, y, lar);
  EXPECT_THROW(kp::adjusted_inference_at_penalty(prepared.design, path, 1.0, 0.9, 1.0), kp::invalid_option);
  EXPECT_NO_THROW(kp::adjusted_inference_after_steps(prepared.design, path, 2, 0.9, 1.0));
  EXPECT_THROW(kp::adjusted_inference_after_steps(prepared.design, path, 2, 1.5, 1.0), kp::invalid_option);
  EXPECT_THROW(kp::adjusted_inference_after_steps(prepared.design, path, 99, 0.9, 1.0), kp::invalid_query);
}

// The steps polyhedron's limits in doubles (the branch-free block reduction
// of Limits::tighten_rows) against the same construction in 50-digit
// floats (the row-by-row tighten() of the generic scalar): the two routes
// give the same limits to the doubles' rounding, on designs whose paths
// leave as well as join (lasso) and on a least-angle path. Common practice:
// a second arithmetic as the reference of the first.
TEST(AdjustedInference, StepLimitsInDoublesMatchFiftyDigits) {
  struct Case {
    Index n, p;
    double rho;
    std::uint64_t seed, noise_seed;
    kp::Variant variant;
  };
  // The first: StepLimitsAreWhereTheFirstEventsChange's data (a leave at
  // row 7); the others have dozens of candidate rows per step, reduced by
  // their ratios (Limits::tighten_by_ratios).
  for (const Case& c : {Case{30, 10, 0.6, 18, 9, kp::Variant::lasso}, Case{80, 40, 0.3, 5, 6, kp::Variant::lasso},
                        Case{80, 40, 0.3, 5, 6, kp::Variant::least_angle}}) {
    const Matrix<double> x = equicorrelated_design(c.n, c.p, c.rho, c.seed);
    kp::detail::SplitMix64 rng(c.noise_seed);
    Vector<double> y(c.n);
    for (Index i = 0; i < c.n; ++i) y(i) = x(i, 1) + 0.8 * x(i, 2) - 0.6 * x(i, 7) + 0.8 * rng.normal();
    kp::TraceOptions options;
    options.variant = c.variant;
    const kp::Path<double> path = kp::trace<double>(x, y, options);
    const Matrix<kp::float50> x50 = x.cast<kp::float50>();
    const Vector<kp::float50> y50 = y.cast<kp::float50>();
    const kp::Path<kp::float50> path50 = kp::trace<kp::float50>(x50, y50, options);
    const auto prepared = kp::prepare_dense<double>(x, y, path.options());
    const auto prepared50 = kp::prepare_dense<kp::float50>(x50, y50, path50.options());
    ASSERT_EQ(path.knots().size(), path50.knots().size());
    const Index rows = std::min<Index>(static_cast<Index>(path.knots().size()) - 1, 30);
    Index compared = 0;
    for (Index k = 1; k <= rows; ++k) {
      kp::AdjustedInference r, r50;
      try {
        r = kp::adjusted_inference_after_steps(prepared.design, path, k, 0.9, 0.64);
      } catch (const kp::invalid_query&) {
        continue;  // a row the polyhedra do not cover (tie, stop)
      }
      r50 = kp::adjusted_inference_after_steps(prepared50.design, path50, k, 0.9, 0.64);
      ASSERT_EQ(r.coefficients.size(), r50.coefficients.size());
      for (std::size_t i = 0; i < r.coefficients.size(); ++i) {
        const auto &a = r.coefficients[i], &b = r50.coefficients[i];
        ASSERT_EQ(a.predictor, b.predictor);
        for (auto [u, v] : {std::pair{a.truncation_lower, b.truncation_lower},
                            std::pair{a.truncation_upper, b.truncation_upper}}) {
          if (std::isinf(u) || std::isinf(v)) {
            EXPECT_EQ(u, v) << "k = " << k << ", predictor " << a.predictor;
          } else {
            EXPECT_NEAR(u, v, 1e-9 * std::max(1.0, std::abs(v))) << "k = " << k << ", predictor " << a.predictor;
          }
        }
      }
      ++compared;
    }
    EXPECT_GE(compared, 5) << "seed " << c.seed;
  }
}
