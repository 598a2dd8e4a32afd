// The coordinate-descent baseline of the benchmarks (bench/coordinate_descent.hpp)
// solves the lasso it claims to solve: its grid solutions satisfy the KKT
// conditions and agree with knotpath's exact path at the same penalties.
// A benchmark against a wrong or sloppy baseline would mean nothing.
#include <gtest/gtest.h>

#include <cmath>
#include <Eigen/Eigenvalues>
#include <iostream>

#include "coordinate_descent.hpp"
#include "test_support.hpp"

namespace kp = knotpath;
namespace kt = knotpath::testing;
namespace kb = knotpath::bench;
using kp::Index;

namespace {

struct Worst {
  double kkt = 0;         // largest KKT violation / lambda_max over the grid
  double disagreement = 0;  // largest |beta_cd - beta_path| over the grid / largest |beta_path| on it
  double fit_gap = 0;       // largest ||Z (b_cd - b_path)|| / ||y|| (fitted values, prepared scale)
  double condition = 1;     // largest condition number of Z_A^T Z_A of the exact solutions on the grid
};

Worst compare(const kt::Problem& prob, kb::CdUpdates updates, bool* covariance_used) {
  kb::GridOptions options;
  options.updates = updates;
  const kb::GridFit fit = kb::coordinate_descent_grid(prob.x, prob.y, options);
  *covariance_used = fit.covariance;
  EXPECT_TRUE(fit.converged);
  EXPECT_EQ(fit.penalties.size(), 100u);
  const kt::Centred c = kt::centre(prob.x, prob.y, true, true);
  const auto path = kp::trace<double>(prob.x, prob.y);
  // lambda_max is max_j |z_j^T y| in both: the same number up to rounding
  // of two differently ordered sums (1e-12 relative, common practice).
  EXPECT_NEAR(fit.penalties.front(), path.lambda_max(), 1e-12 * path.lambda_max());
  // Grid spacing: log-spaced down to 1e-3 lambda_max (the grid).
  EXPECT_NEAR(fit.penalties.back(), 1e-3 * fit.penalties.front(), 1e-12 * fit.penalties.front());
  Worst worst;
  double scale = 1e-300;  // largest exact coefficient on the grid (original scale)
  for (double lambda : fit.penalties)
    scale = std::max(scale, path.at_penalty(lambda).coefficients.cwiseAbs().maxCoeff());
  for (std::size_t l = 0; l < fit.penalties.size(); ++l) {
    const double lambda = fit.penalties[l];
    const kp::Vector<double> b = fit.coefficients.col(static_cast<Index>(l));
    // Violation of the KKT conditions on the prepared scale, computed here
    // from scratch (residual y - Z b, no state of the solver).
    const kp::Vector<double> corr = c.z.transpose() * (c.y - c.z * b);
    double kkt = 0;
    for (Index j = 0; j < b.size(); ++j) {
      const double v = b(j) != 0 ? std::abs(corr(j) - lambda * (b(j) > 0 ? 1.0 : -1.0))
                                 : std::max(0.0, std::abs(corr(j)) - lambda);
      kkt = std::max(kkt, v);
    }
    worst.kkt = std::max(worst.kkt, kkt / fit.penalties.front());
    const kp::Vector<double> exact = path.at_penalty(lambda).coefficients;
    const double gap = (fit.original_scale(static_cast<Index>(l)) - exact).cwiseAbs().maxCoeff();
    worst.disagreement = std::max(worst.disagreement, gap / scale);
    const kp::Vector<double> exact_prepared = kt::to_prepared(c, exact);
    worst.fit_gap = std::max(worst.fit_gap, (c.z * (b - exact_prepared)).norm() / c.y.norm());
    std::vector<Index> support;
    for (Index j = 0; j < exact.size(); ++j)
      if (exact(j) != 0) support.push_back(j);
    if (!support.empty()) {
      kp::Matrix<double> za(c.z.rows(), static_cast<Index>(support.size()));
      for (std::size_t k = 0; k < support.size(); ++k) za.col(static_cast<Index>(k)) = c.z.col(support[k]);
      const Eigen::SelfAdjointEigenSolver<kp::Matrix<double>> eig(za.transpose() * za);
      worst.condition = std::max(worst.condition, eig.eigenvalues().maxCoeff() / eig.eigenvalues().minCoeff());
    }
  }
  std::cout << "worst KKT violation / lambda_max " << worst.kkt << ", disagreement " << worst.disagreement
            << ", fitted-value gap " << worst.fit_gap << ", active condition " << worst.condition
            << " (" << fit.sweeps << " sweeps)\n";
  return worst;
}

}  // namespace

