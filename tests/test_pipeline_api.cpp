// The C++ API a pipeline uses: a design prepared once and traced against
// many responses (PathSolver), the storage rule, predictor names, the two L1
// norms, penalty units, batch queries, the indexed budget search and the
// flags of answers that do not come from the point asked for.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <random>
#include <limits>
#include <string>
#include <thread>
#include <vector>

#include <knotpath/knotpath.hpp>

#include "test_support.hpp"

namespace kp = knotpath;
using kp::Index;
using kp::Matrix;
using kp::Vector;

namespace {

// Two paths are the same when every knot agrees to the last bit.
void expect_identical(const kp::Path<double>& a, const kp::Path<double>& b, const std::string& what) {
  ASSERT_EQ(a.knots().size(), b.knots().size()) << what;
  for (std::size_t k = 0; k < a.knots().size(); ++k) {
    const auto& x = a.knots()[k];
    const auto& y = b.knots()[k];
    EXPECT_EQ(x.penalty, y.penalty) << what << " knot " << k;
    EXPECT_EQ(x.event, y.event) << what << " knot " << k;
    EXPECT_EQ(x.predictor, y.predictor) << what << " knot " << k;
    EXPECT_EQ(x.intercept, y.intercept) << what << " knot " << k;
    EXPECT_EQ(x.rss, y.rss) << what << " knot " << k;
    EXPECT_EQ(x.penalized_l1, y.penalized_l1) << what << " knot " << k;
    EXPECT_EQ(x.coefficients, y.coefficients) << what << " knot " << k;
    EXPECT_EQ(x.condition_estimate, y.condition_estimate) << what << " knot " << k;
  }
  EXPECT_EQ(a.stop_reason(), b.stop_reason()) << what;
}

Matrix<double> responses_for(const Matrix<double>& x, Index m, unsigned seed) {
  std::mt19937_64 gen(seed);
  std::normal_distribution<double> normal(0.0, 1.0);
  Matrix<double> y(x.rows(), m);
  for (Index r = 0; r < m; ++r)
    for (Index i = 0; i < x.rows(); ++i)
      y(i, r) = 2.0 * x(i, r % x.cols()) - x(i, (r + 3) % x.cols()) + normal(gen) + 1.5;
  return y;
}

}  // namespace

TEST(PathSolver, TracesTheVeryPathOfTraceInEveryStorage) {
  // The solver's contract (solver.hpp): with the storage trace() uses, the
  // same path to the last bit. Tall (Gram), square (dense), wide (view),
  // with weights, without intercept, with an unpenalized predictor.
  struct Case {
    const char* name;
    Index n, p;
    kp::Storage storage;
    bool weights, intercept;
  };
  const Case cases[] = {{"gram-auto", 120, 12, kp::Storage::automatic, false, true},
                        {"gram-weighted", 120, 12, kp::Storage::gram, true, true},
                        {"dense", 40, 30, kp::Storage::dense, false, true},
                        {"dense-weighted-no-intercept", 40, 30, kp::Storage::dense, true, false},
                        {"view", 30, 60, kp::Storage::view, true, true}};
  for (const Case& c : cases) {
    const auto prob = kp::testing::ar1_problem(c.n, c.p, 0.5, 11);
    kp::TraceOptions options;
    options.storage = c.storage;
    options.with_intercept = c.intercept;
    options.unpenalized = {2};
    Vector<double> w;
    if (c.weights) {
      w = Vector<double>::Ones(c.n);
      for (Index i = 0; i < c.n; i += 3) w(i) = 0.5;
      w(1) = 0.0;
    }
    const kp::PathSolver<double> solver(prob.x, options, w);
    const Matrix<double> ys = responses_for(prob.x, 4, 5);
    for (Index r = 0; r < ys.cols(); ++r) {
      const Vector<double> y = ys.col(r);
      expect_identical(solver.trace(y), kp::trace<double>(prob.x, y, options, w),
                       std::string(c.name) + " response " + std::to_string(r));
    }
  }
}

