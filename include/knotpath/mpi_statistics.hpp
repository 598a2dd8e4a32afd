#pragma once
/// \file mpi_statistics.hpp
/// \brief Statistics of rows spread over the processes of an MPI job,
/// merged in the shard tree of shards.hpp: the same bits for any number of
/// processes, and the same as merge_shard_tree() in one process. Needs MPI
/// (include it only in a program built with MPI; knotpath.hpp does not).
///
/// References: the tree and the merge are those of shards.hpp (Chan, Golub
/// & LeVeque 1979; Higham 1993). The communication is plain MPI point to
/// point (Message Passing Interface Forum, "MPI: A Message-Passing Interface
/// Standard", version 3.1, 2015, sections 3.4 and 3.7).
///
/// How. Every process owns the shards shard_owner() gives it and their
/// statistics. The tree is computed level by level; a node is computed by
/// the owner of its first shard, which always owns the node's left half.
/// When the right half belongs to another process, that process sends it
/// (one message of flat_statistics_size(p) values). Owners grow with the
/// shard index, so at one level a process receives at most one node from a
/// given process and the level number is a sufficient message tag. The root
/// ends on process 0 (the owner of shard 0). Messages: at most one per
/// process and level, ceil(log2 S) levels; bytes per message 8 (p^2 + 4p +
/// 4) for doubles.

#include <mpi.h>

#include <cstddef>
#include <map>
#include <optional>
#include <stdexcept>
#include <type_traits>
#include <utility>
#include <vector>

#include "errors.hpp"
#include "shards.hpp"
#include "statistics.hpp"

namespace knotpath::mpi {

/// The MPI datatype of a floating scalar type.
template <class Scalar>
MPI_Datatype datatype() {
  static_assert(std::is_floating_point_v<Scalar>, "MPI statistics need a built-in floating type");
  if constexpr (std::is_same_v<Scalar, float>) return MPI_FLOAT;
  else if constexpr (std::is_same_v<Scalar, double>) return MPI_DOUBLE;
  else return MPI_LONG_DOUBLE;
}

/// Merges the statistics of the shards of every process of `comm` in the
/// shard tree; the root (the statistics of all rows) is returned on process
/// 0, nullopt elsewhere. `mine` holds this process's shards as (shard index,
/// statistics), each index owned by this process (shard_owner of `shards`
/// among the communicator's size), every shard of the job held by exactly
/// one process; `predictors` is p on every process. Collective: every
/// process of `comm` calls it. Throws invalid_option for an index this
/// process does not own, invalid_data for statistics of another width, and
/// std::runtime_error when MPI fails.
template <class Scalar>
std::optional<SufficientStatistics<Scalar>> reduce_shard_tree(
    MPI_Comm comm, std::vector<std::pair<std::size_t, SufficientStatistics<Scalar>>> mine, std::size_t shards,
    Index predictors) {
  int rank = 0, size = 1;
  MPI_Comm_rank(comm, &rank);
  MPI_Comm_size(comm, &size);
  std::map<std::size_t, SufficientStatistics<Scalar>> level;  // this process's nodes at the current level
  for (auto& [index, statistics] : mine) {
    if (index >= shards || shard_owner(index, shards, size) != rank)
      throw invalid_option("shards", "statistics of a shard this process does not own");
    if (statistics.predictors() != predictors) throw invalid_data("merging statistics of different widths");
    level.emplace(index, std::move(statistics));
  }
  const std::size_t flat = flat_statistics_size(predictors);
  auto owner_of = [&](std::size_t l, std::size_t i) { return shard_owner(shard_tree_first(l, i), shards, size); };
  auto check = [](int code) {
    if (code != MPI_SUCCESS) throw std::runtime_error("knotpath: an MPI call failed while merging statistics");
  };
  for (std::size_t l = 1; l <= shard_tree_levels(shards); ++l) {
    const std::size_t below = shard_tree_width(shards, l - 1), width = shard_tree_width(shards, l);
    const int tag = static_cast<int>(l);
    // Right halves whose parent is computed elsewhere are sent first
    // (non-blocking, so that no order of the processes can deadlock).
    std::vector<std::vector<Scalar>> outgoing;
    std::vector<MPI_Request> requests;
    for (const auto& [index, statistics] : level) {
      if (index % 2 == 1 && owner_of(l, index / 2) != rank) {
        outgoing.push_back(flatten_statistics(statistics));
        requests.emplace_back();
        check(MPI_Isend(outgoing.back().data(), static_cast<int>(flat), datatype<Scalar>(), owner_of(l, index / 2),
                        tag, comm, &requests.back()));
      }
    }
    std::map<std::size_t, SufficientStatistics<Scalar>> next;
    for (std::size_t i = 0; i < width; ++i) {
      if (owner_of(l, i) != rank) continue;
      SufficientStatistics<Scalar> node = std::move(level.at(2 * i));
      if (2 * i + 1 < below) {
        const int right_owner = owner_of(l - 1, 2 * i + 1);
        if (right_owner == rank) {
          node.merge(level.at(2 * i + 1));
        } else {
          std::vector<Scalar> buffer(flat);
          check(MPI_Recv(buffer.data(), static_cast<int>(flat), datatype<Scalar>(), right_owner, tag, comm,
                         MPI_STATUS_IGNORE));
          node.merge(unflatten_statistics(buffer, predictors));
        }
      }
      next.emplace(i, std::move(node));
    }
    if (!requests.empty())
      check(MPI_Waitall(static_cast<int>(requests.size()), requests.data(), MPI_STATUSES_IGNORE));
    level = std::move(next);
  }
  if (rank != 0) return std::nullopt;
  return std::move(level.at(0));
}

}  // namespace knotpath::mpi
