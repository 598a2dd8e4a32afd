#pragma once
/// \file first_step_t.hpp
/// \brief The first least-angle step tested with the noise variance unknown:
/// an exact selective t-test under the global null, which needs no estimate
/// of sigma^2.
///
/// References:
///  - W. Fithian, D. Sun & J. Taylor (2014), "Optimal inference after model
///    selection", arXiv:1410.2597 (conditioning on the sufficient statistic
///    of the null model, here ||y||^2, removes the unknown variance; the
///    selective t-test; section numbers not given: from memory we only know
///    the idea sits in its treatment of the unknown-variance Gaussian case).
///  - X. Tian, J. R. Loftus & J. E. Taylor (2018), "Selective inference with
///    unknown variance via the square-root lasso", Biometrika 105(4),
///    755-768 (the unknown-variance line of work; their method differs:
///    here the least-angle first-step event is conditioned on directly).
///  - R. J. Tibshirani, J. Taylor, R. Lockhart & R. Tibshirani (2016), "Exact
///    post-selection inference for sequential regression procedures", JASA
///    111, 600-620 (the known-variance spacing test of the same step, in
///    inference.hpp).
///
/// The derivation (done again here). Let y be the prepared (centred)
/// response and z_k the prepared columns (centred; unit length unless the
/// columns were not standardized). With an intercept y and every z_k lie in
/// the d = n - 1 dimensional space orthogonal to the constant; without one
/// d = n. The first least-angle (and lasso) step picks the column j and sign
/// s with s z_j^T y = max_k |z_k^T y|, the event
///     E = { s z_j^T y >= |z_k^T y| for every k != j },
/// a cone: y -> c y (c > 0) keeps it.
///
/// Null hypothesis: the global null, E y constant (every predictor
/// useless), with Gaussian errors of unknown variance and a fixed design.
/// Then the centred y is a spherical Gaussian in its d-dimensional space and
/// u = y / ||y|| is uniform on that space's unit sphere, independent of
/// ||y||; E depends on u alone, so sigma never enters.
///
/// With e = s z_j / a (a = ||z_j||), write u = w e + sqrt(1 - w^2) v, with
/// w = e^T u and v the unit direction of u orthogonal to e. For u uniform,
/// w and v are independent, w has density proportional to
/// (1 - w^2)^((d - 3)/2) on [-1, 1], and
///     T = sqrt(d - 1) w / sqrt(1 - w^2)
/// is Student t with nu = d - 1 degrees of freedom. The test conditions on
/// v as well as on E (conditioning on more keeps the test exact). Put
/// t = w / sqrt(1 - w^2) (= T / sqrt(nu)), r_k = z_k^T e and c_k = z_k^T v
/// (fixed given v). Since z_k^T u = sqrt(1 - w^2) (r_k t + c_k) and
/// s z_j^T u = sqrt(1 - w^2) a t, the event E given v is
///     a t >= |r_k t + c_k|   for every k != j,
/// that is the two linear inequalities
///     (a - r_k) t >= c_k   and   (a + r_k) t >= -c_k,
/// and t >= 0. Each inequality bounds t from below (coefficient > 0), from
/// above (< 0), or not at all (= 0: then c_k = 0 too, see below): the
/// truncation set of T is ONE interval [L, U], never a union (it is an
/// intersection of half-lines). With unit columns |r_k| <= 1 = a, so U is
/// +infinity and L = sqrt(nu) lambda_2 / R, where lambda_2 is the path's
/// second knot and R = sqrt(||y||^2 - lambda_1^2) the length of y's part
/// orthogonal to z_j, while T = sqrt(nu) lambda_1 / R: the known-variance
/// spacing test's Q(lambda_1 / sigma) / Q(lambda_2 / sigma) with sigma
/// replaced by R / sqrt(nu) and the normal by t_nu.
///
/// The p-value is P(T' >= T | L <= T' <= U) for T' ~ t_nu:
///     p = [F(T) - F(U)] / [F(L) - F(U)],  F the t_nu upper tail,
/// uniform on (0, 1) under the global null, for every n > 2 (d >= 2) and
/// any number of columns (p may exceed n).
///
/// Collinear columns. A column k with z_k = +-kappa z_j has c_k = 0 and
/// r_k = +-kappa a: its inequalities hold for every t >= 0 when kappa <= 1
/// and for none when kappa > 1 (then j could not have entered first). A
/// column whose cosine with z_j is within rounding (1e3 machine epsilons) of
/// +-1 is therefore dropped from the constraints, since its c_k would be
/// rounding noise divided by rounding noise.
///
/// Numerics. The tails F are Boost.Math's Student t complement (the
/// regularized incomplete beta) while they stay above 1e-250; beyond, the
/// logarithm of the tail from the continued fraction of the incomplete beta
/// function (the form of Numerical Recipes, Press et al., 3rd ed. 2007,
/// section 6.4, from memory), whose prefactor x^a (1 - x)^b / (a B(a, b))
/// is kept in logs: no underflow (for nu = 1000 the tail at T = 100 is near
/// 1e-520). A difference of two tails is a log tail plus log(1 - ratio)
/// while the ratio is below 1/2, else the integral of the density over the
/// short interval by 30-point Gauss-Legendre, relative to the density at
/// its left end: no subtraction of nearly equal numbers.
///
/// What it is not. The null is the global one: the p-value says whether the
/// first entry is better than noise when no predictor matters; it says
/// nothing about later steps, and nothing about this predictor's effect
/// when others matter. It assumes Gaussian errors of constant variance and a
/// fixed design. Supported paths: those of the entry tests (plain lasso or
/// least angle, unweighted, every predictor penalized alike, no sign
/// constraints, no ridge); anything else throws invalid_option. A p-value
/// is no substitute for a designed study where decisions affect people.

