// The exact path core on random designs: KKT conditions at every knot and at
// random penalties, agreement with an independent coordinate-descent solver,
// exact piecewise linearity, monotone L1 norm, the least-angle variant, the
// audit log and the query semantics.
#include <gtest/gtest.h>

#include <cmath>
#include <random>

#include "test_support.hpp"

namespace kp = knotpath;
namespace kt = knotpath::testing;
using kp::Index;
using Vec = kp::Vector<double>;

namespace {

struct DesignCase {
  const char* name;
  Index n, p;
  double rho;
  unsigned seed;
  // Relative KKT tolerance. Rounding in the homotopy grows with the
  // condition of the active Gram matrix: ~1e-13 for independent columns;
  // AR(1) rho = 0.95 and p > n designs reach active-Gram conditions of
  // 1e3..1e6, so 1e-8 leaves a wide margin while still catching any wrong
  // knot (a wrong event violates KKT by O(1) relative). (common practice)
  double kkt_tol;
};

const DesignCase kCases[] = {
    {"well_conditioned_n_gt_p", 100, 20, 0.0, 1, 1e-9},
    {"ar1_rho_0_95", 100, 30, 0.95, 2, 1e-8},
    {"p_gt_n", 30, 80, 0.3, 3, 1e-8},
};

class PathOnDesign : public ::testing::TestWithParam<DesignCase> {};

// Random penalties, log-uniform in [1e-3, 1] * lambda_max.
std::vector<double> random_penalties(double lambda_max, unsigned seed, int count = 50) {
  std::mt19937_64 gen(seed);
  std::uniform_real_distribution<double> u(std::log(1e-3), 0.0);
  std::vector<double> out;
  for (int i = 0; i < count; ++i) out.push_back(lambda_max * std::exp(u(gen)));
  return out;
}

}  // namespace

TEST_P(PathOnDesign, KktHoldsAtEveryKnot) {
  const DesignCase dc = GetParam();
  const kt::Problem prob = kt::ar1_problem(dc.n, dc.p, dc.rho, dc.seed);
  const kp::Path<double> path = kp::trace<double>(prob.x, prob.y);
  const kt::Centred c = kt::centre(prob.x, prob.y, true, true);
  ASSERT_GE(path.knots().size(), 3u);
  EXPECT_EQ(path.stop_reason(), kp::StopReason::completed);
  for (std::size_t k = 0; k < path.knots().size(); ++k) {
    const auto& knot = path.knots()[k];
    const Vec b = kt::to_prepared(c, path.dense_coefficients(k));
    EXPECT_LE(kt::kkt_violation(c.z, c.y, b, knot.penalty), dc.kkt_tol)
        << dc.name << " knot " << k << " penalty " << knot.penalty;
  }
}

TEST_P(PathOnDesign, KktAndIndependentSolverAgreeAtRandomPenalties) {
  const DesignCase dc = GetParam();
  const kt::Problem prob = kt::ar1_problem(dc.n, dc.p, dc.rho, dc.seed);
  const kp::Path<double> path = kp::trace<double>(prob.x, prob.y);
  const kt::Centred c = kt::centre(prob.x, prob.y, true, true);
  for (double lambda : random_penalties(path.lambda_max(), dc.seed + 100)) {
    const auto s = path.at_penalty(lambda);
    const Vec b = kt::to_prepared(c, s.coefficients);
    EXPECT_LE(kt::kkt_violation(c.z, c.y, b, lambda), dc.kkt_tol) << dc.name << " at " << lambda;
    // Coordinate descent to 1e-13 relative change (independent code in
    // test_support.hpp). The lasso solution is unique for continuous random
    // designs (Tibshirani 2013, Electron. J. Statist. 7, Lemma 4), so both
    // must agree; CD's own stopping error on these conditions is below 1e-9
    // of the coefficient scale, hence 1e-7.
    const Vec cd = kt::coordinate_descent(c.z, c.y, lambda);
    EXPECT_LE((cd - b).cwiseAbs().maxCoeff(), 1e-7 * std::max(1.0, b.cwiseAbs().maxCoeff()))
        << dc.name << " at " << lambda;
    // The intercept is the documented back-transformation of the same fit.
    EXPECT_NEAR(s.intercept, c.ymean - c.mean.dot(s.coefficients),
                1e-9 * (std::abs(c.ymean) + 1.0));
  }
}

