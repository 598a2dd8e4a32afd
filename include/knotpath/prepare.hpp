#pragma once
/// \file prepare.hpp
/// \brief From the user's data to the prepared problem the homotopy traces:
/// weighted centring, scaling to unit length, penalty weights and sign
/// constraints per column, exclusion of columns that cannot enter, and the
/// back-transformation to the original scale.
///
/// With weights w_i >= 0 (rows of weight 0 are ignored), means m_j and the
/// response mean are weighted; the prepared column is
///     z_ij = sqrt(w_i) (x_ij - m_j) / s_j,
/// with s_j = sqrt(sum_i w_i (x_ij - m_j)^2) when standardizing, else 1, and
/// the prepared response is sqrt(w_i) (y_i - ybar). A coefficient b_j of the
/// prepared problem maps back to beta_j = b_j / s_j on the original scale and
/// the intercept is ybar - sum_j m_j beta_j. Without an intercept m_j = 0 and
/// ybar = 0.

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <optional>
#include <string>
#include <type_traits>
#include <utility>
#include <vector>

#include "detail/centring.hpp"
#include "detail/scalar.hpp"
#include "errors.hpp"
#include "options.hpp"
#include "scaling.hpp"

namespace knotpath {

/// A predictor left out of the trace before it starts, and why.
struct ExcludedPredictor {
  Index predictor = 0;  ///< 0-based index in the user's design
  std::string reason;   ///< e.g. "constant column", "all-zero column"
};

/// What the preparation did, in the terms the path and its queries need.
template <class Scalar>
struct Preparation {
  Index observations = 0;       ///< rows given
  Index used_observations = 0;  ///< rows with positive weight
  Index predictors = 0;         ///< predictors given (p)
  bool intercept = true;        ///< an intercept is fitted
  bool standardized = true;     ///< columns were scaled to unit length
  Scalar weight_sum{0};         ///< sum of weights (the number of rows when unweighted)
  Scalar response_mean{0};      ///< weighted mean of y (0 without intercept)
  Scalar total_sum_of_squares{0};  ///< weighted sum of squares of the centred response
  Vector<Scalar> means;         ///< per predictor (0 without intercept or when excluded)
  Vector<Scalar> scales;        ///< per predictor s_j (1 when excluded)
  std::vector<Index> columns;   ///< prepared column k holds predictor columns[k] (ascending)
  std::vector<double> penalty_weights;      ///< per prepared column f (0: unpenalized)
  std::vector<SignConstraint> constraints;  ///< per prepared column
  std::vector<ExcludedPredictor> excluded;  ///< predictors left out up front
  /// Digits the centring can cost: max over the traced columns of
  /// |m_j| sqrt(W) / ||sqrt(w) o (x_j - m_j)|| (detail/centring.hpp); 1
  /// without an intercept and for exact scalar types. The tracer multiplies
  /// it by the unit roundoff in every knot's estimated error.
  double centring_amplification = 1;
};

/// The response's spread sqrt(TSS / W) (0 without an intercept): the size
/// below which an intercept's error is not measured relatively. An
/// intercept is the mean of y less sum m_j beta_j, and a mean is known to
/// the unit roundoff times the spread of what it averages, not times its
/// own size: for a response centred by its user (mean 1e-17, spread 1) the
/// intercept's relative digits are noise, and an error relative to it would
/// read as 1. The one home of that floor: the per-knot estimate
/// (Homotopy::reported_scale_error) and the cross-check's measure
/// (compare_paths) both divide the intercept's error by max(size, spread).
template <class Scalar>
double response_spread(const Preparation<Scalar>& prep) {
  if (!prep.intercept) return 0.0;
  const double tss = std::max(detail::to_double(prep.total_sum_of_squares), 0.0);
  const double weight = detail::to_double(prep.weight_sum);
  return weight > 0 ? std::sqrt(tss / weight) : 0.0;
}

/// The record of a preparation before any column is looked at: the sizes,
/// the options that shape it and the weight sum; means 0 and scales 1 until
/// columns are kept (detail::admit_column()).
template <class Scalar>
Preparation<Scalar> start_preparation(Index observations, Index used_observations, Index predictors,
                                      const TraceOptions& options, const Scalar& weight_sum) {
  Preparation<Scalar> prep;
  prep.observations = observations;
  prep.used_observations = used_observations;
  prep.predictors = predictors;
  prep.intercept = options.with_intercept;
  prep.standardized = options.standardize;
  prep.weight_sum = weight_sum;
  prep.means = Vector<Scalar>::Zero(predictors);
  prep.scales = Vector<Scalar>::Ones(predictors);
  return prep;
}

/// The divisor that turns a penalty of this preparation's data into the
/// size-free mu (scaling.hpp).
template <class Scalar>
Scalar penalty_scale(const Preparation<Scalar>& prep) {
  return penalty_scale<Scalar>(prep.standardized, prep.weight_sum);
}

namespace detail {

template <class Scalar>
bool is_finite_value(const Scalar& x) {
  if constexpr (is_exact_v<Scalar>)
    return true;
  else {
    Scalar d = x - x;  // NaN for NaN and +-Inf
    return d == d;
  }
}

/// Root of sum_i w_i v_i^2, scaled by the largest |v_i| of positive weight
/// so that squares of values near the top of the floating range do not
/// overflow; rows of weight 0 are skipped (their values, which may be far
/// larger, would otherwise set the scale and underflow the rest).
template <class Scalar, class Column, class Weights>
Scalar weighted_norm(const Column& v, const Weights& w) {
  Scalar top(0);
  for (Index i = 0; i < v.size(); ++i)
    if (w(i) > Scalar(0)) top = std::max<Scalar>(top, abs_value<Scalar>(v(i)));
  if (top == Scalar(0)) return Scalar(0);
  Scalar sum(0);
  for (Index i = 0; i < v.size(); ++i) {
    if (!(w(i) > Scalar(0))) continue;
    Scalar t = v(i) / top;
    sum += w(i) * t * t;
  }
  return top * square_root<Scalar>(sum);
}

}  // namespace detail

namespace detail {
/// Refuses one group of data (a predictor column, the response, the weights)
/// whose squares would leave the normal floating range. `largest` is its
/// largest magnitude over all rows, `largest_used` over the rows of positive
/// weight. For a built-in floating type with largest binary exponent E (1024
/// for double), `largest` must be at most 2^E/4 and a nonzero `largest_used`
/// at least 2^-E/4 (about 1e77 and 1e-77 for double): then squares,
/// cross-products and their sums stay finite and normal in every storage
/// (the Gram statistics form products directly), with 2^E/2 of headroom for
/// the growth of the homotopy's intermediate quantities on ill-conditioned
/// designs (RELIABILITY.md gives the cases that set it). The upper bound
/// covers rows of weight 0 too, because the view and sparse designs carry
/// them through their products (multiplied by a zero weight, which an
/// overflow would turn into NaN); the lower bound counts only the rows that
/// take part in the fit (values on rows of weight 0 say nothing about the
/// digits the fit keeps). Outside the range the trace would overflow to
/// Inf/NaN or lose every digit; invalid_data names `what` to rescale. Other
/// scalar types (50-digit floats, rationals) have a far wider range than any
/// double input and are not limited.
template <class Scalar>
void check_magnitude([[maybe_unused]] const Scalar& largest, [[maybe_unused]] const Scalar& largest_used,
                     [[maybe_unused]] const std::string& what,
                     [[maybe_unused]] std::optional<std::size_t> column = std::nullopt) {
  if constexpr (std::is_floating_point_v<Scalar>) {
    const int bound_exponent = std::numeric_limits<Scalar>::max_exponent / 4;
    const Scalar high = std::ldexp(Scalar(1), bound_exponent), low = std::ldexp(Scalar(1), -bound_exponent);
    auto shown = [](Scalar v) {
      char text[32];
      std::snprintf(text, sizeof text, "%.3g", static_cast<double>(v));
      return std::string(text);
    };
    // `what` names the data ("the response"); a predictor column is named
    // by the exception itself so that front ends can read its index.
    auto refuse = [&](const std::string& detail) {
      if (column) throw invalid_data::of_predictor(*column, detail);
      throw invalid_data(what + detail);
    };
    if (largest > high)
      refuse(" holds values as large as " + shown(largest) +
             ": their squares would overflow double precision; divide it by a power "
             "of ten (largest accepted magnitude 2^" + std::to_string(bound_exponent) + ")");
    if (largest_used != Scalar(0) && largest_used < low)
      refuse(" holds no value larger in magnitude than " + shown(largest_used) +
             (largest_used < largest ? " on the rows of positive weight" : "") +
             ": their squares would underflow (lose every digit); multiply it by a "
             "power of ten (smallest accepted largest magnitude 2^-" + std::to_string(bound_exponent) + ")");
  }
}

/// The largest magnitudes check_magnitude() reads, per predictor column,
/// for the response and for the weights: over every row, and over the rows
/// of positive weight. Gathered over the rows in pieces of any size (note)
/// and checked once (check); a maximum does not depend on how the rows were
/// cut. Only floating types are limited (check_magnitude).
template <class Scalar>
struct DataMagnitudes {
  Vector<Scalar> largest;       ///< per column, over every row
  Vector<Scalar> largest_used;  ///< per column, over the rows of positive weight
  Scalar largest_y{0};          ///< the response, over every row
  Scalar largest_used_y{0};     ///< the response, over the rows of positive weight
  Scalar largest_w{0};          ///< the weights