// Tolerances. The solver stops when the largest coefficient change of a
// sweep is below 1e-7 of the largest coefficient (the rule; Friedman,
// Hastie & Tibshirani 2010, J. Stat. Softw. 33(1), stop on the change).
// Coordinate descent converges linearly, so the remaining error is a small
// multiple of the last change, and a coefficient error e moves a gradient
// (inner products of unit columns) by at most sqrt(k) e: the KKT violation
// is a few 1e-8 of lambda_max here (measured 2e-8 to 8e-8); we require 1e-6
// lambda_max (the brief's "~1e-6").
// A gradient error t moves the coefficients by up to t / lambda_min(Z_A^T Z_A)
// <= t * cond(Z_A^T Z_A) (its largest eigenvalue is >= 1, the unit diagonal),
// so the coefficients must agree with the exact path to 1e-6 * cond relative
// to the largest coefficient (cond is computed from the exact active sets:
// about 14 for the tall designs, 2e3 near saturation in the wide one).
// Fitted values are better conditioned (||Z e|| <= t sqrt(k cond)): 1e-5 of
// ||y|| (measured 5e-8 tall, 1.5e-6 wide).
#define KNOTPATH_EXPECT_BASELINE_ACCURATE(w)          \
  do {                                                \
    EXPECT_LE((w).kkt, 1e-6);                         \
    EXPECT_LE((w).disagreement, 1e-6 * (w).condition); \
    EXPECT_LE((w).fit_gap, 1e-5);                     \
  } while (false)

TEST(CoordinateDescentBaseline, TallCovarianceUpdatesSatisfyKktAndMatchThePath) {
  const kt::Problem prob = kt::ar1_problem(400, 40, 0.5, 71, 8);
  bool covariance = false;
  const Worst w = compare(prob, kb::CdUpdates::automatic, &covariance);
  EXPECT_TRUE(covariance);  // n >= 2 p selects covariance updates
  KNOTPATH_EXPECT_BASELINE_ACCURATE(w);
}

TEST(CoordinateDescentBaseline, TallNaiveUpdatesSatisfyKktAndMatchThePath) {
  const kt::Problem prob = kt::ar1_problem(400, 40, 0.5, 72, 8);
  bool covariance = true;
  const Worst w = compare(prob, kb::CdUpdates::naive, &covariance);
  EXPECT_FALSE(covariance);
  KNOTPATH_EXPECT_BASELINE_ACCURATE(w);
}

TEST(CoordinateDescentBaseline, WideNaiveUpdatesSatisfyKktAndMatchThePath) {
  // p > n: the grid's small penalties approach the saturated fit (at most
  // n - 1 nonzero coefficients), where the active Gram matrix is the least
  // well conditioned; the same tolerances still hold.
  const kt::Problem prob = kt::ar1_problem(60, 150, 0.5, 73, 6);
  bool covariance = true;
  const Worst w = compare(prob, kb::CdUpdates::automatic, &covariance);
  EXPECT_FALSE(covariance);  // n < 2 p selects naive updates
  KNOTPATH_EXPECT_BASELINE_ACCURATE(w);
}

TEST(CoordinateDescentBaseline, CovarianceAndNaiveUpdatesAgree) {
  // Same iterates in exact arithmetic (the gradient is the same number kept
  // two ways); rounding differs only in the last digits of the gradient,
  // which can shift the sweep at which the stop triggers: both stop within
  // 1e-7 of the solution, so they agree to 1e-6 of the largest coefficient.
  const kt::Problem prob = kt::ar1_problem(300, 30, 0.3, 74, 6);
  kb::GridOptions options;
  options.updates = kb::CdUpdates::naive;
  const kb::GridFit naive = kb::coordinate_descent_grid(prob.x, prob.y, options);
  options.updates = kb::CdUpdates::covariance;
  const kb::GridFit cov = kb::coordinate_descent_grid(prob.x, prob.y, options);
  const double scale = naive.coefficients.cwiseAbs().maxCoeff();
  EXPECT_LE((naive.coefficients - cov.coefficients).cwiseAbs().maxCoeff(), 1e-6 * scale);
}

TEST(CoordinateDescentBaseline, RejectsBadOptions) {
  const kt::Problem prob = kt::ar1_problem(20, 3, 0.0, 75, 2);
  kb::GridOptions options;
  options.smallest_ratio = 0.0;
  EXPECT_THROW(kb::coordinate_descent_grid(prob.x, prob.y, options), std::invalid_argument);
  options = {};
  options.penalties = 0;
  EXPECT_THROW(kb::coordinate_descent_grid(prob.x, prob.y, options), std::invalid_argument);
}
