#pragma once
// The processes of one run of the program (internals of the knotpath
// program): one process, or the ranks of an MPI job when the program was
// built with MPI and launched by mpiexec/mpirun. The collective steps the
// sharded reading needs (table_loading.cpp) are written once here, with a
// one-process form that needs no MPI, so that the path is computed by the
// same steps, and so is the same, for any number of processes.

#include <cstddef>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include <knotpath/statistics.hpp>

namespace knotpath::cli {

/// The processes of this run.
class Ranks {
 public:
  /// The run's processes (one until start() finds an MPI launch).
  static Ranks& world();

  /// Joins the MPI job when the program was built with MPI and launched by
  /// an MPI starter (its environment names a rank); otherwise stays one
  /// process. Processes other than rank 0 write nothing to standard output
  /// or standard error: rank 0 speaks for the run.
  void start(int& argc, char**& argv);
  /// Leaves the MPI job (nothing without one). Called once, at exit.
  void finish();

  /// This process's rank (0: the one that traces and writes).
  int rank() const { return rank_; }
  /// Number of processes.
  int size() const { return size_; }

  /// Every process's text, in rank order, on rank 0; empty elsewhere.
  std::vector<std::string> gather(const std::string& text) const;
  /// Rank 0's values on every process.
  std::vector<long long> broadcast(std::vector<long long> values) const;
  /// The statistics of every shard merged in the shard tree (shards.hpp),
  /// on rank 0 (nullopt elsewhere); `mine` holds this process's shards.
  std::optional<SufficientStatistics<double>> reduce(
      std::vector<std::pair<std::size_t, SufficientStatistics<double>>> mine, std::size_t shards,
      Index predictors) const;

  /// Refuses, on a run of several processes, a command that runs in one
  /// (only trace, at and select read shards).
  void require_one_process(const std::string& command) const;

 private:
  int rank_ = 0;
  int size_ = 1;
  bool joined_ = false;
};

/// Ends a process of a multi-process run without a word: the processes
/// other than rank 0 once their share is done (`code` 0), or after rank 0
/// reported an error for all (its exit status).
struct quiet_exit {
  int code = 0;  ///< the exit status
};

}  // namespace knotpath::cli
