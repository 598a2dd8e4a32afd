#pragma once
/// \file problem.hpp
/// \brief Advanced: a prepared problem is a preparation record (prepare.hpp)
/// with the design operator (design/) that holds or views the prepared
/// columns. trace() builds one from the user's data and the storage it
/// chooses; build one yourself to trace it with trace_design(), to keep the
/// operator for several traces, or to use a storage trace() does not pick.
///
/// One function per storage applies the preparation of prepare.hpp (the
/// same exclusion rule, scaling rule, magnitude checks and centring
/// amplification for all four) while reading the data the way that storage
/// holds it. The dense copy and the view run the very same pass over the
/// columns (detail::prepare_dense_columns: same means, spreads and response
/// statistics to the last bit) and differ only in what they keep: a centred,
/// scaled copy, or the user's matrix read in place. Compressed columns
/// (sparse) are summarized from their stored entries, and Gram mode from
/// sufficient statistics.

#include <algorithm>
#include <cmath>
#include <string>
#include <utility>
#include <vector>

#include "design/concept.hpp"
#include "design/dense.hpp"
#include "design/dense_view.hpp"
#include "design/gram.hpp"
#include "design/sparse.hpp"
#include "detail/scalar.hpp"
#include "errors.hpp"
#include "options.hpp"
#include "prepare.hpp"
#include "statistics.hpp"

