#pragma once
/// \file mpi_columns.hpp
/// \brief Columns spread over the processes of an MPI job, for wide designs
/// (p in the millions, n in the thousands): each process holds a contiguous
/// block of the predictors, and the path is traced by every process at once
/// through a design operator over a communicator (ColumnBlockDesign, a
/// SharedColumnDesign). Needs MPI (include it only in a program built with
/// MPI; knotpath.hpp does not).
///
/// References: the homotopy is that of homotopy.hpp (Efron, Hastie,
/// Johnstone & Tibshirani 2004; Osborne, Presnell & Turlach 2000). The
/// communication is plain MPI collectives (Message Passing Interface Forum,
/// "MPI: A Message-Passing Interface Standard", version 3.1, 2015, sections
/// 5.4 (broadcast), 5.7 (all-gather) and 5.9 (all-reduce)).
///
/// How. Every process runs the same homotopy on replicated state: the
/// active set, the Cholesky factor of its Gram matrix, the coefficients, the
/// correlations of the active columns, and (in a cache) the prepared values
/// of the active columns. A column's values are broadcast by the process
/// holding it when the homotopy first asks for its cross products (the
/// column is about to enter); from then on every process computes the
/// entering column's cross products, the direction's fitted values
/// u = Z_A d and the active columns' z_j^T u itself, with the same data and
/// the same operations, so the replicated state stays the same bits on
/// every process. Per knot a process multiplies only its own columns,
/// a_j = z_j^T u, searches them for the next entry, and the processes
/// exchange:
///   - the smallest step (one all-reduce of one value; the min-location of
///     the next knot: the tied entry candidates of every process, usually
///     one, are then gathered in process order, which is column order, so
///     the events and their documented order are those of one process
///     holding every column);
///   - at an entry, the entering column (n values, one broadcast), from
///     which every process forms its cross products with the active set.
/// That is fewer bytes than the n-vector u per knot plus the cross products
/// per entry (u is formed from the cached active columns instead of being
/// summed over the processes), at the price of n values per active column
/// held by every process (n k_max 8 bytes: 32 MB at n = 2000, k = 2000).
/// The start exchanges q values twice (the column norms and Z^T y, which
/// every process keeps) and the preparation's per-column records.
///
/// Agreement with one process: the events are the same; the knots agree to
/// rounding (a process's block product may round z_j^T u differently from
/// a product over all columns). The tests (test_mpi_columns.cpp) compare
/// both on 1, 2 and 4 processes.

#include <mpi.h>

#include <algorithm>
#include <cstdint>
#include <cstring>
#include <exception>
#include <limits>
#include <optional>
#include <span>
#include <stdexcept>
#include <string>
#include <type_traits>
#include <utility>
#include <vector>

#include "detail/scalar.hpp"
#include "errors.hpp"
#include "mpi_statistics.hpp"
#include "options.hpp"
#include "prepare.hpp"
#include "problem.hpp"
#include "trace.hpp"

