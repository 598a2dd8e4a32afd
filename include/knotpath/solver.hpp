#pragma once
/// \file solver.hpp
/// \brief Prepare once, trace many: a solver that prepares a design (its
/// means, scales and exclusions, and the Gram matrix, the centred copy or the
/// view that the storage keeps) once, then traces any number of responses
/// against it, one at a time or as a block, from any number of threads.
///
/// The algorithm is the one trace() runs (homotopy.hpp holds it and its
/// references); the solver only moves the design's share of the preparation
/// out of the per-response work. Per response it costs what depends on the
/// response: O(n) for its mean and sum of squares, O(n p) for X^T y in the
/// Gram route, and the homotopy itself.
///
/// Bitwise contract: with the storage trace() would choose (the default,
/// expected_responses = 1) or the same explicit TraceOptions::storage, a
/// solver's path for y is the path trace(x, y, options, weights) returns,
/// to the last bit: the design side and the response side of the
/// preparation run the same operations in the same order.

#include <algorithm>
#include <cstddef>
#include <exception>
#include <memory>
#include <optional>
#include <utility>
#include <vector>

#include "detail/parallel.hpp"
#include "detail/scalar.hpp"
#include "errors.hpp"
#include "options.hpp"
#include "path.hpp"
#include "prepare.hpp"
#include "problem.hpp"
#include "statistics.hpp"
#include "trace.hpp"

namespace knotpath {

namespace detail {

/// Checks one response against a design of n rows (weights as given, empty:
/// all 1), with the messages of check_data(): its length, finiteness and
/// magnitude (check_magnitude()).
template <class Scalar>
void check_response(const Vector<Scalar>& y, Index n, const Vector<Scalar>& weights) {
  if (y.size() != n)
    throw invalid_data("the response has " + std::to_string(y.size()) + " values but the design has " +
                       std::to_string(n) + " rows");
  Scalar largest(0), largest_used(0);
  for (Index i = 0; i < n; ++i) {
    if (!is_finite_value(y(i)))
      throw invalid_data::at_row(static_cast<std::size_t>(i), "the response is not finite");
    if constexpr (std::is_floating_point_v<Scalar>) {
      largest = std::max<Scalar>(largest, std::abs(y(i)));
      if (weights.size() == 0 || weights(i) > Scalar(0)) largest_used = std::max<Scalar>(largest_used, std::abs(y(i)));
    }
  }
  check_magnitude(largest, largest_used, std::string("the response"));
}

}  // namespace detail

/// A design prepared once for tracing many responses: a const object whose
/// trace() and trace_block() may be called from several threads at once
/// (each call builds its own operator over the shared, immutable prepared
/// columns and owns its scratch space).
///
/// Storage: choose_storage() with the number of responses the caller
/// expects (constructor argument): the Gram route pays its n p^2 / 2 once
/// and then O(n p) per response, so with many responses it pays off for
/// shorter paths than a single trace. The view storage reads the caller's
/// matrix in place: that matrix must then outlive the solver (storage()
/// says which was chosen). Sparse designs and sufficient statistics are
/// not taken here (trace_sparse(), trace_statistics()).
template <class Scalar>
class PathSolver {
 public:
  /// Prepares the design `x` (n x p) with `options` and row `weights`
  /// (empty: all 1) for `expected_responses` traces (a hint for the
  /// storage choice only; any number may be traced). Checks the design and
  /// weights as trace() does. Throws invalid_option or invalid_data.
  /// Cost: O(n p^2) for the Gram route, O(n p) otherwise.
  template <class Derived>
  explicit PathSolver(const Eigen::MatrixBase<Derived>& x, TraceOptions options = {},
                      Vector<Scalar> weights = Vector<Scalar>(), std::size_t expected_responses = 1)
      : options_(std::move(options)), weights_(std::move(weights)), rows_(x.rows()), predictors_(x.cols()) {
    options_.validate(static_cast<std::size_t>(predictors_));
    storage_ = choose_storage<Scalar>(rows_, predictors_, options_, expected_responses);
    if constexpr (detail::is_exact_v<Scalar>) {
      if (storage_ == Storage::view)
        throw invalid_option("storage", "the view of the user's matrix needs a floating scalar type "
                                        "(its implicit scaling takes square roots)");
    }
    // The design and weights pass the checks of trace() (a zero response passes every response check).
    detail::check_data(x, Vector<Scalar>(Vector<Scalar>::Zero(rows_)), weights_);
    if (storage_ == Storage::gram)
      prepare_gram_side(x);
    else if (storage_ == Storage::view)
      prepare_view_side(x);
    else
      prepare_dense_side(x);
  }

