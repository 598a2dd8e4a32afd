#pragma once
/// \file detail/parallel.hpp
/// \brief Deterministic column-block parallelism for the one product per knot.
///
/// The columns of a product Z^T v are cut into blocks of a fixed width that
/// does not depend on the number of threads; every block is computed by the
/// same code whichever thread takes it. The result is therefore bitwise the
/// same for 1, 2 or any number of threads (a property tested in
/// tests/test_determinism.cpp). Only the wall time changes.

#include <algorithm>
#include <atomic>
#include <cstddef>
#include <exception>
#include <thread>
#include <type_traits>
#include <vector>

#include "scalar.hpp"

namespace knotpath::detail {

/// Width of a column block (columns per task). Fixed: see the file comment.
inline constexpr Index column_block = 256;

/// Products smaller than this many stored entries run on the calling thread
/// (starting threads would cost more than the product). Does not change results.
inline constexpr double parallel_threshold = 1 << 18;

/// The number of threads to use for a request: 0 means all hardware threads.
inline std::size_t resolve_threads(std::size_t requested) {
  if (requested != 0) return requested;
  const unsigned hardware = std::thread::hardware_concurrency();
  return hardware == 0 ? 1 : hardware;
}

/// Threads a design over Scalar uses for a request: software types
/// (multiprecision, rational) keep per-thread state, so they get one.
template <class Scalar>
std::size_t threads_for(std::size_t requested) {
  return std::is_floating_point_v<Scalar> ? resolve_threads(requested) : 1;
}

/// Calls body(begin, end) for the blocks [b * column_block, min(count, (b + 1)
/// * column_block)) of [0, count), on up to `threads` threads when `work`
/// (the number of entries the product reads) is at least parallel_threshold.
/// `body` must not throw and must write only to its own block's outputs.
template <class Body>
void for_each_column_block(std::size_t threads, Index count, double work, Body&& body) {
  const Index blocks = (count + column_block - 1) / column_block;
  auto run = [&](Index b) { body(b * column_block, std::min<Index>(count, (b + 1) * column_block)); };
  std::size_t use = std::min<std::size_t>(threads, static_cast<std::size_t>(std::max<Index>(blocks, 1)));
  if (use <= 1 || work < parallel_threshold) {
    for (Index b = 0; b < blocks; ++b) run(b);
    return;
  }
  std::atomic<Index> next{0};
  auto worker = [&] {
    for (Index b = next.fetch_add(1); b < blocks; b = next.fetch_add(1)) run(b);
  };
  std::vector<std::thread> pool;
  pool.reserve(use - 1);
  for (std::size_t t = 1; t < use; ++t) pool.emplace_back(worker);
  worker();
  for (std::thread& thread : pool) thread.join();
}

/// Runs job(0), ..., job(count - 1) on up to `threads` threads (tasks taken
/// in turn from a shared counter; each task's result must depend on its
/// index only, so nothing depends on the thread count). A task that throws
/// does not stop the others; the first failure in index order is rethrown
/// after every task has ended.
template <class Job>
void for_each_task(std::size_t count, std::size_t threads, Job&& job) {
  std::vector<std::exception_ptr> failures(count);
  std::atomic<std::size_t> next{0};
  auto worker = [&] {
    for (std::size_t i = next.fetch_add(1); i < count; i = next.fetch_add(1)) {
      try {
        job(i);
      } catch (...) {
        failures[i] = std::current_exception();
      }
    }
  };
  const std::size_t use = std::min(std::max<std::size_t>(threads, 1), std::max<std::size_t>(count, 1));
  std::vector<std::thread> pool;
  pool.reserve(use - 1);
  for (std::size_t t = 1; t < use; ++t) pool.emplace_back(worker);
  worker();
  for (std::thread& thread : pool) thread.join();
  for (const std::exception_ptr& failure : failures)
    if (failure) std::rethrow_exception(failure);
}

}  // namespace knotpath::detail
