#pragma once
// The main() of the test programs CTest runs under mpiexec: MPI started,
// one report (the listeners of the processes other than 0 stay silent), and
// a failure on any process fails every process's exit status.

#include <gtest/gtest.h>
#include <mpi.h>

namespace knotpath::testing {

/// Runs every test on every process of MPI_COMM_WORLD; the exit status.
inline int run_tests_on_every_process(int argc, char** argv) {
  MPI_Init(&argc, &argv);
  ::testing::InitGoogleTest(&argc, argv);
  int rank = 0;
  MPI_Comm_rank(MPI_COMM_WORLD, &rank);
  if (rank != 0) {
    auto& listeners = ::testing::UnitTest::GetInstance()->listeners();
    delete listeners.Release(listeners.default_result_printer());
  }
  const int failed = RUN_ALL_TESTS();
  int any = 0;
  MPI_Allreduce(&failed, &any, 1, MPI_INT, MPI_MAX, MPI_COMM_WORLD);
  MPI_Finalize();
  return any;
}

}  // namespace knotpath::testing
