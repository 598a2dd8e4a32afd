// Tests of cross_validation.hpp and criteria.hpp: the exact cross-validation curve, its minimizer
// and the parsimonious (one-standard-error) choice, the size-free penalty, thread independence, and
// Cp/AIC/BIC along the path; plus the published degrees-of-freedom theorem of the lasso as an
// external check.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <optional>
#include <string>
#include <vector>

#include <Eigen/Eigenvalues>

#include <knotpath/criteria.hpp>
#include <knotpath/cross_validation.hpp>
#include <knotpath/detail/random.hpp>
#include <knotpath/statistics.hpp>
#include <knotpath/trace.hpp>

#include "test_support.hpp"

namespace kp = knotpath;
using kp::Index;
using kp::Matrix;
using kp::Vector;

namespace {

/// Rows of x (and entries of y) picked by a predicate on the fold.
struct Split {
  Matrix<double> x_train, x_test;
  Vector<double> y_train, y_test;
};

Split split(const Matrix<double>& x, const Vector<double>& y, const std::vector<long>& fold_of,
            long k) {
  std::vector<Index> train, test;
  for (Index i = 0; i < x.rows(); ++i)
    (fold_of[static_cast<std::size_t>(i)] == k ? test : train).push_back(i);
  Split s;
  s.x_train.resize(static_cast<Index>(train.size()), x.cols());
  s.y_train.resize(static_cast<Index>(train.size()));
  s.x_test.resize(static_cast<Index>(test.size()), x.cols());
  s.y_test.resize(static_cast<Index>(test.size()));
  for (std::size_t r = 0; r < train.size(); ++r) {
    s.x_train.row(static_cast<Index>(r)) = x.row(train[r]);
    s.y_train(static_cast<Index>(r)) = y(train[r]);
  }
  for (std::size_t r = 0; r < test.size(); ++r) {
    s.x_test.row(static_cast<Index>(r)) = x.row(test[r]);
    s.y_test(static_cast<Index>(r)) = y(test[r]);
  }
  return s;
}

/// Direct cross-validation error from separately traced fold paths: each
/// fold's path is traced here on a copy of its training rows (not through
/// zero weights, as the library does), queried at lambda_k = mu * sqrt(n_k),
/// and its held-out squared errors are summed.
struct DirectCv {
  std::vector<Split> splits;
  std::vector<kp::Path<double>> paths;
  double n = 0;

  DirectCv(const Matrix<double>& x, const Vector<double>& y, const std::vector<long>& fold_of,
           const kp::TraceOptions& options) {
    long top = *std::max_element(fold_of.begin(), fold_of.end());
    for (long k = 0; k <= top; ++k) {
      splits.push_back(split(x, y, fold_of, k));
      paths.push_back(kp::trace<double>(splits.back().x_train, splits.back().y_train, options));
    }
    n = static_cast<double>(x.rows());
  }
  std::vector<double> fold_errors(double mu) const {
    std::vector<double> out;
    for (std::size_t k = 0; k < splits.size(); ++k) {
      const double lambda = mu * std::sqrt(static_cast<double>(splits[k].x_train.rows()));
      const Vector<double> pred = paths[k].predict(splits[k].x_test, lambda).values;
      out.push_back((splits[k].y_test - pred).squaredNorm() /
                    static_cast<double>(splits[k].y_test.size()));
    }
    return out;
  }
  double error(double mu) const {
    const auto e = fold_errors(mu);
    double sum = 0;
    for (std::size_t k = 0; k < e.size(); ++k)
      sum += e[k] * static_cast<double>(splits[k].y_test.size());
    return sum / n;
  }
};

}  // namespace

// The exact minimizer must be at least as good as every point of a fine
// grid (the grid cannot beat an exact minimum), and the grid's best value
// can only exceed it by what the curve can rise over half a grid step.
TEST(CrossValidation, ExactMinimumIsNeverAboveAFineGridAndWithinItsResolution) {
  const auto prob = kp::testing::ar1_problem(60, 8, 0.5, 11, 3, 2.0);
  kp::CrossValidationOptions cv;
  cv.folds = 5;
  cv.seed = 7;
  const auto result = kp::cross_validate<double>(prob.x, prob.y, {}, cv);
  const DirectCv direct(prob.x, prob.y, result.fold_of, {});

  const int points = 100000;
  const double lo = result.mu_low, hi = result.mu_high;
  const double h = (hi - lo) / (points - 1);
  double grid_min = std::numeric_limits<double>::infinity(), slope = 0, previous = 0;
  for (int g = 0; g < points; ++g) {
    const double mu = lo + h * g;
    const double e = direct.error(mu);
    grid_min = std::min(grid_min, e);
    if (g > 0) slope = std::max(slope, std::abs(e - previous) / h);
    previous = e;
  }
  const double exact = result.minimum.error;
  // The exact value agrees with a direct evaluation at its own mu: both sum
  // about 60 squared residuals of size ~4, so 1e-10 relative is generous
  // against double rounding (~1e-14).
  EXPECT_NEAR(direct.error(result.minimum.mu), exact, 1e-10 * exact);
  // Never above the grid minimum (up to the same rounding allowance).
  EXPECT_LE(exact, grid_min + 1e-10 * exact);
  // Within grid resolution: the nearest grid point is at most h/2 away and
  // the curve's slope is at most `slope` (largest secant slope on the grid;
  // the curve is piecewise quadratic, so doubling it covers the true
  // derivative between grid points).
  EXPECT_LE(grid_min - exact, 2.0 * slope * h / 2.0 + 1e-10 * exact);
  EXPECT_GT(result.pieces.size(), 10u);  // a real merged curve, not a trivial one
}

// The parsimonious choice: the largest mu whose error is within one
// standard error of the minimum (Hastie, Tibshirani & Friedman, The
// Elements of Statistical Learning, section 7.10).
TEST(CrossValidation, ParsimoniousChoiceIsTheLargestPenaltyWithinOneStandardError) {
  const auto prob = kp::testing::ar1_problem(80, 10, 0.3, 5, 4, 3.0);
  kp::CrossValidationOptions cv;
  cv.folds = 8;
  const auto result = kp::cross_validate<double>(prob.x, prob.y, {}, cv);
  const DirectCv direct(prob.x, prob.y, result.fold_of, {});

  // The standard error equals sd / sqrt(K) of the fold errors here (equal
  // fold sizes: 80 / 8), computed directly.
  const auto e = direct.fold_errors(result.minimum.mu);
  double mean = 0, ss = 0;
  for (double v : e) mean += v / static_cast<double>(e.size());
  for (double v : e) ss += (v - mean) * (v - mean);
  const double se =
      std::sqrt(ss / static_cast<double>(e.size() - 1) / static_cast<double>(e.size()));
  EXPECT_NEAR(result.minimum.standard_error, se, 1e-9 * se);  // rounding of 8 sums

  const double threshold = result.minimum.error + result.minimum.standard_error;
  const double tol = 1e-10 * threshold;  // rounding of the direct sums
  EXPECT_GE(result.parsimonious.mu, result.minimum.mu);
  EXPECT_LE(direct.error(result.parsimonious.mu), threshold + tol);
  // Every larger penalty (checked on a fine grid above the choice) is worse than the threshold.
  if (result.parsimonious.mu < result.mu_high) {
    const double step = (result.mu_high - result.parsimonious.mu) / 20000.0;
    for (int g = 1; g <= 20000; ++g)
      ASSERT_GT(direct.error(result.parsimonious.mu + g * step), threshold - tol)
          << "grid point " << g;
  }
  EXPECT_NEAR(result.parsimonious.lambda, result.parsimonious.mu * std::sqrt(80.0),
              1e-14 * result.parsimonious.lambda);
}

