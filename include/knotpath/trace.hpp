#pragma once
/// \file trace.hpp
/// \brief The front door of tracing: from the user's data to a Path. It
/// prepares the data (prepare.hpp), chooses the storage of the prepared
/// columns (design/), and runs the homotopy (homotopy.hpp, which holds the
/// algorithm and its references) over that design operator.

#include <algorithm>
#include <cstddef>
#include <optional>
#include <utility>

#include "design/concept.hpp"
#include "detail/scalar.hpp"
#include "homotopy.hpp"
#include "options.hpp"
#include "path.hpp"
#include "prepare.hpp"
#include "problem.hpp"
#include "statistics.hpp"

namespace knotpath {

/// Knots a trace of an n x p design is expected to make under the stopping
/// rules: about one per predictor that can enter (min(n, p)), capped by
/// TraceOptions::max_active and max_knots. An estimate for choosing the
/// storage, not a bound (leave events add knots).
inline double expected_knots(Index n, Index p, const TraceOptions& options) {
  double knots = static_cast<double>(std::min(n, p));
  if (options.max_active > 0) knots = std::min(knots, static_cast<double>(options.max_active));
  if (options.max_knots > 0) knots = std::min(knots, static_cast<double>(options.max_knots));
  return std::max(knots, 1.0);
}

/// The one home of the automatic storage choice (TraceOptions::storage),
/// for trace() and PathSolver; an explicit choice is returned unchanged.
/// Work in multiply-adds: the Gram route pays n p^2 / 2 once for the
/// statistics and then O(p) per knot; the dense copy pays about 2 n p per
/// knot and response. Automatic picks:
///  - Gram when n >= 2 p, p <= 5000 (the p x p matrix then costs at most
///    200 MB) and either it is the cheaper route for `responses` traces of
///    expected_knots() knots each (n p^2 / 2 <= responses * 2 n p K, i.e.
///    p <= 4 responses K), or the design is small (n p^2 < 2^26, about a
///    tenth of a second of work either way), where it is kept for every
///    stopping rule so that small problems do not change route with them;
///  - else, for wide designs (p > n) with more than 4e6 entries, the view
///    of the user's matrix (no copy; floating types only);
///  - else the dense operator on a centred, scaled copy.
/// A full path has K about min(n, p) = p when n >= 2 p, so it always takes
/// the Gram route; a short one (max_active = 40 on 20000 x 2000) the dense one.
template <class Scalar>
Storage choose_storage(Index n, Index p, const TraceOptions& options, std::size_t responses = 1) {
  if (options.storage != Storage::automatic) return options.storage;
  const double rows = static_cast<double>(n), cols = static_cast<double>(p);
  if (n >= 2 * p && p <= 5000) {
    const double gram_work = rows * cols * cols / 2;
    const double dense_work = static_cast<double>(std::max<std::size_t>(responses, 1)) * 2 * rows * cols *
                              expected_knots(n, p, options);
    if (gram_work <= dense_work || rows * cols * cols < 67108864.0) return Storage::gram;
  }
  if (!detail::is_exact_v<Scalar> && p > n && rows * cols > 4e6) return Storage::view;
  return Storage::dense;
}

/// Whether choose_storage() takes the Gram route for n rows of p predictors
/// and for every larger row count (the clause for small designs holds for
/// no large n, so the rule is tested at n and at a row count where that
/// clause is false). A reader of rows in blocks that has seen n rows can
/// then trace from its streamed statistics and get the very path trace()
/// would give for the whole table (the program's automatic --read).
template <class Scalar>
bool gram_for_more_rows(Index n, Index p, const TraceOptions& options) {
  const Index large = std::max<Index>(n, Index{1} << 26);
  return choose_storage<Scalar>(n, p, options) == Storage::gram &&
         choose_storage<Scalar>(large, p, options) == Storage::gram;
}

/// Traces the path of a prepared problem: `design` is any DesignOperator
/// over the prepared columns described by `prep` (prep.columns[k] is the
/// user's index of column k). Throws invalid_option (options.validate()).
/// Thread safety: the dense, view and sparse operators write scratch space
/// during the trace, so one design object must not be traced by two threads
/// at once (a GramDesign holds none and may be shared); the returned Path
/// is immutable.
template <DesignOperator Design>
Path<typename Design::Scalar> trace_design(const Design& design, const Preparation<typename Design::Scalar>& prep,
                                           const TraceOptions& options) {
  using Scalar = typename Design::Scalar;
  options.validate(static_cast<std::size_t>(prep.predictors));
  TracedKnots<Scalar> traced = Homotopy<Design>(design, prep, options).run();
  return Path<Scalar>(prep, options, std::move(traced.knots), std::move(traced.held_out), traced.reason,
                      Scalar(options.ridge));
}

namespace detail {

/// trace()'s Gram route once the statistics of its rows are formed
/// (`observations` = the table's row count, weight-0 rows included, as
/// Preparation::observations records it).
template <class Scalar>
Path<Scalar> trace_rows_statistics(const SufficientStatistics<Scalar>& statistics, Index observations,
                                   const TraceOptions& options) {
  PreparedGram<Scalar> prepared = prepare_gram(statistics, options);
  prepared.preparation.observations = observations;
  return trace_design(prepared.design, prepared.preparation, options);
}

/// trace()'s Gram route from the rows (options already validated): checks
/// the data, forms the statistics of the rows and traces from them; they
/// are kept in `*kept` when given (cross-validation reuses them).
template <class Scalar, class Derived>
Path<Scalar> trace_rows_gram(const Eigen::MatrixBase<Derived>& x, const Vector<Scalar>& y, const TraceOptions& options,
                             const Vector<Scalar>& weights,
                             std::optional<SufficientStatistics<Scalar>>* kept = nullptr) {
  check_data(x, y, weights);
  SufficientStatistics<Scalar> statistics = SufficientStatistics<Scalar>::from_rows(x, y, weights);
  Path<Scalar> path = trace_rows_statistics(statistics, x.rows(), options);
  if (kept) *kept = std::move(statistics);
  return path;
}

}  // namespace detail

/// Traces the lasso (or least angle) path of y on the columns of x.
///
/// Objective at penalty lambda (see DESIGN notes and TraceOptions):
///     0.5 sum_i w_i (y_i - b0 - x_i^T beta)^2 + lambda sum_j f_j s_j |beta_j|
///                                              + 0.5 ridge sum_j (s_j beta_j)^2.
/// Units: with standardize (the default) s_j is the root weighted sum of
/// squares of the centred column, so lambda is in response units and grows
/// like sqrt(n); lambda / sqrt(n) is the size-free penalty (scaling.hpp).
/// `weights` may be empty (all 1). Throws invalid_option or invalid_data.
/// Thread safety: each call owns its design and factor and only reads x, y
/// and weights, so concurrent calls are safe.
/// Cost: about one least-squares fit, O(n p k) for k knots with a dense design.
/// Threads: TraceOptions::threads spreads the one product per knot of the
/// dense copy, the view and the sparse design over column blocks of fixed
/// width; the path is bitwise the same for every thread count.
/// Storage: TraceOptions::storage; automatic follows choose_storage():
/// Gram mode (sufficient statistics, O(n p^2) once then O(p k) per knot) for
/// tall designs when the stopping rules let the path run long enough to pay
/// for it, the view of the user's matrix (no copy) for large wide designs,
/// else the dense operator on a centred, scaled copy. Exact types never use
/// the view. To trace many responses against one design, PathSolver
/// (solver.hpp) prepares the design once.
///
/// `x` may be any Eigen dense object of the scalar type: a Matrix, an
/// Eigen::Map over the caller's memory or a block is read in place, never
/// copied whole (the dense storage makes its own centred, scaled copy of the
/// traced columns; the view and Gram storages read x directly). Row-major
/// objects and expressions are read in place too, except by the view, which
/// then works on one column-major copy.
template <class Scalar, class Derived>
Path<Scalar> trace(const Eigen::MatrixBase<Derived>& x, const Vector<Scalar>& y, const TraceOptions& options = {},
                   const Vector<Scalar>& weights = Vector<Scalar>()) {
  options.validate(static_cast<std::size_t>(x.cols()));
  const Storage storage = choose_storage<Scalar>(x.rows(), x.cols(), options);
  const bool gram = storage == Storage::gram, view = storage == Storage::view;
  if constexpr (detail::is_exact_v<Scalar>) {
    if (options.storage == Storage::view)
      throw invalid_option("storage", "the view of the user's matrix needs a floating scalar type "
                                      "(its implicit scaling takes square roots)");
  } else {
    if (view && !gram) {
      if constexpr (detail::viewable_v<Derived, Scalar>) {
        PreparedView<Scalar> prepared = prepare_view<Scalar>(x, y, options, weights);
        prepared.design.set_threads(options.threads);
        return trace_design(prepared.design, prepared.preparation, options);
      } else {
        const Matrix<Scalar> column_major = x;  // the view reads column-major memory
        return trace<Scalar>(column_major, y, options, weights);
      }
    }
  }
  if (gram) return detail::trace_rows_gram(x, y, options, weights);
  PreparedDense<Scalar> prepared = prepare_dense<Scalar>(x, y, options, weights);
  prepared.design.set_threads(options.threads);
  return trace_design(prepared.design, prepared.preparation, options);
}

/// Traces the path of a sparse design (compressed columns, referenced, never
/// densified; centring and scaling applied implicitly). Same objective and
/// exceptions as trace(). Cost per knot O(nnz(X) + n) plus the factor.
template <class Scalar, class StorageIndex>
Path<Scalar> trace_sparse(const SparseMatrix<Scalar, StorageIndex>& x, const Vector<Scalar>& y, const TraceOptions& options = {},
                          const Vector<Scalar>& weights = Vector<Scalar>()) {
  PreparedSparse<Scalar, StorageIndex> prepared = prepare_sparse<Scalar, StorageIndex>(x, y, options, weights);
  prepared.design.set_threads(options.threads);
  return trace_design(prepared.design, prepared.preparation, options);
}

/// Traces the path from sufficient statistics computed elsewhere (possibly
/// merged across row blocks or machines). Same objective as trace().
/// Cost O(p^2) to prepare, then O(p k) per knot, independent of n. Throws
/// invalid_option or invalid_data (see prepare_gram()).
template <class Scalar>
Path<Scalar> trace_statistics(const SufficientStatistics<Scalar>& statistics, const TraceOptions& options = {}) {
  PreparedGram<Scalar> prepared = prepare_gram(statistics, options);
  return trace_design(prepared.design, prepared.preparation, options);
}

}  // namespace knotpath
