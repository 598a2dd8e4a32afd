// Choose a penalty for the built-in demonstration data by exact 10-fold
// cross-validation, compare with Mallows' Cp, AIC and BIC along the path,
// and print the covariance and spacing tests beside each entry.
#include <cstdio>

#include <knotpath/criteria.hpp>
#include <knotpath/cross_validation.hpp>
#include <knotpath/inference.hpp>
#include <knotpath/knotpath.hpp>

namespace {

void print_coefficients(const knotpath::Path<double>& path, const knotpath::Solution<double>& at) {
  std::printf("  %-14s %12.6g\n", "(intercept)", at.intercept);
  for (const auto& c : path.named_coefficients(at)) std::printf("  %-14s %12.6g\n", c.name.c_str(), c.value);
}

}  // namespace

int main() {
  const knotpath::demo::DemoData data = knotpath::demo::greenhouse();

  knotpath::CrossValidationOptions cv;
  cv.folds = 10;
  cv.seed = 20261201;
  cv.threads = 2;  // the result does not depend on it
  knotpath::TraceOptions options;
  options.predictor_names = data.predictor_names;  // carried by every path
  const auto result = knotpath::cross_validate<double>(data.x, data.y, options, cv);
  const auto& path = result.full_path;

  std::printf("Exact 10-fold cross-validation: %zu quadratic pieces on mu in [%.6g, %.6g]\n",
              result.pieces.size(), result.mu_low, result.mu_high);
  const auto& best = result.minimum;
  const auto& lean = result.parsimonious;
  std::printf("\nMinimum:      mu %.6g  lambda %.6g  CV error %.6g (SE %.4g), %zu predictors\n", best.mu,
              best.lambda, best.error, best.standard_error, path.active_at(best.lambda).size());
  print_coefficients(path, path.at_penalty(best.lambda));
  std::printf("\nParsimonious: mu %.6g  lambda %.6g  CV error %.6g (SE %.4g), %zu predictors\n", lean.mu,
              lean.lambda, lean.error, lean.standard_error, path.active_at(lean.lambda).size());
  print_coefficients(path, path.at_penalty(lean.lambda));

  const auto ic = knotpath::information_criteria<double>(data.x, data.y, path);
  std::printf("\nNoise variance %.6g (least-squares fit, %ld residual df; the generating model's is %.6g)\n",
              ic.noise_variance, static_cast<long>(ic.residual_df), data.noise_sd * data.noise_sd);
  const auto report = [&](const char* name, std::size_t k) {
    const auto& c = ic.knots[k];
    std::printf("  %-12s step %2ld  lambda %10.6g  %2ld nonzero\n", name, static_cast<long>(c.step), c.penalty,
                static_cast<long>(c.nonzero));
  };
  report("Mallows' Cp", ic.best_cp);
  report("AIC", ic.best_aic);
  report("BIC", ic.best_bic);

  const auto sig = knotpath::entry_significance<double>(data.x, data.y, path);
  std::printf("\nEntries (covariance test with F(2, %ld) reference; spacing test with the estimated sigma):\n",
              static_cast<long>(sig.residual_df));
  std::printf("  %4s %-14s %10s %10s %11s %11s\n", "step", "predictor", "penalty", "T_k", "p (cov)", "p (spacing)");
  for (const auto& e : sig.entries)
    std::printf("  %4ld %-14s %10.5g %10.4g %11.3g %11.3g %s\n", static_cast<long>(e.step),
                path.predictor_name(e.predictor).c_str(), e.penalty,
                e.covariance_statistic, e.covariance_p_value, e.spacing_p_value, e.note.c_str());
  std::printf("\nThe p-values assume a linear model with Gaussian noise of constant variance; each asks only\n"
              "whether the entering predictor improves on those already active. Do not use them alone\n"
              "for decisions that affect people.\n");
  return 0;
}