  /// The storage chosen (Storage::dense, gram or view; never automatic).
  Storage storage() const noexcept { return storage_; }
  /// Rows of the design (n).
  Index rows() const noexcept { return rows_; }
  /// Predictors of the design (p).
  Index predictor_count() const noexcept { return predictors_; }
  /// The options every trace uses.
  const TraceOptions& options() const noexcept { return options_; }

  /// Traces the path of response `y` (length n). Throws invalid_data for a
  /// response of the wrong length, not finite or out of range (as trace()).
  Path<Scalar> trace(const Vector<Scalar>& y) const {
    detail::check_response(y, rows_, weights_);
    if (storage_ == Storage::gram) return trace_gram(y);
    if (storage_ == Storage::view) return trace_view(y);
    return trace_dense(y);
  }

  /// Traces every column of `responses` (n x m); path i belongs to column
  /// i. `threads` spreads the columns over threads (0: all hardware
  /// threads); each path is the same for every thread count. The first
  /// error, in column order, is rethrown after every thread has finished.
  std::vector<Path<Scalar>> trace_block(const Matrix<Scalar>& responses, std::size_t threads = 1) const {
    if (responses.rows() != rows_)
      throw invalid_data("the block of responses has " + std::to_string(responses.rows()) +
                         " rows but the design has " + std::to_string(rows_));
    const auto m = static_cast<std::size_t>(responses.cols());
    std::vector<Path<Scalar>> paths(m);
    detail::for_each_task(m, detail::threads_for<Scalar>(threads), [&](std::size_t i) {
      paths[i] = trace(Vector<Scalar>(responses.col(static_cast<Index>(i))));
    });
    return paths;
  }

 private:
  // One block of rows as SufficientStatistics::design_pass() handed it over:
  // the shifted (root-weighted) rows in a buffer of the pass's block height,
  // so that the response pass multiplies the very same memory layout.
  struct RowBlock {
    Matrix<Scalar> rows;        // block_rows x p; the top `used.size()` rows hold the block
    std::vector<Index> used;    // user's row of each
    Vector<Scalar> weights;     // their weights (1 without weights)
  };

  template <class Derived>
  void prepare_gram_side(const Eigen::MatrixBase<Derived>& x) {
    design_statistics_ = SufficientStatistics<Scalar>::empty(predictors_);
    const Index height = SufficientStatistics<Scalar>::block_height(rows_, predictors_, 0);
    SufficientStatistics<Scalar>::design_pass(
        x, weights_, 0, design_statistics_, sum_x_, [&](const auto& xm, const std::vector<Index>& used, const auto& wm) {
          RowBlock block{Matrix<Scalar>(height, predictors_), used, wm};
          block.rows.topRows(xm.rows()) = xm;
          blocks_.push_back(std::move(block));
        });
  }

  Path<Scalar> trace_gram(const Vector<Scalar>& y) const {
    SufficientStatistics<Scalar> stats = design_statistics_;
    typename SufficientStatistics<Scalar>::ResponsePass response;
    Vector<Scalar> yb;
    const bool weighted = weights_.size() != 0;
    for (const RowBlock& block : blocks_) {
      const auto m = static_cast<Index>(block.used.size());
      yb.resize(m);
      for (Index r = 0; r < m; ++r) yb(r) = y(block.used[static_cast<std::size_t>(r)]);
      response.add(block.rows.topRows(m), yb, block.weights, weighted, stats.cross);
    }
    if (stats.rows != 0) response.finish(stats, sum_x_);
    PreparedGram<Scalar> prepared = prepare_gram(stats, options_);
    prepared.preparation.observations = rows_;
    return trace_design(prepared.design, prepared.preparation, options_);
  }