TEST(PathSolver, IsSafeToShareBetweenThreads) {
  // Const and shared: blocks on one or two threads, and plain calls from
  // several threads at once, give the paths of one sequential loop.
  const auto prob = kp::testing::ar1_problem(60, 50, 0.3, 3);
  kp::TraceOptions options;
  options.storage = kp::Storage::dense;  // the storage whose operator keeps scratch space
  const kp::PathSolver<double> solver(prob.x, options);
  const Matrix<double> ys = responses_for(prob.x, 8, 9);
  const auto one = solver.trace_block(ys, 1);
  const auto two = solver.trace_block(ys, 2);
  ASSERT_EQ(one.size(), 8u);
  std::vector<kp::Path<double>> threaded(8);
  std::vector<std::thread> pool;
  for (Index r = 0; r < 8; ++r)
    pool.emplace_back([&, r] { threaded[static_cast<std::size_t>(r)] = solver.trace(ys.col(r)); });
  for (auto& t : pool) t.join();
  for (std::size_t r = 0; r < 8; ++r) {
    expect_identical(one[r], two[r], "two threads, response " + std::to_string(r));
    expect_identical(one[r], threaded[r], "concurrent calls, response " + std::to_string(r));
  }
}

TEST(PathSolver, RefusesBadResponsesAsTraceDoes) {
  const auto prob = kp::testing::ar1_problem(30, 5, 0.3, 3);
  const kp::PathSolver<double> solver(prob.x);
  EXPECT_THROW(solver.trace(Vector<double>::Ones(29)), kp::invalid_data);
  Vector<double> y = prob.y;
  y(4) = std::numeric_limits<double>::quiet_NaN();
  EXPECT_THROW(solver.trace(y), kp::invalid_data);
  Matrix<double> block(30, 2);
  block.col(0) = prob.y;
  block.col(1) = y;
  EXPECT_THROW(solver.trace_block(block, 2), kp::invalid_data);
  Matrix<double> bad = prob.x;
  bad(2, 1) = std::numeric_limits<double>::infinity();
  EXPECT_THROW(kp::PathSolver<double>{bad}, kp::invalid_data);
}

TEST(StorageChoice, AccountsForTheStoppingRulesAndTheNumberOfResponses) {
  // choose_storage() (trace.hpp): a full path on a tall design pays for the
  // Gram matrix; forty active predictors out of 2000 do not, unless many
  // responses share it; small designs keep the Gram route.
  kp::TraceOptions full, short_path;
  short_path.max_active = 40;
  EXPECT_EQ(kp::choose_storage<double>(20000, 2000, full), kp::Storage::gram);
  EXPECT_EQ(kp::choose_storage<double>(20000, 2000, short_path), kp::Storage::dense);
  EXPECT_EQ(kp::choose_storage<double>(20000, 2000, short_path, 500), kp::Storage::gram);
  EXPECT_EQ(kp::choose_storage<double>(200, 20, short_path), kp::Storage::gram);  // small
  EXPECT_EQ(kp::choose_storage<double>(500, 5000, full), kp::Storage::dense);
  EXPECT_EQ(kp::choose_storage<double>(1000, 5000, full), kp::Storage::view);
  kp::TraceOptions explicit_dense;
  explicit_dense.storage = kp::Storage::dense;
  EXPECT_EQ(kp::choose_storage<double>(20000, 20, explicit_dense), kp::Storage::dense);
}

TEST(PathNames, CarryTheNamesAndAnswerNamedCoefficients) {
  const auto prob = kp::testing::ar1_problem(80, 6, 0.2, 21);
  kp::TraceOptions options;
  options.predictor_names = {"age", "dose", "weight", "height", "site", "visit"};
  const auto path = kp::trace<double>(prob.x, prob.y, options);
  EXPECT_EQ(path.predictor_count(), 6);
  EXPECT_EQ(path.predictor_name(1), "dose");
  EXPECT_EQ(path.predictor_index("site"), 4);
  EXPECT_THROW((void)path.predictor_index("bmi"), kp::invalid_query);
  const auto s = path.at_relative_budget(0.5);
  const auto named = path.named_coefficients(s);
  ASSERT_FALSE(named.empty());
  for (const auto& c : named) {
    EXPECT_EQ(c.name, options.predictor_names[static_cast<std::size_t>(c.predictor)]);
    EXPECT_EQ(c.value, s.coefficients(c.predictor));
    EXPECT_NE(c.value, 0.0);
  }
  EXPECT_EQ(path.coefficient(s, "age"), s.coefficients(0));
  // Without names: x1, x2, ... (1-based, as people count columns).
  const auto unnamed = kp::trace<double>(prob.x, prob.y);
  EXPECT_EQ(unnamed.predictor_name(0), "x1");
  EXPECT_EQ(unnamed.predictor_index("x6"), 5);
  // Bad names are refused by the one validation of the options.
  kp::TraceOptions twice = options;
  twice.predictor_names[5] = "age";
  EXPECT_THROW(kp::trace<double>(prob.x, prob.y, twice), kp::invalid_option);
  kp::TraceOptions short_list = options;
  short_list.predictor_names.pop_back();
  EXPECT_THROW(kp::trace<double>(prob.x, prob.y, short_list), kp::invalid_option);
}

