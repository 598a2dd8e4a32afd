#pragma once
// The processes of one run of the program (internals of the knotpath
// program): one process, or the ranks of an MPI job when the program was
// built with MPI and launched by mpiexec/mpirun. The collective steps the
// sharded reading needs (table_loading.cpp) are written once here, with a
// one-process form that needs no MPI, so that the path is computed by the
// same steps, and so is the same, for any number of processes.
//
// The rule for failures of the sharded reading (trace, at and select) has
// its one home here too (gather_shard_steps, decide_for_all): every step
// that can fail on a shard is reported to rank 0 as a record; the first
// failure in shard order stops every process with one message (the shard's
// file and line) and its exit status. The records are JSON objects
// (nlohmann/json_fwd.hpp, as cli.hpp already declares them).

#include <cstddef>
#include <functional>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include <nlohmann/json_fwd.hpp>

#include <knotpath/path.hpp>
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

  /// Every process's text, in rank order, on rank 0; empty elsewhere. The
  /// collective steps below send counts beyond INT_MAX in chunks
  /// (chunked_transfer.hpp).
  std::vector<std::string> gather(const std::string& text) const;
  /// Rank 0's values on every process.
  std::vector<long long> broadcast(std::vector<long long> values) const;
  /// Rank 0's text on every process (`text` is read on rank 0 only).
  std::string broadcast_text(std::string text) const;
  /// Rank 0's `bytes` handed out in rank order: the first `sizes[0]` bytes
  /// stay on rank 0, the next `sizes[1]` go to rank 1, and so on; returns
  /// this process's share. `bytes` and `sizes` (one size a process, summing
  /// to bytes.size()) are read on rank 0 only. Unlike broadcast(), no
  /// process but rank 0 holds more than its own share.
  std::string scatter(const std::string& bytes, const std::vector<std::size_t>& sizes) const;
  /// The statistics of every shard merged in the shard tree (shards.hpp),
  /// on rank 0 (nullopt elsewhere); `mine` holds this process's shards.
  std::optional<SufficientStatistics<double>> reduce(
      std::vector<std::pair<std::size_t, SufficientStatistics<double>>> mine, std::size_t shards,
      Index predictors) const;

  /// The path of a dense design whose predictors are spread over the
  /// processes (--column-blocks): this process holds `block`, predictors
  /// [first, first + block.cols()) of `predictors`, and every process the
  /// whole `y`, `weights` and `options`. In an MPI job (of any size) the
  /// processes trace it together (mpi::trace_column_block); a process that
  /// is not part of one holds every predictor and traces them itself.
  /// Collective; the same Path on every process.
  Path<double> trace_columns(const Matrix<double>& block, Index first, Index predictors, const Vector<double>& y,
                             const TraceOptions& options, const Vector<double>& weights) const;

  /// Refuses, on a run of several processes, a command that runs in one
  /// (only trace, at and select read shards).
  void require_one_process(const std::string& command) const;

 private:
  int rank_ = 0;
  int size_ = 1;
  bool joined_ = false;
};

/// Runs `step(s)` for each shard s of `count` this process owns
/// (shard_owner, shards.hpp), in shard order, stopping at its first
/// failure; returns every shard's record on rank 0, in shard order (empty
/// elsewhere): the step's record, or the failure's "error" and "code"
/// (error_outcome), each with the shard's "index". A shard after a failure
/// of its process has no record (null). Collective: every process calls it.
std::vector<nlohmann::json> gather_shard_steps(const Ranks& ranks, std::size_t count,
                                               const std::function<nlohmann::json(std::size_t)>& step);

/// Rank 0 decides from gather_shard_steps()'s `records`: the first failure
/// in shard order (a null record follows an earlier failure of its process,
/// which owns a run of shards), else `decide()`'s values or its refusal.
/// Every process gets the values; a failure is thrown on rank 0 (failure,
/// with its message and status) and ends the others quietly with its status
/// (quiet_exit). `decide` runs on rank 0 only. Collective.
std::vector<long long> decide_for_all(const Ranks& ranks, const std::vector<nlohmann::json>& records,
                                      const std::function<std::vector<long long>()>& decide);

/// Ends a process of a multi-process run without a word: the processes
/// other than rank 0 once their share is done (`code` 0), or after rank 0
/// reported an error for all (its exit status).
struct quiet_exit {
  int code = 0;  ///< the exit status
};

}  // namespace knotpath::cli