TEST_P(PathOnDesign, SegmentMidpointsAreExactSolutions) {
  // Between knots the solution is affine in the penalty, so the average of
  // two neighbouring knots' coefficients must itself solve the problem at
  // the middle penalty: checked against KKT and the independent solver.
  const DesignCase dc = GetParam();
  const kt::Problem prob = kt::ar1_problem(dc.n, dc.p, dc.rho, dc.seed);
  const kp::Path<double> path = kp::trace<double>(prob.x, prob.y);
  const kt::Centred c = kt::centre(prob.x, prob.y, true, true);
  const auto& knots = path.knots();
  for (std::size_t k = 1; k < knots.size(); ++k) {
    if (knots[k].penalty == knots[k - 1].penalty) continue;
    const double mid = 0.5 * (knots[k].penalty + knots[k - 1].penalty);
    if (mid < 1e-3 * path.lambda_max()) continue;  // CD is too slow to converge there
    const Vec avg = 0.5 * (path.dense_coefficients(k) + path.dense_coefficients(k - 1));
    const Vec b = kt::to_prepared(c, avg);
    EXPECT_LE(kt::kkt_violation(c.z, c.y, b, mid), dc.kkt_tol) << dc.name << " segment " << k;
    const Vec cd = kt::coordinate_descent(c.z, c.y, mid);
    EXPECT_LE((cd - b).cwiseAbs().maxCoeff(), 1e-7 * std::max(1.0, b.cwiseAbs().maxCoeff()));
    // And the query returns exactly this affine interpolation.
    EXPECT_LE((path.at_penalty(mid).coefficients - avg).cwiseAbs().maxCoeff(),
              1e-12 * std::max(1.0, avg.cwiseAbs().maxCoeff()));
  }
}

TEST_P(PathOnDesign, LassoL1NormNeverDecreasesAsThePenaltyFalls) {
  // Along the lasso path the L1 norm is non-increasing in the penalty
  // (Efron et al. 2004, Ann. Statist. 32(2), section 3: the lasso
  // solution's norm grows monotonically as lambda decreases).
  const DesignCase dc = GetParam();
  const kt::Problem prob = kt::ar1_problem(dc.n, dc.p, dc.rho, dc.seed);
  const kp::Path<double> path = kp::trace<double>(prob.x, prob.y);
  const auto& knots = path.knots();
  for (std::size_t k = 1; k < knots.size(); ++k) {
    EXPECT_LE(knots[k].penalty, knots[k - 1].penalty);
    // Rounding in the norm of ~30 coefficients: 1e-12 relative.
    EXPECT_GE(knots[k].penalized_l1, knots[k - 1].penalized_l1 * (1 - 1e-12)) << dc.name << " knot " << k;
  }
}

TEST_P(PathOnDesign, LeastAngleNeverLeavesAndKeepsEqualCorrelations) {
  const DesignCase dc = GetParam();
  const kt::Problem prob = kt::ar1_problem(dc.n, dc.p, dc.rho, dc.seed);
  kp::TraceOptions opt;
  opt.variant = kp::Variant::least_angle;
  const kp::Path<double> path = kp::trace<double>(prob.x, prob.y, opt);
  const kt::Centred c = kt::centre(prob.x, prob.y, true, true);
  for (std::size_t k = 0; k < path.knots().size(); ++k) {
    const auto& knot = path.knots()[k];
    EXPECT_NE(knot.event, kp::EventKind::leave);
    // Least angle regression keeps every active predictor's absolute
    // correlation equal to the common level and every inactive one below
    // it (Efron et al. 2004, equations 2.13-2.15). The level is our penalty.
    const Vec b = kt::to_prepared(c, path.dense_coefficients(k));
    const Vec corr = c.z.transpose() * (c.y - c.z * b);
    double inactive_max = 0;
    std::vector<char> is_active(static_cast<std::size_t>(dc.p), 0);
    for (std::size_t e = 1; e <= k; ++e)
      if (path.knots()[e].event == kp::EventKind::enter)
        is_active[static_cast<std::size_t>(path.knots()[e].predictor)] = 1;
    for (Index j = 0; j < dc.p; ++j) {
      if (is_active[static_cast<std::size_t>(j)] && knot.penalty > 0)
        EXPECT_NEAR(std::abs(corr(j)), knot.penalty, dc.kkt_tol * path.lambda_max());
      else if (!is_active[static_cast<std::size_t>(j)])
        inactive_max = std::max(inactive_max, std::abs(corr(j)));
    }
    EXPECT_LE(inactive_max, knot.penalty + dc.kkt_tol * path.lambda_max());
  }
}