TEST(PathNorms, NameThePenalizedAndThePlainNorm) {
  // Columns on very different scales make the two norms differ widely.
  auto prob = kp::testing::ar1_problem(100, 5, 0.2, 8);
  prob.x.col(1) *= 1000.0;
  prob.x.col(3) *= 0.01;
  const auto path = kp::trace<double>(prob.x, prob.y);
  for (const auto& knot : path.knots()) {
    double plain = 0;
    for (const auto& [j, v] : knot.coefficients) plain += std::abs(v);
    EXPECT_NEAR(knot.plain_l1, plain, 1e-12 * (1 + plain));
  }
  const auto half = path.at_relative_budget(0.5);
  EXPECT_NEAR(half.plain_l1, half.coefficients.lpNorm<1>(), 1e-12 * (1 + half.plain_l1));
  EXPECT_NEAR(half.penalized_l1, path.penalized_l1(half.coefficients), 1e-12 * half.penalized_l1);
  EXPECT_GT(std::abs(half.penalized_l1 - half.plain_l1), 0.1 * half.plain_l1);
  // at_budget() constrains the penalized norm (path.hpp).
  const auto b = path.at_budget(half.penalized_l1);
  EXPECT_NEAR(b.penalized_l1, half.penalized_l1, 1e-9 * half.penalized_l1);
}

TEST(PenaltyUnits, OneConversionAndQueriesThatSayTheirUnit) {
  const auto prob = kp::testing::ar1_problem(90, 8, 0.4, 2);
  const auto path = kp::trace<double>(prob.x, prob.y);
  // scaling.hpp: mu = lambda / sqrt(n) with standardization.
  EXPECT_DOUBLE_EQ(path.mu_of(3.0), 3.0 / std::sqrt(90.0));
  EXPECT_DOUBLE_EQ(path.lambda_of(path.mu_of(2.5)), 2.5);
  const double mu = 0.3 * path.mu_of(path.lambda_max());
  const auto by_mu = path.at_mu(mu);
  const auto by_lambda = path.at_penalty(path.lambda_of(mu));
  EXPECT_EQ(by_mu.coefficients, by_lambda.coefficients);
  EXPECT_THROW((void)path.at_mu(-1.0), kp::invalid_query);
  kp::CrossValidationOptions cvo;
  cvo.folds = 5;
  const auto cv = kp::cross_validate<double>(prob.x, prob.y, {}, cvo);
  const double lambda = 0.2 * cv.full_path.lambda_max();
  EXPECT_EQ(cv.error_at_penalty(lambda), cv.error_at_mu(cv.full_path.mu_of(lambda)));
  EXPECT_EQ(cv.point_at_penalty(lambda).error, cv.error_at_penalty(lambda));
}

TEST(BatchQueries, MatchOnePointAtATime) {
  const auto prob = kp::testing::ar1_problem(70, 9, 0.3, 4);
  const auto path = kp::trace<double>(prob.x, prob.y);
  const double top = path.lambda_max();
  const std::vector<double> lambdas{1.5 * top, top, 0.7 * top, 0.31 * top, 0.05 * top, 0.0};
  const auto block = path.solutions_at(lambdas);
  ASSERT_EQ(block.coefficients.rows(), 9);
  ASSERT_EQ(block.coefficients.cols(), 6);
  const Matrix<double> rows = prob.x.topRows(7);
  const auto predicted = path.predict_many(rows, lambdas);
  for (std::size_t i = 0; i < lambdas.size(); ++i) {
    const auto s = path.at_penalty(lambdas[i]);
    const auto col = static_cast<Index>(i);
    EXPECT_EQ(Vector<double>(block.coefficients.col(col)), s.coefficients) << i;
    EXPECT_EQ(block.intercepts(col), s.intercept) << i;
    EXPECT_EQ(block.penalties[i], s.penalty) << i;
    const auto one = path.predict(rows, lambdas[i]);
    EXPECT_LE((Vector<double>(predicted.values.col(col)) - one.values).cwiseAbs().maxCoeff(),
              1e-12 * (1 + one.values.cwiseAbs().maxCoeff()))
        << i;
  }
  EXPECT_THROW((void)path.predict_many(prob.x.leftCols(3), lambdas), kp::invalid_query);
}