#include <algorithm>
#include <cmath>
#include <limits>
#include <span>
#include <string>
#include <vector>

#include <boost/math/distributions/students_t.hpp>
#include <boost/math/quadrature/gauss.hpp>

#include "design/concept.hpp"
#include "detail/least_squares.hpp"
#include "detail/scalar.hpp"
#include "errors.hpp"
#include "inference.hpp"
#include "path.hpp"
#include "prepare.hpp"
#include "problem.hpp"

namespace knotpath {

/// The first-step t-test of one path (first_step_t_test()). Values it
/// cannot define are NaN, with the reason in `note`.
struct FirstStepT {
  Index predictor = -1;  ///< user's 0-based index of the first entry (-1: none)
  int sign = 0;          ///< the sign it entered with
  double statistic = std::numeric_limits<double>::quiet_NaN();  ///< T = sqrt(nu) w / sqrt(1 - w^2)
  double degrees_of_freedom = std::numeric_limits<double>::quiet_NaN();  ///< nu = d - 1
  double lower = std::numeric_limits<double>::quiet_NaN();  ///< L, lower end of T's truncation interval
  double upper = std::numeric_limits<double>::quiet_NaN();  ///< U (+infinity with unit-length columns)
  double p_value = std::numeric_limits<double>::quiet_NaN();  ///< P(T' >= T | L <= T' <= U), T' ~ t_nu
  std::string note;  ///< why a value is missing (empty when none is)
};

namespace detail {

/// log(1 + t^2 / nu) for t >= 0, without overflow of t^2.
inline double log1p_square_over(double t, double nu) {
  if (t < 1e100) return std::log1p(t * t / nu);
  return 2.0 * std::log(t) - std::log(nu) + std::log1p(nu / t / t);
}

/// log B(nu/2, 1/2).
inline double log_beta_half(double nu) {
  return std::lgamma(0.5 * nu) + std::lgamma(0.5) - std::lgamma(0.5 * nu + 0.5);
}

/// The continued fraction of the incomplete beta function I_x(a, b) =
/// x^a (1 - x)^b / (a B(a, b)) * cf, by the modified Lentz method (Press et
/// al., Numerical Recipes, 3rd ed., section 6.4, from memory); converges
/// quickly for x < (a + 1) / (a + b + 2).
inline double incomplete_beta_fraction(double a, double b, double x) {
  constexpr double tiny = 1e-300, eps = 1e-16;
  const double qab = a + b, qap = a + 1, qam = a - 1;
  double c = 1, d = 1 - qab * x / qap;
  if (std::abs(d) < tiny) d = tiny;
  d = 1 / d;
  double h = d;
  for (int m = 1; m <= 10000; ++m) {
    const double m2 = 2.0 * m;
    double aa = m * (b - m) * x / ((qam + m2) * (a + m2));
    d = 1 + aa * d;
    if (std::abs(d) < tiny) d = tiny;
    c = 1 + aa / c;
    if (std::abs(c) < tiny) c = tiny;
    d = 1 / d;
    h *= d * c;
    aa = -(a + m) * (qab + m) * x / ((a + m2) * (qap + m2));
    d = 1 + aa * d;
    if (std::abs(d) < tiny) d = tiny;
    c = 1 + aa / c;
    if (std::abs(c) < tiny) c = tiny;
    d = 1 / d;
    const double step = d * c;
    h *= step;
    if (std::abs(step - 1) < eps) break;
  }
  return h;
}

/// log P(T' > t) for T' ~ t_nu and t^2 > 4 (so that x = nu / (nu + t^2) <
/// (a + 1) / (a + b + 2) and the fraction converges): the upper tail is
/// I_x(nu/2, 1/2) / 2, its prefactor taken in logs.
inline double log_t_upper_tail_fraction(double t, double nu) {
  const double a = 0.5 * nu, b = 0.5;
  const double log_sum = std::log(nu) + log1p_square_over(t, nu);  // log(nu + t^2)
  const double log_x = std::log(nu) - log_sum;
  const double log_one_minus_x = 2.0 * std::log(t) - log_sum;
  return std::log(0.5) + a * log_x + b * log_one_minus_x - std::log(a) - log_beta_half(nu) +
         std::log(incomplete_beta_fraction(a, b, std::exp(log_x)));
}

/// log P(T' > t), T' ~ t_nu, finite for every finite t (+infinity: -inf).
inline double log_t_upper_tail(double t, double nu) {
  if (t == std::numeric_limits<double>::infinity()) return -std::numeric_limits<double>::infinity();
  const boost::math::students_t_distribution<double> law(nu);
  const double tail = boost::math::cdf(boost::math::complement(law, t));
  if (tail > 1e-250 || t < 2.5) return std::log(tail);
  return log_t_upper_tail_fraction(t, nu);
}

/// log P(a < T' < b) for T' ~ t_nu and 0 <= a < b (b may be +infinity);
/// -infinity when a == b.
inline double log_t_interval(double a, double b, double nu) {
  if (!(a < b)) return -std::numeric_limits<double>::infinity();
  const double la = log_t_upper_tail(a, nu);
  if (std::isinf(b)) return la;
  const double lb = log_t_upper_tail(b, nu);
  if (lb - la < -0.6931471805599453) return la + std::log1p(-std::exp(lb - la));
  // A short interval: the density relative to its value at a, integrated.
  const double ka = log1p_square_over(a, nu);
  auto relative_density = [&](double t) { return std::exp(-0.5 * (nu + 1) * (log1p_square_over(t, nu) - ka)); };
  const double integral = boost::math::quadrature::gauss<double, 30>::integrate(relative_density, a, b);
  const double log_density_a = -0.5 * std::log(nu) - log_beta_half(nu) - 0.5 * (nu + 1) * ka;
  return log_density_a + std::log(integral);
}

/// log P(T' >= t | lower <= T' <= upper) for T' ~ t_nu, 0 <= lower < upper
/// (upper may be +infinity); t is clamped into the interval. NaN when the
/// interval is empty or a point; finite even where the probability is below
/// the smallest double.
inline double log_truncated_t_upper_tail(double t, double lower, double upper, double nu) {
  if (!(0.0 <= lower && lower < upper)) return std::numeric_limits<double>::quiet_NaN();
  t = std::clamp(t, lower, upper);
  const double numerator = log_t_interval(t, upper, nu);
  if (std::isinf(numerator)) return numerator;
  return std::min(0.0, numerator - log_t_interval(lower, upper, nu));
}

/// P(T' >= t | lower <= T' <= upper), the exponential of the above.
inline double truncated_t_upper_tail(double t, double lower, double upper, double nu) {
  return std::exp(log_truncated_t_upper_tail(t, lower, upper, nu));
}

/// The test on the prepared problem `design` of `path` (see first_step_t_test()).
template <DesignOperator Design>
FirstStepT first_step_t(const Design& design, const Path<typename Design::Scalar>& path) {
  using Scalar = typename Design::Scalar;
  // The entry tests' refusals; the variance argument is a placeholder (this test uses none).
  check_testable(design, path, 1.0);
  const Preparation<Scalar>& prep = path.preparation();
  if (prep.weight_sum != Scalar(prep.used_observations))
    throw invalid_option("weights", "the first-step t-test is for unweighted data");
  FirstStepT out;
  const Index d = prep.used_observations - (prep.intercept ? 1 : 0);
  out.degrees_of_freedom = static_cast<double>(d - 1);
  const auto& knots = path.knots();
  const auto first = std::find_if(knots.begin(), knots.end(), [](const auto& k) { return is_event(k); });
  if (first == knots.end()) {
    out.note = "no predictor entered the path";
    return out;
  }
  const EventGroup group = event_group(knots, static_cast<std::size_t>(first - knots.begin()));
  out.predictor = first->predictor;
  out.sign = first->sign;
  if (group.tied()) {
    out.note = "several predictors entered at the first knot";
    return out;
  }
  if (d < 2) {
    out.note = "needs at least 2 residual dimensions (3 rows with an intercept, 2 without)";
    return out;
  }
  const auto column = std::find(prep.columns.begin(), prep.columns.end(), first->predictor);
  const Index j = static_cast<Index>(column - prep.columns.begin());
  const Index p = design.cols();
  Vector<Scalar> g;  // z_k^T y
  design.response_correlations(g);
  std::vector<Index> all(static_cast<std::size_t>(p));
  for (Index k = 0; k < p; ++k) all[static_cast<std::size_t>(k)] = k;
  Vector<Scalar> cross(p);  // z_j^T z_k
  design.cross_products(j, std::span<const Index>(all), cross);
  // Everything is kept as exact ratios of Scalar products (no square root
  // of a Scalar, so rational paths work too) over the one common length
  // a R = sqrt(a^2 ||y||^2 - (z_j^T y)^2), a = ||z_j||, R = ||y - W e||:
  // with G = s z_j^T y = a W and q_k = s z_j^T z_k = a r_k,
  //   t = G / (a R),  and the bound of (a -+ r_k) t >= +-c_k is
  //   +-(a^2 g_k - q_k G) / ((a^2 -+ q_k) a R).
  const Scalar s(first->sign);
  const Scalar a2 = design.squared_norm(j);
  const Scalar big_g = s * g(j);
  const Scalar common2 = a2 * design.response_squared_norm() - big_g * big_g;  // (a R)^2
  if (!(common2 > Scalar(0))) {
    out.note = "the response lies along the first entry's column (nothing left to measure the noise)";
    return out;
  }
  const Scalar tolerance = Scalar(1000) * epsilon<Scalar>();
  const double inf = std::numeric_limits<double>::infinity();
  double lower = 0, upper = inf;  // bounds on t, times a R
  auto bound = [&](const Scalar& coefficient, const Scalar& right) {  // coefficient * t >= right
    if (coefficient > Scalar(0)) lower = std::max(lower, to_double(Scalar(right / coefficient)));
    if (coefficient < Scalar(0)) upper = std::min(upper, to_double(Scalar(right / coefficient)));
  };
  for (Index k = 0; k < p; ++k) {
    if (k == j) continue;
    const Scalar q = s * cross(k);
    const Scalar norm2 = design.squared_norm(k);
    // |cos(z_j, z_k)| within rounding of 1: collinear (see the file comment).
    const Scalar one_less = Scalar(1) - tolerance;
    if (q * q >= a2 * norm2 * one_less * one_less) {
      const Scalar one_more = Scalar(1) + tolerance;
      if (norm2 > a2 * one_more * one_more)
        throw invalid_query("a column is a longer multiple of the first entry's column");
      continue;
    }
    const Scalar numerator = a2 * g(k) - q * big_g;
    bound(a2 - q, numerator);
    bound(a2 + q, Scalar(-numerator));
  }
  const double root_nu = std::sqrt(out.degrees_of_freedom);
  const double common = std::sqrt(to_double(common2));
  out.statistic = root_nu * (to_double(big_g) / common);
  out.lower = root_nu * (lower / common);
  out.upper = root_nu * (upper / common);
  if (!(out.lower < out.upper)) {
    out.note = "the truncation interval is empty up to rounding";
    return out;
  }
  out.p_value = truncated_t_upper_tail(out.statistic, out.lower, out.upper, out.degrees_of_freedom);
  return out;
}

}  // namespace detail

/// The first least-angle step of `path` tested with the noise variance
/// unknown (see the file comment): the exact selective t-test of the
/// global null, conditioned on the first entry and its sign and on the
/// direction of y orthogonal to that column. `design` is the path's prepared
/// problem (the operator it was traced with, or one equivalent to it: a
/// prepared Gram problem of the same data works too). Costs one response
/// product, one column of cross products and p squared norms. Throws
/// invalid_option for an unsupported path, invalid_query when `design` has
/// not the path's prepared columns.
template <DesignOperator Design>
FirstStepT first_step_t_test(const Design& design, const Path<typename Design::Scalar>& path) {
  return detail::first_step_t(design, path);
}

/// The same for a path traced (without weights) on x and y.
template <class Scalar>
FirstStepT first_step_t_test(const Matrix<Scalar>& x, const Vector<Scalar>& y, const Path<Scalar>& path) {
  return first_step_t_test(detail::prepare_for(x, y, path, Vector<Scalar>()).design, path);
}

/// The same from the sufficient statistics of the (unweighted) data the
/// path was traced on (on the prepared Gram matrix; agrees with the dense
/// route to rounding). Throws invalid_query when the statistics do not give
/// the path's prepared columns and rows.
template <class Scalar>
FirstStepT first_step_t_test(const SufficientStatistics<Scalar>& statistics, const Path<Scalar>& path) {
  const PreparedGram<Scalar> prepared = prepare_gram(statistics, path.options());
  detail::check_same_problem(prepared.preparation, path);
  return first_step_t_test(prepared.design, path);
}

}  // namespace knotpath