  template <class Derived>
  void prepare_dense_side(const Eigen::MatrixBase<Derived>& x) {
    used_ = detail::used_rows(weights_, rows_, options_);
    const Index m = static_cast<Index>(used_.rows.size());
    Matrix<Scalar> z(m, predictors_);
    // The column pass of prepare_dense() (its response side is redone per response).
    Vector<Scalar> ignored;
    preparation_ = detail::prepare_dense_columns(
        x, Vector<Scalar>(Vector<Scalar>::Zero(rows_)), options_, used_, ignored,
        [&](Index k, const Vector<Scalar>& centred, const Scalar& scale) {
          for (Index r = 0; r < m; ++r) z(r, k) = used_.sqrt_weights(r) * centred(r) / scale;
        });
    z.conservativeResize(m, static_cast<Index>(preparation_.columns.size()));
    columns_ = std::make_shared<const Matrix<Scalar>>(std::move(z));
  }

  // The preparation record of one response: the design's, with the
  // response's mean and sum of squares (detail::prepare_response(), as the
  // column pass runs it), and the prepared response over the used rows.
  Preparation<Scalar> response_preparation(const Vector<Scalar>& y, Vector<Scalar>& prepared) const {
    Preparation<Scalar> prep = preparation_;
    prep.response_mean = Scalar(0);
    prep.total_sum_of_squares = Scalar(0);
    detail::prepare_response(y, options_, used_, prep, prepared);
    return prep;
  }

  Path<Scalar> trace_dense(const Vector<Scalar>& y) const {
    Vector<Scalar> yc;
    const Preparation<Scalar> prep = response_preparation(y, yc);
    DenseDesign<Scalar> design(columns_, std::move(yc));
    design.set_threads(options_.threads);
    return trace_design(design, prep, options_);
  }

  template <class Derived>
  void prepare_view_side(const Eigen::MatrixBase<Derived>& x) {
    if constexpr (!detail::is_exact_v<Scalar>) {
      if constexpr (detail::viewable_v<Derived, Scalar>) {
        view_.emplace(x.derived().data(), rows_, predictors_, Eigen::OuterStride<>(x.derived().outerStride()));
      } else {  // the view reads column-major memory: one copy, as trace() makes
        owned_ = std::make_shared<const Matrix<Scalar>>(x);
        view_.emplace(owned_->data(), rows_, predictors_, Eigen::OuterStride<>(owned_->outerStride()));
      }
      used_ = detail::used_rows(weights_, rows_, options_);
      Vector<Scalar> ignored;
      preparation_ = detail::prepare_dense_columns(*view_, Vector<Scalar>(Vector<Scalar>::Zero(rows_)), options_,
                                                   used_, ignored, [](Index, const Vector<Scalar>&, const Scalar&) {});
      root_weights_ = detail::on_all_rows(used_, used_.sqrt_weights, rows_);
      weighted_ = weights_.size() != 0 && (weights_.array() != Scalar(1)).any();
    }
  }

  Path<Scalar> trace_view(const Vector<Scalar>& y) const {
    if constexpr (detail::is_exact_v<Scalar>) {
      throw internal_error("the view storage is never chosen for exact types");
    } else {
      Vector<Scalar> used_response;
      const Preparation<Scalar> prep = response_preparation(y, used_response);
      auto [means, scales] = detail::traced_means_and_scales(prep);
      DenseViewDesign<Scalar> design(*view_, prep.columns, std::move(means), std::move(scales), root_weights_,
                                     detail::on_all_rows(used_, used_response, rows_), weighted_);
      design.set_threads(options_.threads);
      return trace_design(design, prep, options_);
    }
  }

  TraceOptions options_;
  Vector<Scalar> weights_;  // as given (empty: all 1)
  Index rows_ = 0;
  Index predictors_ = 0;
  Storage storage_ = Storage::dense;
  // Dense and view routes: the used rows and the design's share of the preparation.
  detail::UsedRows<Scalar> used_;
  Preparation<Scalar> preparation_;
  std::shared_ptr<const Matrix<Scalar>> columns_;  // dense: the centred, scaled, root-weighted copy
  std::optional<typename DenseViewDesign<Scalar>::MatrixView> view_;  // view: the caller's matrix (or owned_)
  std::shared_ptr<const Matrix<Scalar>> owned_;  // view: a column-major copy of a layout the view cannot read
  Vector<Scalar> root_weights_;  // view: sqrt(w) on all rows (0 on rows of weight 0)
  bool weighted_ = false;        // view: some weight differs from 1
  // Gram route: the design's statistics and its shifted row blocks.
  SufficientStatistics<Scalar> design_statistics_;
  Vector<Scalar> sum_x_;
  std::vector<RowBlock> blocks_;
};

}  // namespace knotpath