INSTANTIATE_TEST_SUITE_P(Designs, PathOnDesign, ::testing::ValuesIn(kCases),
                         [](const auto& info) { return std::string(info.param.name); });

TEST(PathCore, WithoutInterceptOrStandardizationKktStillHolds) {
  const kt::Problem prob = kt::ar1_problem(60, 15, 0.5, 9);
  kp::TraceOptions opt;
  opt.with_intercept = false;
  opt.standardize = false;
  const kp::Path<double> path = kp::trace<double>(prob.x, prob.y, opt);
  const kt::Centred c = kt::centre(prob.x, prob.y, false, false);
  for (double lambda : random_penalties(path.lambda_max(), 5, 20)) {
    const auto s = path.at_penalty(lambda);
    EXPECT_EQ(s.intercept, 0.0);
    // Well-conditioned design: 1e-9 relative (see kCases).
    EXPECT_LE(kt::kkt_violation(c.z, c.y, s.coefficients, lambda), 1e-9);
  }
  // Without an intercept lambda_max is max |x_j^T y| (DESIGN.md, s_j = 1).
  EXPECT_NEAR(path.lambda_max(), (prob.x.transpose() * prob.y).cwiseAbs().maxCoeff(),
              1e-12 * path.lambda_max());
}

TEST(PathCore, LambdaMaxFollowsTheDocumentedScaling) {
  // DESIGN.md: lambda_max = max_j |x_j^T y| / s_j on centred data, with s_j the
  // root sum of squares of the centred column.
  const kt::Problem prob = kt::ar1_problem(50, 8, 0.2, 4);
  const kp::Path<double> path = kp::trace<double>(prob.x, prob.y);
  const kt::Centred c = kt::centre(prob.x, prob.y, true, true);
  EXPECT_NEAR(path.lambda_max(), (c.z.transpose() * c.y).cwiseAbs().maxCoeff(), 1e-12 * path.lambda_max());
  EXPECT_EQ(path.knots().front().event, kp::EventKind::start);
  EXPECT_TRUE(path.knots().front().coefficients.empty());
  EXPECT_EQ(path.knots().back().event, kp::EventKind::end);
  EXPECT_EQ(path.knots().back().penalty, 0.0);
}

TEST(PathCore, AuditLogIsComplete) {
  const kt::Problem prob = kt::ar1_problem(40, 25, 0.9, 12);
  const kp::Path<double> path = kp::trace<double>(prob.x, prob.y);
  std::vector<int> state(25, 0);  // 0 inactive, +-1 active with that sign
  const auto& knots = path.knots();
  for (std::size_t k = 1; k < knots.size(); ++k) {
    const auto& e = knots[k];
    if (e.event == kp::EventKind::enter) {
      ASSERT_GE(e.predictor, 0);
      EXPECT_EQ(state[static_cast<std::size_t>(e.predictor)], 0) << "entered twice";
      state[static_cast<std::size_t>(e.predictor)] = e.sign;
      // Just below the knot the new coefficient has the recorded sign.
      const double below = e.penalty - 1e-6 * (e.penalty - knots.back().penalty);
      const double coef = path.at_penalty(below).coefficients(e.predictor);
      EXPECT_EQ(coef > 0 ? 1 : -1, e.sign) << "step " << e.step;
      // The correlation reported with the event is a correlation.
      EXPECT_LE(std::abs(e.correlation), 1.0 + 1e-12);
      EXPECT_GT(std::abs(e.correlation), 0.0);
    } else if (e.event == kp::EventKind::leave) {
      EXPECT_EQ(state[static_cast<std::size_t>(e.predictor)], e.sign) << "left without entering";
      state[static_cast<std::size_t>(e.predictor)] = 0;
      EXPECT_EQ(path.at_penalty(e.penalty).coefficients(e.predictor), 0.0);
    }
    // The active count follows the events.
    Index active = 0;
    for (int s : state) active += s != 0;
    if (e.event == kp::EventKind::enter || e.event == kp::EventKind::leave) {
      EXPECT_EQ(e.active_count, active);
    }
    EXPECT_EQ(e.step, static_cast<Index>(k));
  }
  // Every nonzero coefficient at the end was announced by an enter event.
  const Vec end = path.dense_coefficients(knots.size() - 1);
  for (Index j = 0; j < 25; ++j)
    if (end(j) != 0) {
      EXPECT_NE(state[static_cast<std::size_t>(j)], 0);
    }
  EXPECT_EQ(path.events().size(), knots.size() - 2);
}

