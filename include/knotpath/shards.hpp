#pragma once
/// \file shards.hpp
/// \brief Rows held in shards (several files, byte ranges of one file, the
/// processes of an MPI job): the statistics of each shard merged in one fixed
/// tree over the shard index, so that the merged statistics, and so the
/// path, are the same bits however the shards are spread over processes.
///
/// References:
///  - T. F. Chan, G. H. Golub & R. J. LeVeque (1979), "Updating formulae and a
///    pairwise algorithm for computing sample variances", Stanford report
///    STAN-CS-79-773 (the merge of two sets of statistics, and merging them
///    in a pairwise tree).
///  - N. J. Higham (1993), "The accuracy of floating point summation", SIAM
///    J. Sci. Comput. 14(4), 783-799 (pairwise summation: the error bound
///    grows with the tree's depth, log2 of the number of terms, not with
///    their number).
///
/// The tree. Shard s (0-based, in the order the user gave the shards) is
/// leaf s. At level l >= 1, node i covers shards [i 2^l, (i + 1) 2^l) and is
/// node 2i of level l - 1 merged with node 2i + 1 of level l - 1
/// (SufficientStatistics::merge, left then right); a node with no right
/// child is its left child unchanged. The root is the one node of the last
/// level. merge_shard_tree() computes it in one process; a distributed
/// reduction (mpi_statistics.hpp) computes the very same merges on the
/// processes that own the shards, each node on the owner of its first
/// shard, so the root is identical for any number of processes.
///
/// One shard traced alone gives the statistics of its rows unmerged: a
/// table read whole, in blocks, or as a single shard gives the same path.

#include <algorithm>
#include <cstddef>
#include <utility>
#include <vector>

#include "errors.hpp"
#include "statistics.hpp"

namespace knotpath {

/// The first shard of node `index` at tree level `level` (index 2^level).
inline std::size_t shard_tree_first(std::size_t level, std::size_t index) { return index << level; }

/// Nodes of tree level `level` over `shards` shards (level 0: the shards).
inline std::size_t shard_tree_width(std::size_t shards, std::size_t level) {
  std::size_t width = shards;
  for (std::size_t l = 0; l < level; ++l) width = (width + 1) / 2;
  return width;
}

/// Levels above the shards: 0 for one shard, ceil(log2(shards)) in general.
inline std::size_t shard_tree_levels(std::size_t shards) {
  std::size_t levels = 0;
  for (std::size_t width = shards; width > 1; width = (width + 1) / 2) ++levels;
  return levels;
}

/// The process that holds shard `shard` of `shards` among `processes`:
/// contiguous runs, process r holding shards [ceil(r S / R), ceil((r + 1)
/// S / R)), so process 0 always holds shard 0 (and with it the tree's root)
/// and, with more processes than shards, some hold none. Owners grow with
/// the shard index, so a node's right half is never owned by an earlier
/// process than its left half. Throws invalid_option for no shards or no
/// processes.
inline int shard_owner(std::size_t shard, std::size_t shards, int processes) {
  if (shards == 0 || processes <= 0) throw invalid_option("shards", "no shards or no processes");
  const auto count = static_cast<std::size_t>(processes);
  const auto first = [&](std::size_t r) { return (r * shards + count - 1) / count; };  // ceil(r S / R)
  // The owner r satisfies r S / R <= s, so it is at most floor(s R / S).
  std::size_t owner = std::min(count - 1, shard * count / shards);
  while (first(owner) > shard) --owner;
  return static_cast<int>(owner);
}

/// The statistics of every shard merged in the shard tree (see above).
/// Throws invalid_data when the shards have different numbers of
/// predictors, invalid_option when there are none.
template <class Scalar>
SufficientStatistics<Scalar> merge_shard_tree(std::vector<SufficientStatistics<Scalar>> shards) {
  if (shards.empty()) throw invalid_option("shards", "no shards to merge");
  while (shards.size() > 1) {
    std::vector<SufficientStatistics<Scalar>> next;
    next.reserve((shards.size() + 1) / 2);
    for (std::size_t i = 0; i < shards.size(); i += 2) {
      if (i + 1 < shards.size()) shards[i].merge(shards[i + 1]);
      next.push_back(std::move(shards[i]));
    }
    shards = std::move(next);
  }
  return std::move(shards.front());
}

/// The statistics as one flat array, for sending between processes:
/// weight_sum, rows, response_mean, response_comoment, then means, cross,
/// minimum, maximum (p each) and the comoments (p x p, by columns).
template <class Scalar>
std::vector<Scalar> flatten_statistics(const SufficientStatistics<Scalar>& s) {
  const Index p = s.predictors();
  std::vector<Scalar> out;
  out.reserve(static_cast<std::size_t>(4 + 4 * p + p * p));
  out.push_back(s.weight_sum);
  out.push_back(Scalar(static_cast<double>(s.rows)));
  out.push_back(s.response_mean);
  out.push_back(s.response_comoment);
  for (const Vector<Scalar>* v : {&s.means, &s.cross, &s.minimum, &s.maximum})
    out.insert(out.end(), v->data(), v->data() + p);
  out.insert(out.end(), s.comoments.data(), s.comoments.data() + p * p);
  return out;
}

/// The number of values flatten_statistics() writes for p predictors.
inline std::size_t flat_statistics_size(Index p) { return static_cast<std::size_t>(4 + 4 * p + p * p); }

/// The statistics of p predictors back from flatten_statistics()'s array.
/// Throws invalid_data when the array has the wrong size.
template <class Scalar>
SufficientStatistics<Scalar> unflatten_statistics(const std::vector<Scalar>& flat, Index p) {
  if (flat.size() != flat_statistics_size(p)) throw invalid_data("flattened statistics of the wrong size");
  SufficientStatistics<Scalar> s = SufficientStatistics<Scalar>::empty(p);
  s.weight_sum = flat[0];
  s.rows = static_cast<Index>(static_cast<double>(flat[1]));
  s.response_mean = flat[2];
  s.response_comoment = flat[3];
  std::size_t at = 4;
  for (Vector<Scalar>* v : {&s.means, &s.cross, &s.minimum, &s.maximum}) {
    std::copy(flat.begin() + static_cast<std::ptrdiff_t>(at), flat.begin() + static_cast<std::ptrdiff_t>(at + p),
              v->data());
    at += static_cast<std::size_t>(p);
  }
  std::copy(flat.begin() + static_cast<std::ptrdiff_t>(at), flat.end(), s.comoments.data());
  return s;
}

}  // namespace knotpath
