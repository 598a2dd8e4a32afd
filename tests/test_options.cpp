// Modelling options of the trace: observation weights, penalty scales (and unpenalized, left-out predictors), sign
// constraints, the ridge term (elastic net), stopping rules and validation.
//
// Every check compares the path with an independent construction (replicated
// rows, rescaled columns, the coordinate-descent solver of test_support.hpp)
// or with the KKT conditions of the stated objective; none compares the
// library with itself on the same computation.

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <random>
#include <vector>

#include <Eigen/Cholesky>
#include <Eigen/QR>
#include <knotpath/knotpath.hpp>

#include "test_support.hpp"

namespace {

using knotpath::Index;
using knotpath::Matrix;
using knotpath::Path;
using knotpath::SignConstraint;
using knotpath::StopReason;
using knotpath::TraceOptions;
using knotpath::Vector;
namespace kt = knotpath::testing;

// Tolerance for KKT violations (relative to the penalty, see kkt_violation):
// the path is computed in double precision on well-conditioned designs
// (condition of the active Gram matrix below ~1e2 here), so the correlations
// carry rounding errors of a few hundred ulps of max|Z^T y| after tens of
// knots; 1e-9 leaves a wide margin and still catches any wrong knot, whose
// violation is of order one.
constexpr double kKktTol = 1e-9;

std::vector<int> sign_vector(const TraceOptions& o, Index p) {
  std::vector<int> s(static_cast<std::size_t>(p), 0);
  for (Index j = 0; j < p; ++j) {
    SignConstraint c = o.sign_constraint(static_cast<std::size_t>(j));
    s[static_cast<std::size_t>(j)] = c == SignConstraint::nonnegative ? 1 : c == SignConstraint::nonpositive ? -1 : 0;
  }
  return s;
}

// KKT violation of the path's solution at `lambda`, checked on the prepared
// scale built independently by kt::centre (weighted centring and scaling).
double kkt_at(const Matrix<double>& x, const Vector<double>& y, const TraceOptions& o,
              const Path<double>& path, double lambda, const Vector<double>& w = Vector<double>()) {
  kt::Centred c = kt::centre(x, y, o.with_intercept, o.standardize, w);
  const auto sol = path.at_penalty(lambda);
  return kt::kkt_violation(c.z, c.y, kt::to_prepared(c, sol.coefficients), lambda,
                           kt::penalty_weights(o, static_cast<std::size_t>(x.cols())), o.ridge,
                           sign_vector(o, x.cols()));
}

std::vector<double> random_penalties(double lambda_max, int count, unsigned seed) {
  std::mt19937_64 gen(seed);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  std::vector<double> out;
  for (int i = 0; i < count; ++i) out.push_back(lambda_max * std::pow(u(gen), 2.0));  // denser near 0
  return out;
}

// Every knot and random penalties.
void expect_kkt_along(const Matrix<double>& x, const Vector<double>& y, const TraceOptions& o,
                      const Path<double>& path, const Vector<double>& w = Vector<double>()) {
  for (const auto& k : path.knots())
    EXPECT_LE(kkt_at(x, y, o, path, k.penalty, w), kKktTol) << "knot " << k.step << " penalty " << k.penalty;
  for (double lambda : random_penalties(path.lambda_max(), 25, 7))
    EXPECT_LE(kkt_at(x, y, o, path, lambda, w), kKktTol) << "penalty " << lambda;
}

// ---------------------------------------------------------------- weights

TEST(Weights, IntegerWeightsGiveTheSamePathAsReplicatedRows) {
  kt::Problem prob = kt::ar1_problem(40, 10, 0.5, 11);
  std::mt19937_64 gen(3);
  std::uniform_int_distribution<int> pick(1, 4);
  Vector<double> w(prob.x.rows());
  Index total = 0;
  for (Index i = 0; i < w.size(); ++i) total += static_cast<Index>(w(i) = pick(gen));
  Matrix<double> xr(total, prob.x.cols());
  Vector<double> yr(total);
  Index r = 0;
  for (Index i = 0; i < w.size(); ++i)
    for (int copy = 0; copy < static_cast<int>(w(i)); ++copy, ++r) {
      xr.row(r) = prob.x.row(i);
      yr(r) = prob.y(i);
    }
  for (bool intercept : {true, false}) {
    TraceOptions o;
    o.with_intercept = intercept;
    const auto weighted = knotpath::trace<double>(prob.x, prob.y, o, w);
    const auto replicated = knotpath::trace<double>(xr, yr, o);
    ASSERT_EQ(weighted.knots().size(), replicated.knots().size());
    // Both problems have the same weighted Gram matrix and Z^T y in exact
    // arithmetic; only the summation order differs (rounding ~1e-15 of
    // each entry), so knots agree to 1e-12 relative (the bound).
    for (std::size_t k = 0; k < weighted.knots().size(); ++k) {
      const auto& a = weighted.knots()[k];
      const auto& b = replicated.knots()[k];
      EXPECT_EQ(a.event, b.event);
      EXPECT_EQ(a.predictor, b.predictor);
      EXPECT_NEAR(a.penalty, b.penalty, 1e-12 * weighted.lambda_max()) << "knot " << k;
      if (a.penalty > 1e-3 * weighted.lambda_max()) {
        EXPECT_NEAR(a.penalty / b.penalty, 1.0, 1e-12) << "knot " << k;
      }
      const Vector<double> ca = weighted.dense_coefficients(k), cb = replicated.dense_coefficients(k);
      EXPECT_LE((ca - cb).cwiseAbs().maxCoeff(), 1e-12 * (1.0 + cb.cwiseAbs().maxCoeff())) << "knot " << k;
      EXPECT_NEAR(a.intercept, b.intercept, 1e-12 * (1.0 + std::abs(b.intercept)));
      EXPECT_NEAR(a.rss, b.rss, 1e-12 * replicated.preparation().total_sum_of_squares);
    }
    expect_kkt_along(prob.x, prob.y, o, weighted, w);
  }
}

TEST(Weights, ZeroWeightRowIsIgnored) {
  kt::Problem prob = kt::ar1_problem(30, 6, 0.3, 12);
  // Append two rows with wild values and weight 0: they must not matter.
  Matrix<double> x2(prob.x.rows() + 2, prob.x.cols());
  Vector<double> y2(prob.y.size() + 2);
  x2.topRows(prob.x.rows()) = prob.x;
  y2.head(prob.y.size()) = prob.y;
  x2.row(prob.x.rows()).setConstant(1e6);
  x2.row(prob.x.rows() + 1).setConstant(-3e5);
  y2(prob.y.size()) = -1e7;
  y2(prob.y.size() + 1) = 4e6;
  Vector<double> w = Vector<double>::Ones(y2.size());
  w(y2.size() - 2) = 0.0;
  w(y2.size() - 1) = 0.0;
  const auto with_zero = knotpath::trace<double>(x2, y2, {}, w);
  const auto dropped = knotpath::trace<double>(prob.x, prob.y);
  EXPECT_EQ(with_zero.preparation().used_observations, prob.x.rows());
  ASSERT_EQ(with_zero.knots().size(), dropped.knots().size());
  for (std::size_t k = 0; k < dropped.knots().size(); ++k) {
    // The rows of weight 0 are removed before any arithmetic, so the two
    // computations work on the same numbers; allow rounding-level (1e-13)
    // differences from the order of vectorized sums only.
    EXPECT_NEAR(with_zero.knots()[k].penalty, dropped.knots()[k].penalty, 1e-13 * dropped.lambda_max());
    EXPECT_EQ(with_zero.knots()[k].predictor, dropped.knots()[k].predictor);
    const Vector<double> a = with_zero.dense_coefficients(k), b = dropped.dense_coefficients(k);
    EXPECT_LE((a - b).cwiseAbs().maxCoeff(), 1e-13 * (1.0 + b.cwiseAbs().maxCoeff()));
  }
}

TEST(Weights, FractionalWeightsSatisfyWeightedKkt) {
  kt::Problem prob = kt::ar1_problem(35, 8, 0.6, 13);
  std::mt19937_64 gen(5);
  std::uniform_real_distribution<double> u(0.1, 3.0);
  Vector<double> w(prob.y.size());
  for (Index i = 0; i < w.size(); ++i) w(i) = u(gen);
  TraceOptions o;
  const auto path = knotpath::trace<double>(prob.x, prob.y, o, w);
  EXPECT_EQ(path.stop_reason(), StopReason::completed);
  expect_kkt_along(prob.x, prob.y, o, path, w);
}

// ------------------------------------------------------- penalty scales

TEST(PenaltyScales, SameAsRescalingColumnsByInverseScale) {
  kt::Problem prob = kt::ar1_problem(40, 7, 0.4, 21);
  const std::vector<double> f{0.5, 2.0, 1.0, 3.0, 0.25, 1.5, 4.0};
  // Penalty f_j |beta_j| on column x_j equals penalty |gamma_j| on column
  // x_j / f_j with beta_j = gamma_j / f_j. Without standardization the
  // rescaling is not undone by the preparation, so the two paths coincide.
  TraceOptions o;
  o.standardize = false;
  o.penalty_scales = f;
  Matrix<double> xs = prob.x;
  for (Index j = 0; j < xs.cols(); ++j) xs.col(j) /= f[static_cast<std::size_t>(j)];
  TraceOptions plain;
  plain.standardize = false;
  const auto a = knotpath::trace<double>(prob.x, prob.y, o);
  const auto b = knotpath::trace<double>(xs, prob.y, plain);
  ASSERT_EQ(a.knots().size(), b.knots().size());
  for (std::size_t k = 0; k < a.knots().size(); ++k) {
    EXPECT_EQ(a.knots()[k].predictor, b.knots()[k].predictor);
    // Same problem up to one rounding per entry of the rescaled columns:
    // agreement to 1e-12 relative to lambda_max.
    EXPECT_NEAR(a.knots()[k].penalty, b.knots()[k].penalty, 1e-12 * a.lambda_max());
    Vector<double> gamma = b.dense_coefficients(k);
    for (Index j = 0; j < gamma.size(); ++j) gamma(j) /= f[static_cast<std::size_t>(j)];
    const Vector<double> beta = a.dense_coefficients(k);
    EXPECT_LE((beta - gamma).cwiseAbs().maxCoeff(), 1e-11 * (1.0 + gamma.cwiseAbs().maxCoeff()));
    EXPECT_NEAR(a.knots()[k].penalized_l1, b.knots()[k].penalized_l1, 1e-11 * (1.0 + b.knots()[k].penalized_l1));
  }
  expect_kkt_along(prob.x, prob.y, o, a);

  // With standardization the factor multiplies the standardized penalty:
  // same as tracing the standardized columns divided by f_j unstandardized.
  TraceOptions os;
  os.penalty_scales = f;
  const auto c = knotpath::trace<double>(prob.x, prob.y, os);
  kt::Centred cen = kt::centre(prob.x, prob.y, true, true);
  Matrix<double> zs = cen.z;
  for (Index j = 0; j < zs.cols(); ++j) zs.col(j) /= f[static_cast<std::size_t>(j)];
  const auto d = knotpath::trace<double>(zs, cen.y, plain);
  ASSERT_EQ(c.knots().size(), d.knots().size());
  for (std::size_t k = 0; k < c.knots().size(); ++k) {
    EXPECT_EQ(c.knots()[k].predictor, d.knots()[k].predictor);
    EXPECT_NEAR(c.knots()[k].penalty, d.knots()[k].penalty, 1e-11 * c.lambda_max());
    Vector<double> beta = c.dense_coefficients(k), gamma = d.dense_coefficients(k);
    for (Index j = 0; j < gamma.size(); ++j) gamma(j) /= f[static_cast<std::size_t>(j)] * cen.scale(j);
    EXPECT_LE((beta - gamma).cwiseAbs().maxCoeff(), 1e-10 * (1.0 + gamma.cwiseAbs().maxCoeff()));
  }
}

TEST(PenaltyScales, UnpenalizedPredictorIsAlwaysInAndLambdaMaxUsesPartialResidual) {
  kt::Problem prob = kt::ar1_problem(50, 8, 0.5, 22);
  TraceOptions o;
  o.penalty_scales = std::vector<double>(8, 1.0);
  o.unpenalized = {3};
  o.penalty_scales[5] = 2.0;
  const auto path = knotpath::trace<double>(prob.x, prob.y, o);
  EXPECT_EQ(path.stop_reason(), StopReason::completed);
  for (std::size_t k = 0; k < path.knots().size(); ++k)
    EXPECT_NE(path.dense_coefficients(k)(3), 0.0) << "knot " << k;
  // Independent lambda_max: least squares of the centred response on the
  // centred, standardized column 3, then max_j |z_j^T r| / f_j over the rest.
  kt::Centred c = kt::centre(prob.x, prob.y, true, true);
  const Vector<double> z3 = c.z.col(3);
  const Vector<double> r = c.y - z3 * (z3.dot(c.y) / z3.squaredNorm());
  double lmax = 0;
  const std::vector<double> f = kt::penalty_weights(o, 8);
  for (Index j = 0; j < 8; ++j)
    if (j != 3) lmax = std::max(lmax, std::abs(c.z.col(j).dot(r)) / f[static_cast<std::size_t>(j)]);
  // Two independent double computations of the same inner products: 1e-12 relative.
  EXPECT_NEAR(path.lambda_max(), lmax, 1e-12 * lmax);
  // The start knot already carries the least-squares coefficient of x3.
  const double beta3 = z3.dot(c.y) / z3.squaredNorm() / c.scale(3);
  EXPECT_NEAR(path.dense_coefficients(0)(3), beta3, 1e-12 * std::abs(beta3));
  expect_kkt_along(prob.x, prob.y, o, path);
  // Agreement with coordinate descent at a few penalties (tolerance: CD is
  // run to 1e-13 relative coefficient change; 1e-8 of max |b| covers its
  // stopping error on these well-conditioned designs).
  for (double lambda : random_penalties(path.lambda_max(), 5, 99)) {
    const Vector<double> b = kt::to_prepared(c, path.at_penalty(lambda).coefficients);
    const Vector<double> cd = kt::coordinate_descent(c.z, c.y, lambda, kt::penalty_weights(o, 8));
    EXPECT_LE((b - cd).cwiseAbs().maxCoeff(), 1e-8 * (1.0 + cd.cwiseAbs().maxCoeff()));
  }
}

// The combination rule of TraceOptions::penalty_weights() (common practice:
// an unpenalized predictor has weight 0, a left-out one an infinite weight,
// the others their scale), written out by hand for one mixed set of fields.
TEST(PenaltyScales, WeightsCombineScalesUnpenalizedAndLeftOut) {
  TraceOptions o;
  EXPECT_EQ(o.penalty_weights(3), (std::vector<double>{1.0, 1.0, 1.0}));
  o.penalty_scales = {0.5, 2.0, 3.0, 4.0, 5.0};
  o.unpenalized = {3};
  o.left_out = {1, 4};
  const double inf = std::numeric_limits<double>::infinity();
  EXPECT_EQ(o.penalty_weights(5), (std::vector<double>{0.5, inf, 3.0, 0.0, inf}));
  o.penalty_scales.clear();
  EXPECT_EQ(o.penalty_weights(5), (std::vector<double>{1.0, inf, 1.0, 0.0, inf}));
}

TEST(PenaltyScales, LeftOutPredictorNeverEntersAndIsListed) {
  kt::Problem prob = kt::ar1_problem(40, 6, 0.2, 23);
  TraceOptions o;
  o.left_out = {0};  // x0 carries the largest true effect
  const auto path = knotpath::trace<double>(prob.x, prob.y, o);
  for (std::size_t k = 0; k < path.knots().size(); ++k) EXPECT_EQ(path.dense_coefficients(k)(0), 0.0);
  ASSERT_EQ(path.excluded().size(), 1u);
  EXPECT_EQ(path.excluded()[0].predictor, 0);
  EXPECT_NE(path.excluded()[0].reason.find("left out"), std::string::npos);
  // Same path as dropping the column. The arithmetic is the same up to the
  // order of vectorized sums over a matrix of different width, so agreement
  // is to rounding: 1e-13 relative.
  const auto dropped = knotpath::trace<double>(Matrix<double>(prob.x.rightCols(5)), prob.y);
  ASSERT_EQ(path.knots().size(), dropped.knots().size());
  for (std::size_t k = 0; k < path.knots().size(); ++k) {
    EXPECT_NEAR(path.knots()[k].penalty, dropped.knots()[k].penalty, 1e-13 * path.lambda_max());
    const Vector<double> a = path.dense_coefficients(k).tail(5), b = dropped.dense_coefficients(k);
    EXPECT_LE((a - b).cwiseAbs().maxCoeff(), 1e-13 * (1.0 + b.cwiseAbs().maxCoeff()));
  }
}

TEST(PenaltyScales, HugeFiniteScaleKeepsPredictorOutUntilTheEnd) {
  kt::Problem prob = kt::ar1_problem(40, 5, 0.2, 24);
  TraceOptions o;
  o.penalty_scales = {1e12, 1.0, 1.0, 1.0, 1.0};
  const auto path = knotpath::trace<double>(prob.x, prob.y, o);
  // x0 may enter only when lambda < |c_0| / 1e12, i.e. in the last sliver of
  // the path; at any penalty above 1e-6 lambda_max it is out.
  for (const auto& k : path.knots()) {
    if (k.penalty > 1e-6 * path.lambda_max()) {
      EXPECT_EQ(path.at_penalty(k.penalty).coefficients(0), 0.0);
      EXPECT_LE(kkt_at(prob.x, prob.y, o, path, k.penalty), kKktTol);
    }
  }
  // Below that, the KKT measure relative to lambda loses its meaning (lambda
  // ~1e-12 while lambda f_0 ~ 1); check the end instead: at penalty 0 the
  // fit is ordinary least squares with all five columns (full column rank).
  EXPECT_EQ(path.stop_reason(), StopReason::completed);
  kt::Centred c = kt::centre(prob.x, prob.y, true, true);
  const Vector<double> ls = c.z.colPivHouseholderQr().solve(c.y);
  // Precision limit of a huge finite factor: the knot where x0 enters,
  // lambda_e ~ |c_0| / f_0, carries an absolute rounding error of a few ulps
  // of lambda_max (it is reached by subtracting steps from lambda_max), and
  // the last segment moves along d ~ f_0 G^{-1} s, so the end point has an
  // error ~ f_0 * eps * lambda_max. The bound below is 1e3 f_0 eps relative,
  // which is 2e-3 for f_0 = 1e10 and 2e-7 for f_0 = 1e6 (use an infinite
  // factor, not a huge finite one, to keep a predictor out).
  for (double f0 : {1e6, 1e10}) {
    TraceOptions of;
    of.penalty_scales = {f0, 1.0, 1.0, 1.0, 1.0};
    const auto pf = knotpath::trace<double>(prob.x, prob.y, of);
    const Vector<double> end = kt::to_prepared(c, pf.at_penalty(0.0).coefficients);
    EXPECT_LE((end - ls).cwiseAbs().maxCoeff(), 1e3 * f0 * 2.2e-16 * ls.cwiseAbs().maxCoeff()) << f0;
  }
}

// ------------------------------------------------------ sign constraints

TEST(SignConstraints, NonnegativeForAllSatisfiesConstrainedKkt) {
  kt::Problem prob = kt::ar1_problem(40, 10, 0.7, 31);  // true effects alternate in sign
  TraceOptions o;
  o.sign_constraints = {SignConstraint::nonnegative};
  const auto path = knotpath::trace<double>(prob.x, prob.y, o);
  EXPECT_EQ(path.stop_reason(), StopReason::completed);
  for (std::size_t k = 0; k < path.knots().size(); ++k) {
    EXPECT_GE(path.dense_coefficients(k).minCoeff(), 0.0) << "knot " << k;
    if (path.knots()[k].event == knotpath::EventKind::enter) {
      EXPECT_EQ(path.knots()[k].sign, 1);
    }
  }
  expect_kkt_along(prob.x, prob.y, o, path);
  // Unconstrained has negative coefficients somewhere (so the constraint bites).
  const auto free = knotpath::trace<double>(prob.x, prob.y);
  EXPECT_LT(free.dense_coefficients(free.knots().size() - 1).minCoeff(), 0.0);
}

TEST(SignConstraints, MixedPerPredictorAgreesWithCoordinateDescent) {
  kt::Problem prob = kt::ar1_problem(45, 8, 0.5, 32);
  TraceOptions o;
  o.sign_constraints = {SignConstraint::nonpositive, SignConstraint::none,        SignConstraint::nonnegative,
                        SignConstraint::nonpositive, SignConstraint::nonnegative, SignConstraint::none,
                        SignConstraint::nonpositive, SignConstraint::nonnegative};
  const auto path = knotpath::trace<double>(prob.x, prob.y, o);
  const std::vector<int> s = sign_vector(o, 8);
  for (std::size_t k = 0; k < path.knots().size(); ++k) {
    const Vector<double> b = path.dense_coefficients(k);
    for (Index j = 0; j < 8; ++j) EXPECT_GE(s[static_cast<std::size_t>(j)] * b(j), 0.0);
  }
  expect_kkt_along(prob.x, prob.y, o, path);
  kt::Centred c = kt::centre(prob.x, prob.y, true, true);
  for (double lambda : random_penalties(path.lambda_max(), 8, 5)) {
    const Vector<double> b = kt::to_prepared(c, path.at_penalty(lambda).coefficients);
    const Vector<double> cd = kt::coordinate_descent(c.z, c.y, lambda, {}, 0.0, s);
    // CD stopping error (see PenaltyScales above): 1e-8 of max |b|.
    EXPECT_LE((b - cd).cwiseAbs().maxCoeff(), 1e-8 * (1.0 + cd.cwiseAbs().maxCoeff())) << lambda;
  }
}

TEST(SignConstraints, NoAllowedDirectionGivesEmptyPath) {
  // Response increasing in the only column, coefficient forced nonpositive:
  // the solution is 0 at every penalty, lambda_max = 0.
  Matrix<double> x(5, 1);
  x << 1, 2, 3, 4, 5;
  Vector<double> y = 2.0 * x.col(0);
  TraceOptions o;
  o.sign_constraints = {SignConstraint::nonpositive};
  const auto path = knotpath::trace<double>(x, y, o);
  EXPECT_EQ(path.lambda_max(), 0.0);
  EXPECT_EQ(path.stop_reason(), StopReason::completed);
  for (std::size_t k = 0; k < path.knots().size(); ++k) EXPECT_EQ(path.dense_coefficients(k)(0), 0.0);
  EXPECT_LE(kkt_at(x, y, o, path, 0.0), kKktTol);
}

// ------------------------------------------------------------ elastic net

TEST(ElasticNet, KktAndCoordinateDescentAtRandomPenalties) {
  kt::Problem prob = kt::ar1_problem(30, 12, 0.8, 41);
  for (double ridge : {0.1, 1.0, 25.0}) {
    TraceOptions o;
    o.ridge = ridge;
    const auto path = knotpath::trace<double>(prob.x, prob.y, o);
    EXPECT_EQ(path.stop_reason(), StopReason::completed);
    expect_kkt_along(prob.x, prob.y, o, path);
    kt::Centred c = kt::centre(prob.x, prob.y, true, true);
    for (double lambda : random_penalties(path.lambda_max(), 8, 17)) {
      const Vector<double> b = kt::to_prepared(c, path.at_penalty(lambda).coefficients);
      const Vector<double> cd = kt::coordinate_descent(c.z, c.y, lambda, {}, ridge);
      // CD stopping error (see above): 1e-8 of max |b|.
      EXPECT_LE((b - cd).cwiseAbs().maxCoeff(), 1e-8 * (1.0 + cd.cwiseAbs().maxCoeff()))
          << "ridge " << ridge << " penalty " << lambda;
    }
    // At penalty 0 the elastic net is ridge regression on the prepared
    // columns: (Z^T Z + ridge I) b = Z^T y. Direct solve, 1e-10 relative
    // (condition of Z^T Z + ridge I is below 1e3 here).
    const Vector<double> b0 = kt::to_prepared(c, path.at_penalty(0.0).coefficients);
    Matrix<double> g = c.z.transpose() * c.z;
    g.diagonal().array() += ridge;
    const Vector<double> direct = g.ldlt().solve(c.z.transpose() * c.y);
    EXPECT_LE((b0 - direct).cwiseAbs().maxCoeff(), 1e-10 * direct.cwiseAbs().maxCoeff());
    // The recorded RSS is that of the reported (unrescaled) coefficients.
    const auto& last = path.knots().back();
    EXPECT_NEAR(last.rss, (c.y - c.z * b0).squaredNorm(), 1e-10 * path.preparation().total_sum_of_squares);
  }
}

TEST(ElasticNet, RidgeWithWeightsSignsAndFactorsAgreesWithCoordinateDescent) {
  // p > n: the ridge term makes every active Gram matrix nonsingular, so the
  // elastic net can hold all 20 predictors at once; nothing is held out.
  kt::Problem prob = kt::ar1_problem(12, 20, 0.3, 42);
  std::mt19937_64 gen(8);
  std::uniform_real_distribution<double> u(0.5, 2.0);
  Vector<double> w(12);
  for (Index i = 0; i < 12; ++i) w(i) = u(gen);
  TraceOptions o;
  o.ridge = 0.5;
  o.penalty_scales = std::vector<double>(20, 1.0);
  o.unpenalized = {2};
  o.penalty_scales[7] = 3.0;
  o.sign_constraints = std::vector<SignConstraint>(20, SignConstraint::none);
  o.sign_constraints[4] = SignConstraint::nonnegative;
  o.sign_constraints[9] = SignConstraint::nonpositive;
  const auto path = knotpath::trace<double>(prob.x, prob.y, o, w);
  EXPECT_TRUE(path.held_out().empty());
  EXPECT_EQ(path.stop_reason(), StopReason::completed);
  expect_kkt_along(prob.x, prob.y, o, path, w);
  EXPECT_EQ(path.dense_coefficients(path.knots().size() - 1).cwiseAbs().minCoeff() > 0.0, true)
      << "at penalty 0 with ridge > 0, every unconstrained coefficient is generically nonzero";
  kt::Centred c = kt::centre(prob.x, prob.y, true, true, w);
  for (double lambda : random_penalties(path.lambda_max(), 6, 23)) {
    const Vector<double> b = kt::to_prepared(c, path.at_penalty(lambda).coefficients);
    const Vector<double> cd = kt::coordinate_descent(c.z, c.y, lambda, kt::penalty_weights(o, 20), o.ridge, sign_vector(o, 20));
    EXPECT_LE((b - cd).cwiseAbs().maxCoeff(), 1e-8 * (1.0 + cd.cwiseAbs().maxCoeff())) << lambda;
  }
}

// ---------------------------------------------------------- stopping rules

TEST(Stopping, MaxKnotsIsRecordedAndThePathIsAPrefix) {
  kt::Problem prob = kt::ar1_problem(40, 10, 0.5, 51);
  const auto full = knotpath::trace<double>(prob.x, prob.y);
  ASSERT_GT(full.knots().size(), 6u);
  TraceOptions o;
  o.max_knots = 4;
  const auto path = knotpath::trace<double>(prob.x, prob.y, o);
  EXPECT_EQ(path.stop_reason(), StopReason::max_knots);
  EXPECT_TRUE(path.stopped_early());
  ASSERT_EQ(path.knots().size(), 6u);  // start, 4 event rows, the stop row
  EXPECT_EQ(path.knots().back().event, knotpath::EventKind::stop);
  EXPECT_EQ(knotpath::to_string(path.stop_reason()), "stop-max-knots");
  for (std::size_t k = 0; k < 5; ++k) {
    // Identical computation up to the stop: exact equality.
    EXPECT_EQ(path.knots()[k].penalty, full.knots()[k].penalty);
    EXPECT_EQ(path.dense_coefficients(k), full.dense_coefficients(k));
  }
  EXPECT_TRUE(path.at_penalty(0.0).beyond_path);
}

TEST(Stopping, MinPenaltyIsRecordedAndTheLastKnotIsExact) {
  kt::Problem prob = kt::ar1_problem(40, 10, 0.5, 52);
  const auto full = knotpath::trace<double>(prob.x, prob.y);
  TraceOptions o;
  o.min_penalty = 0.3 * full.lambda_max();
  const auto path = knotpath::trace<double>(prob.x, prob.y, o);
  EXPECT_EQ(path.stop_reason(), StopReason::min_penalty);
  EXPECT_EQ(path.knots().back().event, knotpath::EventKind::stop);
  // The stop row sits at the minimum penalty up to one rounding of lambda - g.
  EXPECT_NEAR(path.knots().back().penalty, o.min_penalty, 1e-14 * full.lambda_max());
  const Vector<double> a = path.dense_coefficients(path.knots().size() - 1);
  const Vector<double> b = full.at_penalty(o.min_penalty).coefficients;
  // Same knots, interpolation vs stepping: 1e-12 relative.
  EXPECT_LE((a - b).cwiseAbs().maxCoeff(), 1e-12 * (1.0 + b.cwiseAbs().maxCoeff()));
  for (const auto& k : path.knots()) EXPECT_GE(k.penalty, o.min_penalty * (1 - 1e-14));
  EXPECT_LE(kkt_at(prob.x, prob.y, o, path, path.knots().back().penalty), kKktTol);

  // A minimum above lambda_max stops at the start.
  TraceOptions high;
  high.min_penalty = 2.0 * full.lambda_max();
  const auto at_start = knotpath::trace<double>(prob.x, prob.y, high);
  EXPECT_EQ(at_start.stop_reason(), StopReason::min_penalty);
  EXPECT_EQ(at_start.knots().back().penalty, full.lambda_max());
}

TEST(Stopping, MaxActiveIsRecordedAndNeverExceeded) {
  kt::Problem prob = kt::ar1_problem(40, 10, 0.5, 53);
  TraceOptions o;
  o.max_active = 3;
  o.unpenalized = {9};  // unpenalized predictors do not count
  const auto path = knotpath::trace<double>(prob.x, prob.y, o);
  EXPECT_EQ(path.stop_reason(), StopReason::max_active);
  EXPECT_EQ(path.knots().back().event, knotpath::EventKind::stop);
  std::size_t most = 0;
  for (std::size_t k = 0; k < path.knots().size(); ++k) {
    const Vector<double> b = path.dense_coefficients(k);
    std::size_t count = 0;
    for (Index j = 0; j < 9; ++j) count += b(j) != 0.0;
    most = std::max(most, count);
  }
  EXPECT_EQ(most, 3u);
  EXPECT_LE(kkt_at(prob.x, prob.y, o, path, path.knots().back().penalty), kKktTol);
}

TEST(Stopping, StepLimitIsRecorded) {
  kt::Problem prob = kt::ar1_problem(40, 10, 0.5, 54);
  TraceOptions o;
  o.max_steps = 2;
  const auto path = knotpath::trace<double>(prob.x, prob.y, o);
  EXPECT_EQ(path.stop_reason(), StopReason::step_limit);
  EXPECT_EQ(path.knots().back().event, knotpath::EventKind::stop);
  EXPECT_LE(kkt_at(prob.x, prob.y, o, path, path.knots().back().penalty), kKktTol);
}

// -------------------------------------------------------------- validation

std::string bad_field(const TraceOptions& o, Index p = 3) {
  Matrix<double> x = Matrix<double>::Random(6, p);
  Vector<double> y = Vector<double>::Random(6);
  try {
    (void)knotpath::trace<double>(x, y, o);
  } catch (const knotpath::invalid_option& e) {
    return e.field();
  }
  return "(no exception)";
}

TEST(Validation, EachBadOptionNamesItsField) {
  TraceOptions o;
  o.penalty_scales = {1.0, 1.0};
  EXPECT_EQ(bad_field(o), "penalty_scales");
  o.penalty_scales = {1.0, -1.0, 1.0};
  EXPECT_EQ(bad_field(o), "penalty_scales");
  o.penalty_scales = {1.0, std::nan(""), 1.0};
  EXPECT_EQ(bad_field(o), "penalty_scales");
  // 0 and +infinity are not scales: unpenalized and left_out say those.
  o.penalty_scales = {1.0, 0.0, 1.0};
  EXPECT_EQ(bad_field(o), "penalty_scales");
  o.penalty_scales = {1.0, std::numeric_limits<double>::infinity(), 1.0};
  EXPECT_EQ(bad_field(o), "penalty_scales");
  o = {};
  o.unpenalized = {3};  // p = 3
  EXPECT_EQ(bad_field(o), "unpenalized");
  o.unpenalized = {1, 1};
  EXPECT_EQ(bad_field(o), "unpenalized");
  o = {};
  o.left_out = {0, 5};
  EXPECT_EQ(bad_field(o), "left_out");
  o.left_out = {1};
  o.unpenalized = {1};
  EXPECT_EQ(bad_field(o), "left_out");

  o = {};
  o.sign_constraints = {SignConstraint::nonnegative, SignConstraint::none};
  EXPECT_EQ(bad_field(o), "sign_constraints");
  o.sign_constraints = {SignConstraint::nonnegative};
  o.variant = knotpath::Variant::least_angle;
  EXPECT_EQ(bad_field(o), "sign_constraints");

  for (double r : {-1.0, std::nan(""), std::numeric_limits<double>::infinity()}) {
    o = {};
    o.ridge = r;
    EXPECT_EQ(bad_field(o), "ridge") << r;
  }
  for (double m : {-1e-3, std::nan(""), std::numeric_limits<double>::infinity()}) {
    o = {};
    o.min_penalty = m;
    EXPECT_EQ(bad_field(o), "min_penalty") << m;
  }
  // An unpenalized predictor is fitted by unconstrained least squares before
  // the path starts, so it cannot carry a sign constraint (neither one of its
  // own nor the single all-predictor entry).
  o = {};
  o.unpenalized = {1};
  o.sign_constraints = {SignConstraint::nonnegative};
  EXPECT_EQ(bad_field(o), "sign_constraints");
  o.sign_constraints = {SignConstraint::none, SignConstraint::nonpositive, SignConstraint::none};
  EXPECT_EQ(bad_field(o), "sign_constraints");
  o.sign_constraints = {SignConstraint::nonnegative, SignConstraint::none, SignConstraint::nonpositive};
  EXPECT_EQ(bad_field(o), "(no exception)");

  o = {};
  o.collinearity_tolerance = 1.0;
  EXPECT_EQ(bad_field(o), "collinearity_tolerance");
  o = {};
  o.tie_tolerance = std::nan("");
  EXPECT_EQ(bad_field(o), "tie_tolerance");

  o = {};
  EXPECT_EQ(bad_field(o), "(no exception)");  // the defaults are valid
}

TEST(Validation, BadWeightsAreInvalidData) {
  Matrix<double> x = Matrix<double>::Random(4, 2);
  Vector<double> y = Vector<double>::Random(4);
  Vector<double> w = Vector<double>::Ones(4);
  w(2) = -1.0;
  EXPECT_THROW((void)knotpath::trace<double>(x, y, {}, w), knotpath::invalid_data);
  w.setZero();
  EXPECT_THROW((void)knotpath::trace<double>(x, y, {}, w), knotpath::invalid_data);
  EXPECT_THROW((void)knotpath::trace<double>(x, y, {}, Vector<double>::Ones(3)), knotpath::invalid_data);
}

// TraceOptions::interrupt_requested (issue 21): asked once per homotopy step
// (one knot, or one group of simultaneous knots), it changes no number while
// it answers false, and true abandons the trace with knotpath::interrupted.
TEST(Interruption, AskedOncePerStepAndTrueAbandonsTheTrace) {
  const kt::Problem prob = kt::ar1_problem(40, 8, 0.3, 5);
  const auto plain = knotpath::trace<double>(prob.x, prob.y);
  knotpath::TraceOptions o;
  std::size_t asked = 0;
  o.interrupt_requested = [&asked] {
    ++asked;
    return false;
  };
  const auto polled = knotpath::trace<double>(prob.x, prob.y, o);
  ASSERT_EQ(polled.knots().size(), plain.knots().size());
  for (std::size_t k = 0; k < plain.knots().size(); ++k)
    EXPECT_EQ(polled.knots()[k].penalty, plain.knots()[k].penalty);  // the same bits
  EXPECT_EQ(asked, plain.knots().size() - 1);  // every step after the start knot, no ties here
  asked = 0;
  o.interrupt_requested = [&asked] { return ++asked > 3; };
  EXPECT_THROW((void)knotpath::trace<double>(prob.x, prob.y, o), knotpath::interrupted);
  EXPECT_EQ(asked, 4u);
}

}  // namespace