namespace knotpath {

/// A design operator and the record of the preparation behind it: what
/// trace_design() takes.
template <DesignOperator Design>
struct PreparedProblem {
  Design design;                                     ///< the prepared columns (held, viewed or summarized)
  Preparation<typename Design::Scalar> preparation;  ///< means, scales, exclusions; pass to trace_design()
};

/// A prepared dense problem: the design operator and the preparation record.
template <class Scalar>
using PreparedDense = PreparedProblem<DenseDesign<Scalar>>;

/// Prepares a dense design for tracing: centres, scales and weights the
/// columns as in the file comment and excludes all-zero, constant (with an
/// intercept) and infinite-factor columns. `weights` may be empty (all 1).
/// Throws invalid_option (bad options; standardize with an exact rational
/// type) or invalid_data (sizes disagree, NaN/Inf, negative weights, no
/// positive weight, overflowing sums, exact type with weights other than 0
/// and 1). Cost O(n p); memory one copy of X.
template <class Scalar, class Derived>
PreparedDense<Scalar> prepare_dense(const Eigen::MatrixBase<Derived>& x, const Vector<Scalar>& y,
                                    const TraceOptions& options,
                                    const Vector<Scalar>& weights = Vector<Scalar>()) {
  options.validate(static_cast<std::size_t>(x.cols()));
  detail::check_data(x, y, weights);
  const detail::UsedRows<Scalar> used = detail::used_rows(weights, x.rows(), options);
  const Index m = static_cast<Index>(used.rows.size());
  Matrix<Scalar> z(m, x.cols());
  Vector<Scalar> yc;
  Preparation<Scalar> prep = detail::prepare_dense_columns(
      x, y, options, used, yc, [&](Index k, const Vector<Scalar>& centred, const Scalar& scale) {
        for (Index r = 0; r < m; ++r) z(r, k) = used.sqrt_weights(r) * centred(r) / scale;
      });
  z.conservativeResize(m, static_cast<Index>(prep.columns.size()));
  return {DenseDesign<Scalar>(std::move(z), std::move(yc)), std::move(prep)};
}

/// A prepared view problem: the operator to hand to trace_design() and the
/// record of what the preparation did (means, scales, exclusions).
template <class Scalar>
using PreparedView = PreparedProblem<DenseViewDesign<Scalar>>;

/// Prepares a view of a dense design: the same pass over the columns as
/// prepare_dense (detail::prepare_dense_columns), without copying X.
/// Floating scalar types only. `x` must outlive the returned design. `weights`
/// empty means all 1. O(n p) time, O(n + p) memory beyond X.
/// Throws invalid_option (bad options), invalid_data (sizes disagree,
/// non-finite values, negative weights, no positive weight, overflowing sums).
template <class Scalar, class Derived>
PreparedView<Scalar> prepare_view(const Eigen::MatrixBase<Derived>& x, const Vector<Scalar>& y,
                                  const TraceOptions& options, const Vector<Scalar>& weights = Vector<Scalar>()) {
  static_assert(!detail::is_exact_v<Scalar>, "the view design needs a floating scalar type");
  static_assert(detail::viewable_v<Derived, Scalar>,
                "the view design reads column-major memory in place: pass a Matrix, an Eigen::Map or a "
                "block of columns of the same scalar type (or trace() it, which copies other layouts)");
  const Index n = x.rows(), p = x.cols();
  options.validate(static_cast<std::size_t>(p));
  detail::check_data(x, y, weights);
  const bool weighted = weights.size() != 0 && (weights.array() != Scalar(1)).any();
  const detail::UsedRows<Scalar> used = detail::used_rows(weights, n, options);
  Vector<Scalar> used_response;
  Preparation<Scalar> prep =
      detail::prepare_dense_columns(x, y, options, used, used_response, [](Index, const Vector<Scalar>&, const Scalar&) {});
  // The view reads every row of x: rows of weight 0 get a zero root weight.
  Vector<Scalar> sqrt_w = detail::on_all_rows(used, used.sqrt_weights, n);
  Vector<Scalar> yc = detail::on_all_rows(used, used_response, n);
  auto [m, s] = detail::traced_means_and_scales(prep);
  typename DenseViewDesign<Scalar>::MatrixView view(x.derived().data(), n, p,
                                                    Eigen::OuterStride<>(x.derived().outerStride()));
  DenseViewDesign<Scalar> design(view, prep.columns, std::move(m), std::move(s), std::move(sqrt_w), std::move(yc),
                                 weighted);
  return {std::move(design), std::move(prep)};
}

/// A temporary would leave the view dangling: name the matrix (or the
/// Eigen::Map over your memory) and keep it alive while the design is used.
template <class Scalar, class Derived>
PreparedView<Scalar> prepare_view(Eigen::MatrixBase<Derived>&& x, const Vector<Scalar>& y, const TraceOptions& options,
                                  const Vector<Scalar>& weights = Vector<Scalar>()) = delete;

namespace detail {

/// What the sparse preparation reads of one column over the rows of
/// positive weight (rows not stored hold zeros).
template <class Scalar>
struct SparseColumn {
  bool all_zero = true;           ///< no nonzero value on a used row
  bool constant = true;           ///< one value on every used row
  Scalar mean{0};                 ///< weighted mean, with one correction pass
  Scalar spread{0};               ///< ||sqrt(w) o (x - mean)||, two passes
  Scalar root_sum_of_squares{0};  ///< ||sqrt(w) o x|| (the spread about 0, without intercept)
};

/// One column of a sparse matrix, from its stored entries and the implicit
/// zeros: the weighted mean with the correction pass of weighted_mean()
/// (the implicit zeros contribute -mean each), and the spreads about the
/// mean and about 0.
template <class Scalar, class StorageIndex>
SparseColumn<Scalar> summarize_sparse_column(const SparseMatrix<Scalar, StorageIndex>& x, Index j,
                                             const Vector<Scalar>& w, Index used, const Scalar& weight_sum) {
  using Iterator = typename SparseMatrix<Scalar, StorageIndex>::InnerIterator;
  SparseColumn<Scalar> out;
  Scalar sum(0), stored_weight(0);
  Index stored_used = 0;
  bool have_first = false;
  Scalar first(0);
  for (Iterator it(x, j); it; ++it) {
    if (w(it.row()) == Scalar(0)) continue;
    sum += w(it.row()) * it.value();
    stored_weight += w(it.row());
    ++stored_used;
    if (it.value() != Scalar(0)) out.all_zero = false;
    if (!have_first) {
      first = it.value();
      have_first = true;
    } else if (it.value() != first) {
      out.constant = false;
    }
  }
  // Used rows that are not stored hold zeros: with stored nonzeros, the column varies.
  if (stored_used < used && !out.all_zero) out.constant = false;
  const Scalar implicit_weight = weight_sum - stored_weight;
  out.mean = sum / weight_sum;
  Scalar correction = -implicit_weight * out.mean, squares(0), raw_squares(0);
  for (Iterator it(x, j); it; ++it)
    if (w(it.row()) != Scalar(0)) correction += w(it.row()) * (it.value() - out.mean);
  out.mean += correction / weight_sum;
  for (Iterator it(x, j); it; ++it) {
    if (w(it.row()) == Scalar(0)) continue;
    const Scalar deviation = it.value() - out.mean;
    squares += w(it.row()) * deviation * deviation;
    raw_squares += w(it.row()) * it.value() * it.value();
  }
  squares += implicit_weight * out.mean * out.mean;
  out.spread = square_root<Scalar>(squares);
  out.root_sum_of_squares = square_root<Scalar>(raw_squares);
  return out;
}

}  // namespace detail

/// A prepared sparse problem (the design references the user's matrix).
template <class Scalar, class StorageIndex = Index>
using PreparedSparse = PreparedProblem<SparseDesign<Scalar, StorageIndex>>;

/// Prepares a sparse design: the response as every preparation from rows
/// does (detail::prepare_response), and each column's weighted mean (with
/// its correction pass) and spread from the stored entries, implicit zeros
/// included (detail::summarize_sparse_column); exclusions and scaling by the
/// shared rules.
/// Floating scalar types only (the row scaling needs square roots). `x`
/// must outlive the returned design; `weights` empty means all 1.
/// O(n + p + nnz) time. Throws invalid_option (bad options) and invalid_data
/// (sizes disagree, non-finite values, negative weights, no positive weight,
/// magnitudes outside the range of detail::check_magnitude()).
template <class Scalar, class StorageIndex>
PreparedSparse<Scalar, StorageIndex> prepare_sparse(const SparseMatrix<Scalar, StorageIndex>& x, const Vector<Scalar>& y,
                                      const TraceOptions& options,
                                      const Vector<Scalar>& weights = Vector<Scalar>()) {
  static_assert(!detail::is_exact_v<Scalar>, "sparse designs need a floating scalar type");
  const Index n = x.rows(), p = x.cols();
  options.validate(static_cast<std::size_t>(p));
  if (y.size() != n) throw invalid_data("the response length differs from the design's rows");
  if (weights.size() != 0 && weights.size() != n) throw invalid_data("weights length differs from rows");
  Vector<Scalar> w = weights.size() ? weights : Vector<Scalar>(Vector<Scalar>::Ones(n));
  Index used = 0;
  // Largest magnitudes over all rows and over rows of positive weight
  // (detail::check_magnitude, the rule every storage applies).
  Scalar top_y(0), top_y_used(0);
  for (Index i = 0; i < n; ++i) {
    detail::check_weight(w(i), static_cast<std::size_t>(i));
    if (!detail::is_finite_value(y(i)))
      throw invalid_data::at_row(static_cast<std::size_t>(i), "the response is not finite");
    used += w(i) > Scalar(0);
    top_y = std::max<Scalar>(top_y, detail::abs_value<Scalar>(y(i)));
    if (w(i) > Scalar(0)) top_y_used = std::max<Scalar>(top_y_used, detail::abs_value<Scalar>(y(i)));
  }
  if (used == 0) throw invalid_data("no observation has a positive weight");
  for (Index j = 0; j < p; ++j) {
    Scalar top(0), top_used(0);
    for (typename SparseMatrix<Scalar, StorageIndex>::InnerIterator it(x, j); it; ++it) {
      if (!detail::is_finite_value(it.value()))
        throw invalid_data::at_row(static_cast<std::size_t>(it.row()), "the design value is not finite",
                                   static_cast<std::size_t>(j));
      top = std::max<Scalar>(top, detail::abs_value<Scalar>(it.value()));
      if (w(it.row()) > Scalar(0)) top_used = std::max<Scalar>(top_used, detail::abs_value<Scalar>(it.value()));
    }
    detail::check_magnitude(top, top_used, std::string(), static_cast<std::size_t>(j));
  }
  detail::check_magnitude(top_y, top_y_used, std::string("the response"));
  if (weights.size() != 0) detail::check_magnitude(Scalar(w.maxCoeff()), Scalar(w.maxCoeff()), std::string("the weight vector"));
  const detail::UsedRows<Scalar> rows = detail::used_rows(weights, n, options);
  Preparation<Scalar> prep = start_preparation<Scalar>(n, used, p, options, rows.weight_sum);
  Vector<Scalar> used_response;
  detail::prepare_response(y, options, rows, prep, used_response);
  const std::vector<double> penalty_weights = options.penalty_weights(static_cast<std::size_t>(p));
  for (Index j = 0; j < p; ++j) {
    const double weight = penalty_weights[static_cast<std::size_t>(j)];
    const detail::SparseColumn<Scalar> column = detail::summarize_sparse_column(x, j, w, used, prep.weight_sum);
    if (const char* reason = detail::exclusion_reason(column.all_zero, column.constant, options, weight)) {
      prep.excluded.push_back({j, reason});
      continue;
    }
    detail::admit_column(prep, options, j, weight, options.with_intercept ? column.mean : Scalar(0),
                         options.with_intercept ? column.spread : column.root_sum_of_squares);
  }
  Vector<Scalar> sqrt_w = detail::on_all_rows(rows, rows.sqrt_weights, n);
  Vector<Scalar> yc = detail::on_all_rows(rows, used_response, n);
  auto [m, s] = detail::traced_means_and_scales(prep);
  SparseDesign<Scalar, StorageIndex> design(x, prep.columns, std::move(m), std::move(s), std::move(sqrt_w), std::move(yc));
  return {std::move(design), std::move(prep)};
}

/// A temporary would leave the design dangling: name the matrix and keep it
/// alive while the design is used.
template <class Scalar, class StorageIndex>
PreparedSparse<Scalar, StorageIndex> prepare_sparse(SparseMatrix<Scalar, StorageIndex>&& x, const Vector<Scalar>& y,
                                                    const TraceOptions& options,
                                                    const Vector<Scalar>& weights = Vector<Scalar>()) = delete;

/// A prepared Gram problem.
template <class Scalar>
using PreparedGram = PreparedProblem<GramDesign<Scalar>>;

/// Prepares a Gram problem from sufficient statistics, applying the same
/// centring, scaling and exclusions as prepare_dense (see prepare.hpp).
/// Without an intercept the raw (uncentred) cross-products are rebuilt from
/// the centred ones: C + n m m^T. O(p^2) time and memory. Throws
/// invalid_option (bad options; standardize with an exact rational type)
/// and invalid_data (no row with positive weight, statistics that are not
/// finite).
template <class Scalar>
PreparedGram<Scalar> prepare_gram(const SufficientStatistics<Scalar>& stats, const TraceOptions& options) {
  const Index p = stats.predictors();
  options.validate(static_cast<std::size_t>(p));
  if (stats.rows == 0) throw invalid_data("no observation has a positive weight");
  if constexpr (detail::is_exact_v<Scalar>) {
    if (options.standardize)
      throw invalid_option("standardize",
                           "exact rational arithmetic cannot take the square roots that scaling "
                           "columns to unit length needs; trace with standardize = false");
  }
  Preparation<Scalar> prep = start_preparation<Scalar>(stats.rows, stats.rows, p, options, stats.weight_sum);
  const Scalar n = stats.weight_sum;
  // Second moments about the centre in use (the means, or 0 without intercept).
  auto moment = [&](Index i, Index j) -> Scalar {
    if (options.with_intercept) return stats.comoments(i, j);
    return stats.comoments(i, j) + n * stats.means(i) * stats.means(j);
  };
  auto moment_y = [&](Index j) -> Scalar {
    if (options.with_intercept) return stats.cross(j);
    return stats.cross(j) + n * stats.means(j) * stats.response_mean;
  };
  prep.response_mean = options.with_intercept ? stats.response_mean : Scalar(0);
  prep.total_sum_of_squares = options.with_intercept
                                  ? stats.response_comoment
                                  : Scalar(stats.response_comoment + n * stats.response_mean * stats.response_mean);
  const std::vector<double> penalty_weights = options.penalty_weights(static_cast<std::size_t>(p));
  for (Index j = 0; j < p; ++j) {
    const double weight = penalty_weights[static_cast<std::size_t>(j)];
    const bool constant = stats.minimum(j) == stats.maximum(j);
    const bool all_zero = constant && stats.minimum(j) == Scalar(0);
    if (const char* reason = detail::exclusion_reason(all_zero, constant, options, weight)) {
      prep.excluded.push_back({j, reason});
      continue;
    }
    const Scalar m2 = moment(j, j);
    if (options.standardize && !detail::is_finite_value(m2))
      throw invalid_data::of_predictor(static_cast<std::size_t>(j),
                                       ": its sum of squares is not finite in the sufficient statistics "
                                       "(the data overflow double precision); rescale it");
    Scalar spread(0);
    if constexpr (!detail::is_exact_v<Scalar>)
      if (m2 > Scalar(0)) spread = detail::square_root<Scalar>(m2);
    detail::admit_column(prep, options, j, weight, options.with_intercept ? stats.means(j) : Scalar(0), spread);
  }
  const Index q = static_cast<Index>(prep.columns.size());
  Matrix<Scalar> g(q, q);
  Vector<Scalar> c(q);
  for (Index b = 0; b < q; ++b) {
    const Index jb = prep.columns[static_cast<std::size_t>(b)];
    for (Index a = 0; a < q; ++a) {
      const Index ja = prep.columns[static_cast<std::size_t>(a)];
      g(a, b) = moment(ja, jb) / (prep.scales(ja) * prep.scales(jb));
    }
    c(b) = moment_y(jb) / prep.scales(jb);
  }
  // Statistics formed from values near the ends of the floating range hold
  // Inf/NaN (products overflow); refuse them rather than trace garbage.
  bool finite = detail::is_finite_value(prep.total_sum_of_squares);
  for (Index b = 0; b < q && finite; ++b) {
    finite = detail::is_finite_value(c(b)) && detail::is_finite_value(prep.scales(prep.columns[static_cast<std::size_t>(b)]));
    for (Index a = 0; a < q && finite; ++a) finite = detail::is_finite_value(g(a, b));
  }
  if (!finite)
    throw invalid_data("the sufficient statistics are not finite (squares or cross-products of the "
                       "data overflow double precision); rescale the predictors and the response");
  return {GramDesign<Scalar>(std::move(g), std::move(c), prep.total_sum_of_squares, stats.rows),
          std::move(prep)};
}

}  // namespace knotpath