namespace knotpath::mpi {

/// The block of columns process `rank` of `size` holds when `columns`
/// columns are cut into contiguous blocks of near-equal width (the first
/// columns % size blocks one wider): {first column, count}.
inline std::pair<Index, Index> column_block(Index columns, int rank, int size) {
  const Index base = columns / size, extra = columns % size;
  const Index r = rank;
  const Index first = r * base + std::min(r, extra);
  return {first, base + (r < extra ? 1 : 0)};
}

namespace detail {

/// Throws std::runtime_error when an MPI call failed.
inline void check_call(int code) {
  if (code != MPI_SUCCESS) throw std::runtime_error("knotpath: an MPI call failed while tracing columns over processes");
}

/// Every process's bytes, concatenated in process order, on every process;
/// each process's count into `counts` when given. Collective. Throws
/// invalid_data beyond 2^31 - 1 bytes in all (MPI's int counts): the
/// per-column records of more than about 250 million columns.
inline std::vector<char> all_gather_bytes(MPI_Comm comm, const std::vector<char>& mine,
                                          std::vector<int>* counts_out = nullptr) {
  int size = 1;
  check_call(MPI_Comm_size(comm, &size));
  if (mine.size() > static_cast<std::size_t>(std::numeric_limits<int>::max()))
    throw invalid_data("columns over processes: a process's share is too large to gather");
  const int count = static_cast<int>(mine.size());
  std::vector<int> counts(static_cast<std::size_t>(size)), offsets(static_cast<std::size_t>(size));
  check_call(MPI_Allgather(&count, 1, MPI_INT, counts.data(), 1, MPI_INT, comm));
  long long total = 0;
  for (int r = 0; r < size; ++r) {
    if (total > std::numeric_limits<int>::max()) throw invalid_data("columns over processes: too much to gather");
    offsets[static_cast<std::size_t>(r)] = static_cast<int>(total);
    total += counts[static_cast<std::size_t>(r)];
  }
  if (total > std::numeric_limits<int>::max()) throw invalid_data("columns over processes: too much to gather");
  std::vector<char> all(static_cast<std::size_t>(total));
  check_call(MPI_Allgatherv(mine.data(), count, MPI_CHAR, all.data(), counts.data(), offsets.data(), MPI_CHAR, comm));
  if (counts_out != nullptr) *counts_out = std::move(counts);
  return all;
}

/// Every process's values, concatenated in process order, on every process
/// (a trivially copyable type, sent as its bytes). Collective.
template <class T>
std::vector<T> all_gather_values(MPI_Comm comm, const std::vector<T>& mine) {
  static_assert(std::is_trivially_copyable_v<T>, "values are gathered as their bytes");
  std::vector<char> bytes(mine.size() * sizeof(T));
  if (!bytes.empty()) std::memcpy(bytes.data(), mine.data(), bytes.size());
  const std::vector<char> all = all_gather_bytes(comm, bytes);
  std::vector<T> out(all.size() / sizeof(T));
  if (!out.empty()) std::memcpy(out.data(), all.data(), out.size() * sizeof(T));
  return out;
}

/// An invalid_data about a block's column, renumbered as predictor
/// `first` + column of the whole design.
inline invalid_data in_whole_design(const invalid_data& e, Index first) {
  if (!e.column()) return e;
  const std::size_t column = *e.column() + static_cast<std::size_t>(first);
  if (e.whole_column()) return invalid_data::of_predictor(column, e.detail());
  if (e.row()) return invalid_data::at_row(*e.row(), e.detail(), column);
  return e;
}

/// Checks that the processes' blocks, (first, count) per process in process
/// order, tile [0, columns): throws invalid_data naming the first that
/// does not.
inline void check_tiling(const std::vector<long long>& layout, Index columns) {
  long long next = 0;
  for (std::size_t r = 0; r < layout.size() / 2; ++r) {
    if (layout[2 * r] != next || layout[2 * r + 1] < 0)
      throw invalid_data("columns over processes: the processes' blocks must be contiguous, in process order "
                         "(process " + std::to_string(r) + " holds columns from " + std::to_string(layout[2 * r]) +
                         ", expected " + std::to_string(next) + ")");
    next += layout[2 * r + 1];
  }
  if (next != columns)
    throw invalid_data("columns over processes: the blocks hold " + std::to_string(next) + " columns, expected " +
                       std::to_string(columns));
}

/// A failure of one process as the others receive it: an invalid_data
/// that names a place (a row, a predictor column of the whole design) is
/// sent with that place, so that every process throws the same error,
/// which a front end can name in its own terms; any other failure as its
/// message.
struct ProcessFailure {
  std::uint8_t has_row = 0;       ///< 1 when the error names a row
  std::uint8_t has_column = 0;    ///< 1 when it names a predictor column
  std::uint8_t whole_column = 0;  ///< 1 for a problem of the whole column (invalid_data::of_predictor)
  std::uint64_t row = 0;          ///< the row, when named
  std::uint64_t column = 0;       ///< the predictor column of the whole design, when named