namespace {
// The budget search before it was indexed: walk every segment from the
// start (the definition at_budget() documents), for comparison.
kp::Solution<double> walk_to_budget(const kp::Path<double>& path, double budget) {
  const auto& knots = path.knots();
  if (knots.front().penalized_l1 >= budget) return path.at_penalty(knots.front().penalty);
  for (std::size_t k = 1; k < knots.size(); ++k) {
    if (knots[k].penalty == knots[k - 1].penalty) continue;
    const Vector<double> a = path.dense_coefficients(k - 1), b = path.dense_coefficients(k);
    std::vector<double> ts{0.0, 1.0};
    for (Index j = 0; j < a.size(); ++j)
      if ((a(j) < 0 && b(j) > 0) || (a(j) > 0 && b(j) < 0)) ts.push_back(a(j) / (a(j) - b(j)));
    std::sort(ts.begin(), ts.end());
    double prev = path.penalized_l1(a);
    for (std::size_t i = 1; i < ts.size(); ++i) {
      const double norm = path.penalized_l1(Vector<double>(a + ts[i] * (b - a)));
      if (norm >= budget) {
        double t = ts[i - 1];
        if (norm != prev) t += (ts[i] - ts[i - 1]) * (budget - prev) / (norm - prev);
        return path.at_penalty(knots[k - 1].penalty - t * (knots[k - 1].penalty - knots[k].penalty));
      }
      prev = norm;
    }
  }
  auto s = path.at_penalty(0.0);
  s.beyond_path = true;
  return s;
}
}  // namespace

TEST(BudgetSearch, FindsThePointAWalkFromTheStartFinds) {
  // Lasso and least angle paths (the latter may cross zero inside a
  // segment, so its norm is not monotone there); budgets at random and at
  // every knot's norm.
  for (const auto variant : {kp::Variant::lasso, kp::Variant::least_angle}) {
    const auto prob = kp::testing::ar1_problem(40, 25, 0.8, 17, 12);
    kp::TraceOptions options;
    options.variant = variant;
    const auto path = kp::trace<double>(prob.x, prob.y, options);
    std::vector<double> budgets;
    for (const auto& k : path.knots()) budgets.push_back(k.penalized_l1);
    std::mt19937_64 gen(5);
    std::uniform_real_distribution<double> u(0.0, 1.05 * path.knots().back().penalized_l1);
    for (int i = 0; i < 200; ++i) budgets.push_back(u(gen));
    for (double budget : budgets) {
      const auto fast = path.at_budget(budget);
      const auto slow = walk_to_budget(path, budget);
      EXPECT_EQ(fast.beyond_path, slow.beyond_path) << budget;
      if (fast.beyond_path) continue;
      EXPECT_NEAR(fast.penalty, slow.penalty, 1e-12 * path.lambda_max()) << budget;
      EXPECT_LE((fast.coefficients - slow.coefficients).cwiseAbs().maxCoeff(),
                1e-10 * (1 + slow.coefficients.cwiseAbs().maxCoeff()))
          << budget;
    }
  }
}

TEST(HonestEdges, AnswersBeyondAStoppedPathSaySo) {
  const auto prob = kp::testing::ar1_problem(60, 10, 0.3, 6);
  kp::TraceOptions options;
  options.max_knots = 3;
  const auto stopped = kp::trace<double>(prob.x, prob.y, options);
  ASSERT_TRUE(stopped.stopped_early());
  const auto prediction = stopped.predict(prob.x.topRows(4), 0.0);
  EXPECT_TRUE(prediction.beyond_path);
  EXPECT_EQ(prediction.penalty, stopped.knots().back().penalty);
  EXPECT_TRUE(stopped.at_relative_budget(1.0).stopped_path);
  EXPECT_FALSE(stopped.at_relative_budget(1.0).beyond_path);  // the last knot traced is what was asked
  const auto many = stopped.predict_many(prob.x.topRows(4), {stopped.lambda_max(), 0.0});
  EXPECT_FALSE(many.beyond_path[0]);
  EXPECT_TRUE(many.beyond_path[1]);
  EXPECT_TRUE(many.stopped_path);
  const auto full = kp::trace<double>(prob.x, prob.y);
  EXPECT_FALSE(full.at_relative_budget(1.0).stopped_path);
  EXPECT_FALSE(full.predict(prob.x.topRows(4), 0.0).beyond_path);
}