// Regression (RELIABILITY.md, "parsimonious choice above its threshold"):
// the search for the largest mu within one standard error solved each
// piece's quadratic and clamped the larger root to the piece's upper end,
// also when both roots lay above it (the piece's parabola, continued past
// its end, dips under the threshold; the curve there belongs to another
// piece). The choice then sat where CV was above the threshold: on this
// design (16 rows, 5 predictors, 4 folds 0,1,2,3,0,1,...; standardized, no
// intercept, plain lasso) at CV 4.541 against the threshold 4.150.
TEST(CrossValidation, ParsimoniousChoiceAboveItsThresholdWhenAPieceDipsPastItsEnd) {
  const double rows[16][6] = {  // x1..x5, y
      {-1.8, 1.0, -1.3, 0.3, 0.7, -1.6}, {0.5, 1.1, -0.9, 0.8, 2.7, -1.0},
      {0.0, 1.6, 1.1, -0.9, -0.9, -0.8}, {-0.3, -0.5, -0.8, -0.0, -0.6, 0.8},
      {0.6, -0.6, 1.0, 0.1, -1.2, 1.8},  {2.3, -0.6, 0.3, -0.1, 1.0, 3.4},
      {-0.7, 0.1, -1.1, -0.7, -1.2, 2.0}, {-0.2, 1.0, -0.7, -0.7, -0.2, -4.0},
      {-0.6, -0.4, -0.2, -0.9, 1.6, 0.9}, {-0.7, -1.1, -0.1, -1.8, 0.2, -1.6},
      {-0.1, -0.2, 0.6, 1.0, -0.3, -1.4}, {0.4, 0.6, -0.7, -1.1, -1.8, 0.2},
      {1.5, 0.4, 0.8, -0.8, 0.8, 3.3},   {0.5, -1.0, 1.7, 0.5, 0.7, 3.4},
      {-0.4, -0.9, -0.5, 0.7, -0.8, 1.4}, {-0.1, 1.1, -0.3, 0.1, -2.8, -1.8}};
  Matrix<double> x(16, 5);
  Vector<double> y(16);
  for (Index i = 0; i < 16; ++i) {
    for (Index j = 0; j < 5; ++j) x(i, j) = rows[i][j];
    y(i) = rows[i][5];
  }
  kp::TraceOptions o;
  o.with_intercept = false;
  kp::CrossValidationOptions cv;
  for (long i = 0; i < 16; ++i) cv.fold_of.push_back(i % 4);
  const auto result = kp::cross_validate<double>(x, y, o, cv);
  const double threshold = result.minimum.error + result.minimum.standard_error;
  const double tol = 1e-12 * threshold;  // rounding of a root and of 16 squared residuals
  // The rule, on the curve evaluated fold by fold (not the merged pieces).
  EXPECT_LE(result.error_at_mu(result.parsimonious.mu), threshold + tol);
  EXPECT_DOUBLE_EQ(result.parsimonious.error, result.error_at_mu(result.parsimonious.mu));
  for (int g = 1; g <= 5000; ++g) {
    const double mu =
        result.parsimonious.mu + (result.mu_high - result.parsimonious.mu) * g / 5000.0;
    ASSERT_GT(result.error_at_mu(mu), threshold - tol) << "mu " << mu;
  }
  // The same rule from separately traced folds (no shared curve code).
  const DirectCv direct(x, y, result.fold_of, o);
  EXPECT_NEAR(direct.error(result.parsimonious.mu), result.parsimonious.error,
              1e-10 * threshold);
}

// The piece search on its own: q(s) = (s - 2)^2 dips under 0.5 only for s in
// [2 - sqrt(0.5), 2 + sqrt(0.5)], wholly above the piece's s in [0, 1].
TEST(CrossValidation, PieceSearchFindsNothingWhenTheDipLiesAboveThePiece) {
  kp::CurvePiece<double> q;
  q.mu_high = 1.0;
  q.constant = 4.0;
  q.linear = -4.0;
  q.quadratic = 1.0;
  EXPECT_FALSE(kp::detail::largest_at_most(q, 0.5).has_value());
  // Threshold 1.5: q(1) = 1 is within it, so the whole piece is.
  EXPECT_EQ(kp::detail::largest_at_most(q, 1.5), std::optional<double>(1.0));
  // A dip below the piece: q(s) = (s + 2)^2 is under 0.5 only for s < 0.
  q.linear = 4.0;
  EXPECT_FALSE(kp::detail::largest_at_most(q, 0.5).has_value());
  // A dip inside it: q(s) = (s - 0.25)^2 <= 0.01 on [0.15, 0.35].
  q.constant = 0.0625;
  q.linear = -0.5;
  const auto inside = kp::detail::largest_at_most(q, 0.01);
  ASSERT_TRUE(inside.has_value());
  EXPECT_NEAR(*inside, 0.35, 1e-15);
}

// Leave-one-out equals refitting each fold with an independent solver
// (coordinate descent from the test support, sharing no code with the
// tracer), at penalties mu * sqrt(n - 1) (standardized) or mu * (n - 1)
// (not standardized): the size-free penalty of DESIGN.md.
TEST(CrossValidation, LeaveOneOutEqualsDirectRefits) {
  const auto prob = kp::testing::ar1_problem(25, 4, 0.4, 3, 2, 1.0);
  const Index n = prob.x.rows();
  for (bool standardize : {true, false}) {
    kp::TraceOptions options;
    options.standardize = standardize;
    kp::CrossValidationOptions cv;
    cv.leave_one_out = true;
    const auto result = kp::cross_validate<double>(prob.x, prob.y, options, cv);
    ASSERT_EQ(result.folds.size(), static_cast<std::size_t>(n));
    for (double fraction : {0.9, 0.5, 0.2, 0.05, 0.0}) {
      const double mu = fraction * result.mu_high;
      std::vector<double> errors;
      for (Index i = 0; i < n; ++i) {
        std::vector<long> fold_of(static_cast<std::size_t>(n), 0);
        fold_of[static_cast<std::size_t>(i)] = 1;
        const Split s = split(prob.x, prob.y, fold_of, 1);
        const auto c = kp::testing::centre(s.x_train, s.y_train, true, standardize);
        const double m = static_cast<double>(n - 1);
        const double lambda = mu * (standardize ? std::sqrt(m) : m);
        const Vector<double> b = kp::testing::coordinate_descent(c.z, c.y, lambda);
        const Vector<double> beta = b.cwiseQuotient(c.scale);
        const double intercept = c.ymean - c.mean.dot(beta);
        const double r = s.y_test(0) - intercept - s.x_test.row(0).dot(beta);
        errors.push_back(r * r);
      }
      double mean = 0, ss = 0;
      for (double e : errors) mean += e / static_cast<double>(n);
      for (double e : errors) ss += (e - mean) * (e - mean);
      const double se = std::sqrt(ss / static_cast<double>(n - 1) / static_cast<double>(n));
      // Coordinate descent stops at a relative change of 1e-13; predictions
      // then agree to ~1e-11, so 1e-8 relative leaves a wide margin.
      EXPECT_NEAR(result.error_at_mu(mu), mean, 1e-8 * mean)
          << "standardize " << standardize << " mu " << mu;
      EXPECT_NEAR(result.standard_error_at_mu(mu), se, 1e-8 * mean) << "standardize " << standardize;
      const auto folds = result.fold_errors_at_mu(mu);
      for (Index i = 0; i < n; ++i)
        EXPECT_NEAR(folds[static_cast<std::size_t>(i)], errors[static_cast<std::size_t>(i)],
                    1e-8 * mean);
    }
  }
}

// The size-free penalty makes the curve a property of the per-observation
// problem: doubling every weight doubles n but leaves (1/2n) RSS and the
// fits at each mu unchanged, so the curve must be the same function of mu,
// with and without standardization (DESIGN.md, "Comparing penalties across
// data sets of different size").
TEST(CrossValidation, CurveOnTheSizeFreeAxisIgnoresAUniformWeightScale) {
  const auto prob = kp::testing::ar1_problem(40, 6, 0.5, 21, 3, 1.5);
  for (bool standardize : {true, false}) {
    kp::TraceOptions options;
    options.standardize = standardize;
    kp::CrossValidationOptions cv;
    cv.folds = 4;
    const auto plain = kp::cross_validate<double>(prob.x, prob.y, options, cv);
    const Vector<double> twos = Vector<double>::Constant(40, 2.0);
    const auto doubled = kp::cross_validate<double>(prob.x, prob.y, options, cv, twos);
    ASSERT_EQ(plain.fold_of, doubled.fold_of);
    // Relative rounding of the two computations: ~1e-13; allow 1e-9.
    EXPECT_NEAR(plain.mu_high, doubled.mu_high, 1e-9 * plain.mu_high);
    EXPECT_NEAR(plain.minimum.mu, doubled.minimum.mu, 1e-9 * plain.mu_high);
    EXPECT_NEAR(plain.minimum.error, doubled.minimum.error, 1e-9 * plain.minimum.error);
    for (double fraction : {0.8, 0.4, 0.1, 0.01})
      EXPECT_NEAR(plain.error_at_mu(fraction * plain.mu_high),
                  doubled.error_at_mu(fraction * plain.mu_high), 1e-9 * plain.minimum.error);
    // The full-data penalty scales: lambda = mu * sqrt(n) or mu * n.
    EXPECT_NEAR(doubled.minimum.lambda / plain.minimum.lambda, standardize ? std::sqrt(2.0) : 2.0,
                1e-9);
  }
}

