#pragma once
/// \file options.hpp
/// \brief The options of a path trace: a plain struct with documented
/// defaults, validated in exactly one place (TraceOptions::validate).

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <functional>
#include <limits>
#include <stdexcept>
#include <string>
#include <vector>

#include "errors.hpp"

namespace knotpath {

/// Which homotopy to follow.
enum class Variant {
  lasso,        ///< a coefficient that reaches zero leaves the active set (exact lasso path)
  least_angle,  ///< least angle regression: predictors only enter, never leave
};

/// How a dense design is handed to the homotopy (see trace()).
enum class Storage {
  automatic,  ///< Gram mode when n >= 2 p and p <= 5000; else the view when p > n and
              ///< n p > 4e6 (a copy would cost more than 32 MB); else the dense copy
  dense,      ///< operator mode on a centred, scaled copy of X: one X^T v per knot, O(n p)
  gram,       ///< sufficient statistics: X^T X formed once, O(p k) per knot
  view,       ///< operator mode on the user's X itself (no copy; centring implicit,
              ///< see design/dense_view.hpp for its accuracy note)
};

/// Sign constraint on one coefficient.
enum class SignConstraint {
  none,         ///< the coefficient may take either sign
  nonnegative,  ///< b_j >= 0 (the predictor may only enter with a positive sign)
  nonpositive,  ///< b_j <= 0
};

/// The word of a variant in every output and saved file ("lasso",
/// "least-angle"; the program's --variant words): the one home of it.
inline std::string to_string(Variant variant) {
  return variant == Variant::least_angle ? "least-angle" : "lasso";
}

/// The word of a storage in outputs and saved files ("automatic", "dense",
/// "gram", "view").
inline std::string to_string(Storage storage) {
  switch (storage) {
    case Storage::dense: return "dense";
    case Storage::gram: return "gram";
    case Storage::view: return "view";
    case Storage::automatic: break;
  }
  return "automatic";
}

/// The word of a sign constraint in outputs and saved files ("none",
/// "nonnegative", "nonpositive").
inline std::string to_string(SignConstraint constraint) {
  switch (constraint) {
    case SignConstraint::nonnegative: return "nonnegative";
    case SignConstraint::nonpositive: return "nonpositive";
    case SignConstraint::none: break;
  }
  return "none";
}

/// Options of a path trace. Every field has a documented default; call
/// validate() (the entry points do) to check them.
///
/// The objective traced for every penalty lambda >= 0 is
///
///     0.5 * sum_i w_i (y_i - b0 - x_i^T b)^2 + lambda * sum_j f_j s_j |b_j|
///                                          + 0.5 * ridge * sum_j (s_j b_j)^2
///
/// with s_j the column scale (root weighted sum of squares of the centred
/// column when standardize is on, else 1) and f_j the penalty weights (TraceOptions::penalty_weights()).
///
/// Weights (the one home of their meaning; everything that counts rows
/// refers here). The weights w_i are frequency weights: a row of weight w
/// counts as w rows, so integer weights give exactly what repeating each row
/// w times gives: the path, the size-free penalty (n = sum of weights),
/// cross-validation's weighted averages (a fold's size is its weight sum; the
/// folds are drawn over rows, so repeated rows may fall in other folds), and
/// the criteria's n and noise variance (criteria.hpp). Non-integer weights
/// extend the same arithmetic. A row of weight 0 is dropped.
struct TraceOptions {
  /// Lasso (with leave events) or least angle regression.
  Variant variant = Variant::lasso;
  /// Storage of a dense design during the trace (results agree to rounding).
  Storage storage = Storage::automatic;
  /// Fit an unpenalized intercept (columns and response are centred).
  bool with_intercept = true;
  /// Scale columns to unit length before tracing; coefficients are always
  /// reported on the original scale.
  bool standardize = true;
  /// Per-predictor penalty scales f_j, finite and > 0 (empty: all 1): the
  /// penalty on predictor j is lambda f_j |b_j| (on the scale the penalty acts
  /// on), so a scale of 2 makes it twice as costly to enter.
  std::vector<double> penalty_scales;
  /// Predictors (0-based) fitted without penalty: in the model at every
  /// penalty, fitted with the intercept before the path starts (f_j = 0 in
  /// the formulas). Distinct, and disjoint from `left_out`.
  std::vector<std::size_t> unpenalized;
  /// Predictors (0-based) kept out of the model (listed in Path::excluded()).
  std::vector<std::size_t> left_out;
  /// Per-predictor sign constraints (empty: none). A single entry applies to
  /// every predictor. Requires the lasso variant.
  std::vector<SignConstraint> sign_constraints;
  /// Ridge weight alpha2 >= 0 of the elastic net (0: plain lasso). Applies to
  /// the standardized coefficients s_j b_j (see the objective above).
  double ridge = 0.0;
  /// Stop after this many knots (rows of the knot table after the start);
  /// 0 means no limit.
  std::size_t max_knots = 0;
  /// Stop when the penalty would fall below this value (>= 0).
  double min_penalty = 0.0;
  /// Stop before the active set would grow beyond this size; 0 means no limit.
  std::size_t max_active = 0;
  /// A candidate column is held out as linearly dependent on the active set
  /// when its new squared pivot is <= this tolerance times its squared norm
  /// (the squared sine of its angle to the active span). A negative value
  /// means automatic: 1e4 * machine epsilon of the scalar type (0 for exact
  /// rational arithmetic).
  double collinearity_tolerance = -1.0;
  /// Events whose penalties differ by at most this fraction of the current
  /// penalty are treated as simultaneous (one knot). Negative: automatic,
  /// 1e3 * machine epsilon (0 for exact arithmetic).
  double tie_tolerance = -1.0;
  /// Safety bound on homotopy steps; 0 means automatic (8 * (n + p) + 100).
  /// Hitting it is recorded as the stop reason, never silent.
  std::size_t max_steps = 0;
  /// A knot is marked suspect when its estimated relative error
  /// (Knot::estimated_error: of the original-scale coefficients and
  /// intercept, relative to the largest of them (the intercept's at least to
  /// the response's spread, response_spread()); built from the factor's
  /// condition estimate, the measured drift of the active correlations and
  /// the rounding of the correlations, carried through the scales and
  /// means) exceeds this; default 1e-6, i.e. fewer than about six
  /// trustworthy digits.
  double suspect_threshold = 1e-6;
  /// Threads for the one product per knot of the dense copy, the view and
  /// the sparse design (0: all hardware threads). The product's columns are
  /// cut into blocks of fixed width, so the path is bitwise the same for any
  /// thread count. Gram mode and the software scalar types (multiprecision,
  /// rational) run on one thread.
  std::size_t threads = 1;
  /// Names of the predictors, in column order (empty: predictor j is named
  /// "x" followed by j + 1, as default_predictor_name() spells it). The path
  /// carries them (Path::predictor_name(), Path::named_coefficients()); they
  /// change no number of the trace. Each name must be non-empty and unique.
  std::vector<std::string> predictor_names;
  /// Asked once per knot, when set, whether the trace should be abandoned
  /// (empty, the default: never asked, no cost). Returning true makes the
  /// trace throw knotpath::interrupted; nothing is returned. For front ends
  /// that let a user stop a long trace (the Python module polls Ctrl-C
  /// through it). Any callable is valid, so validate() has nothing to check;
  /// it changes no number of the trace, is not saved with a path, and is
  /// called on the thread that traces (cross-validation's fold threads
  /// included), so it must be safe to call from any thread.
  std::function<bool()> interrupt_requested;

