// Trace the lasso path of the built-in demonstration data, print the audit of
// events, and query the path at a penalty, at a size-free penalty mu, at an
// L1 budget and at several penalties at once.
#include <cstdio>

#include <knotpath/knotpath.hpp>

int main() {
  const knotpath::demo::DemoData data = knotpath::demo::greenhouse();
  knotpath::TraceOptions options;
  options.predictor_names = data.predictor_names;  // the path answers by name
  const knotpath::Path<double> path = knotpath::trace<double>(data.x, data.y, options);

  std::printf("%4s %12s %-6s %-14s %6s %12s %12s %8s\n", "step", "penalty", "event", "predictor",
              "active", "penalized_l1", "plain_l1", "r2");
  const double tss = path.preparation().total_sum_of_squares;
  for (const auto& k : path.knots()) {
    const std::string name = k.predictor >= 0 ? path.predictor_name(k.predictor) : "";
    std::printf("%4ld %12.6g %-6s %-14s %6ld %12.6g %12.6g %8.4f\n", static_cast<long>(k.step), k.penalty,
                knotpath::to_string(k.event).c_str(), name.c_str(), static_cast<long>(k.active_count),
                k.penalized_l1, k.plain_l1, 1.0 - k.rss / tss);
  }

  const double lambda = 0.1 * path.lambda_max();
  const auto at_penalty = path.at_penalty(lambda);
  std::printf("\nAt penalty %.6g (10%% of lambda_max; mu %.6g): intercept %.6g\n", lambda, path.mu_of(lambda),
              at_penalty.intercept);
  for (const auto& c : path.named_coefficients(at_penalty)) std::printf("  %-14s %12.6g\n", c.name.c_str(), c.value);

  const auto at_mu = path.at_mu(0.05);
  std::printf("\nAt mu 0.05 (lambda %.6g): co2_ppm %.6g\n", at_mu.penalty, path.coefficient(at_mu, "co2_ppm"));

  const double budget = 0.5 * path.knots().back().penalized_l1;
  const auto at_budget = path.at_budget(budget);
  std::printf("\nAt penalized L1 budget %.6g (half the final norm): penalty %.6g, %zu predictors active, "
              "plain L1 %.6g\n",
              budget, at_budget.penalty, path.active_at(at_budget.penalty).size(), at_budget.plain_l1);

  const auto block = path.solutions_at({0.5 * path.lambda_max(), 0.25 * path.lambda_max(), 0.0});
  std::printf("\nThree penalties at once: a %ld x %ld block; intercepts %.6g %.6g %.6g\n",
              static_cast<long>(block.coefficients.rows()), static_cast<long>(block.coefficients.cols()),
              block.intercepts(0), block.intercepts(1), block.intercepts(2));
  return 0;
}