TEST(CrossValidation, ResultsAreIdenticalWithOneAndTwoThreads) {
  const auto prob = kp::testing::ar1_problem(70, 9, 0.6, 4, 4, 2.0);
  kp::CrossValidationOptions cv;
  cv.folds = 7;
  cv.threads = 1;
  const auto one = kp::cross_validate<double>(prob.x, prob.y, {}, cv);
  cv.threads = 2;
  const auto two = kp::cross_validate<double>(prob.x, prob.y, {}, cv);
  ASSERT_EQ(one.pieces.size(), two.pieces.size());
  for (std::size_t i = 0; i < one.pieces.size(); ++i) {
    // Bitwise equality: each fold is computed by the same code on the same
    // data whichever thread runs it, and the merge is sequential.
    EXPECT_EQ(one.pieces[i].mu_high, two.pieces[i].mu_high);
    EXPECT_EQ(one.pieces[i].constant, two.pieces[i].constant);
    EXPECT_EQ(one.pieces[i].linear, two.pieces[i].linear);
    EXPECT_EQ(one.pieces[i].quadratic, two.pieces[i].quadratic);
  }
  EXPECT_EQ(one.minimum.mu, two.minimum.mu);
  EXPECT_EQ(one.minimum.error, two.minimum.error);
  EXPECT_EQ(one.parsimonious.mu, two.parsimonious.mu);
}

TEST(CrossValidation, FoldsFromSeedAreBalancedAndReproducibleAndUserFoldsAreHonoured) {
  kp::CrossValidationOptions cv;
  cv.folds = 4;
  cv.seed = 99;
  const auto a = kp::make_folds<double>(103, cv);
  const auto b = kp::make_folds<double>(103, cv);
  EXPECT_EQ(a, b);
  std::vector<int> count(4, 0);
  for (long f : a) ++count[static_cast<std::size_t>(f)];
  for (int c : count) EXPECT_TRUE(c == 25 || c == 26);  // 103 = 4 * 25 + 3
  cv.seed = 100;
  EXPECT_NE(a, kp::make_folds<double>(103, cv));

  // Rows of weight 0 are never held out.
  Vector<double> w = Vector<double>::Ones(10);
  w(3) = 0;
  cv.folds = 3;
  EXPECT_EQ(kp::make_folds<double>(10, cv, w)[3], -1);

  // A user's fold column is used as given; -1 rows are always trained on.
  const auto prob = kp::testing::ar1_problem(30, 4, 0.2, 8, 2, 1.0);
  kp::CrossValidationOptions user;
  user.fold_of.resize(30);
  for (std::size_t i = 0; i < 30; ++i) user.fold_of[i] = i < 5 ? -1 : static_cast<long>(i % 3);
  const auto result = kp::cross_validate<double>(prob.x, prob.y, {}, user);
  EXPECT_EQ(result.fold_of, user.fold_of);
  ASSERT_EQ(result.folds.size(), 3u);
  for (const auto& f : result.folds)
    for (Index i : f.held_out) EXPECT_GE(i, 5);

  // Invalid folds are refused with the field named.
  user.fold_of.assign(30, 0);
  EXPECT_THROW(kp::cross_validate<double>(prob.x, prob.y, {}, user), kp::invalid_option);
  user.fold_of.assign(30, 0);
  user.fold_of[0] = 2;  // fold 1 is empty
  EXPECT_THROW(kp::cross_validate<double>(prob.x, prob.y, {}, user), kp::invalid_option);
  kp::CrossValidationOptions bad;
  bad.folds = 1;
  EXPECT_THROW(kp::cross_validate<double>(prob.x, prob.y, {}, bad), kp::invalid_option);
  bad.folds = 31;
  EXPECT_THROW(kp::cross_validate<double>(prob.x, prob.y, {}, bad), kp::invalid_option);
  EXPECT_THROW(result.error_at_mu(-1.0), kp::invalid_query);
}

// Cp, AIC and BIC at every knot recomputed from the residuals of each
// knot's coefficients, with sigma^2 from an independent least-squares fit.
TEST(InformationCriteria, ValuesAtKnotsEqualDirectComputationFromResiduals) {
  const auto prob = kp::testing::ar1_problem(50, 6, 0.5, 17, 3, 1.5);
  const auto path = kp::trace<double>(prob.x, prob.y);
  const auto ic = kp::information_criteria<double>(prob.x, prob.y, path);
  const Index n = 50;

  Matrix<double> with_one(n, 7);
  with_one.col(0).setOnes();
  with_one.rightCols(6) = prob.x;
  const Vector<double> ls = with_one.colPivHouseholderQr().solve(prob.y);
  const double sigma2 = (prob.y - with_one * ls).squaredNorm() / static_cast<double>(n - 7);
  EXPECT_EQ(ic.source, kp::NoiseVarianceSource::least_squares);
  EXPECT_EQ(ic.residual_df, n - 7);
  EXPECT_NEAR(ic.noise_variance, sigma2, 1e-10 * sigma2);  // two QR solves, rounding ~1e-14

  ASSERT_EQ(ic.knots.size(), path.knots().size());
  double best_cp = 1e300, best_aic = 1e300, best_bic = 1e300;
  for (std::size_t k = 0; k < ic.knots.size(); ++k) {
    const Vector<double> beta = path.dense_coefficients(k);
    const Vector<double> r =
        prob.y - prob.x * beta - Vector<double>::Constant(n, path.knots()[k].intercept);
    const double rss = r.squaredNorm();
    int nonzero = 0;
    for (Index j = 0; j < beta.size(); ++j) nonzero += beta(j) != 0.0;
    const double d = nonzero + 1.0;  // + intercept
    const double cp = rss / sigma2 - n + 2 * d;
    // AIC with sigma^2 unknown (Akaike 1974, Gaussian likelihood with the
    // variance profiled out: n log(RSS / n) + 2 d up to a constant).
    const double aic = n * std::log(rss / n) + 2 * d;
    const double bic = rss / (n * sigma2) + std::log(static_cast<double>(n)) * d / n;
    // The path's RSS is updated along the homotopy and the direct one is
    // summed from residuals: they agree to ~1e-12 relative; 1e-8 of the
    // value's scale leaves a wide margin.
    EXPECT_NEAR(ic.knots[k].rss, rss, 1e-9 * rss);
    EXPECT_NEAR(ic.knots[k].mallows_cp, cp, 1e-8 * (std::abs(cp) + n));
    EXPECT_NEAR(ic.knots[k].aic, aic, 1e-8 * (std::abs(aic) + n));
    EXPECT_NEAR(ic.knots[k].bic, bic, 1e-8 * bic);
    EXPECT_EQ(ic.knots[k].parameters, nonzero + 1);
    best_cp = std::min(best_cp, cp);
    best_aic = std::min(best_aic, aic);
    best_bic = std::min(best_bic, bic);
  }
  EXPECT_NEAR(ic.knots[ic.best_cp].mallows_cp, best_cp, 1e-8 * (std::abs(best_cp) + n));
  EXPECT_NEAR(ic.knots[ic.best_aic].aic, best_aic, 1e-8 * (std::abs(best_aic) + n));
  EXPECT_NEAR(ic.knots[ic.best_bic].bic, best_bic, 1e-8 * best_bic);
  EXPECT_EQ(ic.sample_size, 50.0);
  // BIC penalizes each parameter more (log 50 > 2): never a larger model.
  EXPECT_LE(ic.knots[ic.best_bic].parameters, ic.knots[ic.best_aic].parameters);
}