  /// A failing process's message to the others: a flag byte, the place,
  /// then the text (the detail of a placed invalid_data, else what()
  /// without its "knotpath: " prefix).
  static std::vector<char> encode(const std::exception& e) {
    ProcessFailure head;
    std::string text = e.what();
    if (text.rfind("knotpath: ", 0) == 0) text.erase(0, 10);
    const auto* data = dynamic_cast<const invalid_data*>(&e);
    if (data != nullptr && (data->row() || (data->whole_column() && data->column()))) {
      head.has_row = data->row().has_value();
      head.has_column = data->column().has_value();
      head.whole_column = data->whole_column();
      head.row = data->row().value_or(0);
      head.column = data->column().value_or(0);
      text = data->detail();
    }
    std::vector<char> out(1 + sizeof head + text.size());  // a flag, the place, the text
    out[0] = 1;
    std::memcpy(out.data() + 1, &head, sizeof head);
    if (!text.empty()) std::memcpy(out.data() + 1 + sizeof head, text.data(), text.size());
    return out;
  }

  /// Throws, on a process that did not fail, the failure `process` sent
  /// (`length` bytes of encode()).
  [[noreturn]] static void rethrow(const char* bytes, std::size_t length, std::size_t process) {
    ProcessFailure head;
    std::memcpy(&head, bytes + 1, sizeof head);
    const std::string text(bytes + 1 + sizeof head, length - 1 - sizeof head);
    const auto column = head.has_column ? std::optional<std::size_t>(head.column) : std::nullopt;
    if (head.whole_column) throw invalid_data::of_predictor(static_cast<std::size_t>(head.column), text);
    if (head.has_row) throw invalid_data::at_row(static_cast<std::size_t>(head.row), text, column);
    throw invalid_data("process " + std::to_string(process) + ": " + text);
  }
};

/// Runs `step` on every process; when it throws on any, it throws on every
/// process: the failing process rethrows its own exception, the others the
/// first failing process's failure (ProcessFailure: the same invalid_data
/// when it names a row or a predictor column, else an invalid_data naming
/// the process and its message). Collective.
template <class Step>
void on_every_process(MPI_Comm comm, Step step) {
  std::exception_ptr failure;
  std::vector<char> mine;
  try {
    step();
  } catch (const std::exception& e) {
    failure = std::current_exception();
    mine = ProcessFailure::encode(e);
  }
  std::vector<int> sizes;
  const std::vector<char> all = all_gather_bytes(comm, mine, &sizes);
  std::size_t at = 0;
  for (std::size_t r = 0; r < sizes.size(); ++r) {
    const auto length = static_cast<std::size_t>(sizes[r]);
    if (length > 0) {
      if (failure) std::rethrow_exception(failure);
      ProcessFailure::rethrow(all.data() + at, length, r);
    }
    at += length;
  }
}

/// The options of the whole design seen from a block of `count` predictors
/// starting at `first`: per-predictor fields cut to the block and
/// renumbered, names dropped (they change no number of the preparation).
inline TraceOptions block_options(const TraceOptions& options, Index first, Index count, std::size_t p) {
  TraceOptions local = options;
  const auto begin = static_cast<std::size_t>(first), end = static_cast<std::size_t>(first + count);
  auto cut = [&](const auto& all) {
    using T = std::decay_t<decltype(all)>;
    return all.empty() ? T{} : T(all.begin() + static_cast<std::ptrdiff_t>(begin), all.begin() + static_cast<std::ptrdiff_t>(end));
  };
  local.penalty_scales = cut(options.penalty_scales);
  auto renumber = [&](const std::vector<std::size_t>& all) {
    std::vector<std::size_t> out;
    for (std::size_t j : all)
      if (j >= begin && j < end) out.push_back(j - begin);
    return out;
  };
  local.unpenalized = renumber(options.unpenalized);
  local.left_out = renumber(options.left_out);
  if (options.sign_constraints.size() == p) local.sign_constraints = cut(options.sign_constraints);
  local.predictor_names.clear();
  return local;
}

}  // namespace detail

/// A design operator over a communicator: process r holds the prepared
/// columns [first, first + count) of the q prepared columns (contiguous
/// blocks in process order), every process the prepared response. A
/// SharedColumnDesign (design/concept.hpp): trace_design() on every process
/// traces the one path. Usually built by prepare_column_block(). Floating
/// scalar types only (values cross the network as their bytes).
///
/// Collective members (every process calls them at the same point; the
/// homotopy does): the constructor, cross_products(), largest_everywhere(),
/// smallest_everywhere(), gather_everywhere(). Memory: the block, the
/// response, four q-vectors, and n values per column in the cache of
/// active columns. Thread safety: the products write mutable scratch space
/// and every call may communicate: one trace at a time per design object.
template <class ScalarT>
class ColumnBlockDesign {
 public:
  /// The arithmetic type (float, double or long double).
  using Scalar = ScalarT;
  static_assert(std::is_floating_point_v<Scalar>, "columns over processes need a built-in floating type");

