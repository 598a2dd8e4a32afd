// Numerical soak: thousands of random designs of varied shape (n from 2 to
// 200, p from 1 to 300), correlation (independent to AR(1) rho = 0.999),
// column scales (norms from about 1e-6 to 1e6), duplicated columns and tied
// integer-valued columns. Every path is checked
//  - for the KKT conditions of its objective at every knot and at random
//    penalties between knots (trace.hpp, "Invariants (KKT)"), on columns
//    prepared independently here (test_support.hpp, centre());
//  - against the independent coordinate-descent solver (test_support.hpp) at
//    random penalties, by fitted values Z b: the lasso fit is unique even
//    when the coefficients are not (p > n, duplicates): Tibshirani (2013),
//    "The lasso problem and uniqueness", Electron. J. Statist. 7, 1456-1490,
//    Lemma 1;
//  - for a clean stop (never the step_limit safety bound) and finite values.
// It prints the worst KKT violation and the worst disagreement seen, and the
// number of knots the library itself flagged suspect.
//
// Tolerances (absolute, prepared scale). A computed knot is the exact knot of
// slightly perturbed data (backward-stable Cholesky updates, Higham, Accuracy
// and Stability of Numerical Algorithms, 2nd ed., ch. 10), so its
// correlations are off by about eps * kappa * (||y|| + ||b||_1) with kappa
// the active factor's condition estimate (Knot::condition_estimate), plus
// what the updates accumulate, which the path measures itself
// (Knot::prepared_error, relative to lambda_max). The allowance is
//   kTolFactor * (eps * kappa * (||y|| + ||b||_1) + prepared_error * lambda_max)
// with kTolFactor = 1e3 for the growth constants of p <= 300 and hundreds of
// updates. Suspect knots (prepared_error > 1e-6) use the same formula; the
// allowance simply grows with the error the library admits to. A wrong
// event or sign gives a violation of order lambda, far outside.
// Coordinate descent is compared only where it converged (its own KKT
// violation below 1e-9 lambda_max, measured, same formula otherwise); the
// fits then agree to about the sum of both solvers' KKT errors divided by
// the smallest singular value of the active columns, bounded here by
// kFitTol * ||y|| with kFitTol = 1e-6 (a wrong path is off by O(1)).

#include <gtest/gtest.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <random>
#include <string>
#include <vector>

#include <knotpath/cross_validation.hpp>
#include <knotpath/detail/random.hpp>
#include <knotpath/knotpath.hpp>

#include "soak_design.hpp"
#include "test_support.hpp"

