// Audit the order in which predictors enter and leave the lasso path of the
// demonstration data: who entered when, with which sign, at what penalty and
// correlation with the residual, and which predictors the preparation left
// out or the tracer held out.
#include <cstdio>
#include <map>

#include <knotpath/knotpath.hpp>

int main() {
  const knotpath::demo::DemoData data = knotpath::demo::greenhouse();
  knotpath::TraceOptions options;
  options.predictor_names = data.predictor_names;
  const knotpath::Path<double> path = knotpath::trace<double>(data.x, data.y, options);

  std::printf("%-14s %-6s %5s %12s %12s %12s\n", "predictor", "event", "sign", "penalty", "mu", "correlation");
  std::map<knotpath::Index, int> times_entered;
  for (const auto& event : path.events()) {
    std::printf("%-14s %-6s %5s %12.6g %12.6g %12.4f\n", path.predictor_name(event.predictor).c_str(),
                knotpath::to_string(event.kind).c_str(), event.sign > 0 ? "+" : "-", event.penalty,
                path.mu_of(event.penalty), event.correlation);
    if (event.kind == knotpath::EventKind::enter) ++times_entered[event.predictor];
  }
  for (const auto& ex : path.excluded())
    std::printf("left out before tracing: %s (%s)\n", path.predictor_name(ex.predictor).c_str(), ex.reason.c_str());
  for (const auto& held : path.held_out())
    std::printf("held out at penalty %g: %s (collinear with the active set)\n", held.penalty,
                path.predictor_name(held.predictor).c_str());
  std::printf("stop reason: %s\n", knotpath::to_string(path.stop_reason()).c_str());

  // Sanity for CTest: every predictor entered at least once on this data.
  return times_entered.size() == static_cast<std::size_t>(data.x.cols()) ? 0 : 1;
}
