// The shard tree over an MPI communicator (mpi_statistics.hpp), run by CTest
// under mpiexec with 1, 2 and 4 processes: the merged statistics are the
// bits of merge_shard_tree() in one process for every count, and agree with
// the statistics of all the rows read as one (from_rows) to rounding. The
// rows are invented (a fixed-seed generator), the same on every process;
// each process summarises only the shards it owns.

#include <gtest/gtest.h>
#include <mpi.h>

#include <cmath>
#include <cstdint>
#include <utility>
#include <vector>

#include <knotpath/mpi_statistics.hpp>
#include <knotpath/shards.hpp>
#include <knotpath/trace.hpp>

#include "lcg.hpp"
#include "mpi_test_main.hpp"

namespace {

namespace kp = knotpath;
using kp::Index;

struct Shard {
  kp::Matrix<double> x;
  kp::Vector<double> y, w;
};

// Shard s of an invented table: 3 + 17 s mod 41 rows of p predictors with
// weights 0 to 3 (weight-0 rows included: they count as rows, not in the sums).
std::vector<Shard> make_shards(std::size_t count, Index p) {
  knotpath::testing::Lcg lcg(99);
  auto next = [&] { return lcg.centred(); };
  std::vector<Shard> shards(count);
  for (std::size_t s = 0; s < count; ++s) {
    const Index m = static_cast<Index>(3 + (17 * s) % 41);
    Shard& shard = shards[s];
    shard.x.resize(m, p);
    shard.y.resize(m);
    shard.w.resize(m);
    for (Index i = 0; i < m; ++i) {
      for (Index j = 0; j < p; ++j) shard.x(i, j) = 100 + next() + (j > 0 ? 0.5 * shard.x(i, j - 1) : 0.0);
      shard.y(i) = shard.x(i, 0) - 2 * shard.x(i, p - 1) + next();
      shard.w(i) = static_cast<double>((i + static_cast<Index>(s)) % 4);
    }
  }
  return shards;
}

kp::SufficientStatistics<double> statistics_of(const Shard& shard) {
  kp::StatisticsAccumulator<double> acc(shard.x.cols(), true);
  acc.add(shard.x, shard.y, shard.w);
  return acc.finish();
}

TEST(MpiStatistics, TheShardTreeGivesTheSameBitsForEveryNumberOfProcesses) {
  int rank = 0, size = 1;
  MPI_Comm_rank(MPI_COMM_WORLD, &rank);
  MPI_Comm_size(MPI_COMM_WORLD, &size);
  const Index p = 5;
  for (std::size_t count : {1u, 2u, 3u, 5u, 8u, 13u}) {
    SCOPED_TRACE(testing::Message() << count << " shards on " << size << " processes");
    const std::vector<Shard> shards = make_shards(count, p);
    std::vector<std::pair<std::size_t, kp::SufficientStatistics<double>>> mine;
    for (std::size_t s = 0; s < count; ++s)
      if (kp::shard_owner(s, count, size) == rank) mine.emplace_back(s, statistics_of(shards[s]));
    const auto root = kp::mpi::reduce_shard_tree<double>(MPI_COMM_WORLD, std::move(mine), count, p);
    ASSERT_EQ(root.has_value(), rank == 0);
    if (rank != 0) continue;
    std::vector<kp::SufficientStatistics<double>> all;
    for (const Shard& shard : shards) all.push_back(statistics_of(shard));
    const auto expected = kp::merge_shard_tree(std::move(all));
    EXPECT_EQ(kp::flatten_statistics(*root), kp::flatten_statistics(expected));  // every bit

    // Against the rows read as one: the same statistics up to rounding
    // (Chan, Golub & LeVeque 1979: the merge is exact in exact arithmetic).
    Index n = 0;
    for (const Shard& shard : shards) n += shard.x.rows();
    kp::Matrix<double> x(n, p);
    kp::Vector<double> y(n), w(n);
    Index at = 0;
    for (const Shard& shard : shards) {
      x.middleRows(at, shard.x.rows()) = shard.x;
      y.segment(at, shard.x.rows()) = shard.y;
      w.segment(at, shard.x.rows()) = shard.w;
      at += shard.x.rows();
    }
    const auto whole = kp::SufficientStatistics<double>::from_rows(x, y, w);
    EXPECT_EQ(root->rows, whole.rows);
    EXPECT_EQ(root->weight_sum, whole.weight_sum);
    const double scale = whole.comoments.cwiseAbs().maxCoeff();
    EXPECT_LE((root->comoments - whole.comoments).cwiseAbs().maxCoeff(), 1e-12 * scale);
    EXPECT_LE((root->cross - whole.cross).cwiseAbs().maxCoeff(), 1e-12 * whole.cross.cwiseAbs().maxCoeff());
    EXPECT_LE((root->means - whole.means).cwiseAbs().maxCoeff(), 1e-13 * whole.means.cwiseAbs().maxCoeff());
  }
}

TEST(MpiStatistics, ShardOwnersAreContiguousAndProcessZeroHoldsTheFirst) {
  // The owner rule on its own (no communication): every process count up
  // to 9 and shard count up to 30.
  for (int processes = 1; processes <= 9; ++processes)
    for (std::size_t count = 1; count <= 30; ++count) {
      EXPECT_EQ(kp::shard_owner(0, count, processes), 0);
      for (std::size_t s = 1; s < count; ++s) {
        const int before = kp::shard_owner(s - 1, count, processes), owner = kp::shard_owner(s, count, processes);
        EXPECT_LE(before, owner);
        EXPECT_LT(owner, processes);
      }
      if (count >= static_cast<std::size_t>(processes)) {  // every process holds one at least
        EXPECT_EQ(kp::shard_owner(count - 1, count, processes), processes - 1);
      }
    }
}

}  // namespace

int main(int argc, char** argv) { return knotpath::testing::run_tests_on_every_process(argc, argv); }
