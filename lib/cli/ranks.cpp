// The processes of one run (ranks.hpp): MPI when built with it and launched
// by an MPI starter, else one process.

#include "ranks.hpp"

#include <fcntl.h>
#include <unistd.h>

#include <cstdlib>

#include <nlohmann/json.hpp>

#include <knotpath/shards.hpp>
#include <knotpath/trace.hpp>

#include "cli.hpp"

#ifdef KNOTPATH_HAVE_MPI
#include <knotpath/mpi_columns.hpp>
#include <knotpath/mpi_statistics.hpp>

#include "chunked_transfer.hpp"
#endif

namespace knotpath::cli {

namespace {

// Whether an MPI starter launched this process: Open MPI, PMIx and the PMI
// of other implementations name the rank in the environment.
bool launched_by_mpi() {
  for (const char* name : {"OMPI_COMM_WORLD_RANK", "PMIX_RANK", "PMI_RANK"})
    if (std::getenv(name) != nullptr) return true;
  return false;
}

#ifdef KNOTPATH_HAVE_MPI
void check(int code, const char* what) {
  if (code != MPI_SUCCESS) throw failure(exit_internal, std::string("internal error: MPI failed to ") + what);
}
#endif

}  // namespace

Ranks& Ranks::world() {
  static Ranks ranks;
  return ranks;
}

void Ranks::start([[maybe_unused]] int& argc, [[maybe_unused]] char**& argv) {
#ifdef KNOTPATH_HAVE_MPI
  if (!launched_by_mpi()) return;
  if (MPI_Init(&argc, &argv) != MPI_SUCCESS) return;
  joined_ = true;
  MPI_Comm_rank(MPI_COMM_WORLD, &rank_);
  MPI_Comm_size(MPI_COMM_WORLD, &size_);
  if (rank_ != 0) {  // rank 0 speaks for the run
    const int quiet = ::open("/dev/null", O_WRONLY);
    if (quiet >= 0) {
      ::dup2(quiet, STDOUT_FILENO);
      ::dup2(quiet, STDERR_FILENO);
      ::close(quiet);
    }
  }
#else
  (void)launched_by_mpi;
#endif
}

void Ranks::finish() {
#ifdef KNOTPATH_HAVE_MPI
  if (joined_) MPI_Finalize();
  joined_ = false;
#endif
}

// Counts beyond INT_MAX (MPI's int) go in chunks: chunked_transfer.hpp.

std::vector<std::string> Ranks::gather(const std::string& text) const {
  if (size_ == 1) return {text};
#ifdef KNOTPATH_HAVE_MPI
  std::vector<std::string> out;
  check(gather_in_chunks(text, out, MPI_COMM_WORLD), "gather the shards' records");
  return out;
#else
  return {text};
#endif
}

std::vector<long long> Ranks::broadcast(std::vector<long long> values) const {
#ifdef KNOTPATH_HAVE_MPI
  if (size_ > 1) check(broadcast_in_chunks(values.data(), values.size(), MPI_LONG_LONG, MPI_COMM_WORLD), "broadcast");
#endif
  return values;
}

std::string Ranks::broadcast_text(std::string text) const {
  if (size_ == 1) return text;
  const std::vector<long long> length = broadcast({static_cast<long long>(text.size())});
  text.resize(static_cast<std::size_t>(length.at(0)));
#ifdef KNOTPATH_HAVE_MPI
  check(broadcast_in_chunks(text.data(), text.size(), MPI_CHAR, MPI_COMM_WORLD), "broadcast");
#endif
  return text;
}

std::string Ranks::scatter(const std::string& bytes, const std::vector<std::size_t>& sizes) const {
  if (rank_ == 0) {
    if (sizes.size() != static_cast<std::size_t>(size_))
      throw failure(exit_internal, "internal error: a scatter needs one size a process");
    std::size_t total = 0;
    for (std::size_t size : sizes) total += size;
    if (total != bytes.size()) throw failure(exit_internal, "internal error: a scatter's sizes miss its bytes");
  }
  if (size_ == 1) return bytes;
#ifdef KNOTPATH_HAVE_MPI
  std::string mine;
  check(scatter_in_chunks(bytes, sizes, mine, MPI_COMM_WORLD), "scatter the folds");
  return mine;
#else
  return bytes;
#endif
}

std::optional<SufficientStatistics<double>> Ranks::reduce(
    std::vector<std::pair<std::size_t, SufficientStatistics<double>>> mine, std::size_t shards,
    Index predictors) const {
#ifdef KNOTPATH_HAVE_MPI
  if (size_ > 1) return mpi::reduce_shard_tree<double>(MPI_COMM_WORLD, std::move(mine), shards, predictors);
#endif
  (void)predictors;
  std::vector<SufficientStatistics<double>> all;  // one process holds every shard, in order
  for (auto& [index, statistics] : mine) {
    if (index != all.size()) throw failure(exit_internal, "internal error: shards out of order");
    all.push_back(std::move(statistics));
  }
  if (all.size() != shards) throw failure(exit_internal, "internal error: a shard is missing");
  return merge_shard_tree(std::move(all));
}

Path<double> Ranks::trace_columns(const Matrix<double>& block, Index first, Index predictors,
                                  const Vector<double>& y, const TraceOptions& options,
                                  const Vector<double>& weights) const {
#ifdef KNOTPATH_HAVE_MPI
  if (joined_) return mpi::trace_column_block<double>(MPI_COMM_WORLD, block, first, predictors, y, options, weights);
#endif
  if (first != 0 || block.cols() != predictors)
    throw failure(exit_internal, "internal error: one process holds a block of the predictors");
  return trace<double>(block, y, options, weights);
}

void Ranks::require_one_process(const std::string& command) const {
  if (size_ > 1)
    throw failure(exit_usage, command + " runs in one process: under mpirun only trace, at and select read a "
                                        "table's shards (run it without mpirun)");
}

std::vector<nlohmann::json> gather_shard_steps(const Ranks& ranks, std::size_t count,
                                               const std::function<nlohmann::json(std::size_t)>& step) {
  nlohmann::json records = nlohmann::json::array();
  for (std::size_t s = 0; s < count; ++s) {
    if (shard_owner(s, count, ranks.size()) != ranks.rank()) continue;
    try {
      nlohmann::json record = step(s);
      record["index"] = s;
      records.push_back(std::move(record));
    } catch (...) {
      const ErrorOutcome error = error_outcome(std::current_exception());
      records.push_back({{"index", s}, {"error", error.message}, {"code", error.code}});
      break;  // this process reads no further shard
    }
  }
  const std::vector<std::string> texts = ranks.gather(records.dump());
  std::vector<nlohmann::json> out;
  if (ranks.rank() != 0) return out;
  out.resize(count);
  for (const auto& text : texts)
    for (auto& record : nlohmann::json::parse(text)) {
      const auto index = record["index"].get<std::size_t>();  // before the move (C++17 evaluates it first)
      out.at(index) = std::move(record);
    }
  return out;
}

std::vector<long long> decide_for_all(const Ranks& ranks, const std::vector<nlohmann::json>& records,
                                      const std::function<std::vector<long long>()>& decide) {
  ErrorOutcome verdict;
  std::vector<long long> values;
  if (ranks.rank() == 0) {
    try {
      for (const auto& record : records)
        if (!record.is_null() && record.contains("error"))
          throw failure(static_cast<ExitCode>(record["code"].get<int>()), record["error"].get<std::string>());
      for (const auto& record : records)
        if (record.is_null()) throw failure(exit_internal, "internal error: a shard was read by no process");
      values = decide();
    } catch (...) {
      verdict = error_outcome(std::current_exception());
    }
  }
  const std::vector<long long> head = ranks.broadcast({verdict.code, static_cast<long long>(values.size())});
  if (head[0] != 0) {
    if (ranks.rank() == 0) throw failure(static_cast<ExitCode>(verdict.code), verdict.message);
    throw quiet_exit{static_cast<int>(head[0])};
  }
  values.resize(static_cast<std::size_t>(head[1]));
  return ranks.broadcast(std::move(values));
}

}  // namespace knotpath::cli