TEST(InformationCriteria, NoiseVarianceWhenPredictorsOutnumberRowsAndUnsupportedPaths) {
  const auto prob = kp::testing::ar1_problem(12, 20, 0.3, 9, 2, 0.5);
  const auto path = kp::trace<double>(prob.x, prob.y);
  const auto ic = kp::information_criteria<double>(prob.x, prob.y, path);
  EXPECT_EQ(ic.source, kp::NoiseVarianceSource::sparse_fit);
  EXPECT_GT(ic.noise_variance, 0.0);
  kp::CriteriaOptions given;
  given.noise_variance = 0.25;
  const auto ic2 = kp::information_criteria<double>(prob.x, prob.y, path, given);
  EXPECT_EQ(ic2.source, kp::NoiseVarianceSource::given);
  EXPECT_EQ(ic2.noise_variance, 0.25);

  // An elastic-net path from the path alone: its degrees of freedom need the data.
  kp::TraceOptions ridge;
  ridge.ridge = 0.5;
  EXPECT_THROW(kp::information_criteria(kp::trace<double>(prob.x, prob.y, ridge)),
               kp::invalid_option);
  // Data that are not the path's are refused.
  Vector<double> other = prob.y;
  other(0) += 1.0;
  EXPECT_THROW(kp::information_criteria<double>(prob.x, other, path), kp::invalid_query);
}

// Pure noise with more predictors than rows (sigma^2 = 1, n = 40, p = 80):
// the least-squares fit leaves no residual degrees of freedom. With the
// cross-validated penalty the estimate is RSS / (n - |A| - 1) of the fit
// there (Reid, Tibshirani & Friedman 2016, Statistica Sinica 26, their
// recommended estimator), recomputed here from the data; its mean over 16
// designs is much closer to 1 than the rough sparse-fit rule (largest knot
// with d <= n/2), which the paper's simulations and this one show biased low.
TEST(InformationCriteria, NoiseVarianceWithMorePredictorsThanRowsUsesTheCrossValidatedFit) {
  const Index n = 40, p = 80;
  const int designs = 16;
  double sum_new = 0, sum_old = 0;
  for (int seed = 0; seed < designs; ++seed) {
    kp::detail::SplitMix64 g(700u + static_cast<unsigned>(seed));
    Matrix<double> x(n, p);
    Vector<double> y(n);
    for (Index i = 0; i < n; ++i) {
      for (Index j = 0; j < p; ++j) x(i, j) = g.normal();
      y(i) = g.normal();
    }
    kp::CrossValidationOptions cvo;
    cvo.seed = 11u + static_cast<unsigned>(seed);
    const auto cv = kp::cross_validate<double>(x, y, {}, cvo);
    const auto old_rule = kp::information_criteria<double>(x, y, cv.full_path);
    EXPECT_EQ(old_rule.source, kp::NoiseVarianceSource::sparse_fit);
    kp::CriteriaOptions co;
    co.cross_validated_penalty = cv.minimum.lambda;
    const auto ic = kp::information_criteria<double>(x, y, cv.full_path, co);
    ASSERT_EQ(ic.source, kp::NoiseVarianceSource::cross_validated_fit);
    // Directly: the fit at lambda_cv, its residuals and nonzero count.
    const auto at = cv.full_path.at_penalty(cv.minimum.lambda);
    const Vector<double> r = y - x * at.coefficients - Vector<double>::Constant(n, at.intercept);
    Index active = 0;
    for (Index j = 0; j < p; ++j) active += at.coefficients(j) != 0.0;
    const double expected = r.squaredNorm() / static_cast<double>(n - active - 1);
    EXPECT_NEAR(ic.noise_variance, expected, 1e-9 * expected);
    EXPECT_EQ(ic.residual_df, static_cast<double>(n - active - 1));
    sum_new += ic.noise_variance;
    sum_old += old_rule.noise_variance;
  }
  const double mean_new = sum_new / designs, mean_old = sum_old / designs;
  std::printf("noise variance on pure noise (true 1): mean %.3f (cross-validated fit), %.3f "
              "(sparse-fit rule)\n",
              mean_new, mean_old);
  EXPECT_LT(std::abs(mean_new - 1.0), 0.5 * std::abs(mean_old - 1.0));
  EXPECT_GT(mean_new, 0.75);
}

// Weights are frequency weights (options.hpp, TraceOptions, "Weights"):
// all weights 2 give the noise variance, the sample size and the Cp, AIC and
// BIC choices of the same rows written twice.
TEST(InformationCriteria, WeightsOfTwoEqualDuplicatedRows) {
  const auto prob = kp::testing::ar1_problem(30, 5, 0.4, 23, 3, 2.0);
  const Vector<double> twos = Vector<double>::Constant(30, 2.0);
  const auto weighted_path = kp::trace<double>(prob.x, prob.y, {}, twos);
  const auto weighted = kp::information_criteria<double>(prob.x, prob.y, weighted_path, {}, twos);
  Matrix<double> x2(60, 5);
  x2 << prob.x, prob.x;
  Vector<double> y2(60);
  y2 << prob.y, prob.y;
  const auto doubled_path = kp::trace<double>(x2, y2);
  const auto doubled = kp::information_criteria<double>(x2, y2, doubled_path);
  EXPECT_EQ(weighted.sample_size, 60.0);
  EXPECT_EQ(weighted.observations, 30);
  EXPECT_NEAR(weighted.residual_df, doubled.residual_df, 1e-12);
  EXPECT_NEAR(weighted.noise_variance, doubled.noise_variance, 1e-10 * doubled.noise_variance);
  ASSERT_EQ(weighted.knots.size(), doubled.knots.size());
  EXPECT_EQ(weighted.best_cp, doubled.best_cp);
  EXPECT_EQ(weighted.best_aic, doubled.best_aic);
  EXPECT_EQ(weighted.best_bic, doubled.best_bic);
  for (std::size_t k = 0; k < weighted.knots.size(); ++k) {
    const double cp = doubled.knots[k].mallows_cp;
    EXPECT_NEAR(weighted.knots[k].mallows_cp, cp, 1e-9 * (std::abs(cp) + 60)) << k;
  }
}

// The elastic net's degrees of freedom, tr(Z_A (Z_A'Z_A + ridge I)^-1 Z_A')
// plus the intercept (Zou & Hastie 2005, JRSS B 67; Tibshirani & Taylor 2012,
// Ann. Statist. 40), recomputed from the eigenvalues e of Z_A'Z_A on columns
// prepared here (sum e / (e + ridge)); and least angle regression's, the
// number of steps (active predictors) plus the intercept (Efron, Hastie,
// Johnstone & Tibshirani 2004, Ann. Statist. 32, section 4).
TEST(InformationCriteria, DegreesOfFreedomOfTheElasticNetAndLeastAngleRegression) {
  const auto prob = kp::testing::ar1_problem(40, 6, 0.6, 37, 3, 1.0);
  kp::TraceOptions ridge;
  ridge.ridge = 3.0;
  const auto path = kp::trace<double>(prob.x, prob.y, ridge);
  const auto ic = kp::information_criteria<double>(prob.x, prob.y, path);
  const kp::testing::Centred c = kp::testing::centre(prob.x, prob.y, true, true);
  ASSERT_EQ(ic.knots.size(), path.knots().size());
  bool shrunk = false;
  for (std::size_t k = 0; k < ic.knots.size(); ++k) {
    const auto& nz = path.knots()[k].coefficients;
    Matrix<double> za(40, static_cast<Index>(nz.size()));
    for (std::size_t a = 0; a < nz.size(); ++a) za.col(static_cast<Index>(a)) = c.z.col(nz[a].first);
    double df = 1.0;  // intercept
    if (!nz.empty()) {
      const Eigen::SelfAdjointEigenSolver<Matrix<double>> eig(za.transpose() * za);
      for (Index i = 0; i < eig.eigenvalues().size(); ++i)
        df += eig.eigenvalues()(i) / (eig.eigenvalues()(i) + 3.0);
    }
    EXPECT_NEAR(ic.knots[k].degrees_of_freedom, df, 1e-10) << k;
    EXPECT_LE(ic.knots[k].degrees_of_freedom, static_cast<double>(ic.knots[k].parameters) + 1e-12);
    shrunk = shrunk || df < static_cast<double>(ic.knots[k].parameters) - 0.05;
  }
  EXPECT_TRUE(shrunk);  // the ridge visibly lowers the count

  kp::TraceOptions lar;
  lar.variant = kp::Variant::least_angle;
  const auto lar_path = kp::trace<double>(prob.x, prob.y, lar);
  const auto lar_ic = kp::information_criteria<double>(prob.x, prob.y, lar_path);
  ASSERT_EQ(lar_ic.knots.size(), lar_path.knots().size());
  for (std::size_t k = 0; k < lar_ic.knots.size(); ++k)
    EXPECT_EQ(lar_ic.knots[k].degrees_of_freedom,
              static_cast<double>(lar_path.knots()[k].active_count + 1));
  EXPECT_EQ(lar_ic.knots.back().degrees_of_freedom, 7.0);  // all six predictors and the intercept
}

