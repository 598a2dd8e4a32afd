// Columns over processes (mpi_columns.hpp), run by CTest under mpiexec with
// 1, 2 and 4 processes: each process holds a block of the predictors and
// every process traces the one path. Checked against one process holding
// every column (the same events; knots to rounding), against the lasso's
// optimality conditions, and against NIST's certified Longley fit. The
// designs are invented (fixed seeds), the same on every process; each
// process hands the library only its own block.

#include <gtest/gtest.h>
#include <mpi.h>

#include <algorithm>
#include <cmath>
#include <string>
#include <vector>

#include <knotpath/mpi_columns.hpp>
#include <knotpath/trace.hpp>

#include "mpi_test_main.hpp"
#include "test_support.hpp"

namespace {

namespace kp = knotpath;
namespace kt = knotpath::testing;
using kp::Index;
using Mat = kp::Matrix<double>;
using Vec = kp::Vector<double>;

struct World {
  int rank = 0, size = 1;
  World() {
    MPI_Comm_rank(MPI_COMM_WORLD, &rank);
    MPI_Comm_size(MPI_COMM_WORLD, &size);
  }
};

// This process's block of x's columns (column_block's even cut).
struct Block {
  Index first = 0;
  Mat x;
};
Block block_of(const Mat& x) {
  const World world;
  const auto [first, count] = kp::mpi::column_block(x.cols(), world.rank, world.size);
  return {first, x.middleCols(first, count)};
}

kp::Path<double> trace_over_processes(const Mat& x, const Vec& y, const kp::TraceOptions& options,
                                      const Vec& weights = Vec()) {
  const Block block = block_of(x);
  return kp::mpi::trace_column_block<double>(MPI_COMM_WORLD, block.x, block.first, x.cols(), y, options, weights);
}

kp::Path<double> trace_in_one(const Mat& x, const Vec& y, kp::TraceOptions options, const Vec& weights = Vec()) {
  options.storage = kp::Storage::dense;
  return kp::trace<double>(x, y, options, weights);
}

// The same events (kind, predictor, sign, active count) in the same rows;
// penalties, coefficients and intercepts to rounding; the same predictors
// held out and excluded.
void expect_same_path(const kp::Path<double>& spread, const kp::Path<double>& one) {
  ASSERT_EQ(spread.knots().size(), one.knots().size());
  EXPECT_EQ(spread.stop_reason(), one.stop_reason());
  const double lambda_max = one.knots().front().penalty;
  double top = 0;
  for (const auto& knot : one.knots())
    for (const auto& [j, beta] : knot.coefficients) top = std::max(top, std::abs(beta));
  for (std::size_t i = 0; i < one.knots().size(); ++i) {
    const auto& a = spread.knots()[i];
    const auto& b = one.knots()[i];
    SCOPED_TRACE(testing::Message() << "row " << i);
    EXPECT_EQ(a.event, b.event);
    EXPECT_EQ(a.predictor, b.predictor);
    EXPECT_EQ(a.sign, b.sign);
    EXPECT_EQ(a.active_count, b.active_count);
    EXPECT_NEAR(a.penalty, b.penalty, 1e-12 * lambda_max);
    EXPECT_NEAR(a.intercept, b.intercept, 1e-10 * std::max(1.0, std::abs(b.intercept)));
    ASSERT_EQ(a.coefficients.size(), b.coefficients.size());
    for (std::size_t k = 0; k < a.coefficients.size(); ++k) {
      EXPECT_EQ(a.coefficients[k].first, b.coefficients[k].first);
      EXPECT_NEAR(a.coefficients[k].second, b.coefficients[k].second, 1e-10 * top);
    }
  }
  ASSERT_EQ(spread.held_out().size(), one.held_out().size());
  for (std::size_t i = 0; i < one.held_out().size(); ++i)
    EXPECT_EQ(spread.held_out()[i].predictor, one.held_out()[i].predictor);
  ASSERT_EQ(spread.excluded().size(), one.excluded().size());
  for (std::size_t i = 0; i < one.excluded().size(); ++i) {
    EXPECT_EQ(spread.excluded()[i].predictor, one.excluded()[i].predictor);
    EXPECT_EQ(spread.excluded()[i].reason, one.excluded()[i].reason);
  }
}

TEST(MpiColumns, ThePathIsThatOfOneProcessOnAnAutoregressiveDesign) {
  const kt::Problem prob = kt::ar1_problem(40, 23, 0.6, 7, 6);
  const kp::TraceOptions options;
  expect_same_path(trace_over_processes(prob.x, prob.y, options), trace_in_one(prob.x, prob.y, options));
}

// p > n: the path saturates, coefficients leave (lasso), and a duplicated
// column is held out as collinear (its values broadcast, then dropped).
TEST(MpiColumns, ThePathIsThatOfOneProcessWithLeavesAndAHeldOutDuplicate) {
  kt::Problem prob = kt::ar1_problem(15, 37, 0.8, 11, 8, 0.5);
  prob.x.col(30) = prob.x.col(3);  // a duplicate, in another process's block when there are several
  const kp::TraceOptions options;
  const kp::Path<double> one = trace_in_one(prob.x, prob.y, options);
  bool leaves = false;
  for (const auto& knot : one.knots()) leaves = leaves || knot.event == kp::EventKind::leave;
  ASSERT_TRUE(leaves) << "the design should make a coefficient leave";
  ASSERT_FALSE(one.held_out().empty()) << "the duplicate should be held out";
  expect_same_path(trace_over_processes(prob.x, prob.y, options), one);
}

// Every per-predictor option, cut to each process's block: weights,
// penalty scales, an unpenalized predictor, one left out, a constant column
// (excluded), sign constraints, and a ridge term.
TEST(MpiColumns, ThePathIsThatOfOneProcessWithEveryPerPredictorOption) {
  kt::Problem prob = kt::ar1_problem(50, 19, 0.5, 23, 5);
  prob.x.col(12).setConstant(4.0);
  Vec weights(50);
  for (Index i = 0; i < 50; ++i) weights(i) = 0.5 + static_cast<double>(i % 4);
  kp::TraceOptions options;
  options.penalty_scales.assign(19, 1.0);
  for (std::size_t j = 0; j < 19; j += 3) options.penalty_scales[j] = 1.5;
  options.unpenalized = {17};
  options.left_out = {2};
  options.sign_constraints.assign(19, kp::SignConstraint::none);
  options.sign_constraints[0] = kp::SignConstraint::nonnegative;
  options.sign_constraints[7] = kp::SignConstraint::nonpositive;
  options.ridge = 0.1;
  expect_same_path(trace_over_processes(prob.x, prob.y, options, weights),
                   trace_in_one(prob.x, prob.y, options, weights));
}

TEST(MpiColumns, ThePathIsThatOfOneProcessForLeastAngleWithoutIntercept) {
  const kt::Problem prob = kt::ar1_problem(30, 21, 0.3, 5, 4);
  kp::TraceOptions options;
  options.variant = kp::Variant::least_angle;
  options.with_intercept = false;
  options.standardize = false;
  expect_same_path(trace_over_processes(prob.x, prob.y, options), trace_in_one(prob.x, prob.y, options));
}

// The lasso's optimality (KKT) conditions at every knot of the path traced
// over processes: |z_j^T r| <= lambda off the active set, = lambda with the
// coefficient's sign on it (Osborne, Presnell & Turlach 2000, section 2;
// Efron et al. 2004, lemma 8), checked on a centring built here.
TEST(MpiColumns, EveryKnotMeetsTheLassoOptimalityConditions) {
  const kt::Problem prob = kt::ar1_problem(35, 26, 0.7, 3, 6);
  const kp::Path<double> path = trace_over_processes(prob.x, prob.y, kp::TraceOptions{});
  const kt::Centred c = kt::centre(prob.x, prob.y, true, true);
  ASSERT_GT(path.knots().size(), 5u);
  for (const auto& knot : path.knots()) {
    Vec beta = Vec::Zero(prob.x.cols());
    for (const auto& [j, value] : knot.coefficients) beta(j) = value;
    EXPECT_LT(kt::kkt_violation(c.z, c.y, kt::to_prepared(c, beta), knot.penalty), 1e-9) << "step " << knot.step;
  }
}

// NIST StRD Longley (certified values to 15 digits): at penalty 0 the path
// with an intercept is the least-squares fit, which must reproduce the
// certified coefficients to at least 7 significant digits in double, with
// the six predictors spread over the processes.
TEST(MpiColumns, LongleyEndOfPathMatchesCertifiedValues) {
  KNOTPATH_REQUIRE_REFERENCE(data, "strd/longley.csv");
  KNOTPATH_REQUIRE_REFERENCE(cert, "strd/longley.certified");
  const kt::Problem prob = kt::problem_from(kt::read_csv(data), "y");
  const auto certified = kt::read_reference_values(cert);
  const kp::Path<double> path = trace_over_processes(prob.x, prob.y, kp::TraceOptions{});
  ASSERT_EQ(path.stop_reason(), kp::StopReason::completed);
  const auto end = path.at_penalty(0.0);
  auto digits = [](double value, double reference) {
    return value == reference ? 15.0 : -std::log10(std::abs(value - reference) / std::abs(reference));
  };
  EXPECT_GE(digits(end.intercept, certified.at("B0")), 7.0) << end.intercept;
  for (Index j = 0; j < 6; ++j) {
    const double reference = certified.at("B" + std::to_string(j + 1));
    EXPECT_GE(digits(end.coefficients(j), reference), 7.0) << "B" << j + 1 << " = " << end.coefficients(j);
  }
}

// Per knot the processes exchange the smallest step, the tied entries, and
// at an entry the entering column: never a value per column. The trace's
// traffic stays within one column (n values) per row of the knot table and
// per column held out as collinear (each is tried once with its values),
// plus a small constant per collective call; a design that gathered Z^T u
// (q values per knot) would exceed it many times. Two wide designs: one
// stopped before the active set fills the rows, one traced to saturation
// (where every further candidate is tried and held out).
TEST(MpiColumns, TheTraceExchangesAtMostOneColumnAndAStepPerKnot) {
  const World world;
  for (const Index n : {60, 20}) {
    SCOPED_TRACE(testing::Message() << "n = " << n);
    const kt::Problem prob = kt::ar1_problem(n, 400, 0.4, 13, 6);
    kp::TraceOptions options;
    if (n == 60) options.max_active = 25;
    const Block block = block_of(prob.x);
    const auto prepared =
        kp::mpi::prepare_column_block<double>(MPI_COMM_WORLD, block.x, block.first, prob.x.cols(), prob.y, options);
    const auto before = prepared.design.traffic();
    const kp::Path<double> path = kp::trace_design(prepared.design, prepared.preparation, options);
    const auto after = prepared.design.traffic();
    EXPECT_EQ(path.held_out().empty(), n == 60);
    const auto tried = static_cast<double>(path.knots().size() + path.held_out().size());
    const double column = static_cast<double>(n) * sizeof(double);
    const double per_call = sizeof(double) + world.size * (sizeof(int) + 32.0);
    const double bytes = static_cast<double>(after.bytes - before.bytes);
    const double calls = static_cast<double>(after.calls - before.calls);
    EXPECT_LE(bytes, tried * column + calls * per_call) << tried << " tried, " << calls << " calls";
    EXPECT_LE(calls, 4 * tried);
    // Before saturation, a small fraction of q values per row (at
    // saturation every held-out try costs its column, as it costs the
    // cross products of that column on one process).
    if (n == 60) {
      EXPECT_LT(bytes, 0.2 * static_cast<double>(path.knots().size()) * 400.0 * sizeof(double));
    }
    // The start exchanged the q column norms and correlations once.
    EXPECT_GE(before.bytes, 2 * 400 * sizeof(double));
  }
}

// A bad value in one process's block stops every process with one error,
// the same on every process: the place in the whole design's terms (row
// and predictor column), which a front end names in its own (a file's line
// and a column's name).
TEST(MpiColumns, ABadValueInOneBlockStopsEveryProcess) {
  const World world;
  kt::Problem prob = kt::ar1_problem(12, 9, 0.2, 17, 3);
  prob.x(4, 8) = std::nan("");  // the last predictor: the last process's block
  try {
    (void)trace_over_processes(prob.x, prob.y, kp::TraceOptions{});
    ADD_FAILURE() << "no error on process " << world.rank;
  } catch (const kp::invalid_data& e) {
    const std::string message = e.what();
    // The place in the whole design's terms: row 4, predictor column 8.
    EXPECT_EQ(message.rfind("knotpath: row 4, column 8: ", 0), 0u) << message;
    EXPECT_EQ(e.row(), std::optional<std::size_t>(4));
    EXPECT_EQ(e.column(), std::optional<std::size_t>(8));
    EXPECT_EQ(message.find("process "), std::string::npos) << message;
  }
  // A whole column's problem (values whose squares overflow) is named as
  // that predictor's on every process.
  prob = kt::ar1_problem(12, 9, 0.2, 17, 3);
  prob.x(2, 7) = 1e308;
  try {
    (void)trace_over_processes(prob.x, prob.y, kp::TraceOptions{});
    ADD_FAILURE() << "no error on process " << world.rank;
  } catch (const kp::invalid_data& e) {
    EXPECT_TRUE(e.whole_column()) << e.what();
    EXPECT_EQ(e.column(), std::optional<std::size_t>(7)) << e.what();
    EXPECT_EQ(std::string(e.what()).rfind("knotpath: predictor column 7", 0), 0u) << e.what();
  }
}

// Blocks that do not tile the predictors in process order are refused on
// every process (with two or more processes: each claims the first block).
TEST(MpiColumns, BlocksThatDoNotTileThePredictorsAreRefused) {
  const World world;
  if (world.size < 2) GTEST_SKIP() << "needs two processes";
  const kt::Problem prob = kt::ar1_problem(12, 8, 0.2, 19, 3);
  const Mat first = prob.x.leftCols(8 / world.size);
  EXPECT_THROW((void)kp::mpi::trace_column_block<double>(MPI_COMM_WORLD, first, 0, 8, prob.y, kp::TraceOptions{}),
               kp::invalid_data);
}

TEST(MpiColumns, ColumnBlocksTileTheColumnsEvenly) {
  for (int size : {1, 2, 3, 4, 7})
    for (Index columns : {0, 1, 5, 23, 100}) {
      Index next = 0;
      for (int r = 0; r < size; ++r) {
        const auto [first, count] = kp::mpi::column_block(columns, r, size);
        EXPECT_EQ(first, next);
        EXPECT_GE(count, columns / size);
        EXPECT_LE(count, columns / size + 1);
        next = first + count;
      }
      EXPECT_EQ(next, columns);
    }
}

}  // namespace

int main(int argc, char** argv) { return knotpath::testing::run_tests_on_every_process(argc, argv); }
