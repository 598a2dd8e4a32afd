// Feed sufficient statistics computed elsewhere (Gram mode): the rows arrive
// in blocks (as from several files or machines), each block is summarized
// into weighted means and centred co-moments, the summaries are merged, and
// the path is traced from the merged summary without the rows.
#include <cstdio>

#include <knotpath/knotpath.hpp>

int main() {
  const knotpath::demo::DemoData data = knotpath::demo::greenhouse();
  using Stats = knotpath::SufficientStatistics<double>;
  // Three "sites" each summarize their own rows.
  Stats merged = Stats::empty(data.x.cols());
  const knotpath::Index blocks[] = {0, 70, 150, data.x.rows()};
  for (int b = 0; b < 3; ++b) {
    const knotpath::Index start = blocks[b], rows = blocks[b + 1] - blocks[b];
    merged.merge(Stats::from_rows(data.x.middleRows(start, rows), data.y.segment(start, rows)));
  }
  const knotpath::Path<double> from_summary = knotpath::trace_statistics(merged);
  knotpath::TraceOptions dense;
  dense.storage = knotpath::Storage::dense;
  const knotpath::Path<double> from_rows = knotpath::trace<double>(data.x, data.y, dense);

  std::printf("knots from the merged summary: %zu, from the rows: %zu\n", from_summary.knots().size(),
              from_rows.knots().size());
  double worst = 0;
  for (std::size_t k = 0; k < from_rows.knots().size() && k < from_summary.knots().size(); ++k)
    worst = std::max(worst, std::abs(from_rows.knots()[k].penalty - from_summary.knots()[k].penalty) /
                                from_rows.lambda_max());
  std::printf("largest knot difference relative to lambda_max: %.2e\n", worst);
  // Same path to rounding (the two routes sum the same products in different orders).
  return from_summary.knots().size() == from_rows.knots().size() && worst < 1e-10 ? 0 : 1;
}
