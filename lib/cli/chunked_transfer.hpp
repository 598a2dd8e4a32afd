#pragma once
// Transfers of any length between the processes of an MPI job (internals of
// the knotpath program: the transport under Ranks' collective steps,
// ranks.cpp). MPI counts elements in int, so a transfer of more than
// INT_MAX elements (one byte a row of the seeded folds' flags, or the folds
// themselves, on a table of more than 2^31 rows) cannot go in one call: it
// is sent in chunks of at most `limit` elements (chunks_of), in order.
// `limit` is INT_MAX in the program; the tests pass a few elements, so that
// the chunking runs without 2^31 of them (tests/test_chunked_transfer.cpp).
//
// Every function is collective over `comm` (all its processes call it with
// the same `limit`); rank 0 is the root. They return MPI_SUCCESS or the
// error code of the first MPI call that failed (the caller names it).

#include <mpi.h>

#include <climits>
#include <cstddef>
#include <string>
#include <vector>

namespace knotpath::cli {

/// A run of elements sent by one MPI call: from element `first`, `length` of them.
struct Chunk {
  std::size_t first = 0;  ///< index of the run's first element
  int length = 0;         ///< elements in the run, 1..limit
};

/// The chunks of a transfer of `count` elements, at most `limit` (1 to
/// INT_MAX) at a time, in order: they cover 0..count-1 once each, every
/// chunk but the last holds `limit` elements; none for count 0. A `limit`
/// outside 1..INT_MAX counts as INT_MAX.
inline std::vector<Chunk> chunks_of(std::size_t count, std::size_t limit = INT_MAX) {
  if (limit == 0 || limit > static_cast<std::size_t>(INT_MAX)) limit = static_cast<std::size_t>(INT_MAX);
  std::vector<Chunk> out;
  for (std::size_t first = 0; first < count; first += limit)
    out.push_back({first, static_cast<int>(count - first < limit ? count - first : limit)});
  return out;
}

/// Rank 0's `count` elements of `type` at `data` copied to every process's
/// `data` (which holds room for `count`, the same on every process).
template <class T>
int broadcast_in_chunks(T* data, std::size_t count, MPI_Datatype type, MPI_Comm comm,
                        std::size_t limit = INT_MAX) {
  for (const Chunk& chunk : chunks_of(count, limit))
    if (const int code = MPI_Bcast(data + chunk.first, chunk.length, type, 0, comm); code != MPI_SUCCESS) return code;
  return MPI_SUCCESS;
}

namespace detail {

// Sends `count` bytes at `data` to process `to`, chunk by chunk (tag 0:
// messages between two processes with one tag arrive in the order sent).
inline int send_in_chunks(const char* data, std::size_t count, int to, MPI_Comm comm, std::size_t limit) {
  for (const Chunk& chunk : chunks_of(count, limit))
    if (const int code = MPI_Send(data + chunk.first, chunk.length, MPI_CHAR, to, 0, comm); code != MPI_SUCCESS)
      return code;
  return MPI_SUCCESS;
}

// Receives `count` bytes from process `from` into `data`, as send_in_chunks sent them.
inline int receive_in_chunks(char* data, std::size_t count, int from, MPI_Comm comm, std::size_t limit) {
  for (const Chunk& chunk : chunks_of(count, limit))
    if (const int code = MPI_Recv(data + chunk.first, chunk.length, MPI_CHAR, from, 0, comm, MPI_STATUS_IGNORE);
        code != MPI_SUCCESS)
      return code;
  return MPI_SUCCESS;
}

}  // namespace detail

/// Every process's `mine`, in rank order, in rank 0's `all` (left empty
/// elsewhere). Each process's length travels first (one 64-bit count a
/// process), then its bytes, chunk by chunk.
inline int gather_in_chunks(const std::string& mine, std::vector<std::string>& all, MPI_Comm comm,
                            std::size_t limit = INT_MAX) {
  int rank = 0, size = 1;
  MPI_Comm_rank(comm, &rank);
  MPI_Comm_size(comm, &size);
  const unsigned long long length = mine.size();
  std::vector<unsigned long long> lengths(static_cast<std::size_t>(size));
  if (const int code = MPI_Gather(&length, 1, MPI_UNSIGNED_LONG_LONG, lengths.data(), 1, MPI_UNSIGNED_LONG_LONG, 0,
                                  comm);
      code != MPI_SUCCESS)
    return code;
  all.clear();
  if (rank != 0) return detail::send_in_chunks(mine.data(), mine.size(), 0, comm, limit);
  all.push_back(mine);
  for (int r = 1; r < size; ++r) {
    std::string& text = all.emplace_back(static_cast<std::size_t>(lengths[static_cast<std::size_t>(r)]), '\0');
    if (const int code = detail::receive_in_chunks(text.data(), text.size(), r, comm, limit); code != MPI_SUCCESS)
      return code;
  }
  return MPI_SUCCESS;
}

/// Rank 0's `bytes` handed out in rank order into each process's `mine`:
/// the first `sizes[0]` stay on rank 0, the next `sizes[1]` go to rank 1,
/// and so on (`bytes` and `sizes`, one size a process summing to
/// bytes.size(), are read on rank 0 only). Each process's size travels
/// first (one 64-bit count a process), then its bytes, chunk by chunk.
inline int scatter_in_chunks(const std::string& bytes, const std::vector<std::size_t>& sizes, std::string& mine,
                             MPI_Comm comm, std::size_t limit = INT_MAX) {
  int rank = 0, size = 1;
  MPI_Comm_rank(comm, &rank);
  MPI_Comm_size(comm, &size);
  std::vector<unsigned long long> counts(static_cast<std::size_t>(size));
  if (rank == 0)
    for (std::size_t r = 0; r < counts.size(); ++r) counts[r] = sizes.at(r);
  unsigned long long length = 0;
  if (const int code =
          MPI_Scatter(counts.data(), 1, MPI_UNSIGNED_LONG_LONG, &length, 1, MPI_UNSIGNED_LONG_LONG, 0, comm);
      code != MPI_SUCCESS)
    return code;
  mine.assign(static_cast<std::size_t>(length), '\0');
  if (rank != 0) return detail::receive_in_chunks(mine.data(), mine.size(), 0, comm, limit);
  mine = bytes.substr(0, sizes.at(0));
  std::size_t at = sizes.at(0);
  for (int r = 1; r < size; ++r) {
    const std::size_t count = sizes.at(static_cast<std::size_t>(r));
    if (const int code = detail::send_in_chunks(bytes.data() + at, count, r, comm, limit); code != MPI_SUCCESS)
      return code;
    at += count;
  }
  return MPI_SUCCESS;
}

}  // namespace knotpath::cli