  /// Checks every field against the number of predictors `p` and throws
  /// invalid_option naming the first bad field.
  void validate(std::size_t p) const {
    if (!penalty_scales.empty()) {
      if (penalty_scales.size() != p)
        throw invalid_option("penalty_scales", "has " + std::to_string(penalty_scales.size()) +
                                                   " entries, expected " + std::to_string(p));
      for (std::size_t j = 0; j < p; ++j) {
        const double f = penalty_scales[j];
        if (!std::isfinite(f) || !(f > 0.0))
          throw invalid_option("penalty_scales",
                               "entry " + std::to_string(j) + " must be finite and > 0 (got " +
                                   std::to_string(f) +
                                   "); list a predictor fitted without penalty as unpenalized, "
                                   "one kept out as left out");
      }
    }
    validate_index_list(unpenalized, "unpenalized", p);
    validate_index_list(left_out, "left_out", p);
    for (std::size_t j : unpenalized)
      if (std::find(left_out.begin(), left_out.end(), j) != left_out.end())
        throw invalid_option("left_out", "predictor " + std::to_string(j) +
                                             " is also listed as unpenalized");
    if (!sign_constraints.empty() && sign_constraints.size() != 1 && sign_constraints.size() != p)
      throw invalid_option("sign_constraints", "needs 1 or " + std::to_string(p) +
                                                   " entries, got " +
                                                   std::to_string(sign_constraints.size()));
    if (variant == Variant::least_angle) {
      for (SignConstraint c : sign_constraints)
        if (c != SignConstraint::none)
          throw invalid_option("sign_constraints",
                               "sign constraints need the lasso variant (a constrained "
                               "coefficient must leave when it reaches zero)");
    }
    if (!sign_constraints.empty())
      for (std::size_t j : unpenalized)
        if (sign_constraint(j) != SignConstraint::none)
          throw invalid_option("sign_constraints",
                               "predictor " + std::to_string(j) +
                                   " is unpenalized and is fitted by unconstrained least squares "
                                   "before the path; it cannot carry a sign constraint");
    if (!std::isfinite(ridge) || ridge < 0.0)
      throw invalid_option("ridge", "must be finite and >= 0");
    if (!std::isfinite(min_penalty) || min_penalty < 0.0)
      throw invalid_option("min_penalty", "must be finite and >= 0");
    if (std::isnan(collinearity_tolerance) || collinearity_tolerance >= 1.0)
      throw invalid_option("collinearity_tolerance", "must be < 1 (negative for automatic)");
    if (!(suspect_threshold > 0.0))
      throw invalid_option("suspect_threshold", "must be > 0");
    if (std::isnan(tie_tolerance) || tie_tolerance >= 1.0)
      throw invalid_option("tie_tolerance", "must be < 1 (negative for automatic)");
    validate_names(p);
  }

