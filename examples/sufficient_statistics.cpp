// Feed sufficient statistics computed elsewhere (Gram mode): the rows arrive
// in blocks (as from several files or machines), each block is summarized
// into weighted means and centred co-moments, the summaries are merged, and
// the path is traced from the merged summary without the rows. Then the
// same rows stream through a StatisticsAccumulator a few at a time, as a
// file larger than memory would be read, and trace the in-memory Gram path
// bit for bit.
#include <algorithm>
#include <cmath>
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
  const bool merged_ok = from_summary.knots().size() == from_rows.knots().size() && worst < 1e-10;

  // Streaming: pieces of 7 rows (any size will do) into one accumulator,
  // which keeps one block of rows and the p x p statistics.
  knotpath::StatisticsAccumulator<double> stream(data.x.cols(), /*weighted=*/false);
  for (knotpath::Index start = 0; start < data.x.rows(); start += 7) {
    const knotpath::Index rows = std::min<knotpath::Index>(7, data.x.rows() - start);
    stream.add(data.x.middleRows(start, rows), knotpath::Vector<double>(data.y.segment(start, rows)));
  }
  knotpath::TraceOptions gram;
  gram.storage = knotpath::Storage::gram;
  const knotpath::Path<double> streamed = knotpath::trace_statistics(stream.finish(), gram);
  const knotpath::Path<double> in_memory = knotpath::trace<double>(data.x, data.y, gram);
  bool identical = streamed.knots().size() == in_memory.knots().size();
  for (std::size_t k = 0; identical && k < in_memory.knots().size(); ++k)
    identical = streamed.knots()[k].penalty == in_memory.knots()[k].penalty &&
                streamed.dense_coefficients(k) == in_memory.dense_coefficients(k);
  std::printf("streamed in pieces of 7 rows: %zu knots, %s the in-memory Gram path\n", streamed.knots().size(),
              identical ? "bit for bit" : "NOT equal to");
  return merged_ok && identical ? 0 : 1;
}
