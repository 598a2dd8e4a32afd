// Instantiates the tracing front ends and the path's queries, so that the
// strict-warnings check (tools/strict-headers.sh) sees the template code a
// user's program compiles, not only the headers' declarations. Also the
// "trace and query" file of the compile-time figures in DEVELOPERS.md.
// Never run: compiling it is the test.
#include <knotpath/core.hpp>
#include <knotpath/demo.hpp>
#include <knotpath/statistics.hpp>

#include <Eigen/SparseCore>

int main() {
  const auto data = knotpath::demo::greenhouse();
  knotpath::TraceOptions options;
  options.max_knots = 40;
  const knotpath::Path<double> path = knotpath::trace<double>(data.x, data.y, options);
  const knotpath::Vector<double> weights = knotpath::Vector<double>::Ones(data.y.size());

  // Eigen's default sparse matrix (int indices) and a row-major dense block.
  const Eigen::SparseMatrix<double> sparse = data.x.sparseView();
  const knotpath::Path<double> from_sparse = knotpath::trace_sparse<double>(sparse, data.y, options, weights);
  const Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor> rows = data.x;
  const knotpath::Path<double> from_rows = knotpath::trace<double>(rows, data.y);
  auto statistics = knotpath::SufficientStatistics<double>::from_rows(data.x.topRows(10), data.y.head(10));
  statistics.merge(knotpath::SufficientStatistics<double>::from_rows(
      data.x.bottomRows(data.x.rows() - 10), data.y.tail(data.y.size() - 10), knotpath::Vector<double>(), 4));
  const knotpath::Path<double> from_statistics = knotpath::trace_statistics(statistics);

  const auto at = path.at_penalty(0.5 * path.lambda_max());
  const auto budget = path.at_budget(0.5);
  const auto fraction = path.at_relative_budget(0.25);
  const auto active = path.active_at(at.penalty);
  const knotpath::Vector<double> fitted = path.predict(data.x, at.penalty).values;
  const auto block = path.predict_many(data.x, {at.penalty, 0.0});
  const auto named = path.named_coefficients(path.at_mu(0.01));
  const knotpath::PathSolver<double> solver(data.x);
  const auto solved = solver.trace_block(knotpath::Matrix<double>(data.y), 2);
  const auto events = path.events();
  const knotpath::Vector<double> first = path.dense_coefficients(0);
  const double total = at.intercept + budget.intercept + fraction.intercept + fitted.sum() + first.sum() +
                       path.penalized_l1(at.coefficients) + path.worst_condition_estimate() + block.values.sum() +
                       static_cast<double>(named.size() + solved.size()) +
                       static_cast<double>(active.size() + events.size() + from_sparse.knots().size() +
                                           from_rows.knots().size() + from_statistics.knots().size());
  return total != total ? 1 : 0;
}