  /// What the design exchanged so far: the payload of its collective calls
  /// (the values each call delivers: one value for a reduction, the
  /// gathered bytes, the broadcast column), not MPI's own protocol bytes.
  struct Traffic {
    std::size_t bytes = 0;  ///< payload bytes
    std::size_t calls = 0;  ///< collective calls
  };

  /// Collective. `block` holds this process's prepared columns (centred,
  /// scaled and weighted like DenseDesign's), the prepared columns
  /// [first, first + block.cols()) of `columns` in all; `response` the
  /// prepared response, the same on every process. Throws invalid_data when
  /// the blocks of the processes do not tile [0, columns) in process order
  /// or their row counts differ (on every process).
  ColumnBlockDesign(MPI_Comm comm, Matrix<Scalar> block, Index first, Index columns, Vector<Scalar> response)
      : comm_(comm), z_(std::move(block)), y_(std::move(response)), first_(first), q_(columns) {
    detail::check_call(MPI_Comm_rank(comm_, &rank_));
    const std::vector<long long> layout =
        detail::all_gather_values(comm_, std::vector<long long>{first_, z_.cols(), z_.rows()});
    std::vector<long long> blocks;
    for (std::size_t r = 0; r < layout.size() / 3; ++r) {
      if (layout[3 * r + 2] != z_.rows())
        throw invalid_data("columns over processes: the processes' blocks must have the same rows");
      blocks.push_back(layout[3 * r]);
      blocks.push_back(layout[3 * r + 1]);
      begins_.push_back(static_cast<Index>(layout[3 * r]));
    }
    detail::check_tiling(blocks, q_);
    begins_.push_back(q_);
    if (y_.size() != z_.rows()) throw invalid_data("columns over processes: block rows and response length differ");
    std::vector<Scalar> norms(static_cast<std::size_t>(z_.cols())), correlations(norms.size());
    for (Index k = 0; k < z_.cols(); ++k) {
      norms[static_cast<std::size_t>(k)] = z_.col(k).squaredNorm();
      correlations[static_cast<std::size_t>(k)] = z_.col(k).dot(y_);
    }
    norms_ = to_vector(detail::all_gather_values(comm_, norms));
    correlations_ = to_vector(detail::all_gather_values(comm_, correlations));
    note(2 * static_cast<std::size_t>(q_) * sizeof(Scalar));
    slot_of_.assign(static_cast<std::size_t>(q_), -1);
    marked_.assign(static_cast<std::size_t>(q_), 0);
    work_.resize(z_.rows());
  }

  /// Number of rows n.
  Index rows() const noexcept { return z_.rows(); }
  /// Number of prepared columns q (over all processes).
  Index cols() const noexcept { return q_; }
  /// The prepared columns this process holds, [begin, end).
  std::pair<Index, Index> own_columns() const noexcept { return {first_, first_ + z_.cols()}; }
  /// z_j^T z_j for any prepared column j (every process keeps all q).
  Scalar squared_norm(Index j) const { return norms_(j); }
  /// y^T y of the prepared response.
  Scalar response_squared_norm() const { return y_.squaredNorm(); }
  /// out = Z^T y over all q columns (kept since construction).
  void response_correlations(Vector<Scalar>& out) const { out = correlations_; }

  /// Collective. out(i) = z_{active[i]}^T z_j: the process holding column j
  /// broadcasts it (n values) unless every process holds it already; each
  /// process then forms the products from its cache of the active columns.
  void cross_products(Index j, std::span<const Index> active, Eigen::Ref<Vector<Scalar>> out) const {
    const auto column = cached(j);
    for (std::size_t i = 0; i < active.size(); ++i)
      out(static_cast<Index>(i)) = cache_.col(slot_of(active[i])).dot(column);
  }