namespace {

// Criteria computed two ways agree knot by knot: the same knots (events,
// d), RSS, sigma^2 and scores to `tol` relative (Cp relative to |Cp| + n).
void expect_same_criteria(const kp::InformationCriteria<double>& a,
                          const kp::InformationCriteria<double>& b, double tol) {
  EXPECT_EQ(a.source, b.source);
  EXPECT_NEAR(a.residual_df, b.residual_df, 1e-9 * b.residual_df);
  EXPECT_EQ(a.observations, b.observations);
  EXPECT_NEAR(a.noise_variance, b.noise_variance, tol * b.noise_variance);
  ASSERT_EQ(a.knots.size(), b.knots.size());
  const double n = static_cast<double>(b.observations);
  for (std::size_t k = 0; k < b.knots.size(); ++k) {
    EXPECT_EQ(a.knots[k].parameters, b.knots[k].parameters) << k;
    EXPECT_NEAR(a.knots[k].penalty, b.knots[k].penalty, tol * b.knots.front().penalty) << k;
    EXPECT_NEAR(a.knots[k].rss, b.knots[k].rss, tol * b.knots.front().rss) << k;
    EXPECT_NEAR(a.knots[k].mallows_cp, b.knots[k].mallows_cp, tol * (std::abs(b.knots[k].mallows_cp) + n)) << k;
    if (std::isinf(b.knots[k].aic))  // not defined (RSS = 0 or d >= n) in both
      EXPECT_EQ(a.knots[k].aic, b.knots[k].aic) << k;
    else
      EXPECT_NEAR(a.knots[k].aic, b.knots[k].aic, tol * (std::abs(b.knots[k].aic) + n)) << k;
    EXPECT_NEAR(a.knots[k].bic, b.knots[k].bic, tol * b.knots[k].bic) << k;
  }
  EXPECT_EQ(a.best_cp, b.best_cp);
  EXPECT_EQ(a.best_aic, b.best_aic);
  EXPECT_EQ(a.best_bic, b.best_bic);
}

// A design with about half of its entries zero (for the sparse storage).
kp::testing::Problem half_zero_problem(Index n, Index p, unsigned seed) {
  auto prob = kp::testing::ar1_problem(n, p, 0.4, seed, 3, 0.8);
  for (Index i = 0; i < n; ++i)
    for (Index j = 0; j < p; ++j)
      if (std::abs(prob.x(i, j)) < 0.7) prob.x(i, j) = 0.0;
  return prob;
}

}  // namespace

// From the path alone, sigma^2 of a completed path is RSS_end / (n - a_end
// - 1) read off its last knot; on full-rank data that is the residual
// variance of the least-squares fit the data version computes by QR (both
// sum the same residuals, one along the homotopy: they agree to rounding),
// unweighted and weighted.
TEST(InformationCriteria, FromThePathAloneEqualsTheDataVersionOnFullRankData) {
  const auto prob = kp::testing::ar1_problem(50, 6, 0.5, 17, 3, 1.5);
  const auto path = kp::trace<double>(prob.x, prob.y);
  const auto from_data = kp::information_criteria<double>(prob.x, prob.y, path);
  const auto from_path = kp::information_criteria(path);
  EXPECT_EQ(from_path.source, kp::NoiseVarianceSource::least_squares);
  EXPECT_EQ(from_path.residual_df, 50 - 6 - 1);
  expect_same_criteria(from_path, from_data, 1e-10);

  Vector<double> w(50);
  for (Index i = 0; i < 50; ++i) w(i) = i % 5 == 0 ? 0.0 : 0.5 + 0.1 * static_cast<double>(i % 7);
  const auto weighted = kp::trace<double>(prob.x, prob.y, {}, w);
  const auto from_path_w = kp::information_criteria(weighted);
  EXPECT_EQ(from_path_w.observations, 40);  // rows of weight 0 do not count
  expect_same_criteria(from_path_w, kp::information_criteria<double>(prob.x, prob.y, weighted, {}, w), 1e-10);
}

// Paths from a sparse design (trace_sparse) and from sufficient statistics
// (trace_statistics) have no dense data to re-prepare; their criteria from
// the path alone equal those of the dense data's path.
TEST(InformationCriteria, FromSparseAndStreamedPathsEqualThoseOfTheDenseData) {
  const auto prob = half_zero_problem(60, 8, 23);
  const auto dense_path = kp::trace<double>(prob.x, prob.y);
  const auto reference = kp::information_criteria<double>(prob.x, prob.y, dense_path);
  ASSERT_EQ(reference.source, kp::NoiseVarianceSource::least_squares);

  const Eigen::SparseMatrix<double> sx = prob.x.sparseView();
  ASSERT_LT(sx.nonZeros(), 60 * 8 * 3 / 4);  // the storage is sparse indeed
  const auto sparse_path = kp::trace_sparse<double>(sx, prob.y);
  expect_same_criteria(kp::information_criteria(sparse_path), reference, 1e-9);

  // Streamed in blocks of 7 rows, as rows arriving one batch at a time.
  const auto stats = kp::SufficientStatistics<double>::from_rows(prob.x, prob.y, Vector<double>(), 7);
  const auto stats_path = kp::trace_statistics(stats);
  expect_same_criteria(kp::information_criteria(stats_path), reference, 1e-9);
}

// With more predictors than rows a completed path saturates and its last
// knot interpolates (no residual df): the path rule falls back on the same
// sparse fit as the data version, and agrees with it.
TEST(InformationCriteria, FromThePathAloneWithMorePredictorsThanRowsUsesTheSparseFit) {
  const auto prob = kp::testing::ar1_problem(12, 20, 0.3, 9, 2, 0.5);
  const auto path = kp::trace<double>(prob.x, prob.y);
  ASSERT_EQ(path.stop_reason(), kp::StopReason::completed);
  const auto from_path = kp::information_criteria(path);
  EXPECT_EQ(from_path.source, kp::NoiseVarianceSource::sparse_fit);
  expect_same_criteria(from_path, kp::information_criteria<double>(prob.x, prob.y, path), 1e-12);
}

// A given noise variance is used as it is, on any path: Cp, AIC and BIC are
// the formulas of criteria.hpp with that sigma^2 and each knot's RSS and d.
TEST(InformationCriteria, FromThePathAloneWithAGivenNoiseVariance) {
  const auto prob = half_zero_problem(40, 6, 29);
  kp::TraceOptions stop;
  stop.max_knots = 4;  // stopped early: only a given sigma^2 makes criteria possible
  const auto path = kp::trace_sparse<double>(Eigen::SparseMatrix<double>(prob.x.sparseView()), prob.y, stop);
  ASSERT_EQ(path.stop_reason(), kp::StopReason::max_knots);
  kp::CriteriaOptions given;
  given.noise_variance = 0.25;
  const auto ic = kp::information_criteria(path, given);
  EXPECT_EQ(ic.source, kp::NoiseVarianceSource::given);
  EXPECT_EQ(ic.noise_variance, 0.25);
  EXPECT_EQ(ic.residual_df, 0);
  ASSERT_EQ(ic.knots.size(), path.knots().size());
  const double n = 40;
  for (std::size_t k = 0; k < ic.knots.size(); ++k) {
    const auto& knot = path.knots()[k];
    const double d = static_cast<double>(knot.coefficients.size()) + 1.0;
    EXPECT_EQ(ic.knots[k].rss, knot.rss);
    EXPECT_DOUBLE_EQ(ic.knots[k].mallows_cp, knot.rss / 0.25 - n + 2 * d);
    EXPECT_DOUBLE_EQ(ic.knots[k].aic, n * std::log(knot.rss / n) + 2 * d);  // sigma^2 not used
    EXPECT_DOUBLE_EQ(ic.knots[k].bic, knot.rss / (n * 0.25) + std::log(n) * d / n);
  }
}

