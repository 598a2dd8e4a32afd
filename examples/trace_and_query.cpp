// Trace the lasso path of the built-in demonstration data, print the audit of
// events, and query the path at a penalty and at an L1 budget.
#include <cstdio>

#include <knotpath/knotpath.hpp>

int main() {
  const knotpath::demo::DemoData data = knotpath::demo::greenhouse();
  const knotpath::Path<double> path = knotpath::trace<double>(data.x, data.y);

  std::printf("%4s %12s %-6s %-14s %6s %12s %8s\n", "step", "penalty", "event", "predictor",
              "active", "l1_norm", "r2");
  const double tss = path.preparation().total_sum_of_squares;
  for (const auto& k : path.knots()) {
    const char* name = k.predictor >= 0 ? data.predictor_names[k.predictor].c_str() : "";
    std::printf("%4ld %12.6g %-6s %-14s %6ld %12.6g %8.4f\n", static_cast<long>(k.step), k.penalty,
                knotpath::to_string(k.event).c_str(), name, static_cast<long>(k.active), k.l1_norm,
                1.0 - k.rss / tss);
  }

  const double lambda = 0.1 * path.lambda_max();
  const auto at_penalty = path.at_penalty(lambda);
  std::printf("\nAt penalty %.6g (10%% of lambda_max): intercept %.6g\n", lambda, at_penalty.intercept);
  for (knotpath::Index j = 0; j < at_penalty.coefficients.size(); ++j)
    if (at_penalty.coefficients(j) != 0.0)
      std::printf("  %-14s %12.6g\n", data.predictor_names[j].c_str(), at_penalty.coefficients(j));

  const double budget = 0.5 * path.knots().back().l1_norm;
  const auto at_budget = path.at_budget(budget);
  std::printf("\nAt L1 budget %.6g (half the final norm): penalty %.6g, %zu predictors active\n",
              budget, at_budget.penalty, path.active_at(at_budget.penalty).size());
  return 0;
}