TEST(AuditEvents, AreTheEnterAndLeaveRowsWithoutCoefficients) {
  const auto prob = kp::testing::ar1_problem(50, 20, 0.9, 13, 10);
  const auto path = kp::trace<double>(prob.x, prob.y);
  const auto events = path.events();
  std::size_t expected = 0;
  for (const auto& k : path.knots()) expected += k.event == kp::EventKind::enter || k.event == kp::EventKind::leave;
  ASSERT_EQ(events.size(), expected);
  for (const auto& e : events) {
    const auto& row = path.knots()[e.knot];
    EXPECT_EQ(e.kind, row.event);
    EXPECT_EQ(e.predictor, row.predictor);
    EXPECT_EQ(e.penalty, row.penalty);
    EXPECT_EQ(e.active_count, row.active_count);
    EXPECT_EQ(e.step, row.step);
  }
}

TEST(SufficientStatistics, ReportsANaNAsANaN) {
  // A NaN in the design or response must be named as such, not surface
  // later as an overflow of the sums.
  Matrix<double> x = Matrix<double>::Ones(5, 2);
  x(0, 1) = 2.0;
  x(3, 0) = std::numeric_limits<double>::quiet_NaN();
  Vector<double> y = Vector<double>::LinSpaced(5, 0.0, 1.0);
  try {
    (void)kp::SufficientStatistics<double>::from_rows(x, y);
    FAIL() << "no error";
  } catch (const kp::invalid_data& e) {
    EXPECT_NE(std::string(e.what()).find("not finite"), std::string::npos) << e.what();
    EXPECT_EQ(std::string(e.what()).find("overflow"), std::string::npos) << e.what();
    EXPECT_EQ(e.row(), std::optional<std::size_t>(3));
  }
  x(3, 0) = 1.0;
  y(2) = std::numeric_limits<double>::quiet_NaN();
  try {
    (void)kp::SufficientStatistics<double>::from_rows(x, y);
    FAIL() << "no error";
  } catch (const kp::invalid_data& e) {
    EXPECT_NE(std::string(e.what()).find("not finite"), std::string::npos) << e.what();
  }
}

TEST(OrthonormalDesign, LassoIsSoftThresholdingAtEveryPenalty) {
  // From memory (Tibshirani 1996, J. R. Statist. Soc. B 58(1), section 2.2):
  // with orthonormal columns and no intercept, the lasso solution is the
  // soft-thresholded least-squares estimate, beta_j = sign(z_j) max(|z_j| - lambda, 0)
  // with z = X^T y, for the objective 0.5 ||y - X beta||^2 + lambda ||beta||_1.
  std::mt19937_64 gen(31);
  std::normal_distribution<double> normal(0.0, 1.0);
  Matrix<double> raw(40, 6);
  for (Index i = 0; i < raw.rows(); ++i)
    for (Index j = 0; j < raw.cols(); ++j) raw(i, j) = normal(gen);
  const Matrix<double> q = Eigen::HouseholderQR<Matrix<double>>(raw).householderQ() * Matrix<double>::Identity(40, 6);
  Vector<double> y(40);
  for (Index i = 0; i < 40; ++i) y(i) = 3 * q(i, 0) - 2 * q(i, 3) + 0.5 * q(i, 5) + 0.3 * normal(gen);
  kp::TraceOptions options;
  options.with_intercept = false;
  options.standardize = false;
  const kp::PathSolver<double> solver(q, options);
  const auto path = solver.trace(y);
  const Vector<double> z = q.transpose() * y;
  for (double fraction : {0.95, 0.6, 0.33, 0.1, 0.0}) {
    const double lambda = fraction * path.lambda_max();
    const auto s = path.at_penalty(lambda);
    for (Index j = 0; j < 6; ++j) {
      const double expected = (z(j) > 0 ? 1.0 : -1.0) * std::max(std::abs(z(j)) - lambda, 0.0);
      EXPECT_NEAR(s.coefficients(j), expected, 1e-12 * (1 + std::abs(z(j)))) << "lambda " << lambda << " j " << j;
    }
  }
}