  /// Nothing seen yet, for `predictors` columns.
  explicit DataMagnitudes(Index predictors = 0)
      : largest(Vector<Scalar>::Zero(predictors)), largest_used(Vector<Scalar>::Zero(predictors)) {}

  /// Takes in the rows of (x, y) with their weights (empty: every row has
  /// weight 1); the values are finite (check_finite_values).
  template <class Derived>
  void note([[maybe_unused]] const Eigen::MatrixBase<Derived>& x, [[maybe_unused]] const Vector<Scalar>& y,
            [[maybe_unused]] const Vector<Scalar>& weights) {
    if constexpr (std::is_floating_point_v<Scalar>) {
      const bool weighted = weights.size() != 0;
      auto fold = [&](const auto& v, Scalar& top, Scalar& top_used) {
        for (Index i = 0; i < v.size(); ++i) {
          const Scalar a = std::abs(v(i));
          top = std::max(top, a);
          if (!weighted || weights(i) > Scalar(0)) top_used = std::max(top_used, a);
        }
      };
      for (Index j = 0; j < x.cols(); ++j) fold(x.col(j), largest(j), largest_used(j));
      fold(y, largest_y, largest_used_y);
      if (weighted) largest_w = std::max(largest_w, weights.cwiseAbs().maxCoeff());
    }
  }