  /// The penalty weights f_j the formulas use for predictors 0..p-1: 0 when
  /// predictor j is unpenalized, +infinity when it is left out, else its
  /// penalty scale (1 when none were given). The one place the three fields
  /// combine; O(p + |unpenalized| + |left_out|), so loops over the
  /// predictors call it once. Indices >= p in the lists are ignored here
  /// (validate() refuses them).
  std::vector<double> penalty_weights(std::size_t p) const {
    std::vector<double> f(p, 1.0);
    for (std::size_t j = 0; j < p && j < penalty_scales.size(); ++j) f[j] = penalty_scales[j];
    for (std::size_t j : left_out)
      if (j < p) f[j] = std::numeric_limits<double>::infinity();
    for (std::size_t j : unpenalized)
      if (j < p) f[j] = 0.0;
    return f;
  }
  /// Checks a list of predictor indices: each < p, no repeats.
  static void validate_index_list(const std::vector<std::size_t>& list, const char* field,
                                  std::size_t p) {
    for (std::size_t i = 0; i < list.size(); ++i) {
      if (list[i] >= p)
        throw invalid_option(field, "names predictor " + std::to_string(list[i]) + ", but there are " +
                                        std::to_string(p));
      if (std::find(list.begin(), list.begin() + static_cast<std::ptrdiff_t>(i), list[i]) !=
          list.begin() + static_cast<std::ptrdiff_t>(i))
        throw invalid_option(field, "lists predictor " + std::to_string(list[i]) + " twice");
    }
  }
  /// Checks predictor_names: empty, or p non-empty, distinct names.
  void validate_names(std::size_t p) const {
    if (predictor_names.empty()) return;
    if (predictor_names.size() != p)
      throw invalid_option("predictor_names", "has " + std::to_string(predictor_names.size()) +
                                                  " entries, expected " + std::to_string(p));
    std::vector<const std::string*> sorted;
    for (const auto& name : predictor_names) {
      if (name.empty()) throw invalid_option("predictor_names", "a name is empty");
      sorted.push_back(&name);
    }
    std::sort(sorted.begin(), sorted.end(), [](const auto* a, const auto* b) { return *a < *b; });
    for (std::size_t k = 1; k < sorted.size(); ++k)
      if (*sorted[k] == *sorted[k - 1])
        throw invalid_option("predictor_names", "the name \"" + *sorted[k] + "\" appears twice");
  }

  /// Sign constraint of predictor j.
  SignConstraint sign_constraint(std::size_t j) const {
    if (sign_constraints.empty()) return SignConstraint::none;
    return sign_constraints.size() == 1 ? sign_constraints[0] : sign_constraints[j];
  }
};

/// The name of predictor j (0-based) when TraceOptions::predictor_names is
/// empty: "x" followed by j + 1 ("x1", "x2", ...), the numbering people count in.
inline std::string default_predictor_name(std::size_t j) { return "x" + std::to_string(j + 1); }

}  // namespace knotpath
