#pragma once
// The one home of the Gaussian tail arithmetic of the significance tests
// (inference.hpp) and of the selection-adjusted inference
// (adjusted_inference.hpp): log-space tails, the tails of a truncated
// normal law, and the inversion of its CDF in the mean (confidence
// intervals). Users do not call these.
//
// Why logs. The truncated laws of the polyhedral lemma put the observed
// value, the truncation limits and the mean tens or thousands of standard
// deviations apart; the Gaussian tails there underflow (Q(x) < 1e-308 beyond
// x = 38) and their differences cancel. Everything is therefore computed as
// log Q, with the Mills ratio R(x) = Q(x) / phi(x) (log_mills_ratio: its
// continued fraction for x >= 5, an erfc product below, a log sum for
// x < 0), and a difference of tails as a log tail plus log(1 - ratio): no
// 0/0, and no subtraction of nearly equal numbers.

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <utility>

namespace knotpath::detail {

/// log(2 pi) / 2 to double precision (50-digit value, Boost.Multiprecision).
inline constexpr double log_sqrt_two_pi = 0.91893853320467278;

/// Terms of the Mills ratio's continued fraction that reach double precision
/// at x >= 5: 8 + ceil(700 / x^2). Measured against 50-digit values
/// (Boost.Multiprecision erfc) on x in [5, 40]: the fewest terms with a
/// truncation error below 1e-17 relative are 26 at x = 5, 15 at 8, 13 at 10,
/// 9 at 16, 8 at 20, 6 from 30 on; the rule keeps at least 2 terms above
/// that everywhere (test TruncatedNormal.LogMillsRatioMatchesFiftyDigits).
inline int mills_fraction_terms(double x) { return 8 + static_cast<int>(std::ceil(700.0 / (x * x))); }

/// log R(x), R(x) = Q(x) / phi(x) the Mills ratio, for every finite x, to a
/// few units in the last place of R (1e-16 absolute in log R).
///  - x >= 5: the continued fraction R(x) = 1/(x + 1/(x + 2/(x + 3/(x + ...))))
///    evaluated backward with mills_fraction_terms(x) terms (Laplace's
///    fraction; Abramowitz & Stegun 26.2.14, number from memory).
///  - 0 <= x < 5: R = erfc(x/sqrt2) sqrt(pi/2) exp(x^2/2), a product (no
///    cancellation). The rounding of x/sqrt2 to z would cost x^2 ulps
///    (d log Q / dx = -1/R): it is put back to first order, R(x) = R' +
///    sqrt2 (z - x/sqrt2) with R' the product at z (the error of z computed
///    exactly by a fused multiply-add and the tail of 1/sqrt2); x^2 enters
///    exp as its rounded value h and the rest l = x^2 - h (exact by fma).
///  - x < 0: log Q(x) + x^2/2 + log sqrt(2 pi), a sum of terms of one sign
///    beyond a few ulps near 0 (Q(x) >= 1/2 there).
inline double log_mills_ratio(double x) {
  if (x >= 5.0) {
    double tail = x;
    for (int k = mills_fraction_terms(x); k >= 1; --k) tail = x + k / tail;
    return -std::log(tail);
  }
  constexpr double half_sqrt2 = std::numbers::sqrt2 / 2;  // 1/sqrt2 rounded (exact halving)
  constexpr double half_sqrt2_tail = -4.8336466567264567e-17;  // 1/sqrt2 - half_sqrt2 (50-digit value)
  const double z = x * half_sqrt2;
  const double h = x * x, l = std::fma(x, x, -h);
  if (x < 0.0) return std::log(0.5 * std::erfc(z)) + 0.5 * h + (0.5 * l + log_sqrt_two_pi);
  const double z_error = std::fma(x, half_sqrt2, -z) + x * half_sqrt2_tail;  // x/sqrt2 - z
  constexpr double sqrt_half_pi = 1.2533141373155003;  // sqrt(pi/2) (50-digit value)
  const double ratio = std::erfc(z) * sqrt_half_pi * std::exp(0.5 * h) * (1.0 + 0.5 * l);
  return std::log(ratio - std::numbers::sqrt2 * z_error);
}

/// log Q(x), Q the standard normal upper tail, accurate and finite for every
/// finite x (no underflow: for x >= 5, log phi(x) + log R(x)).
inline double log_upper_tail(double x) {
  if (std::isnan(x)) return x;
  if (x == std::numeric_limits<double>::infinity()) return -std::numeric_limits<double>::infinity();
  if (x < 5.0) return std::log(0.5 * std::erfc(x / std::numbers::sqrt2));
  return -0.5 * x * x - 0.5 * std::log(2.0 * std::numbers::pi) + log_mills_ratio(x);
}

/// log(Q(a) - Q(b)) = log P(a < Z < b) for a < b (b may be +infinity);
/// -infinity when a == b.
inline double log_gaussian_interval(double a, double b) {
  if (!(a < b)) return -std::numeric_limits<double>::infinity();
  if (b <= 0.0) return log_gaussian_interval(-b, -a);  // symmetry: keep the tails small
  if (a < 0.0) {
    // The interval holds 0: Phi(b) - Phi(a) by erf has no cancellation.
    const double bb = std::isinf(b) ? 1.0 : std::erf(b / std::numbers::sqrt2);
    return std::log(0.5 * (bb - std::erf(a / std::numbers::sqrt2)));
  }
  const double la = log_upper_tail(a), lb = log_upper_tail(b);
  return la + std::log(-std::expm1(lb - la));
}

/// P(Z > z | lower < Z < upper) for a standard normal Z (upper may be
/// +infinity), as a ratio of logs of Gaussian interval probabilities.
inline double truncated_gaussian_upper_tail(double z, double lower, double upper) {
  if (!(lower < upper)) return std::numeric_limits<double>::quiet_NaN();
  z = std::clamp(z, lower, upper);
  const double numerator = log_gaussian_interval(z, upper);
  const double denominator = log_gaussian_interval(lower, upper);
  if (std::isinf(numerator) && numerator < 0) return 0.0;
  return std::min(1.0, std::exp(numerator - denominator));
}

/// log(Q(a + w) / Q(a)) = -w (a + w/2) + log R(a + w) - log R(a) for
/// a >= 0 and w >= 0 (w may be +infinity), given the two log Mills ratios
/// (`log_mills_end` = log R(a + w), unused when w is infinite): the width
/// enters directly, so a point far from 0 (a large) costs no digits of w.
inline double log_tail_ratio(double a, double w, double log_mills_start, double log_mills_end) {
  if (w == std::numeric_limits<double>::infinity()) return -std::numeric_limits<double>::infinity();
  if (w <= 0.0) return 0.0;
  return -w * (a + 0.5 * w) + (log_mills_end - log_mills_start);
}

/// log(1 - exp(t)) for t <= 0 (-infinity at t = 0).
inline double log_one_minus_exp(double t) {
  if (t >= 0.0) return -std::numeric_limits<double>::infinity();
  return t > -0.693 ? std::log(-std::expm1(t)) : std::log1p(-std::exp(t));
}

/// Both tails of a truncated normal law at one point, as logarithms.
struct TruncatedTails {
  double log_lower = 0;  ///< log P(X <= x | lower <= X <= upper)
  double log_upper = 0;  ///< log P(X > x | lower <= X <= upper)
};

/// The tails of X ~ N(mean, sd^2) truncated to [lower, upper] at x (limits
/// may be infinite; x is clamped into them), each accurate to a few ulps of
/// its logarithm times the size of the standardized limits. Three regimes:
///  - the whole interval above the mean (a = (lower - mean)/sd >= 0):
///    ratios of tails relative to Q(a), with the widths (x - lower)/sd and
///    (upper - lower)/sd computed from the data, never through the mean, so
///    a mean thousands of sd away loses no digits (log_tail_ratio);
///  - the whole interval below the mean: the same after reflecting X -> -X;
///  - the interval holds the mean: plain interval probabilities
///    (log_gaussian_interval), none of them small.
/// Requires sd > 0 and lower < upper.
inline TruncatedTails truncated_normal_tails(double x, double mean, double sd, double lower,
                                             double upper) {
  constexpr double inf = std::numeric_limits<double>::infinity();
  x = std::clamp(x, lower, upper);
  TruncatedTails out;
  if (std::isinf(lower) && std::isinf(upper)) {
    const double z = (x - mean) / sd;
    out.log_lower = log_upper_tail(-z);
    out.log_upper = log_upper_tail(z);
    return out;
  }
  // In the base-at-an-end form: the end e = a >= 0 standardized, the
  // observed point at e + dz, the other end at e + du (du may be infinite);
  // near: log P(between e and the point), far: log P(beyond the point).
  // The three tails Q(e), Q(e + dz), Q(e + du) enter through their log
  // Mills ratios, each evaluated once.
  auto from_end = [](double e, double dz, double du) {
    const bool bounded = !std::isinf(du);
    const double at_end = log_mills_ratio(e), at_point = log_mills_ratio(e + dz);
    const double at_other = bounded ? log_mills_ratio(e + du) : 0.0;
    const double to_point = log_tail_ratio(e, dz, at_end, at_point);
    const double denominator = log_one_minus_exp(log_tail_ratio(e, du, at_end, at_other));
    const double near = log_one_minus_exp(to_point) - denominator;
    // log(Q(e + du) / Q(e + dz)), the exponent's terms from the widths.
    const double beyond = !bounded ? -inf : du - dz <= 0.0 ? 0.0
                                          : -(du - dz) * (e + 0.5 * (du + dz)) + (at_other - at_point);
    const double far = to_point + log_one_minus_exp(beyond) - denominator;
    return std::pair{std::min(near, 0.0), std::min(far, 0.0)};
  };
  const double a = (lower - mean) / sd;
  const double b = (upper - mean) / sd;
  if (!std::isinf(lower) && a >= 0.0) {
    const auto [near, far] =
        from_end(a, (x - lower) / sd, std::isinf(upper) ? inf : (upper - lower) / sd);
    out.log_lower = near;
    out.log_upper = far;
  } else if (!std::isinf(upper) && b <= 0.0) {
    const auto [near, far] =
        from_end(-b, (upper - x) / sd, std::isinf(lower) ? inf : (upper - lower) / sd);
    out.log_lower = far;
    out.log_upper = near;
  } else {
    const double z = (x - mean) / sd;
    const double denominator = log_gaussian_interval(a, b);
    out.log_lower = std::min(0.0, log_gaussian_interval(a, z) - denominator);
    out.log_upper = std::min(0.0, log_gaussian_interval(z, b) - denominator);
  }
  return out;
}

/// The equal-tailed confidence interval for the mean of a truncated normal
/// law (the polyhedral lemma's pivot inverted): the means m with
///     P_m(X > x | lower <= X <= upper) in [alpha/2, 1 - alpha/2],
/// alpha = 1 - level. The upper tail increases in m (the truncated normal
/// family has a monotone likelihood ratio), so each end is one root, found
/// by bracketing (doubling steps of sd from x) and the Illinois method on
/// the log of the tail that is small there. An end whose root lies beyond 2^400 sd
/// from x is returned as -infinity / +infinity: that happens when x sits on
/// a truncation limit to rounding, where the tail does not move with the
/// mean, so no finite mean is excluded on that side (a half-line, or the
/// whole line).
inline std::pair<double, double> truncated_normal_interval(double x, double sd, double lower,
                                                           double upper, double level) {
  constexpr double inf = std::numeric_limits<double>::infinity();
  const double log_half_alpha = std::log(0.5 * (1.0 - level));
  // The log of the tail that is small at each end against log(alpha/2),
  // both increasing in m: the upper tail grows with m, the lower one shrinks.
  auto lower_gap = [&](double m) {
    return truncated_normal_tails(x, m, sd, lower, upper).log_upper - log_half_alpha;
  };
  auto upper_gap = [&](double m) {
    return log_half_alpha - truncated_normal_tails(x, m, sd, lower, upper).log_lower;
  };
  // Root of an increasing gap: bracket by doubling steps of sd from x, then
  // the Illinois variant of regula falsi (superlinear, and never leaves the
  // bracket), to 1e-12 relative to the larger of sd and the ends: far below
  // the sampling error of any interval.
  auto solve = [&](auto gap) {
    double a = x, b = x, ga = gap(x), gb = ga, step = sd;
    int doublings = 0;
    if (ga > 0) {  // the root lies below x
      while (ga > 0) {
        b = a;
        gb = ga;
        a = x - step;
        step *= 2;
        if (++doublings > 400) return -inf;
        ga = gap(a);
      }
    } else {
      while (gb <= 0) {
        a = b;
        ga = gb;
        b = x + step;
        step *= 2;
        if (++doublings > 400) return inf;
        gb = gap(b);
      }
    }
    // gap(a) <= 0 < gap(b); a -inf gap (a tail of exactly 0) is bisected.
    int side = 0;
    for (int i = 0; i < 200; ++i) {
      if (std::abs(b - a) <= 1e-12 * std::max({sd, std::abs(a), std::abs(b)})) break;
      double m = 0.5 * (a + b);
      if (std::isfinite(ga) && std::isfinite(gb)) {
        const double falsi = (a * gb - b * ga) / (gb - ga);
        if (falsi > a && falsi < b) m = falsi;
      }
      if (m == a || m == b) break;
      const double gm = gap(m);
      if (gm > 0) {
        b = m;
        gb = gm;
        if (side == 1) ga *= 0.5;  // Illinois: halve the stale end's value
        side = 1;
      } else {
        a = m;
        ga = gm;
        if (side == -1) gb *= 0.5;
        side = -1;
      }
    }
    return 0.5 * (a + b);
  };
  const double low = solve(lower_gap);
  const double high = solve(upper_gap);
  return {low, high};
}

}  // namespace knotpath::detail