  /// check_magnitude() for every column, the response and (`weighted`) the
  /// weights.
  void check(bool weighted) const {
    for (Index j = 0; j < largest.size(); ++j)
      check_magnitude(largest(j), largest_used(j), std::string(), static_cast<std::size_t>(j));
    check_magnitude(largest_y, largest_used_y, std::string("the response"));
    if (weighted) check_magnitude(largest_w, largest_w, std::string("the weight vector"));
  }
};

/// check_magnitude() for every predictor column, the response and the
/// weights of dense data (`weights` empty: every row has weight 1).
template <class Scalar, class Derived>
void check_magnitudes(const Eigen::MatrixBase<Derived>& x, const Vector<Scalar>& y, const Vector<Scalar>& weights) {
  DataMagnitudes<Scalar> magnitudes(x.cols());
  magnitudes.note(x, y, weights);
  magnitudes.check(weights.size() != 0);
}

/// The weight rule of every storage and route: a row's weight is finite
/// and >= 0 (0: the row is kept but takes no part in the fit). Throws
/// invalid_data naming the row (numbered from 0) otherwise.
template <class Scalar>
void check_weight(const Scalar& weight, std::size_t row) {
  if (!is_finite_value(weight) || weight < Scalar(0))
    throw invalid_data::at_row(row, "the weight is negative or not finite");
}

/// Throws invalid_data for the first value of the rows that is not finite,
/// or weight that is negative: every response and weight first, in row
/// order, then the design column by column. The rows are named from
/// `first_row` on (rows handed over in pieces count from the first piece).
template <class Scalar, class Derived>
void check_finite_values(const Eigen::MatrixBase<Derived>& x, const Vector<Scalar>& y, const Vector<Scalar>& weights,
                         std::size_t first_row = 0) {
  const Index n = x.rows();
  const auto row = [&](Index i) { return first_row + static_cast<std::size_t>(i); };
  for (Index i = 0; i < n; ++i) {
    if (!is_finite_value(y(i))) throw invalid_data::at_row(row(i), "the response is not finite");
    if (weights.size() != 0) check_weight(weights(i), row(i));
  }
  for (Index j = 0; j < x.cols(); ++j)
    for (Index i = 0; i < n; ++i)
      if (!is_finite_value(x(i, j)))
        throw invalid_data::at_row(row(i), "the design value is not finite", static_cast<std::size_t>(j));
}

/// Checks sizes and finiteness of user data; throws invalid_data naming the place.
template <class Scalar, class Derived>
void check_data(const Eigen::MatrixBase<Derived>& x, const Vector<Scalar>& y, const Vector<Scalar>& weights) {
  static_assert(std::is_same_v<typename Derived::Scalar, Scalar>, "the design and the response differ in type");
  const Index n = x.rows();
  if (y.size() != n)
    throw invalid_data("the response has " + std::to_string(y.size()) + " values but the design has " +
                       std::to_string(n) + " rows");
  if (n == 0) throw invalid_data("the data have no rows");
  if (weights.size() != 0 && weights.size() != n)
    throw invalid_data("there are " + std::to_string(weights.size()) + " weights for " +
                       std::to_string(n) + " rows");
  check_finite_values(x, y, weights);
  check_magnitudes(x, y, weights);
}

/// Why column j is left out before the path starts, in the documented order
/// (all zero, then constant under an intercept, then left out by the
/// options), or nullptr when it may enter. Shared by every storage's
/// preparation so that all of them exclude the same columns for the same
/// reasons.
/// `weight` is the column's TraceOptions::penalty_weights() entry.
inline const char* exclusion_reason(bool all_zero, bool constant, const TraceOptions& options, double weight) {
  if (all_zero) return "all-zero column";
  if (options.with_intercept && constant) return "constant column (absorbed by the intercept)";
  if (std::isinf(weight)) return "left out by request";
  return nullptr;
}

/// Reason recorded for a column whose scale is zero or not finite.
inline constexpr const char* unscalable_column = "column scale is zero or not representable";

/// Records column j as traced: its mean and scale, penalty weight `weight` and sign
/// constraint, and folds its centring amplification into the preparation's.
/// `spread` is ||sqrt(w) o (x_j - m_j)|| computed in two passes (the scale
/// when standardizing; 0 when not computed, as for exact scalar types);
/// prep.weight_sum must be set.
template <class Scalar>
void keep_column(Preparation<Scalar>& prep, const TraceOptions& options, Index j, double weight,
                 const Scalar& mean, const Scalar& scale, const Scalar& spread) {
  if (options.with_intercept)
    prep.centring_amplification =
        std::max(prep.centring_amplification, centring_amplification(mean, spread, prep.weight_sum));
  prep.means(j) = mean;
  prep.scales(j) = scale;
  prep.columns.push_back(j);
  prep.penalty_weights.push_back(weight);
  prep.constraints.push_back(options.sign_constraint(static_cast<std::size_t>(j)));
}

/// The one scaling rule, applied after exclusion_reason() let column j
/// through: its scale is its spread ||sqrt(w) o (x_j - m_j)|| when
/// standardizing (a zero or non-finite spread leaves it out, recorded as
/// unscalable_column), else 1. A kept column is recorded by keep_column().
/// Returns the scale, or nothing when the column was left out.
template <class Scalar>
std::optional<Scalar> admit_column(Preparation<Scalar>& prep, const TraceOptions& options, Index j,
                                   double weight, const Scalar& mean, const Scalar& spread) {
  Scalar scale(1);
  if (options.standardize) {
    scale = spread;
    if (!(scale > Scalar(0)) || !is_finite_value(scale)) {
      prep.excluded.push_back({j, unscalable_column});
      return std::nullopt;
    }
  }
  keep_column(prep, options, j, weight, mean, scale, spread);
  return scale;
}

/// The rows of positive weight of dense data, in ascending order, with
/// their weights and root weights: what the dense copy and the view read.
template <class Scalar>
struct UsedRows {
  std::vector<Index> rows;      ///< rows with positive weight
  Vector<Scalar> weights;       ///< w of each of them
  Vector<Scalar> sqrt_weights;  ///< sqrt(w) (w itself for exact types, whose weights are 0 or 1)
  Scalar weight_sum{0};         ///< sum of `weights`
};

/// The rows of positive weight (`weights` empty: all n rows, weight 1).
/// Throws invalid_data for a negative or non-finite weight or when no row
/// has a positive weight; for exact scalar types, invalid_option when
/// standardizing and invalid_data for weights other than 0 and 1 (exact
/// arithmetic takes no square roots; Gram mode handles any rational weight).
template <class Scalar>
UsedRows<Scalar> used_rows(const Vector<Scalar>& weights, Index n, const TraceOptions& options) {
  const Vector<Scalar> w = weights.size() == 0 ? Vector<Scalar>(Vector<Scalar>::Ones(n)) : weights;
  UsedRows<Scalar> used;
  for (Index i = 0; i < n; ++i) {
    check_weight(w(i), static_cast<std::size_t>(i));
    if (w(i) > Scalar(0)) used.rows.push_back(i);
  }
  if (used.rows.empty()) throw invalid_data("no observation has a positive weight");
  if constexpr (is_exact_v<Scalar>) {
    if (options.standardize)
      throw invalid_option("standardize",
                           "exact rational arithmetic cannot take the square roots that scaling "
                           "columns to unit length needs; trace with standardize = false (the "
                           "penalty then applies to the coefficients on the original scale) or "
                           "use a 50-digit float");
    for (Index i : used.rows)
      if (w(i) != Scalar(1))
        throw invalid_data("exact rational arithmetic with a dense design supports weights 0 and 1 "
                           "only (row " + std::to_string(i) + "); TraceOptions::storage = gram "
                           "handles any rational weights exactly");
  }
  const Index m = static_cast<Index>(used.rows.size());
  used.weights.resize(m);
  used.sqrt_weights.resize(m);
  for (Index r = 0; r < m; ++r) {
    used.weights(r) = w(used.rows[static_cast<std::size_t>(r)]);
    if constexpr (is_exact_v<Scalar>)
      used.sqrt_weights(r) = used.weights(r);  // 0/1 weights (checked above)
    else
      used.sqrt_weights(r) = square_root<Scalar>(used.weights(r));
  }
  used.weight_sum = used.weights.sum();
  return used;
}

/// Weighted mean of value_at(r) over the used rows, with one correction
/// pass (the second pass removes most of the rounding error of the first
/// when the mean is large).
template <class Scalar, class ValueAt>
Scalar weighted_mean(const UsedRows<Scalar>& used, ValueAt value_at) {
  const Index m = used.weights.size();
  Scalar mean(0);
  for (Index r = 0; r < m; ++r) mean += used.weights(r) * value_at(r);
  mean /= used.weight_sum;
  Scalar correction(0);
  for (Index r = 0; r < m; ++r) correction += used.weights(r) * (value_at(r) - mean);
  return Scalar(mean + correction / used.weight_sum);
}

/// The response side of every preparation from rows (dense copy, view,
/// sparse): its weighted mean (0 without intercept), the weighted total sum
/// of squares about it (overflow-safe norm), and the prepared response
/// sqrt(w) o (y - ybar) over the used rows into `response`.
template <class Scalar>
void prepare_response(const Vector<Scalar>& y, const TraceOptions& options, const UsedRows<Scalar>& used,
                      Preparation<Scalar>& prep, Vector<Scalar>& response) {
  const Index m = static_cast<Index>(used.rows.size());
  auto row = [&](Index r) { return used.rows[static_cast<std::size_t>(r)]; };
  if (options.with_intercept) prep.response_mean = weighted_mean(used, [&](Index r) { return y(row(r)); });
  response.resize(m);
  for (Index r = 0; r < m; ++r) response(r) = y(row(r)) - prep.response_mean;
  if constexpr (is_exact_v<Scalar>) {
    for (Index r = 0; r < m; ++r) prep.total_sum_of_squares += used.weights(r) * response(r) * response(r);
  } else {
    const Scalar norm = weighted_norm<Scalar>(response, used.weights);
    prep.total_sum_of_squares = norm * norm;
  }
  if (!is_finite_value(prep.total_sum_of_squares))
    throw invalid_data("the response's sum of squares overflows; rescale the response");
  for (Index r = 0; r < m; ++r) response(r) *= used.sqrt_weights(r);
}

/// `values` (one per used row) on all n rows, 0 on the rows of weight 0:
/// for designs that read every row of the user's data (view, sparse).
template <class Scalar>
Vector<Scalar> on_all_rows(const UsedRows<Scalar>& used, const Vector<Scalar>& values, Index n) {
  Vector<Scalar> out = Vector<Scalar>::Zero(n);
  for (std::size_t r = 0; r < used.rows.size(); ++r) out(used.rows[r]) = values(static_cast<Index>(r));
  return out;
}

/// The one preparation of dense columns, shared by the dense copy and the
/// view: the response (prepare_response()), then for each column the
/// exclusion rule, its mean and two-pass spread, and the scaling rule.
/// `keep(k, centred, scale)` receives each kept column (design column k,
/// its centred values over the used rows, its scale).
template <class Scalar, class Derived, class Keep>
Preparation<Scalar> prepare_dense_columns(const Eigen::MatrixBase<Derived>& x, const Vector<Scalar>& y,
                                          const TraceOptions& options, const UsedRows<Scalar>& used,
                                          Vector<Scalar>& response, Keep keep) {
  const Index m = static_cast<Index>(used.rows.size());
  auto row = [&](Index r) { return used.rows[static_cast<std::size_t>(r)]; };
  Preparation<Scalar> prep = start_preparation<Scalar>(x.rows(), m, x.cols(), options, used.weight_sum);
  prepare_response(y, options, used, prep, response);

  Vector<Scalar> column(m);
  const std::vector<double> penalty_weights = options.penalty_weights(static_cast<std::size_t>(x.cols()));
  for (Index j = 0; j < x.cols(); ++j) {
    const double weight = penalty_weights[static_cast<std::size_t>(j)];
    bool constant = true, all_zero = true;
    for (Index r = 0; r < m; ++r) {
      const Scalar v = x(row(r), j);
      if (v != x(row(0), j)) constant = false;
      if (v != Scalar(0)) all_zero = false;
    }
    if (const char* reason = exclusion_reason(all_zero, constant, options, weight)) {
      prep.excluded.push_back({j, reason});
      continue;
    }
    Scalar mean(0);
    if (options.with_intercept) mean = weighted_mean(used, [&](Index r) { return x(row(r), j); });
    for (Index r = 0; r < m; ++r) column(r) = x(row(r), j) - mean;
    Scalar spread(0);
    if (options.standardize || !is_exact_v<Scalar>) spread = weighted_norm<Scalar>(column, used.weights);
    const Index k = static_cast<Index>(prep.columns.size());
    if (const std::optional<Scalar> scale = admit_column(prep, options, j, weight, mean, spread))
      keep(k, column, *scale);
  }
  return prep;
}

/// Means and scales of the traced columns in design order (entry k belongs
/// to prep.columns[k]), for designs that centre and scale implicitly.
template <class Scalar>
std::pair<Vector<Scalar>, Vector<Scalar>> traced_means_and_scales(const Preparation<Scalar>& prep) {
  const Index q = static_cast<Index>(prep.columns.size());
  Vector<Scalar> means(q), scales(q);
  for (Index k = 0; k < q; ++k) {
    const Index j = prep.columns[static_cast<std::size_t>(k)];
    means(k) = prep.means(j);
    scales(k) = prep.scales(j);
  }
  return {std::move(means), std::move(scales)};
}
}  // namespace detail

}  // namespace knotpath