// Without a given value, a path that stopped early is refused: its last knot
// is not the least-squares fit (the data version, which has the data, still
// answers). The message names the option to give. An empty path is refused.
TEST(InformationCriteria, FromThePathAloneRefusesAStoppedPathWithoutANoiseVariance) {
  const auto prob = kp::testing::ar1_problem(40, 6, 0.5, 31, 3, 1.0);
  kp::TraceOptions stop;
  stop.max_knots = 3;
  const auto path = kp::trace<double>(prob.x, prob.y, stop);
  ASSERT_TRUE(path.stopped_early());
  try {
    (void)kp::information_criteria(path);
    FAIL() << "expected invalid_query";
  } catch (const kp::invalid_query& e) {
    EXPECT_NE(std::string(e.what()).find("CriteriaOptions::noise_variance"), std::string::npos) << e.what();
    EXPECT_NE(std::string(e.what()).find("stop-max-knots"), std::string::npos) << e.what();
  }
  EXPECT_EQ(kp::information_criteria<double>(prob.x, prob.y, path).source,
            kp::NoiseVarianceSource::least_squares);
  EXPECT_THROW((void)kp::information_criteria(kp::Path<double>()), kp::invalid_query);
  kp::TraceOptions ridge;
  ridge.ridge = 0.5;
  EXPECT_THROW((void)kp::information_criteria(kp::trace<double>(prob.x, prob.y, ridge)), kp::invalid_option);
}

// Zou, Hastie & Tibshirani (2007), Ann. Statist. 35(5), Theorem 1: at a
// fixed penalty the number of nonzero lasso coefficients is an unbiased
// estimate of the degrees of freedom sum_i cov(yhat_i, y_i) / sigma^2 (plus
// one for the fitted intercept). Monte Carlo with a fixed seed.
TEST(InformationCriteria, NonzeroCountIsUnbiasedForTheDegreesOfFreedom) {
  const auto base = kp::testing::ar1_problem(20, 5, 0.5, 31, 2, 0.0);  // noise 0: the mean
  const Vector<double> mean = base.y;
  const double sigma = 1.0, lambda = 1.2;  // fixed penalty, chosen to leave 2-4 predictors active
  kp::detail::SplitMix64 rng(2007);
  const int reps = 4000;
  std::vector<double> gap(reps);
  double count_mean = 0;
  for (int r = 0; r < reps; ++r) {
    Vector<double> noise(20);
    for (Index i = 0; i < 20; ++i) noise(i) = sigma * rng.normal();
    const Vector<double> y = mean + noise;
    const auto path = kp::trace<double>(base.x, y);
    const auto at = path.at_penalty(lambda);
    const Vector<double> fit = (base.x * at.coefficients).array() + at.intercept;
    int nonzero = 0;
    for (Index j = 0; j < 5; ++j) nonzero += at.coefficients(j) != 0.0;
    // E[(yhat_i - m_i) eps_i] = cov(yhat_i, y_i): the per-replicate Stein sum.
    const double stein = (fit - mean).dot(noise) / (sigma * sigma);
    gap[static_cast<std::size_t>(r)] = stein - (nonzero + 1.0);
    count_mean += (nonzero + 1.0) / reps;
  }
  double m = 0, ss = 0;
  for (double g : gap) m += g / reps;
  for (double g : gap) ss += (g - m) * (g - m);
  const double se = std::sqrt(ss / (reps - 1) / reps);
  // Four Monte Carlo standard errors: a false alarm has probability ~6e-5.
  EXPECT_LT(std::abs(m), 4.0 * se) << "mean df " << count_mean << ", gap " << m << " +- " << se;
  EXPECT_GT(count_mean, 2.0);  // the penalty leaves a nontrivial model
  EXPECT_LT(count_mean, 6.0);
}

// A path that stops early (here after 3 knots) says nothing below its last
// knot: the curve's domain ends there and the choices stay inside it.
TEST(CrossValidation, PathsThatStopEarlyLimitTheDomain) {
  const auto prob = kp::testing::ar1_problem(50, 8, 0.4, 6, 4, 1.0);
  kp::TraceOptions options;
  options.max_knots = 3;
  kp::CrossValidationOptions cv;
  cv.folds = 5;
  const auto result = kp::cross_validate<double>(prob.x, prob.y, options, cv);
  EXPECT_GT(result.mu_low, 0.0);
  double lowest = 0;
  for (const auto& f : result.folds) lowest = std::max(lowest, f.mu_min());
  lowest = std::max(lowest, result.full_path.knots().back().penalty / std::sqrt(50.0));
  EXPECT_EQ(result.mu_low, lowest);
  EXPECT_GE(result.minimum.mu, result.mu_low);
  // lambda = mu * sqrt(n) may round one ulp below the last knot; 1e-12 relative.
  EXPECT_GE(result.minimum.lambda, result.full_path.knots().back().penalty * (1 - 1e-12));
  EXPECT_THROW(result.error_at_mu(0.5 * result.mu_low), kp::invalid_query);
}

namespace {

// Two cross-validations of one table compared piece by piece on a grid of
// the size-free axis: the curve, the standard error and both choices.
void expect_same_curve(const kp::CrossValidation<double>& a, const kp::CrossValidation<double>& b,
                       double tolerance) {
  ASSERT_EQ(a.folds.size(), b.folds.size());
  EXPECT_NEAR(a.mu_high, b.mu_high, tolerance * a.mu_high);
  EXPECT_NEAR(a.minimum.mu, b.minimum.mu, 1e-6 * a.mu_high);
  EXPECT_NEAR(a.minimum.error, b.minimum.error, tolerance * a.minimum.error);
  EXPECT_NEAR(a.parsimonious.mu, b.parsimonious.mu, 1e-6 * a.mu_high);
  for (double fraction : {0.9, 0.5, 0.2, 0.05, 0.01, 0.001}) {
    const double mu = fraction * a.mu_high;
    EXPECT_NEAR(a.error_at_mu(mu), b.error_at_mu(mu), tolerance * a.error_at_mu(mu)) << fraction;
    EXPECT_NEAR(a.standard_error_at_mu(mu), b.standard_error_at_mu(mu),
                1e-6 * a.standard_error_at_mu(mu) + tolerance * a.error_at_mu(mu))
        << fraction;
  }
}

}  // namespace

// On a tall table the folds are traced from statistics (each fold's rows
// summarised once and merged, and the segments read off the held-out rows'
// statistics); forcing the dense storage traces every fold from its rows.
// Both solve the same problems, so the curves agree to rounding. Covers
// weights, rows never held out (fold_of -1) and an unpenalized predictor.
TEST(CrossValidation, FoldsFromStatisticsEqualFoldsFromRows) {
  const auto prob = kp::testing::ar1_problem(400, 12, 0.5, 6, 4, 1.0);
  ASSERT_EQ(kp::choose_storage<double>(400, 12, kp::TraceOptions{}), kp::Storage::gram);
  ASSERT_TRUE(kp::detail::folds_by_statistics<double>(400, 12, 8, 1, kp::TraceOptions{}));
  kp::CrossValidationOptions cv;
  cv.folds = 8;
  kp::TraceOptions dense;
  dense.storage = kp::Storage::dense;
  const auto by_statistics = kp::cross_validate<double>(prob.x, prob.y, {}, cv);
  const auto by_rows = kp::cross_validate<double>(prob.x, prob.y, dense, cv);
  ASSERT_TRUE(by_statistics.statistics.has_value());
  EXPECT_FALSE(by_rows.statistics.has_value());
  expect_same_curve(by_statistics, by_rows, 1e-10);

  kp::detail::SplitMix64 rng(7);
  Vector<double> w(400);
  for (Index i = 0; i < 400; ++i) w(i) = 0.25 + 2.0 * rng.uniform();
  kp::CrossValidationOptions user;
  user.fold_of.resize(400);
  for (std::size_t i = 0; i < 400; ++i) user.fold_of[i] = i % 9 == 0 ? -1 : static_cast<long>(i % 5);
  kp::TraceOptions factors;
  factors.unpenalized = {3};
  kp::TraceOptions factors_dense = factors;
  factors_dense.storage = kp::Storage::dense;
  expect_same_curve(kp::cross_validate<double>(prob.x, prob.y, factors, user, w),
                    kp::cross_validate<double>(prob.x, prob.y, factors_dense, user, w), 1e-10);
}