TEST(PathCore, QueriesAtPenaltyBudgetAndFraction) {
  const kt::Problem prob = kt::ar1_problem(80, 12, 0.4, 21);
  const kp::Path<double> path = kp::trace<double>(prob.x, prob.y);
  // Above lambda_max everything penalized is zero.
  const auto top = path.at_penalty(2 * path.lambda_max());
  EXPECT_EQ(top.coefficients.cwiseAbs().maxCoeff(), 0.0);
  EXPECT_NEAR(top.intercept, prob.y.mean(), 1e-12 * std::abs(prob.y.mean()));
  EXPECT_THROW((void)path.at_penalty(-1.0), kp::invalid_query);
  EXPECT_THROW((void)path.at_relative_budget(1.5), kp::invalid_query);
  EXPECT_THROW((void)path.at_budget(-0.1), kp::invalid_query);
  // A budget and the penalty it maps to describe the same point.
  for (double lambda : random_penalties(path.lambda_max(), 77, 20)) {
    const auto s = path.at_penalty(lambda);
    const auto t = path.at_budget(s.penalized_l1);
    EXPECT_NEAR(t.penalty, lambda, 1e-9 * path.lambda_max());
    EXPECT_LE((t.coefficients - s.coefficients).cwiseAbs().maxCoeff(),
              1e-9 * std::max(1.0, s.coefficients.cwiseAbs().maxCoeff()));
    EXPECT_NEAR(path.penalized_l1(t.coefficients), s.penalized_l1, 1e-9 * std::max(1.0, s.penalized_l1));
  }
  // Fractions of the final norm: 0 is the start, 1 the end.
  EXPECT_EQ(path.at_relative_budget(0.0).coefficients.cwiseAbs().maxCoeff(), 0.0);
  EXPECT_EQ(path.at_relative_budget(1.0).penalty, 0.0);
  const auto half = path.at_relative_budget(0.5);
  EXPECT_NEAR(half.penalized_l1, 0.5 * path.knots().back().penalized_l1, 1e-9 * path.knots().back().penalized_l1);
  // A budget beyond the final norm gives the end, flagged.
  EXPECT_TRUE(path.at_budget(2 * path.knots().back().penalized_l1).beyond_path);
  // Predictions are intercept + X beta.
  const double lambda = 0.3 * path.lambda_max();
  const auto s = path.at_penalty(lambda);
  const Vec pred = path.predict(prob.x.topRows(5), lambda).values;
  for (Index i = 0; i < 5; ++i)
    EXPECT_NEAR(pred(i), s.intercept + prob.x.row(i).dot(s.coefficients), 1e-12 * (1 + std::abs(pred(i))));
  EXPECT_THROW((void)path.predict(prob.x.leftCols(3), lambda), kp::invalid_query);
  // Active set at a penalty matches the nonzero coefficients.
  for (Index j : path.active_at(lambda)) EXPECT_NE(s.coefficients(j), 0.0);
}

