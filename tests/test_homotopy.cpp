// The homotopy's steps that can be checked alone (homotopy.hpp): the error
// estimate policy, and one run of the Homotopy class over an operator built
// by hand.
#include <gtest/gtest.h>

#include <limits>

#include <knotpath/knotpath.hpp>

namespace kp = knotpath;
using kp::Index;

namespace {
constexpr double kEps = std::numeric_limits<double>::epsilon();
}

TEST(ErrorEstimate, TakesTheLargestTermAndCarriesItForward) {
  // Terms as documented in homotopy.hpp: condition * eps, centring * eps,
  // drift / lambda_max, tie decisions * eps, and the previous knot's value.
  kp::detail::ErrorEstimate estimate(kEps, 10.0);
  estimate.set_penalty_scale(100.0);
  EXPECT_EQ(estimate.next_knot(1.0), 10.0 * kEps);     // centring dominates a condition of 1
  EXPECT_EQ(estimate.next_knot(1e6), 1e6 * kEps);      // a worse factor
  EXPECT_EQ(estimate.next_knot(1.0), 1e6 * kEps);      // carried after the factor recovers
  estimate.note_drift(1e-6);                            // absolute; relative to lambda_max 100
  EXPECT_EQ(estimate.next_knot(1.0), 1e-8);
  estimate.note_tie_decision(1e12);
  EXPECT_EQ(estimate.next_knot(1.0), 1e12 * kEps);
}

TEST(ErrorEstimate, DriftCountsNothingBeforeTheScaleIsKnown) {
  // lambda_max 0 (nothing can enter) leaves the drift term out rather than
  // dividing by zero.
  kp::detail::ErrorEstimate estimate(kEps, 1.0);
  estimate.note_drift(1.0);
  EXPECT_EQ(estimate.next_knot(2.0), 2.0 * kEps);
}

TEST(Homotopy, RunsOverAnOperatorBuiltByHand) {
  // Two orthonormal prepared columns and y = 3 z_0 + 1 z_1: the lasso path
  // enters z_0 at lambda 3, z_1 at lambda 1, and ends at (3, 1) (for
  // orthonormal columns the lasso solution is soft thresholding of Z^T y,
  // Tibshirani 1996, JRSS B 58(1), section 2.2, from memory).
  kp::Matrix<double> g = kp::Matrix<double>::Identity(2, 2);
  kp::Vector<double> zy(2);
  zy << 3.0, 1.0;
  const kp::GramDesign<double> design(g, zy, 10.0, 5);
  kp::Preparation<double> prep;
  prep.observations = prep.used_observations = 5;
  prep.predictors = 2;
  prep.intercept = false;
  prep.weight_sum = 5;
  prep.means = kp::Vector<double>::Zero(2);
  prep.scales = kp::Vector<double>::Ones(2);
  prep.columns = {0, 1};
  prep.penalty_weights = {1.0, 1.0};
  prep.constraints = {kp::SignConstraint::none, kp::SignConstraint::none};
  kp::TraceOptions options;
  options.validate(2);
  const kp::TracedKnots<double> traced = kp::Homotopy<kp::GramDesign<double>>(design, prep, options).run();
  ASSERT_EQ(traced.knots.size(), 4u);  // start, enter, enter, end
  EXPECT_EQ(traced.reason, kp::StopReason::completed);
  EXPECT_EQ(traced.knots[0].penalty, 3.0);
  EXPECT_EQ(traced.knots[1].event, kp::EventKind::enter);
  EXPECT_EQ(traced.knots[1].predictor, 0);
  EXPECT_EQ(traced.knots[2].predictor, 1);
  EXPECT_DOUBLE_EQ(traced.knots[2].penalty, 1.0);
  EXPECT_EQ(traced.knots[3].event, kp::EventKind::end);
  ASSERT_EQ(traced.knots[3].coefficients.size(), 2u);
  EXPECT_DOUBLE_EQ(traced.knots[3].coefficients[0].second, 3.0);
  EXPECT_DOUBLE_EQ(traced.knots[3].coefficients[1].second, 1.0);
  EXPECT_NEAR(traced.knots[3].rss, 0.0, 1e-12);  // ||y||^2 = 10 = 3^2 + 1^2 (a few roundings of size 10 eps)
}