// The held-out sums read off the statistics cancel when the held-out
// residuals are tiny against the response's spread: here a fit exact to
// 1e-9 on a response of size 1e3, so each sum is about 1e-17 while reading
// it off the statistics would carry an error near u * 1e6 * 50 rows ~ 1e-8.
// The segments are then built from the rows, and the curve agrees with the
// dense route to the paths' own rounding (their coefficients, 1e3 in size,
// differ by ulps: 1e-13 against residuals of 1e-9, so the errors agree to
// a few parts in 1e3, not to 1e-10 as on an ordinary table).
TEST(CrossValidation, NearExactFitBuildsSegmentsFromTheRows) {
  const auto prob = kp::testing::ar1_problem(200, 6, 0.3, 6, 6, 1.0);
  kp::detail::SplitMix64 rng(11);
  Vector<double> y = 1000.0 * (prob.x * Vector<double>::LinSpaced(6, 1.0, 6.0));
  for (Index i = 0; i < y.size(); ++i) y(i) += 1e-9 * (rng.uniform() - 0.5);
  kp::CrossValidationOptions cv;
  cv.folds = 4;
  const auto result = kp::cross_validate<double>(prob.x, y, {}, cv);
  // Directly: the statistics route refuses the fold's sums.
  const auto parts = kp::detail::fold_statistics<double>(prob.x, y, Vector<double>::Ones(200),
                                                         result.fold_of, 4, 1);
  kp::Fold<double> probe = result.folds[0];
  probe.segments.clear();
  EXPECT_FALSE(kp::detail::build_segments_from_statistics(probe, parts[0]));
  kp::TraceOptions dense;
  dense.storage = kp::Storage::dense;
  const auto by_rows = kp::cross_validate<double>(prob.x, y, dense, cv);
  EXPECT_LT(result.minimum.error, 1e-17);  // the held-out error of an exact fit, not a cancelled sum
  EXPECT_NEAR(result.minimum.error, by_rows.minimum.error, 1e-2 * by_rows.minimum.error);
  const double mu = 1e-4 * result.mu_high;  // on the path's last segments, where the fit is exact
  EXPECT_NEAR(result.error_at_mu(mu), by_rows.error_at_mu(mu), 1e-2 * by_rows.error_at_mu(mu));
}

namespace {

// The parts of a cross-validation streamed in uneven pieces of `piece`
// rows through FoldStatisticsAccumulator, each row with its fold number.
kp::FoldParts<double> streamed_parts(const Matrix<double>& x, const Vector<double>& y, const Vector<double>& w,
                                     const std::vector<long>& fold_of, Index piece) {
  kp::FoldStatisticsAccumulator<double> acc(x.cols(), w.size() != 0);
  for (Index start = 0; start < x.rows(); start += piece) {
    const Index m = std::min(piece, x.rows() - start);
    const std::vector<long> folds(fold_of.begin() + start, fold_of.begin() + start + m);
    acc.add(x.middleRows(start, m), Vector<double>(y.segment(start, m)),
            w.size() != 0 ? Vector<double>(w.segment(start, m)) : Vector<double>(), folds);
  }
  return acc.finish();
}

// Two cross-validations made by the same operations: every fold's knots,
// the curve's pieces and both choices equal to the last bit.
void expect_identical(const kp::CrossValidation<double>& a, const kp::CrossValidation<double>& b) {
  ASSERT_EQ(a.folds.size(), b.folds.size());
  for (std::size_t f = 0; f < a.folds.size(); ++f) {
    EXPECT_EQ(a.folds[f].held_out_weight, b.folds[f].held_out_weight) << f;
    EXPECT_EQ(a.folds[f].scale, b.folds[f].scale) << f;
    ASSERT_EQ(a.folds[f].path.knots().size(), b.folds[f].path.knots().size()) << f;
    for (std::size_t j = 0; j < a.folds[f].path.knots().size(); ++j)
      EXPECT_EQ(a.folds[f].path.knots()[j].penalty, b.folds[f].path.knots()[j].penalty) << f << " " << j;
    ASSERT_EQ(a.folds[f].segments.size(), b.folds[f].segments.size()) << f;
    for (std::size_t j = 0; j < a.folds[f].segments.size(); ++j) {
      EXPECT_EQ(a.folds[f].segments[j].a, b.folds[f].segments[j].a) << f << " " << j;
      EXPECT_EQ(a.folds[f].segments[j].c, b.folds[f].segments[j].c) << f << " " << j;
    }
  }
  ASSERT_EQ(a.full_path.knots().size(), b.full_path.knots().size());
  ASSERT_EQ(a.pieces.size(), b.pieces.size());
  for (std::size_t i = 0; i < a.pieces.size(); ++i) {
    EXPECT_EQ(a.pieces[i].mu_high, b.pieces[i].mu_high) << i;
    EXPECT_EQ(a.pieces[i].constant, b.pieces[i].constant) << i;
    EXPECT_EQ(a.pieces[i].linear, b.pieces[i].linear) << i;
    EXPECT_EQ(a.pieces[i].quadratic, b.pieces[i].quadratic) << i;
  }
  EXPECT_EQ(a.minimum.mu, b.minimum.mu);
  EXPECT_EQ(a.minimum.error, b.minimum.error);
  EXPECT_EQ(a.minimum.standard_error, b.minimum.standard_error);
  EXPECT_EQ(a.parsimonious.mu, b.parsimonious.mu);
}

}  // namespace

// Skipped rows count as rows of weight 0: the statistics equal from_rows()
// with those rows weighing 0, bit for bit, across several blocks (height 16
// here, so the skips cross block boundaries).
TEST(CrossValidationFromParts, SkippedRowsAreRowsOfWeightZero) {
  const auto prob = kp::testing::ar1_problem(100, 4, 0.4, 3, 3, 1.0);
  Vector<double> mask = Vector<double>::Zero(100);
  kp::StatisticsAccumulator<double> acc(4, true, 16);
  for (Index i = 0; i < 100; ++i) {
    if (i % 7 == 2 || (i >= 40 && i < 58)) {
      mask(i) = 1.0 + 0.01 * static_cast<double>(i);
      acc.add(prob.x.middleRows(i, 1), Vector<double>(prob.y.segment(i, 1)), Vector<double>(mask.segment(i, 1)));
    } else {
      acc.skip(1);
    }
  }
  const auto streamed = acc.finish();
  const auto direct = kp::SufficientStatistics<double>::from_rows(prob.x, prob.y, mask, 16);
  EXPECT_EQ(streamed.weight_sum, direct.weight_sum);
  EXPECT_EQ(streamed.rows, direct.rows);
  EXPECT_EQ(streamed.means, direct.means);
  EXPECT_EQ(streamed.comoments, direct.comoments);
  EXPECT_EQ(streamed.cross, direct.cross);
  EXPECT_EQ(streamed.response_comoment, direct.response_comoment);
  kp::StatisticsAccumulator<double> unweighted(4, false);
  EXPECT_THROW(unweighted.skip(1), kp::invalid_query);
}

// A fold's part is finished without the whole table's magnitude checks
// (the whole accumulator makes them): a column whose values are tiny on
// one fold's rows only (below check_magnitude's 2^-256, while the column
// as a whole is not) gives that fold its statistics, those of from_rows()
// with the other rows weighing 0, and a fold whose rows all weigh 0 is
// empty. (Regression: every refusal of a part's finish() was read as "no
// row of positive weight", so such a fold came back empty.)
TEST(CrossValidationFromParts, AColumnTinyOnOneFoldsRowsKeepsThatFoldsStatistics) {
  auto prob = kp::testing::ar1_problem(120, 4, 0.3, 5, 2, 1.0);
  std::vector<long> fold_of(120);
  for (std::size_t i = 0; i < 120; ++i) fold_of[i] = static_cast<long>(i % 3);
  Vector<double> on_fold0 = Vector<double>::Zero(120);
  for (Index i = 0; i < 120; i += 3) {
    prob.x(i, 1) *= 1e-80;
    on_fold0(i) = 1.0;
  }
  const auto parts = streamed_parts(prob.x, prob.y, Vector<double>(), fold_of, 25);
  ASSERT_EQ(parts.folds.size(), 3u);
  const auto direct = kp::SufficientStatistics<double>::from_rows(prob.x, prob.y, on_fold0);
  EXPECT_EQ(parts.folds[0].rows, 40);
  EXPECT_EQ(parts.folds[0].weight_sum, direct.weight_sum);
  EXPECT_EQ(parts.folds[0].means, direct.means);
  EXPECT_EQ(parts.folds[0].comoments, direct.comoments);
  EXPECT_EQ(parts.folds[0].cross, direct.cross);

  // Every row of fold 2 weighs 0: that part is empty.
  Vector<double> w = Vector<double>::Ones(120);
  for (Index i = 2; i < 120; i += 3) w(i) = 0.0;
  const auto weighted = streamed_parts(prob.x, prob.y, w, fold_of, 25);
  EXPECT_EQ(weighted.folds[2].rows, 0);
  EXPECT_EQ(weighted.folds[2].weight_sum, 0.0);
}