// Issue 18, point 6: above lambda_max the first knot's solution is the
// exact answer, and the answer names the penalty asked (before, it named
// lambda_max, so a caller could not tell what it had been given).
TEST(PathCore, AbovePenaltyMaxTheAnswerIsExactAndNamesThePenaltyAsked) {
  const kt::Problem prob = kt::ar1_problem(40, 6, 0.4, 5);
  const kp::Path<double> path = kp::trace<double>(prob.x, prob.y);
  const double above = 3 * path.lambda_max();
  const auto s = path.at_penalty(above);
  EXPECT_EQ(s.penalty, above);
  EXPECT_FALSE(s.beyond_path);
  EXPECT_EQ(s.coefficients.cwiseAbs().maxCoeff(), 0.0);
  EXPECT_EQ(s.intercept, path.knots().front().intercept);
  EXPECT_EQ(path.at_mu(path.mu_of(above)).coefficients.cwiseAbs().maxCoeff(), 0.0);
  EXPECT_EQ(path.at_penalty(path.lambda_max()).penalty, path.lambda_max());
}

// Issue 18, point 7: HeldOut::step names the knot where the column was held
// out, the last knot at or above its penalty. Before, it was the row the
// column's entry would have taken: after saturation (p > n) a row past the
// end of the table or one at a lower penalty.
TEST(PathCore, HeldOutStepIsTheKnotWhereItHappened) {
  const kt::Problem prob = kt::ar1_problem(12, 40, 0.2, 7, 3);
  const kp::Path<double> path = kp::trace<double>(prob.x, prob.y);
  ASSERT_TRUE(path.saturation_step().has_value());
  ASSERT_GE(path.held_out().size(), 2u);
  const auto& knots = path.knots();
  for (const auto& h : path.held_out()) {
    const auto step = static_cast<std::size_t>(h.step);
    ASSERT_LT(step, knots.size());
    EXPECT_GE(knots[step].penalty, h.penalty);
    if (step + 1 < knots.size()) {
      EXPECT_LT(knots[step + 1].penalty, h.penalty);
    }
  }
}

TEST(PathCore, EarlyStopIsFlaggedBelowTheLastKnot) {
  const kt::Problem prob = kt::ar1_problem(80, 12, 0.4, 21);
  kp::TraceOptions opt;
  opt.max_knots = 3;
  const kp::Path<double> path = kp::trace<double>(prob.x, prob.y, opt);
  EXPECT_EQ(path.stop_reason(), kp::StopReason::max_knots);
  EXPECT_EQ(path.knots().back().event, kp::EventKind::stop);
  const auto below = path.at_penalty(0.0);
  EXPECT_TRUE(below.beyond_path);
  EXPECT_EQ(below.penalty, path.knots().back().penalty);
  const auto above = path.at_penalty(path.knots().back().penalty * 1.0000001);
  EXPECT_FALSE(above.beyond_path);
}

TEST(PathCore, TiedEntriesWhoseJointDirectionBreaksASignStayOut) {
  // Found by the tracer fuzzer (tests/fuzz): x0 and x3 reach the boundary at
  // the same knot; adding both gives x0 a direction against its sign, so the
  // lasso path must keep x0 out (it enters later with the other sign). Before
  // the fix both entered and KKT failed by 3.86 at the next knot. Integer
  // data and four columns: rounding is ~1e-15 absolute; relative to the
  // checker's floor (1e-4 lambda_max near penalty 0) that is ~1e-12, so
  // 1e-10 is rounding room and still 1e10 times below the bug.
  kp::Matrix<double> x(10, 4);
  x << -3, -3, -3, 1, -1, 0, -2, 0, 2, 2, -1, -1, 3, -2, -2, -2, 3, 1, -1, -1, 3, 1, -1, -3, -1, -2, -1, 2,
      -2, -2, 1, 0, 0, -3, -3, 1, -1, -2, -3, 1;
  const Vec y = Vec::Ones(10);
  kp::TraceOptions opt;
  opt.with_intercept = false;
  opt.standardize = false;
  for (kp::Storage storage : {kp::Storage::dense, kp::Storage::gram}) {
    opt.storage = storage;
    const kp::Path<double> path = kp::trace<double>(x, y, opt);
    for (std::size_t k = 0; k < path.knots().size(); ++k)
      EXPECT_LE(kt::kkt_violation(x, y, path.dense_coefficients(k), path.knots()[k].penalty), 1e-10) << "knot " << k;
    for (double lambda : random_penalties(path.lambda_max(), 3, 30))
      EXPECT_LE(kt::kkt_violation(x, y, path.at_penalty(lambda).coefficients, lambda), 1e-10);
  }
}
