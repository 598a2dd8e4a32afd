// Columns over processes (issue 20, see bench/README.md): the first knots of
// a wide design traced with its predictors spread over the processes of an
// MPI job (mpi_columns.hpp), against the same knots traced by one process
// holding the whole design through the view design (the storage the library
// picks for wide dense designs). Run it under mpirun; it reports, on rank 0:
//   column_s_per_knot  the trace's wall time per row of the knot table over
//                      all processes (the slowest process's clock: the
//                      trace ends together)
//   view_s_per_knot    the same for one process with the view design, timed
//                      in the same run while the other processes wait
//   ratio              column_s_per_knot / view_s_per_knot
//   bytes_per_knot     the payload the column design exchanged during the
//                      trace per row (ColumnBlockDesign::traffic: reductions,
//                      gathered tied entries, broadcast entering columns),
//                      beside the n values of one column and the q values a
//                      design gathering Z^T u per knot would move
// Usage: mpirun -n R bench_mpi_columns [n] [p] [knots] [repeats]
// (defaults 2000 200000 50 3: the shape; CI runs a small one).
// The design is invented: column j is drawn from its own fixed-seed
// generator (the same matrix for any number of processes), and the response
// is a sum of ten columns plus noise.

#include <mpi.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <string>
#include <vector>

#include <knotpath/mpi_columns.hpp>
#include <knotpath/problem.hpp>
#include <knotpath/trace.hpp>

#include "lcg.hpp"
#include "timing.hpp"

namespace {

namespace kp = knotpath;
using kp::Index;

// Column j of the invented design: uniform values from the generator seeded
// by j (a 64-bit LCG, Knuth's MMIX constants; common practice).
void fill_column(Eigen::Ref<kp::Vector<double>> column, Index j) {
  knotpath::testing::Lcg lcg(0x9e3779b97f4a7c15ULL * static_cast<std::uint64_t>(j + 1));
  for (Index i = 0; i < column.size(); ++i) column(i) = lcg.centred();
}

kp::Vector<double> response(Index n, Index p) {
  kp::Vector<double> y = kp::Vector<double>::Zero(n), column(n);
  for (Index k = 0; k < 10; ++k) {
    const Index j = (k * 7919) % p;
    fill_column(column, j);
    y += (k % 2 ? -1.0 : 1.0) * (1.0 + 0.25 * static_cast<double>(k)) * column;
  }
  knotpath::testing::Lcg noise(7);
  for (Index i = 0; i < n; ++i) y(i) += 0.5 * noise.centred();
  return y;
}

double now() { return std::chrono::duration<double>(std::chrono::steady_clock::now().time_since_epoch()).count(); }

}  // namespace

int main(int argc, char** argv) {
  MPI_Init(&argc, &argv);
  int rank = 0, size = 1;
  MPI_Comm_rank(MPI_COMM_WORLD, &rank);
  MPI_Comm_size(MPI_COMM_WORLD, &size);
  const Index n = argc > 1 ? std::atol(argv[1]) : 2000;
  const Index p = argc > 2 ? std::atol(argv[2]) : 200000;
  const std::size_t knots = argc > 3 ? std::strtoul(argv[3], nullptr, 10) : 50;
  const int repeats = argc > 4 ? std::atoi(argv[4]) : 3;
  kp::TraceOptions options;
  options.max_knots = knots;
  const kp::Vector<double> y = response(n, p);

  std::vector<double> column_times, view_times;
  double bytes_per_knot = 0, rows = 0;
  {
    const auto [first, count] = kp::mpi::column_block(p, rank, size);
    kp::Matrix<double> block(n, count);
    for (Index k = 0; k < count; ++k) fill_column(block.col(k), first + k);
    const auto prepared = kp::mpi::prepare_column_block<double>(MPI_COMM_WORLD, block, first, p, y, options);
    block.resize(0, 0);
    for (int r = 0; r < repeats; ++r) {
      MPI_Barrier(MPI_COMM_WORLD);
      const auto before = prepared.design.traffic();
      const double start = now();
      const kp::Path<double> path = kp::trace_design(prepared.design, prepared.preparation, options);
      double elapsed = now() - start, slowest = 0;
      MPI_Allreduce(&elapsed, &slowest, 1, MPI_DOUBLE, MPI_MAX, MPI_COMM_WORLD);
      rows = static_cast<double>(path.knots().size());
      column_times.push_back(slowest / rows);
      bytes_per_knot = static_cast<double>(prepared.design.traffic().bytes - before.bytes) / rows;
    }
  }
  if (rank == 0) {
    kp::Matrix<double> x(n, p);
    for (Index j = 0; j < p; ++j) fill_column(x.col(j), j);
    kp::TraceOptions view = options;
    view.storage = kp::Storage::view;
    const auto prepared = kp::prepare_view<double>(x, y, view);
    for (int r = 0; r < repeats; ++r) {
      const double start = now();
      const kp::Path<double> path = kp::trace_design(prepared.design, prepared.preparation, view);
      view_times.push_back((now() - start) / static_cast<double>(path.knots().size()));
    }
    const double column_s = kp::bench::median(column_times), view_s = kp::bench::median(view_times);
    std::printf("processes %d  n %ld  p %ld  rows %.0f  repeats %d\n", size, static_cast<long>(n),
                static_cast<long>(p), rows, repeats);
    std::printf("column_s_per_knot %.6g  view_s_per_knot %.6g  ratio %.4g\n", column_s, view_s, column_s / view_s);
    std::printf("bytes_per_knot %.6g  (one column: %.6g, q values: %.6g)\n", bytes_per_knot,
                static_cast<double>(n) * 8.0, static_cast<double>(p) * 8.0);
  }
  MPI_Barrier(MPI_COMM_WORLD);
  MPI_Finalize();
  return 0;
}