  /// out = Z^T (Z_A d), current on this process's own columns and on the
  /// active set, 0 elsewhere (the homotopy reads nothing else). u = Z_A d
  /// from the cache (as DenseDesign forms it), then one product over the
  /// block; the active entries from the cache, so that every process has the
  /// same bits there. Cached columns that left the active set are dropped.
  void direction_correlations(std::span<const Index> active, const Eigen::Ref<const Vector<Scalar>>& d,
                              Vector<Scalar>& out) const {
    keep_only(active);
    work_.setZero();
    for (std::size_t i = 0; i < active.size(); ++i) {
      const Scalar coefficient = d(static_cast<Index>(i));
      const auto column = cache_.col(slot_of(active[i]));
      for (Index r = 0; r < z_.rows(); ++r) work_(r) += coefficient * column(r);
    }
    out.resize(q_);
    out.setZero();
    if (z_.cols() > 0) out.segment(first_, z_.cols()).noalias() = z_.transpose() * work_;
    for (Index k : active) out(k) = cache_.col(slot_of(k)).dot(work_);
  }

  /// Collective: the largest x over the processes.
  Scalar largest_everywhere(const Scalar& x) const { return reduced(x, MPI_MAX); }
  /// Collective: the smallest x over the processes.
  Scalar smallest_everywhere(const Scalar& x) const { return reduced(x, MPI_MIN); }
  /// Collective: every process's bytes in process order.
  std::vector<char> gather_everywhere(const std::vector<char>& bytes) const {
    std::vector<char> all = detail::all_gather_bytes(comm_, bytes);
    note(all.size());
    return all;
  }

  /// What this design exchanged so far (see Traffic).
  Traffic traffic() const noexcept { return traffic_; }
  /// The communicator.
  MPI_Comm communicator() const noexcept { return comm_; }

 private:
  static Vector<Scalar> to_vector(const std::vector<Scalar>& values) {
    Vector<Scalar> out(static_cast<Index>(values.size()));
    for (std::size_t i = 0; i < values.size(); ++i) out(static_cast<Index>(i)) = values[i];
    return out;
  }

  void note(std::size_t bytes) const {
    traffic_.bytes += bytes;
    ++traffic_.calls;
  }

  Scalar reduced(const Scalar& x, MPI_Op op) const {
    Scalar out = x;
    detail::check_call(MPI_Allreduce(&x, &out, 1, datatype<Scalar>(), op, comm_));
    note(sizeof(Scalar));
    return out;
  }

  int owner(Index j) const {
    return static_cast<int>(std::upper_bound(begins_.begin(), begins_.end(), j) - begins_.begin()) - 1;
  }

  Index slot_of(Index j) const { return slot_of_[static_cast<std::size_t>(j)]; }

  // Column j in the cache of every process (collective when it is not).
  auto cached(Index j) const {
    if (slot_of(j) < 0) {
      Index slot;
      if (!free_slots_.empty()) {
        slot = free_slots_.back();
        free_slots_.pop_back();
      } else {
        slot = used_slots_;
        if (slot == cache_.cols()) cache_.conservativeResize(z_.rows(), std::max<Index>(8, 2 * cache_.cols()));
        ++used_slots_;
      }
      const int from = owner(j);
      if (from == rank_) cache_.col(slot) = z_.col(j - first_);
      if (z_.rows() > 0)
        detail::check_call(MPI_Bcast(cache_.col(slot).data(), static_cast<int>(z_.rows()), datatype<Scalar>(), from, comm_));
      note(static_cast<std::size_t>(z_.rows()) * sizeof(Scalar));
      slot_of_[static_cast<std::size_t>(j)] = slot;
      cached_.push_back(j);
    }
    return cache_.col(slot_of(j));
  }

