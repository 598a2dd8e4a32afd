// A screening pipeline: one design, many responses. The greenhouse design
// of the demo data is prepared once (PathSolver) and traced against 200
// invented outcomes (one per plant line; each driven by a few conditions
// plus noise, drawn with a fixed seed), on two threads; the same paths as
// 200 separate trace() calls, for the price of one preparation.
#include <cstdio>
#include <map>
#include <string>

#include <knotpath/knotpath.hpp>

int main() {
  const knotpath::demo::DemoData data = knotpath::demo::greenhouse();
  const knotpath::Index n = data.x.rows(), lines = 200;

  // Invented outcomes: line r responds to conditions r mod 14 and (3 r + 5) mod 14.
  knotpath::detail::SplitMix64 random(20261203);
  knotpath::Matrix<double> outcomes(n, lines);
  for (knotpath::Index r = 0; r < lines; ++r) {
    const knotpath::Index a = r % 14, b = (3 * r + 5) % 14;
    for (knotpath::Index i = 0; i < n; ++i)
      outcomes(i, r) = data.x(i, a) / data.x.col(a).norm() * 40.0 - data.x(i, b) / data.x.col(b).norm() * 25.0 +
                       random.normal();
  }

  knotpath::TraceOptions options;
  options.predictor_names = data.predictor_names;
  options.max_active = 5;  // a screen: the first few entries are what is read
  const knotpath::PathSolver<double> solver(data.x, options, {}, static_cast<std::size_t>(lines));
  const std::vector<knotpath::Path<double>> paths = solver.trace_block(outcomes, /*threads=*/2);

  std::map<std::string, int> first_entries;
  for (const auto& path : paths) {
    const auto events = path.events();
    if (!events.empty()) ++first_entries[path.predictor_name(events.front().predictor)];
  }
  std::printf("%ld outcomes traced against one prepared design (%s storage)\n", static_cast<long>(lines),
              solver.storage() == knotpath::Storage::gram ? "Gram" : "dense");
  std::printf("first predictor to enter, by count:\n");
  for (const auto& [name, count] : first_entries) std::printf("  %-14s %d\n", name.c_str(), count);

  // The first outcome's path is the one trace() gives, to the last bit.
  const auto direct = knotpath::trace<double>(data.x, knotpath::Vector<double>(outcomes.col(0)), options);
  const bool same = direct.knots().size() == paths[0].knots().size() &&
                    direct.knots().back().penalty == paths[0].knots().back().penalty;
  std::printf("outcome 1: %zu knots, same as trace(): %s\n", paths[0].knots().size(), same ? "yes" : "no");
  return same ? 0 : 1;
}