namespace {

namespace kp = knotpath;
namespace kt = knotpath::testing;
using kp::Index;
using kp::Matrix;
using kp::Vector;

constexpr int kDesigns = 2000;
constexpr double kTolFactor = 1e3;
constexpr double kFitTol = 1e-6;
constexpr double kEps = 2.220446049250313e-16;  // IEEE 754 binary64 epsilon

struct Figures {
  long paths = 0, knots = 0, suspect_knots = 0, penalties = 0, compared = 0, cd_unconverged = 0;
  double worst_kkt = 0;           // violation / allowance ratio, all points
  double worst_kkt_relative = 0;  // violation / lambda_max, non-suspect points
  double worst_fit = 0;           // ||Z (b - b_cd)|| / ||y||
  std::string worst_kkt_design, worst_fit_design;
};

// KKT violation of b at lambda on prepared columns z (largest over columns).
double violation(const Matrix<double>& z, const Vector<double>& y, const Vector<double>& b,
                 double lambda, const kp::TraceOptions& o, const std::vector<double>& f) {
  const Vector<double> c = z.transpose() * (y - z * b) - o.ridge * b;
  double worst = 0;
  for (Index j = 0; j < z.cols(); ++j) {
    const double fj = f[static_cast<std::size_t>(j)];
    double v;
    if (b(j) != 0 && o.variant == kp::Variant::lasso)
      v = std::abs(c(j) - lambda * fj * (b(j) > 0 ? 1.0 : -1.0));
    else if (b(j) != 0)
      v = std::abs(std::abs(c(j)) - lambda * fj);  // least angle: equal correlations
    else
      v = std::max(0.0, std::abs(c(j)) - lambda * fj);
    worst = std::max(worst, v);
  }
  return worst;
}

TEST(Soak, RandomDesignsSatisfyKktAndMatchCoordinateDescent) {
  const auto started = std::chrono::steady_clock::now();
  Figures fig;
  std::mt19937_64 gen(99);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  for (int s = 0; s < kDesigns; ++s) {
    const kt::SoakDesign d = kt::random_design(1000u + static_cast<unsigned>(s));
    SCOPED_TRACE(d.summary);
    kp::Path<double> path;
    try {
      path = kp::trace<double>(d.x, d.y, d.options);
    } catch (const std::exception& e) {
      ADD_FAILURE() << "trace threw " << e.what();
      continue;
    }
    ++fig.paths;
    EXPECT_NE(path.stop_reason(), kp::StopReason::step_limit) << "safety bound hit";
    const auto& prep = path.preparation();
    if (prep.columns.empty()) continue;
    Matrix<double> xs(d.x.rows(), static_cast<Index>(prep.columns.size()));
    for (std::size_t k = 0; k < prep.columns.size(); ++k)
      xs.col(static_cast<Index>(k)) = d.x.col(prep.columns[k]);
    const kt::Centred c = kt::centre(xs, d.y, d.options.with_intercept, d.options.standardize);
    const double ynorm = c.y.norm();
    const double lambda_max = path.lambda_max();
    auto prepared = [&](const Vector<double>& beta) {
      Vector<double> b(xs.cols());
      for (std::size_t k = 0; k < prep.columns.size(); ++k)
        b(static_cast<Index>(k)) = beta(prep.columns[k]) * c.scale(static_cast<Index>(k));
      return b;
    };
    // Columns held out as numerically dependent on the active ones (squared
    // sine to their span below TraceOptions::collinearity_tolerance) are not
    // added, by design; their correlation may exceed the boundary by up to
    // sine * ||r|| (unit columns). The largest recorded angle of the path is
    // allowed that much.
    double held_sine = 0;
    for (const auto& h : path.held_out())
      held_sine = std::max(held_sine, std::sqrt(h.squared_sine));
    auto check = [&](const Vector<double>& b, double lambda, double kappa, double error,
                     bool suspect) {
      const double v = violation(c.z, c.y, b, lambda, d.options, prep.penalty_weights);
      const double zmax = c.z.colwise().norm().maxCoeff();
      const double allowed =
          kTolFactor * (kEps * std::max(1.0, kappa) * zmax * (ynorm + zmax * b.lpNorm<1>()) +
                        error * lambda_max) +
          held_sine * (c.y - c.z * b).norm() * zmax + 1e-300;
      if (v / allowed > fig.worst_kkt) {
        fig.worst_kkt = v / allowed;
        fig.worst_kkt_design = d.summary;
      }
      if (!suspect && lambda_max > 0)
        fig.worst_kkt_relative = std::max(fig.worst_kkt_relative, v / lambda_max);
      EXPECT_LE(v, allowed) << "lambda " << lambda << " kappa " << kappa << " error " << error;
    };
    const auto& knots = path.knots();
    for (std::size_t k = 0; k < knots.size(); ++k) {
      const auto& knot = knots[k];
      ++fig.knots;
      fig.suspect_knots += knot.suspect;
      check(prepared(path.dense_coefficients(k)), knot.penalty, knot.condition_estimate,
            knot.prepared_error, knot.suspect);
    }
    // Random penalties inside the path: the interpolated solution is exact.
    const double last = knots.back().penalty;
    for (int r = 0; r < 3 && lambda_max > last; ++r) {
      const double lambda = last + (lambda_max - last) * u(gen) * u(gen);
      std::size_t lower = 0;
      while (lower < knots.size() && knots[lower].penalty >= lambda) ++lower;
      const std::size_t upper = lower == 0 ? 0 : lower - 1;
      lower = std::min(lower, knots.size() - 1);
      const double kappa =
          std::max(knots[upper].condition_estimate, knots[lower].condition_estimate);
      const double error = std::max(knots[upper].prepared_error, knots[lower].prepared_error);
      const bool suspect = knots[upper].suspect || knots[lower].suspect;
      const Vector<double> b = prepared(path.at_penalty(lambda).coefficients);
      ++fig.penalties;
      check(b, lambda, kappa, error, suspect);
      // Coordinate descent (lasso / elastic net only), when it converges.
      if (d.options.variant != kp::Variant::lasso || r > 0 || suspect) continue;
      const int sweeps =
          static_cast<int>(std::min<long>(2000, 4000000 / (xs.rows() * xs.cols() + 1)));
      const Vector<double> cd = kt::coordinate_descent(c.z, c.y, lambda, prep.penalty_weights,
                                                       d.options.ridge, {}, 1e-14, sweeps);
      if (violation(c.z, c.y, cd, lambda, d.options, prep.penalty_weights) > 1e-9 * lambda_max) {
        ++fig.cd_unconverged;
        continue;
      }
      ++fig.compared;
      const double fit = (c.z * (b - cd)).norm() / std::max(ynorm, 1e-300);
      if (fit > fig.worst_fit) {
        fig.worst_fit = fit;
        fig.worst_fit_design = d.summary;
      }
      EXPECT_LE(fit, kFitTol) << "fit differs from coordinate descent at lambda " << lambda;
    }
  }
  const double seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
  std::printf(
      "soak: %ld paths, %ld knots (%ld suspect), %ld random penalties, %ld compared with "
      "coordinate "
      "descent (%ld where it had not converged skipped), %.1f s\n",
      fig.paths, fig.knots, fig.suspect_knots, fig.penalties, fig.compared, fig.cd_unconverged,
      seconds);
  std::printf("soak: worst KKT violation / allowance %.3g (%s)\n", fig.worst_kkt,
              fig.worst_kkt_design.c_str());
  std::printf("soak: worst KKT violation / lambda_max at non-suspect points %.3g\n",
              fig.worst_kkt_relative);
  std::printf(
      "soak: worst fit disagreement with coordinate descent ||Z(b - b_cd)|| / ||y|| %.3g (%s)\n",
      fig.worst_fit, fig.worst_fit_design.c_str());
  EXPECT_EQ(fig.paths, kDesigns);
}

// The parsimonious (one-standard-error) choice of exact cross-validation
// keeps its own rule on thousands of random designs: 20 to 150 rows, 4 to 45
// predictors, 3 to 20 folds given as a fold column, every combination of
// intercept / standardize / ridge, the lasso and the least-angle variant,
// with and without weights. The rule (Hastie, Tibshirani & Friedman, The
// Elements of Statistical Learning, 2nd ed., section 7.10) is checked on the
// curve evaluated directly, fold by fold (CrossValidation::error_at_mu, not
// the merged quadratics the search walks):
//  - CV(choice) <= CV(min) + SE(min);
//  - every larger mu on a fine set above the choice, and every merged-grid
//    point above it, has CV above that threshold.
// The allowance kRuleTol (relative) covers the rounding of a quadratic's
// root and of the sums of squares (about 1e-14 relative); the bug this
// guards against (RELIABILITY.md, "parsimonious choice above its threshold")
// broke the rule by about 1e-2 relative.
TEST(Soak, ParsimoniousChoiceKeepsTheOneStandardErrorRule) {
  constexpr int kCvDesigns = 3000;
  constexpr int kFinePoints = 300;
  constexpr double kRuleTol = 1e-10;
  const auto started = std::chrono::steady_clock::now();
  long checked = 0, at_top = 0, points = 0;
  double worst_excess = 0, worst_larger = 0;  // relative to the threshold
  for (int s = 0; s < kCvDesigns; ++s) {
    kp::detail::SplitMix64 g(5000u + static_cast<unsigned>(s));
    const Index n = 20 + static_cast<Index>(g.uniform() * 131);  // 20..150
    const Index p = 4 + static_cast<Index>(g.uniform() * 42);    // 4..45
    const Index k = std::min<Index>(n, 3 + static_cast<Index>(g.uniform() * 18));  // 3..20
    const double rho = g.uniform() < 0.5 ? 0.0 : 0.8;
    Matrix<double> x(n, p);
    for (Index i = 0; i < n; ++i) {
      double prev = g.normal();
      for (Index j = 0; j < p; ++j) {
        if (j > 0) prev = rho * prev + std::sqrt(1.0 - rho * rho) * g.normal();
        x(i, j) = prev * (1.0 + 3.0 * static_cast<double>(j % 3));
      }
    }
    Vector<double> y(n);
    const double noise = 0.3 + 3.0 * g.uniform();
    for (Index i = 0; i < n; ++i)
      y(i) = 2.0 + 1.5 * x(i, 0) - x(i, p / 2) + 0.5 * x(i, p - 1) + noise * g.normal();
    kp::TraceOptions o;
    o.with_intercept = (s & 1) != 0;
    o.standardize = (s & 2) != 0;
    o.ridge = (s & 4) != 0 ? 0.05 + 2.0 * g.uniform() : 0.0;
    if ((s & 8) != 0 && o.ridge == 0.0) o.variant = kp::Variant::least_angle;
    Vector<double> w;
    if ((s % 5) == 4) {
      w.resize(n);
      for (Index i = 0; i < n; ++i) w(i) = 0.5 + 2.0 * g.uniform();
    }
    kp::CrossValidationOptions cv;
    cv.fold_of.resize(static_cast<std::size_t>(n));
    for (Index i = 0; i < n; ++i) cv.fold_of[static_cast<std::size_t>(i)] = static_cast<long>(i % k);
    for (std::size_t i = cv.fold_of.size(); i > 1; --i)
      std::swap(cv.fold_of[i - 1], cv.fold_of[static_cast<std::size_t>(g.uniform() * static_cast<double>(i))]);
    const std::string summary = "design " + std::to_string(s) + ": n " + std::to_string(n) +
                                ", p " + std::to_string(p) + ", folds " + std::to_string(k) +
                                (o.with_intercept ? ", intercept" : "") +
                                (o.standardize ? ", standardized" : "") +
                                (o.ridge != 0.0 ? ", ridge" : "") +
                                (o.variant == kp::Variant::least_angle ? ", least angle" : "") +
                                (w.size() != 0 ? ", weights" : "");
    SCOPED_TRACE(summary);
    kp::CrossValidation<double> r;
    try {
      r = kp::cross_validate<double>(x, y, o, cv, w);
    } catch (const std::exception& e) {
      ADD_FAILURE() << "cross_validate threw " << e.what();
      continue;
    }
    ++checked;
    const double threshold = r.minimum.error + r.minimum.standard_error;
    const double tol = kRuleTol * threshold;
    const double mu = r.parsimonious.mu;
    const double at_choice = r.error_at_mu(mu);
    worst_excess = std::max(worst_excess, (at_choice - threshold) / threshold);
    EXPECT_GE(mu, r.minimum.mu);
    EXPECT_LE(at_choice, threshold + tol) << "the choice at mu " << mu << " breaks its rule";
    if (!(mu < r.mu_high)) {
      ++at_top;
      continue;
    }
    std::vector<double> above;
    for (int q = 1; q <= kFinePoints; ++q)
      above.push_back(mu + (r.mu_high - mu) * q / kFinePoints);
    for (const auto& piece : r.pieces)
      if (piece.mu_high > mu) above.push_back(piece.mu_high);
    int misses = 0;
    for (double m : above) {
      if (m <= mu) continue;
      ++points;
      const double e = r.error_at_mu(m);
      worst_larger = std::max(worst_larger, (threshold - e) / threshold);
      if (e <= threshold - tol && ++misses <= 1)
        ADD_FAILURE() << "larger mu " << m << " has CV " << e << " <= threshold " << threshold
                      << " (choice " << mu << ")";
    }
  }
  const double seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
  std::printf(
      "soak (parsimonious choice): %ld cross-validations (%ld chose the top of the curve), %ld "
      "larger penalties checked, %.1f s\n",
      checked, at_top, points, seconds);
  std::printf(
      "soak (parsimonious choice): worst excess over the threshold %.3g, worst larger penalty "
      "under it %.3g (relative; negative: none)\n",
      worst_excess, -worst_larger);
  EXPECT_EQ(checked, kCvDesigns);
}

}  // namespace