  // Frees the cache slots of the columns not in `active`. O(cached + |A|).
  void keep_only(std::span<const Index> active) const {
    for (Index k : active) marked_[static_cast<std::size_t>(k)] = 1;
    std::size_t kept = 0;
    for (Index k : cached_) {
      if (marked_[static_cast<std::size_t>(k)]) {
        cached_[kept++] = k;
      } else {
        free_slots_.push_back(slot_of(k));
        slot_of_[static_cast<std::size_t>(k)] = -1;
      }
    }
    cached_.resize(kept);
    for (Index k : active) marked_[static_cast<std::size_t>(k)] = 0;
  }

  MPI_Comm comm_;
  int rank_ = 0;
  Matrix<Scalar> z_;            // this process's prepared columns
  Vector<Scalar> y_;            // prepared response
  Index first_ = 0;             // the first prepared column of the block
  Index q_ = 0;                 // prepared columns over all processes
  std::vector<Index> begins_;   // first column of each process's block, then q
  Vector<Scalar> norms_;        // z_k^T z_k, all q
  Vector<Scalar> correlations_;  // z_k^T y, all q
  mutable Matrix<Scalar> cache_;        // the cached columns, one per slot
  mutable std::vector<Index> slot_of_;  // slot of column k, -1 when not cached
  mutable std::vector<Index> cached_;   // the cached columns
  mutable std::vector<Index> free_slots_;
  mutable Index used_slots_ = 0;        // slots ever used (cache_ columns in use or free)
  mutable std::vector<char> marked_;    // scratch of keep_only(), all 0 between calls
  mutable Vector<Scalar> work_;         // u = Z_A d
  mutable Traffic traffic_;
};

/// A prepared problem whose columns are spread over processes.
template <class Scalar>
using PreparedColumnBlock = PreparedProblem<ColumnBlockDesign<Scalar>>;

namespace detail {

/// Every process's exclusions, in process order, renumbered from each
/// block's first predictor (`first`) to the whole design's. Collective.
inline std::vector<ExcludedPredictor> gather_excluded(MPI_Comm comm, const std::vector<ExcludedPredictor>& mine,
                                                      Index first) {
  std::vector<char> bytes;
  auto put = [&](const auto& value) {
    const auto* at = reinterpret_cast<const char*>(&value);
    bytes.insert(bytes.end(), at, at + sizeof value);
  };
  for (const ExcludedPredictor& e : mine) {
    put(Index{e.predictor + first});
    put(static_cast<Index>(e.reason.size()));
    bytes.insert(bytes.end(), e.reason.begin(), e.reason.end());
  }
  const std::vector<char> all = all_gather_bytes(comm, bytes);
  std::vector<ExcludedPredictor> out;
  for (std::size_t at = 0; at < all.size();) {
    Index j = 0, length = 0;
    std::memcpy(&j, all.data() + at, sizeof j);
    std::memcpy(&length, all.data() + at + sizeof j, sizeof length);
    at += sizeof j + sizeof length;
    out.push_back({j, std::string(all.data() + at, static_cast<std::size_t>(length))});
    at += static_cast<std::size_t>(length);
  }
  return out;
}

/// The whole design's preparation record from every process's record of
/// its block (`local`, whose block starts at predictor `first`): the
/// blocks' columns, means, scales, weights, constraints and exclusions in
/// process order, the largest centring amplification. The same on every
/// process. Collective.
template <class Scalar>
Preparation<Scalar> whole_design_record(MPI_Comm comm, const Preparation<Scalar>& local, Index first,
                                        Index predictors) {
  Preparation<Scalar> prep = local;
  prep.predictors = predictors;
  auto gathered = [&](const Vector<Scalar>& mine) {
    const std::vector<Scalar> all =
        all_gather_values(comm, std::vector<Scalar>(mine.data(), mine.data() + mine.size()));
    return Vector<Scalar>(Eigen::Map<const Vector<Scalar>>(all.data(), static_cast<Index>(all.size())));
  };
  prep.means = gathered(local.means);
  prep.scales = gathered(local.scales);
  std::vector<Index> columns = local.columns;
  for (Index& j : columns) j += first;
  prep.columns = all_gather_values(comm, columns);
  prep.penalty_weights = all_gather_values(comm, local.penalty_weights);
  prep.constraints = all_gather_values(comm, local.constraints);
  prep.excluded = gather_excluded(comm, local.excluded, first);
  check_call(MPI_Allreduce(&local.centring_amplification, &prep.centring_amplification, 1, MPI_DOUBLE, MPI_MAX,
                           comm));
  return prep;
}

}  // namespace detail

/// Collective. Prepares this process's block of a dense design: `x` holds
/// predictors [first_predictor, first_predictor + x.cols()) of `predictors`
/// (the processes' blocks contiguous, in process order; column_block() cuts
/// them evenly), over all n rows; `y`, `weights` and `options` are the
/// whole problem's, the same on every process. The same preparation as
/// prepare_dense() (detail::prepare_dense_columns, one column at a time),
/// so the prepared columns are those of one process. The returned
/// preparation record, the same on every process, describes the whole
/// design; trace it with trace_design() on every process.
/// Throws, on every process, what prepare_dense() throws on any (another
/// process's failure as invalid_data naming the process), and invalid_data
/// when the blocks do not tile the predictors.
template <class Scalar, class Derived>
PreparedColumnBlock<Scalar> prepare_column_block(MPI_Comm comm, const Eigen::MatrixBase<Derived>& x,
                                                 Index first_predictor, Index predictors, const Vector<Scalar>& y,
                                                 const TraceOptions& options,
                                                 const Vector<Scalar>& weights = Vector<Scalar>()) {
  Preparation<Scalar> local;
  Matrix<Scalar> z;
  Vector<Scalar> yc;
  const std::vector<long long> layout =
      detail::all_gather_values(comm, std::vector<long long>{first_predictor, x.cols()});
  detail::on_every_process(comm, [&] {
    options.validate(static_cast<std::size_t>(predictors));
    detail::check_tiling(layout, predictors);
    const TraceOptions block = detail::block_options(options, first_predictor, x.cols(),
                                                     static_cast<std::size_t>(predictors));
    try {
      ::knotpath::detail::check_data(x, y, weights);
      const ::knotpath::detail::UsedRows<Scalar> used = ::knotpath::detail::used_rows(weights, x.rows(), block);
      const Index m = static_cast<Index>(used.rows.size());
      z.resize(m, x.cols());
      local = ::knotpath::detail::prepare_dense_columns(
          x, y, block, used, yc, [&](Index k, const Vector<Scalar>& centred, const Scalar& scale) {
            for (Index r = 0; r < m; ++r) z(r, k) = used.sqrt_weights(r) * centred(r) / scale;
          });
      z.conservativeResize(m, static_cast<Index>(local.columns.size()));
    } catch (const invalid_data& e) {
      throw detail::in_whole_design(e, first_predictor);
    }
  });

  Preparation<Scalar> prep = detail::whole_design_record(comm, local, first_predictor, predictors);
  const std::vector<Index> kept = detail::all_gather_values(comm, std::vector<Index>{z.cols()});
  int rank = 0;
  detail::check_call(MPI_Comm_rank(comm, &rank));
  Index first_column = 0;
  for (int r = 0; r < rank; ++r) first_column += kept[static_cast<std::size_t>(r)];
  const auto q = static_cast<Index>(prep.columns.size());
  ColumnBlockDesign<Scalar> design(comm, std::move(z), first_column, q, std::move(yc));
  return {std::move(design), std::move(prep)};
}

/// Collective. Traces the lasso path of a dense design whose predictors are
/// spread over the processes of `comm` (see prepare_column_block() for the
/// arguments): the same Path on every process. TraceOptions::threads is not
/// used (one thread per process); TraceOptions::interrupt_requested, when
/// set, must answer alike on every process at every knot (a process that
/// stops alone leaves the others waiting in a collective call).
template <class Scalar, class Derived>
Path<Scalar> trace_column_block(MPI_Comm comm, const Eigen::MatrixBase<Derived>& x, Index first_predictor,
                                Index predictors, const Vector<Scalar>& y, const TraceOptions& options = {},
                                const Vector<Scalar>& weights = Vector<Scalar>()) {
  const PreparedColumnBlock<Scalar> prepared =
      prepare_column_block<Scalar>(comm, x, first_predictor, predictors, y, options, weights);
  return trace_design(prepared.design, prepared.preparation, options);
}

}  // namespace knotpath::mpi
