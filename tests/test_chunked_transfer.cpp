// The transfers under the program's collective steps (lib/cli/chunked_transfer.hpp,
// used by Ranks in lib/cli/ranks.cpp), run by CTest under mpiexec with 1, 2
// and 4 processes. MPI counts in int, so counts beyond INT_MAX go in chunks;
// here the chunk is 3 elements, so that gathers, broadcasts and scatters of
// a few bytes cross many chunk boundaries (none, one and several chunks a
// process; a process with nothing to send) without 2^31 elements. The chunk
// planner is checked as a pure function, up to counts beyond INT_MAX.

#include <gtest/gtest.h>
#include <mpi.h>

#include <climits>
#include <cstddef>
#include <string>
#include <vector>

#include "../lib/cli/chunked_transfer.hpp"

#include "mpi_test_main.hpp"

namespace {

using knotpath::cli::Chunk;
using knotpath::cli::chunks_of;

int rank_of_world() {
  int rank = 0;
  MPI_Comm_rank(MPI_COMM_WORLD, &rank);
  return rank;
}

int size_of_world() {
  int size = 1;
  MPI_Comm_size(MPI_COMM_WORLD, &size);
  return size;
}

// Process r's text: 3 r + (r % 2) bytes (0 for rank 0: a process with
// nothing to send), each naming its rank and place.
std::string text_of(int r) {
  std::string out;
  for (int i = 0; i < 3 * r + r % 2; ++i) out.push_back(static_cast<char>('a' + (7 * r + i) % 26));
  return out;
}

TEST(ChunkedTransfer, ChunksCoverTheCountInOrderWithinTheLimit) {
  EXPECT_TRUE(chunks_of(0, 3).empty());
  for (std::size_t count : {1u, 2u, 3u, 4u, 7u, 9u}) {
    const std::vector<Chunk> chunks = chunks_of(count, 3);
    EXPECT_EQ(chunks.size(), (count + 2) / 3) << count;
    std::size_t next = 0;
    for (const Chunk& chunk : chunks) {
      EXPECT_EQ(chunk.first, next) << count;
      EXPECT_GE(chunk.length, 1) << count;
      EXPECT_LE(chunk.length, 3) << count;
      next += static_cast<std::size_t>(chunk.length);
    }
    EXPECT_EQ(next, count);
  }
  // The program's limit: a count past INT_MAX (no memory needed to plan it)
  // goes in int-sized runs: 2^33 + 5 = 4 (2^31 - 1) + 9.
  const std::size_t huge = (std::size_t{1} << 33) + 5;
  const std::vector<Chunk> chunks = chunks_of(huge);
  ASSERT_EQ(chunks.size(), 5u);
  for (std::size_t i = 0; i < 4; ++i) EXPECT_EQ(chunks[i].length, INT_MAX);
  EXPECT_EQ(chunks[4].first, 4 * static_cast<std::size_t>(INT_MAX));
  EXPECT_EQ(chunks[4].length, 9);
}

TEST(ChunkedTransfer, GatherInChunksOfThreeGivesEveryTextInRankOrder) {
  const int rank = rank_of_world(), size = size_of_world();
  std::vector<std::string> all;
  ASSERT_EQ(knotpath::cli::gather_in_chunks(text_of(rank), all, MPI_COMM_WORLD, 3), MPI_SUCCESS);
  if (rank != 0) {
    EXPECT_TRUE(all.empty());
    return;
  }
  ASSERT_EQ(all.size(), static_cast<std::size_t>(size));
  for (int r = 0; r < size; ++r) EXPECT_EQ(all[static_cast<std::size_t>(r)], text_of(r)) << r;
}

TEST(ChunkedTransfer, BroadcastInChunksOfThreeGivesRankZerosValues) {
  const int rank = rank_of_world();
  std::vector<long long> values(11, -1);
  if (rank == 0)
    for (std::size_t i = 0; i < values.size(); ++i) values[i] = 1000 + 37 * static_cast<long long>(i);
  ASSERT_EQ(knotpath::cli::broadcast_in_chunks(values.data(), values.size(), MPI_LONG_LONG, MPI_COMM_WORLD, 3),
            MPI_SUCCESS);
  for (std::size_t i = 0; i < values.size(); ++i) EXPECT_EQ(values[i], 1000 + 37 * static_cast<long long>(i)) << i;
}

TEST(ChunkedTransfer, ScatterInChunksOfThreeHandsEachProcessItsShare) {
  const int rank = rank_of_world(), size = size_of_world();
  std::string bytes;
  std::vector<std::size_t> sizes;
  if (rank == 0)
    for (int r = 0; r < size; ++r) {
      // rank 1 gets nothing; the others shares of 1 to 10 bytes
      const std::string share = r == 1 ? std::string() : text_of(r + 1);
      bytes += share;
      sizes.push_back(share.size());
    }
  std::string mine = "stale";
  ASSERT_EQ(knotpath::cli::scatter_in_chunks(bytes, sizes, mine, MPI_COMM_WORLD, 3), MPI_SUCCESS);
  EXPECT_EQ(mine, rank == 1 ? std::string() : text_of(rank + 1));
}

}  // namespace

int main(int argc, char** argv) { return knotpath::testing::run_tests_on_every_process(argc, argv); }