// Cross-validation from the streamed fold statistics alone against the
// rows route of cross_validate() on a tall table (the Gram route, where
// the rows route too traces every fold from fold_statistics()): the same
// operations on the same parts, so without weights every fold path, the
// curve and both choices agree bit for bit, with the intercept and the
// standardization on and off, seeded folds and a fold column with rows
// never held out.
TEST(CrossValidationFromParts, UnweightedEqualsTheRowsRouteBitForBit) {
  const auto prob = kp::testing::ar1_problem(600, 8, 0.5, 5, 4, 1.0);
  for (bool intercept : {true, false})
    for (bool standardize : {true, false}) {
      kp::TraceOptions options;
      options.with_intercept = intercept;
      options.standardize = standardize;
      ASSERT_TRUE(kp::detail::folds_by_statistics<double>(600, 8, 6, 1, options));
      kp::CrossValidationOptions seeded;
      seeded.folds = 6;
      kp::CrossValidationOptions column;
      column.fold_of.resize(600);
      for (std::size_t i = 0; i < 600; ++i) column.fold_of[i] = i % 11 == 0 ? -1 : static_cast<long>((i / 3) % 4);
      for (const auto* cv : {&seeded, &column}) {
        const auto by_rows = kp::cross_validate<double>(prob.x, prob.y, options, *cv);
        const auto parts = streamed_parts(prob.x, prob.y, Vector<double>(), by_rows.fold_of, 37);
        const auto by_parts = kp::cross_validate<double>(parts, options);
        SCOPED_TRACE(::testing::Message() << intercept << standardize << (cv == &column));
        expect_identical(by_parts, by_rows);
        EXPECT_TRUE(by_parts.fold_of.empty());
      }
    }
}

// With weights the folds' weight sums are added in another order (blocks
// of the statistics, not the rows one by one), so the two routes agree to
// rounding: the curve and both choices within 1e-10 relative.
TEST(CrossValidationFromParts, WeightedAgreesWithTheRowsRouteToRounding) {
  const auto prob = kp::testing::ar1_problem(500, 7, 0.5, 9, 4, 1.0);
  kp::detail::SplitMix64 rng(21);
  Vector<double> w(500);
  for (Index i = 0; i < 500; ++i) w(i) = i % 13 == 0 ? 0.0 : 0.25 + 2.0 * rng.uniform();
  for (bool standardize : {true, false}) {
    kp::TraceOptions options;
    options.standardize = standardize;
    kp::CrossValidationOptions cv;
    cv.folds = 5;
    const auto by_rows = kp::cross_validate<double>(prob.x, prob.y, options, cv, w);
    const auto by_parts = kp::cross_validate<double>(streamed_parts(prob.x, prob.y, w, by_rows.fold_of, 64), options);
    expect_same_curve(by_parts, by_rows, 1e-10);
    ASSERT_EQ(by_parts.folds.size(), by_rows.folds.size());
    for (std::size_t f = 0; f < by_rows.folds.size(); ++f) {
      EXPECT_NEAR(by_parts.folds[f].held_out_weight, by_rows.folds[f].held_out_weight,
                  1e-12 * by_rows.folds[f].held_out_weight);
      ASSERT_EQ(by_parts.folds[f].path.knots().size(), by_rows.folds[f].path.knots().size());
    }
  }
}

// Where the rows route builds a fold's segments from its held-out rows
// (the statistics' sums cancel: a near-exact fit, as in
// NearExactFitBuildsSegmentsFromTheRows) the statistics route has no rows
// and refuses, naming the fold; one fold is refused too.
TEST(CrossValidationFromParts, RefusesWhereItWouldNeedTheRows) {
  const auto prob = kp::testing::ar1_problem(200, 6, 0.3, 6, 6, 1.0);
  kp::detail::SplitMix64 rng(11);
  Vector<double> y = 1000.0 * (prob.x * Vector<double>::LinSpaced(6, 1.0, 6.0));
  for (Index i = 0; i < y.size(); ++i) y(i) += 1e-9 * (rng.uniform() - 0.5);
  const std::vector<long> fold_of = kp::make_folds<double>(200, kp::CrossValidationOptions{});
  try {
    (void)kp::cross_validate<double>(streamed_parts(prob.x, y, Vector<double>(), fold_of, 50), {});
    ADD_FAILURE() << "no refusal";
  } catch (const kp::invalid_data& e) {
    EXPECT_NE(std::string(e.what()).find("cross-validate from the rows"), std::string::npos) << e.what();
  }
  const std::vector<long> one(200, 0);
  EXPECT_THROW((void)kp::cross_validate<double>(streamed_parts(prob.x, prob.y, Vector<double>(), one, 50), {}),
               kp::invalid_option);
}

// The criteria from the table's statistics (least-squares fit by the
// normal equations) agree with the data route (pivoted QR) on a
// well-conditioned table, elastic net included; an ill-conditioned or
// rank-deficient table is refused, so that callers fit from the data
// (Higham 2002, section 20.4: the normal equations square the condition).
TEST(InformationCriteria, FromStatisticsAgreeWithTheDataOrAreRefused) {
  const auto prob = kp::testing::ar1_problem(300, 10, 0.6, 5, 3, 1.0);
  for (double ridge : {0.0, 0.5}) {
    kp::TraceOptions options;
    options.ridge = ridge;
    const auto path = kp::trace<double>(prob.x, prob.y, options);
    const auto stats = kp::SufficientStatistics<double>::from_rows(prob.x, prob.y);
    const auto a = kp::information_criteria(stats, path);
    const auto b = kp::information_criteria<double>(prob.x, prob.y, path);
    EXPECT_NEAR(a.noise_variance, b.noise_variance, 1e-10 * b.noise_variance);
    EXPECT_EQ(a.source, b.source);
    EXPECT_EQ(a.best_cp, b.best_cp);
    EXPECT_EQ(a.best_bic, b.best_bic);
    ASSERT_EQ(a.knots.size(), b.knots.size());
    for (std::size_t i = 0; i < a.knots.size(); ++i) {
      EXPECT_NEAR(a.knots[i].degrees_of_freedom, b.knots[i].degrees_of_freedom, 1e-10);
      EXPECT_NEAR(a.knots[i].mallows_cp, b.knots[i].mallows_cp, 1e-8 * (1 + std::abs(b.knots[i].mallows_cp)));
    }
  }
  // Degree-9 polynomial on [0, 1]: Gram condition far beyond 1e8 / u.
  Matrix<double> poly(60, 9);
  Vector<double> y(60);
  for (Index i = 0; i < 60; ++i) {
    const double t = static_cast<double>(i) / 59.0;
    for (Index j = 0; j < 9; ++j) poly(i, j) = std::pow(t, static_cast<double>(j + 1));
    y(i) = std::sin(3 * t) + 0.01 * std::cos(37.0 * static_cast<double>(i));
  }
  const auto poly_path = kp::trace<double>(poly, y);
  EXPECT_THROW(kp::information_criteria(kp::SufficientStatistics<double>::from_rows(poly, y), poly_path),
               kp::invalid_query);
  EXPECT_NO_THROW(kp::information_criteria<double>(poly, y, poly_path));
  // Two equal columns: rank-deficient.
  Matrix<double> twin = prob.x;
  twin.col(9) = twin.col(8);
  const auto twin_path = kp::trace<double>(twin, prob.y);
  EXPECT_THROW(kp::information_criteria(kp::SufficientStatistics<double>::from_rows(twin, prob.y), twin_path),
               kp::invalid_query);
}
