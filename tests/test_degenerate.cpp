// Designs that are not in general position: constant and all-zero columns,
// exact duplicates and collinear columns, ties, p > n and rank deficiency,
// constant responses, a response that is a multiple of one column, n = 1,
// p = 1. Each case asserts its recorded outcome (excluded / held out / ties
// order / saturation) and the KKT conditions of the lasso objective.

#include <gtest/gtest.h>

#include <cmath>
#include <random>
#include <vector>

#include <Eigen/QR>
#include <knotpath/knotpath.hpp>

#include "test_support.hpp"

namespace {

using knotpath::EventKind;
using knotpath::Index;
using knotpath::Matrix;
using knotpath::Path;
using knotpath::StopReason;
using knotpath::TraceOptions;
using knotpath::Vector;
namespace kt = knotpath::testing;

// KKT tolerance relative to the penalty (see kkt_violation): double-precision
// paths on designs whose kept active Gram matrices have condition below ~1e3;
// rounding stays below 1e-12, a wrong knot or sign gives a violation of order one.
constexpr double kKktTol = 1e-9;

double kkt_at(const Matrix<double>& x, const Vector<double>& y, const TraceOptions& o, const Path<double>& path,
              double lambda) {
  kt::Centred c = kt::centre(x, y, o.with_intercept, o.standardize);
  // Columns with zero scale (excluded) would divide by zero in centre(); they
  // have z = 0 after centring, which kkt_violation skips.
  for (Index j = 0; j < c.z.cols(); ++j)
    if (!std::isfinite(c.scale(j)) || c.scale(j) == 0.0) {
      c.z.col(j).setZero();
      c.scale(j) = 1.0;
    }
  const auto sol = path.at_penalty(lambda);
  return kt::kkt_violation(c.z, c.y, kt::to_prepared(c, sol.coefficients), lambda);
}

void expect_kkt_along(const Matrix<double>& x, const Vector<double>& y, const TraceOptions& o,
                      const Path<double>& path) {
  for (const auto& k : path.knots())
    EXPECT_LE(kkt_at(x, y, o, path, k.penalty), kKktTol) << "knot " << k.step << " penalty " << k.penalty;
  std::mt19937_64 gen(4);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  for (int i = 0; i < 20; ++i) {
    const double lambda = path.lambda_max() * u(gen) * u(gen);
    EXPECT_LE(kkt_at(x, y, o, path, lambda), kKktTol) << "penalty " << lambda;
  }
}

// Residual sum of squares of least squares with an intercept, by a complete
// orthogonal decomposition (rank-revealing; only the fitted values matter).
double least_squares_rss(const Matrix<double>& x, const Vector<double>& y) {
  Matrix<double> a(x.rows(), x.cols() + 1);
  a.col(0).setOnes();
  a.rightCols(x.cols()) = x;
  Eigen::CompleteOrthogonalDecomposition<Matrix<double>> cod(a);
  const Vector<double> fit = a * cod.solve(y);
  return (y - fit).squaredNorm();
}

bool is_held_out(const Path<double>& path, Index j) {
  for (const auto& h : path.held_out())
    if (h.predictor == j) return true;
  return false;
}

TEST(Degenerate, ConstantAndAllZeroColumnsAreExcludedAndListed) {
  kt::Problem prob = kt::ar1_problem(30, 6, 0.3, 61);
  prob.x.col(1).setConstant(7.5);
  prob.x.col(4).setZero();
  const auto path = knotpath::trace<double>(prob.x, prob.y);
  ASSERT_EQ(path.excluded().size(), 2u);
  EXPECT_EQ(path.excluded()[0].predictor, 1);
  EXPECT_NE(path.excluded()[0].reason.find("constant"), std::string::npos);
  EXPECT_EQ(path.excluded()[1].predictor, 4);
  EXPECT_NE(path.excluded()[1].reason.find("all-zero"), std::string::npos);
  for (std::size_t k = 0; k < path.knots().size(); ++k) {
    EXPECT_EQ(path.dense_coefficients(k)(1), 0.0);
    EXPECT_EQ(path.dense_coefficients(k)(4), 0.0);
  }
  EXPECT_EQ(path.stop_reason(), StopReason::completed);
  expect_kkt_along(prob.x, prob.y, {}, path);

  // Without an intercept a constant column is an ordinary predictor; only the
  // all-zero one is excluded.
  TraceOptions no_intercept;
  no_intercept.with_intercept = false;
  const auto p2 = knotpath::trace<double>(prob.x, prob.y, no_intercept);
  ASSERT_EQ(p2.excluded().size(), 1u);
  EXPECT_EQ(p2.excluded()[0].predictor, 4);
  expect_kkt_along(prob.x, prob.y, no_intercept, p2);
  // y has mean ~3 and no intercept: the constant column carries it at the end.
  EXPECT_NE(p2.at_penalty(0.0).coefficients(1), 0.0);
}

TEST(Degenerate, ExactDuplicateIsHeldOutAndThePathContinues) {
  kt::Problem prob = kt::ar1_problem(30, 5, 0.3, 62);
  Matrix<double> x(30, 6);
  x.leftCols(5) = prob.x;
  x.col(5) = prob.x.col(0);  // x5 duplicates x0, which carries the largest effect
  const auto path = knotpath::trace<double>(x, prob.y);
  // Ties rule: at the shared boundary penalty the lower index enters, the
  // duplicate is held out at that same penalty.
  ASSERT_TRUE(is_held_out(path, 5));
  bool checked = false;
  for (const auto& h : path.held_out()) {
    if (h.predictor != 5) continue;
    EXPECT_LE(h.squared_sine, 1e-12);  // exact duplicate: only rounding remains
    EXPECT_FALSE(h.saturated);
    for (const auto& k : path.knots())
      if (k.event == EventKind::enter && k.predictor == 0 && !checked) {
        EXPECT_EQ(h.penalty, k.penalty);
        checked = true;
      }
  }
  EXPECT_TRUE(checked);
  for (std::size_t k = 0; k < path.knots().size(); ++k) EXPECT_EQ(path.dense_coefficients(k)(5), 0.0);
  EXPECT_EQ(path.stop_reason(), StopReason::completed);
  EXPECT_EQ(path.knots().back().penalty, 0.0);
  expect_kkt_along(x, prob.y, {}, path);
  // The end is the least-squares fit (rank 5): RSS agrees to 1e-10 of the TSS
  // (both are sums of ~30 squares computed in double).
  EXPECT_NEAR(path.knots().back().rss, least_squares_rss(x, prob.y),
              1e-10 * path.preparation().total_sum_of_squares);
}

// Columns 1..7 of the 8 x 8 Sylvester-Hadamard matrix: orthogonal, +-1
// entries, mean zero, so centring and scaling are exact in binary arithmetic
// up to the common factor 1/sqrt(8).
Matrix<double> hadamard_columns() {
  Matrix<double> h(8, 8);
  for (Index i = 0; i < 8; ++i)
    for (Index j = 0; j < 8; ++j)
      h(i, j) = (__builtin_popcountll(static_cast<unsigned long long>(i & j)) % 2) ? -1.0 : 1.0;
  return h.rightCols(7);
}

TEST(Degenerate, ExactlyCollinearColumnIsHeldOutWithItsReason) {
  // x3 = 2 x0 + 2 x1 - x2 with x0, x1, x2 orthogonal and equally strong in y.
  // On the prepared scale z3 = (2 z0 + 2 z1 - z2) / 3 (unit length), so
  // z3^T y = (2 + 2 - 1)/3 * z0^T y: all four reach the boundary at lambda_max.
  // Ties rule: x0, x1, x2 enter in that order; x3, now in their span, is held
  // out with squared sine ~0. (A dependency can only close at such a tie: a
  // column in the span of the active set has correlation lambda times a
  // constant, so it either sits on the boundary already or never reaches it.)
  const Matrix<double> h = hadamard_columns();
  Matrix<double> x(8, 5);
  x.col(0) = h.col(0);
  x.col(1) = h.col(1);
  x.col(2) = h.col(2);
  x.col(3) = 2.0 * h.col(0) + 2.0 * h.col(1) - h.col(2);
  x.col(4) = h.col(3);
  const Vector<double> y = h.col(0) + h.col(1) + h.col(2) + 0.5 * h.col(3);
  const auto path = knotpath::trace<double>(x, y);
  const auto& k = path.knots();
  ASSERT_EQ(k.size(), 6u);  // start, enter 0, 1, 2 (at lambda_max), enter 4, end
  for (std::size_t i = 1; i <= 3; ++i) {
    EXPECT_EQ(k[i].predictor, static_cast<Index>(i - 1));
    EXPECT_EQ(k[i].penalty, k[0].penalty);
  }
  EXPECT_EQ(k[4].predictor, 4);
  ASSERT_EQ(path.held_out().size(), 1u);
  const auto& held = path.held_out()[0];
  EXPECT_EQ(held.predictor, 3);
  EXPECT_EQ(held.penalty, k[0].penalty);  // held out at the tie
  // The knot where it happened: the last row at its penalty (x2's entry).
  // Regression, issue 18: it named row 4 (x4's entry, at a lower penalty),
  // the row its own entry would have taken.
  EXPECT_EQ(held.step, 3);
  EXPECT_LE(held.squared_sine, 1e-12);    // exact dependency up to rounding
  EXPECT_FALSE(held.saturated);           // rank 3 active < 7 usable rows
  for (std::size_t i = 0; i < k.size(); ++i) EXPECT_EQ(path.dense_coefficients(i)(3), 0.0);
  EXPECT_EQ(path.stop_reason(), StopReason::completed);
  // y lies in the column span: the end interpolates (RSS is a few ulps of
  // y^T y = 26 whichever storage mode computes it).
  EXPECT_LE(k.back().rss, 1e-13 * 26.0);
  expect_kkt_along(x, y, {}, path);

  // A negatively scaled, shifted copy (x5 = 3 - 2.5 x0) is exactly collinear
  // after centring: it reaches the boundary with x0, with the opposite sign.
  kt::Problem prob = kt::ar1_problem(30, 5, 0.3, 62);
  Matrix<double> x2(30, 6);
  x2.leftCols(5) = prob.x;
  x2.col(5) = 3.0 - 2.5 * prob.x.col(0).array();
  const auto p2 = knotpath::trace<double>(x2, prob.y);
  ASSERT_TRUE(is_held_out(p2, 5));
  for (const auto& hh : p2.held_out()) EXPECT_LE(hh.squared_sine, 1e-12);
  for (std::size_t i = 0; i < p2.knots().size(); ++i) EXPECT_EQ(p2.dense_coefficients(i)(5), 0.0);
  expect_kkt_along(x2, prob.y, {}, p2);
}

TEST(Degenerate, CollinearSetThatNeverClosesEndsAtLeastSquares) {
  // x5 = x1 - 2 x3 + 0.5 x4: the four columns are dependent, but on this
  // response the last of them never reaches the boundary (its correlation is
  // lambda times a constant of modulus < 1 once the other three are active),
  // so nothing needs holding out. The path still ends at least squares.
  kt::Problem prob = kt::ar1_problem(40, 5, 0.2, 63);
  Matrix<double> x(40, 6);
  x.leftCols(5) = prob.x;
  x.col(5) = prob.x.col(1) - 2.0 * prob.x.col(3) + 0.5 * prob.x.col(4);
  const Vector<double> y = prob.y + 2.0 * x.col(5);
  const auto path = knotpath::trace<double>(x, y);
  EXPECT_EQ(path.stop_reason(), StopReason::completed);
  for (const auto& k : path.knots()) EXPECT_LE(k.active_count, 5);
  const Vector<double> end = path.dense_coefficients(path.knots().size() - 1);
  EXPECT_FALSE(end(1) != 0.0 && end(3) != 0.0 && end(4) != 0.0 && end(5) != 0.0);
  EXPECT_NEAR(path.knots().back().rss, least_squares_rss(x, y), 1e-10 * path.preparation().total_sum_of_squares);
  expect_kkt_along(x, y, {}, path);
}

TEST(Degenerate, SymmetricColumnsTieAndEnterByAscendingIndex) {
  // Orthogonal +-1 columns (a 8 x 8 Sylvester-Hadamard matrix without its
  // constant column) and a response with equal weight on columns 2 and 5 and
  // on columns 0 and 6: exact ties in exact binary arithmetic.
  const Matrix<double> x = hadamard_columns();
  Vector<double> y = 3.0 * x.col(2) - 3.0 * x.col(5) + 1.0 * x.col(0) + 1.0 * x.col(6) + 0.5 * x.col(3);
  const auto path = knotpath::trace<double>(x, y);
  // Knot table: start, enter 2, enter 5 (same penalty, ascending index), then
  // enter 0, enter 6 (same penalty), enter 3, end.
  const auto& k = path.knots();
  ASSERT_EQ(k.size(), 7u);
  EXPECT_EQ(k[1].predictor, 2);
  EXPECT_EQ(k[2].predictor, 5);
  EXPECT_EQ(k[1].penalty, k[0].penalty);
  EXPECT_EQ(k[2].penalty, k[0].penalty);
  EXPECT_EQ(k[2].sign, -1);
  EXPECT_EQ(k[3].predictor, 0);
  EXPECT_EQ(k[4].predictor, 6);
  EXPECT_EQ(k[3].penalty, k[4].penalty);
  EXPECT_EQ(k[5].predictor, 3);
  EXPECT_EQ(k[6].event, EventKind::end);
  // Orthogonal unit columns: the lasso is soft thresholding of z_j^T y, so the
  // knots are the distinct |z_j^T y| = sqrt(8) * |coefficient|: exact values
  // up to one rounding of sqrt(8) (1e-15 relative).
  EXPECT_NEAR(k[0].penalty, 3.0 * std::sqrt(8.0), 1e-14);
  EXPECT_NEAR(k[3].penalty, 1.0 * std::sqrt(8.0), 1e-14);
  EXPECT_NEAR(k[5].penalty, 0.5 * std::sqrt(8.0), 1e-14);
  expect_kkt_along(x, y, {}, path);
}

TEST(Degenerate, DuplicatedColumnsTiedWithLeaveAndReentry) {
  // Two exact copies of a column whose coefficient later returns to zero: the
  // copy is held out while the first is active and may be retried after a
  // leave; KKT must hold throughout and the duplicate never gets a
  // coefficient of its own.
  kt::Problem prob = kt::ar1_problem(25, 8, 0.9, 64, 6);
  Matrix<double> x(25, 9);
  x.leftCols(8) = prob.x;
  x.col(8) = prob.x.col(1);
  const auto path = knotpath::trace<double>(x, prob.y);
  EXPECT_EQ(path.stop_reason(), StopReason::completed);
  for (std::size_t k = 0; k < path.knots().size(); ++k) {
    const Vector<double> b = path.dense_coefficients(k);
    EXPECT_FALSE(b(1) != 0.0 && b(8) != 0.0) << "both copies active at knot " << k;
  }
  expect_kkt_along(x, prob.y, {}, path);
}

TEST(Degenerate, MoreColumnsThanRowsSaturatesAndInterpolatesAtZero) {
  kt::Problem prob = kt::ar1_problem(10, 30, 0.4, 65);
  const auto path = knotpath::trace<double>(prob.x, prob.y);
  EXPECT_EQ(path.stop_reason(), StopReason::completed);
  EXPECT_EQ(path.knots().back().penalty, 0.0);
  // Active set never exceeds the rank of the centred design, n - 1 = 9.
  Index most = 0;
  for (const auto& k : path.knots()) most = std::max(most, k.active_count);
  EXPECT_EQ(most, 9);
  // At penalty 0 the fit interpolates: RSS is rounding-level (1e-20 of the
  // TSS would be too strict after ~40 knots; 1e-12 still rules out any
  // non-interpolating fit).
  EXPECT_LE(path.knots().back().rss, 1e-12 * path.preparation().total_sum_of_squares);
  const Vector<double> fitted = path.predict(prob.x, 0.0).values;
  EXPECT_LE((fitted - prob.y).cwiseAbs().maxCoeff(), 1e-6 * prob.y.cwiseAbs().maxCoeff());
  // Saturation is recorded.
  ASSERT_TRUE(path.saturation_step().has_value());
  const auto& sat = path.knots()[static_cast<std::size_t>(*path.saturation_step())];
  EXPECT_EQ(sat.active_count, 9);
  for (const auto& h : path.held_out()) {
    if (h.step >= *path.saturation_step()) {
      EXPECT_TRUE(h.saturated);
    }
  }
  expect_kkt_along(prob.x, prob.y, {}, path);
}

TEST(Degenerate, RankDeficientDesignEndsAtLeastSquares) {
  kt::Problem prob = kt::ar1_problem(20, 5, 0.3, 66);
  Matrix<double> x(20, 8);
  x.leftCols(5) = prob.x;
  x.col(5) = prob.x.col(0) + prob.x.col(1);
  x.col(6) = prob.x.col(2) - prob.x.col(3);
  x.col(7) = 2.0 * prob.x.col(4);
  const Vector<double> y = prob.y + x.col(5) - x.col(6);
  const auto path = knotpath::trace<double>(x, y);
  EXPECT_EQ(path.stop_reason(), StopReason::completed);
  for (const auto& k : path.knots()) EXPECT_LE(k.active_count, 5);  // rank of the centred design
  EXPECT_FALSE(path.held_out().empty());
  for (const auto& h : path.held_out()) EXPECT_FALSE(h.saturated);  // rank 5 < n - 1 = 19
  EXPECT_FALSE(path.saturation_step().has_value());
  EXPECT_NEAR(path.knots().back().rss, least_squares_rss(x, y), 1e-10 * path.preparation().total_sum_of_squares);
  expect_kkt_along(x, y, {}, path);
}

TEST(Degenerate, ConstantResponseGivesTheEmptyPath) {
  kt::Problem prob = kt::ar1_problem(15, 4, 0.3, 67);
  const Vector<double> y = Vector<double>::Constant(15, 4.25);
  const auto path = knotpath::trace<double>(prob.x, y);
  EXPECT_EQ(path.lambda_max(), 0.0);
  EXPECT_EQ(path.stop_reason(), StopReason::completed);
  ASSERT_EQ(path.knots().size(), 2u);  // start and end, both at penalty 0
  EXPECT_EQ(path.knots().back().event, EventKind::end);
  for (std::size_t k = 0; k < 2; ++k) {
    EXPECT_EQ(path.dense_coefficients(k).cwiseAbs().maxCoeff(), 0.0);
    // The weighted mean with its correction pass returns 4.25 exactly
    // (a representable constant): exact equality.
    EXPECT_EQ(path.knots()[k].intercept, 4.25);
  }
  EXPECT_EQ(path.at_penalty(1.0).intercept, 4.25);
}

TEST(Degenerate, ResponseExactlyAMultipleOfOneColumn) {
  kt::Problem prob = kt::ar1_problem(20, 4, 0.5, 68);
  const Vector<double> y = 3.0 * prob.x.col(2).array() + 5.0;
  const auto path = knotpath::trace<double>(prob.x, y);
  // On the prepared scale y = lambda_max z_2, so the residual at penalty
  // lambda is lambda z_2 and |z_j^T r| = lambda |z_j^T z_2| < lambda for the
  // others: only x2 ever enters and the path ends at beta_2 = 3, intercept 5.
  const auto& k = path.knots();
  ASSERT_EQ(k.size(), 3u);
  EXPECT_EQ(k[1].event, EventKind::enter);
  EXPECT_EQ(k[1].predictor, 2);
  EXPECT_EQ(k[2].event, EventKind::end);
  const auto end = path.at_penalty(0.0);
  // A handful of roundings in centring, scaling and one step: 1e-13 relative.
  EXPECT_NEAR(end.coefficients(2), 3.0, 3e-13);
  EXPECT_NEAR(end.intercept, 5.0, 5e-13);
  // The recorded RSS is updated by subtraction from the total sum of squares
  // (exactly so in the Gram storage mode), so its absolute error is a few
  // ulps of the TSS: 1e-13 of the TSS rules out any non-interpolating fit.
  EXPECT_LE(k[2].rss, 1e-13 * path.preparation().total_sum_of_squares);
  // Halfway the coefficient is half way (linear in lambda): 1e-13.
  EXPECT_NEAR(path.at_penalty(0.5 * path.lambda_max()).coefficients(2), 1.5, 1e-13);
  expect_kkt_along(prob.x, y, {}, path);
}

TEST(Degenerate, SingleObservation) {
  Matrix<double> x(1, 3);
  x << 1.0, 2.0, -4.0;
  Vector<double> y(1);
  y << 6.0;
  // With an intercept every column is constant on one row: all excluded, the
  // intercept fits the observation.
  const auto with_intercept = knotpath::trace<double>(x, y);
  EXPECT_EQ(with_intercept.excluded().size(), 3u);
  EXPECT_EQ(with_intercept.lambda_max(), 0.0);
  EXPECT_EQ(with_intercept.stop_reason(), StopReason::completed);
  EXPECT_EQ(with_intercept.at_penalty(0.0).intercept, 6.0);

  // Without an intercept the three standardized columns are +-1: a three-way
  // tie at lambda_max. The lowest index enters, the other two are held out as
  // saturated (one row: rank 1), and the path ends interpolating y.
  TraceOptions o;
  o.with_intercept = false;
  const auto path = knotpath::trace<double>(x, y, o);
  EXPECT_EQ(path.stop_reason(), StopReason::completed);
  ASSERT_GE(path.knots().size(), 3u);
  EXPECT_EQ(path.knots()[1].event, EventKind::enter);
  EXPECT_EQ(path.knots()[1].predictor, 0);
  EXPECT_TRUE(is_held_out(path, 1));
  EXPECT_TRUE(is_held_out(path, 2));
  for (const auto& h : path.held_out()) EXPECT_TRUE(h.saturated);
  ASSERT_TRUE(path.saturation_step().has_value());
  EXPECT_EQ(*path.saturation_step(), 1);
  const auto end = path.at_penalty(0.0);
  // b0 = y / x0 = 6 after one step: exact to a few roundings.
  EXPECT_NEAR(end.coefficients(0), 6.0, 1e-14 * 6.0);
  EXPECT_EQ(end.coefficients(1), 0.0);
  EXPECT_EQ(end.coefficients(2), 0.0);
  expect_kkt_along(x, y, o, path);
}

TEST(Degenerate, SinglePredictorIsSoftThresholding) {
  kt::Problem prob = kt::ar1_problem(25, 1, 0.0, 69, 1);
  const auto path = knotpath::trace<double>(prob.x, prob.y);
  kt::Centred c = kt::centre(prob.x, prob.y, true, true);
  const double zy = c.z.col(0).dot(c.y);
  ASSERT_EQ(path.knots().size(), 3u);  // start, enter, end
  // Closed form: lambda_max = |z^T y|, b(lambda) = sign(z^T y)(|z^T y| - lambda)
  // on the prepared scale (Tibshirani 1996, JRSS B 58(1), orthonormal case).
  // Independent double computations of the same inner product: 1e-13.
  EXPECT_NEAR(path.lambda_max(), std::abs(zy), 1e-13 * std::abs(zy));
  for (double t : {0.0, 0.25, 0.5, 0.9}) {
    const double lambda = t * std::abs(zy);
    const double expect = std::copysign(std::abs(zy) - lambda, zy) / c.scale(0);
    EXPECT_NEAR(path.at_penalty(lambda).coefficients(0), expect, 1e-12 * std::abs(zy / c.scale(0)));
  }
  expect_kkt_along(prob.x, prob.y, {}, path);
}

}  // namespace
