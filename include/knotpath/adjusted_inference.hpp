#pragma once
/// \file adjusted_inference.hpp
/// \brief Inference after selection: for the model at a point of the path,
/// a selection-adjusted p-value and confidence interval for the coefficient
/// of each active predictor in the least-squares fit on the active set (the
/// projected coefficient), from the truncated normal law of the polyhedral
/// lemma; the sequential p-values of the entries and the ForwardStop rule.
///
/// References:
///  - J. D. Lee, D. L. Sun, Y. Sun & J. E. Taylor (2016), "Exact
///    post-selection inference, with application to the lasso", Annals of
///    Statistics 44(3), 907-927: the lasso's selection event at a fixed
///    penalty (active set and signs) as a polyhedron A y <= b from the KKT
///    conditions (their Section 4; the sign-conditional event, not the union
///    over signs), the polyhedral lemma (the contrast eta^T y, given the
///    part of y orthogonal to it, is a normal truncated to [V-, V+]; their
///    Section 5) and the pivot's inversion into intervals (Section 6).
///    Section numbers from memory.
///  - R. J. Tibshirani, J. Taylor, R. Lockhart & R. Tibshirani (2016), "Exact
///    post-selection inference for sequential regression procedures", Journal
///    of the American Statistical Association 111, 600-620: the least-angle
///    and lasso paths' first k steps as a polyhedron (their Section 4, the
///    LAR and lasso polyhedra; the construction below is derived afresh, see
///    "After k steps").
///  - M. G. G'Sell, S. Wager, A. Chouldechova & R. Tibshirani (2016),
///    "Sequential selection procedures and false discovery rate control",
///    Journal of the Royal Statistical Society B 78(2), 423-444: ForwardStop.
///
/// The model. y = mu + e with e ~ N(0, sigma^2 I) and a fixed design; nothing
/// is assumed of mu (in particular not that it is linear in the selected
/// predictors). For an active set M chosen from y, the target of predictor
/// j in M is its projected coefficient: the coefficient of j in the
/// least-squares fit of mu on the intercept and the columns of M,
///     beta_bar_j = e_j^T (Z_M^T Z_M)^{-1} Z_M^T mu / s_j,
/// on the original scale (s_j the column scale; the prepared columns Z are
/// centred, so the intercept drops out). It is NOT the coefficient of j in a
/// model with all predictors: that one is a different number whenever the
/// predictors are correlated. The estimate is eta^T y with
/// eta = Z_M (Z_M^T Z_M)^{-1} e_j, of standard deviation
/// sigma sqrt((Z_M^T Z_M)^{-1}_jj).
///
/// The selection event. Every selection used here is a finite union of
/// polyhedra {y : L_i(y) >= 0} with L_i affine in y, and y lies in exactly
/// one of them. Writing y = z + c (eta^T y), c = eta / ||eta||^2, each
/// L_i(y) = L_i(z) + L_i(c) eta^T y, so given z the event is
/// V- <= eta^T y <= V+ with V- the largest (eta^T y - L_i(y) / L_i(c)) over
/// L_i(c) > 0 and V+ the smallest over L_i(c) < 0. Given the selection and
/// z, eta^T y is N(eta^T mu, sigma^2 ||eta||^2) truncated to [V-, V+]; its
/// tail at the observed value is uniform under the true eta^T mu, which
/// gives the p-values (at 0) and, inverted in the mean, the intervals
/// (detail/truncated_gaussian.hpp). Every L_i is of the form h^T Z^T v, so
/// the whole construction needs only Z^T y and Gram columns.
///
/// At a penalty (fixed-penalty lasso, Lee et al.). The lasso at lambda has
/// active set M and signs s iff (i) the coefficients
/// b_M = (Z_M^T Z_M)^{-1}(Z_M^T y - lambda s) have the signs s, and
/// (ii) |z_k^T (y - Z_M b_M)| < lambda for every inactive k. The constraints
/// (ii) are functions of (I - P_M) y, orthogonal to every contrast in the
/// span of Z_M: they do not truncate eta^T y. So V-, V+ come from the m sign
/// constraints s_a b_a >= 0 alone, O(m^3) after the Gram block of M. At
/// penalty 0 (the least-squares fit on every predictor) nothing is chosen
/// and nothing is conditioned on: the adjusted results are the naive ones.
///
/// After k steps (least-angle or lasso path, Tibshirani et al.). At step l
/// the active set A = A_{l-1} with signs s_A is fixed; an inactive j would
/// join with sign s at the penalty t = a_j / (s - b_j), with
/// a_j = z_j^T (I - P_A) y and b_j = z_j^T Z_A (Z_A^T Z_A)^{-1} s_A, and
/// (lasso) an active a would leave at t = c_a / d_a, with
/// c = (Z_A^T Z_A)^{-1} Z_A^T y and d = (Z_A^T Z_A)^{-1} s_A. Each candidate
/// time is a linear function of y over a fixed number. Step l is the event
/// with the largest time in (0, lambda_{l-1}) (lambda_0 = infinity). On the
/// event of the first l-1 steps the path at lambda_{l-1} is feasible
/// (s * corr_j <= lambda_{l-1}, s_a b_a > 0), which fixes on which side of
/// lambda_{l-1} each candidate's time lies: below it exactly when
/// s (s - b_j) > 0 (joins) or s_a d_a < 0 (leaves). So the first k events are
/// the polyhedron of the linear inequalities lambda_l >= 0,
/// lambda_l <= lambda_{l-1} and lambda_l >= t for every candidate whose
/// time lies below lambda_{l-1} (a time <= 0 satisfies it anyway), at every
/// step l <= k: the event itself, with no further conditioning. At the
/// first step it is the event of the spacing test (inference.hpp), whose
/// p-value the first entry's one-sided p-value equals. Two candidates would
/// only repeat lambda_l <= lambda_{l-1} and are left out: the predictor that
/// entered at step l-1 would leave exactly at lambda_{l-1}, and the one that
/// left would join there with its old sign. Cost per step: O(q a t) for q
/// columns, a active and t contrasts, after one Gram column per predictor
/// ever active.
///
/// Noise variance. Known sigma^2 makes the law exact. An estimate (the full
/// least-squares fit's residual variance, n > p + 1) is plugged in: the
/// p-values and intervals are then approximate (the estimate is independent
/// of the selection only asymptotically; no t-type correction is made), and
/// the results say so (residual_df > 0).
///
/// Limits (invalid_option or invalid_query otherwise): the plain lasso
/// (ridge 0), every predictor penalized alike, no sign constraints,
/// unweighted data; a penalty on a lasso path (not least-angle); steps
/// without ties (several events at one knot) and without collinear
/// hold-outs. A penalty chosen from the same data (cross-validation, Cp) is
/// treated as fixed: the adjustment covers the choice of the active set
/// and signs at that penalty, not the choice of the penalty.

#include <algorithm>
#include <cmath>
#include <concepts>
#include <limits>
#include <span>
#include <string>
#include <type_traits>
#include <utility>
#include <vector>

#include <Eigen/Cholesky>

#include "design/concept.hpp"
#include "detail/least_squares.hpp"
#include "detail/scalar.hpp"
#include "detail/truncated_gaussian.hpp"
#include "errors.hpp"
#include "inference.hpp"
#include "path.hpp"
#include "problem.hpp"

namespace knotpath {

/// Options of the adjusted inference.
struct AdjustedInferenceOptions {
  /// Confidence level of the intervals, in (0, 1). Default 0.90: intervals
  /// after selection are wide, and 90% is the level the references report.
  double level = 0.90;
  /// Noise variance sigma^2 > 0; negative: estimate it from the full
  /// least-squares fit (needs more rows than predictors plus intercept; the
  /// results are then approximate).
  double noise_variance = -1.0;

  /// Throws invalid_option("level") outside (0, 1), invalid_option("noise_variance")
  /// for 0, NaN or infinity.
  void validate() const {
    if (!(level > 0.0 && level < 1.0)) throw invalid_option("level", "must lie in (0, 1)");
    detail::validate_noise_variance(noise_variance);
  }
};

/// What the adjustment conditions on.
enum class Conditioning {
  penalty,  ///< the active set and signs of the lasso at a fixed penalty (Lee et al.)
  steps,    ///< the first k events of the path with their signs (Tibshirani et al.)
};

/// Inference for one active predictor. Original scale throughout.
struct AdjustedCoefficient {
  Index predictor = 0;  ///< user's 0-based index
  /// Sign of its lasso coefficient (penalty), or the sign it entered with (steps).
  int sign = 0;
  double estimate = 0;        ///< least-squares coefficient on the active set (estimates the projected one)
  double standard_error = 0;  ///< sigma sqrt((Z_M^T Z_M)^{-1}_jj) / s_j
  double lower = 0;  ///< adjusted interval, lower end (may be -infinity, see truncated_normal_interval)
  double upper = 0;  ///< adjusted interval, upper end (may be +infinity)
  double p_value = 1;            ///< adjusted, two-sided, of "projected coefficient = 0"
  double one_sided_p_value = 1;  ///< adjusted, against the alternative of `sign`
  double naive_lower = 0;        ///< estimate -+ z standard_error: what ignoring the selection gives
  double naive_upper = 0;        ///< (see naive_lower)
  double naive_p_value = 1;      ///< two-sided, ignoring the selection
  double truncation_lower = 0;   ///< V- of the estimate (original scale; may be -infinity)
  double truncation_upper = 0;   ///< V+ of the estimate (may be +infinity)
};

/// The adjusted inference at one point of a path.
struct AdjustedInference {
  Conditioning conditioning = Conditioning::penalty;  ///< what was conditioned on
  double penalty = 0;         ///< lambda of the point (steps: the knot of the last step)
  Index steps = 0;            ///< steps: the number of events conditioned on; penalty: 0
  double level = 0.90;        ///< confidence level of the intervals
  double noise_variance = 0;  ///< sigma^2 used
  Index residual_df = 0;      ///< degrees of freedom of its estimate; 0 when it was given (exact law)
  std::vector<AdjustedCoefficient> coefficients;  ///< the active predictors, ascending index
};

/// The selection-adjusted one-sided p-value of one entry (entry_p_values()).
struct EntryPValue {
  Index step = 0;       ///< knot-table step of the enter row
  Index predictor = 0;  ///< user's 0-based index
  int sign = 0;         ///< sign it entered with
  /// P-value of "its projected coefficient in the model after this step is
  /// 0" against the alternative of its sign, conditioned on the steps up to
  /// and including this one.
  double p_value = 1;
};

/// The ForwardStop rule over a sequence of p-values.
struct ForwardStopChoice {
  double alpha = 0.1;              ///< the false discovery rate asked for
  std::size_t chosen = 0;          ///< number of entries kept (0: none)
  std::vector<double> statistic;   ///< -1/k sum_{i<=k} log(1 - p_i), per k = 1, 2, ...
};

/// ForwardStop (G'Sell et al. 2016, Section 3): keep the first
/// k = max{k : -1/k sum_{i<=k} log(1 - p_i) <= alpha} entries (0 when no k
/// qualifies). With p-values that are independent and uniform under the
/// null steps, and nulls after non-nulls, the expected share of null
/// entries among those kept is at most alpha (their Theorem 1). The
/// sequential p-values of entry_p_values() are exactly uniform only at the
/// first step and approximately independent, so the control is
/// approximate. Throws invalid_option("alpha") outside (0, 1).
inline ForwardStopChoice forward_stop(const std::vector<double>& p_values, double alpha) {
  if (!(alpha > 0.0 && alpha < 1.0)) throw invalid_option("alpha", "must lie in (0, 1)");
  ForwardStopChoice out;
  out.alpha = alpha;
  double sum = 0;
  for (std::size_t k = 0; k < p_values.size(); ++k) {
    sum += -std::log1p(-std::min(p_values[k], 1.0));
    out.statistic.push_back(sum / static_cast<double>(k + 1));
    if (out.statistic.back() <= alpha) out.chosen = k + 1;
  }
  return out;
}

namespace detail {

/// Truncation limits of one contrast, kept in the path's arithmetic.
template <class Scalar>
struct Limits {
  Scalar lower{0}, upper{0};
  bool has_lower = false, has_upper = false;

  /// Adds the constraint L(y) >= 0 with L(y) = `value` and L(c) = `slope`
  /// for the contrast whose observed value is `x`. The rule has a second,
  /// packed form for blocks of rows in doubles (tighten_by_ratios, the same
  /// bounds to rounding): a change here changes both (test
  /// AdjustedInference.StepLimitsInDoublesMatchFiftyDigits ties them).
  void tighten(const Scalar& value, const Scalar& slope, const Scalar& x) {
    if (slope == Scalar(0)) return;
    const Scalar bound = x - value / slope;
    if (slope > Scalar(0)) {
      if (!has_lower || bound > lower) lower = bound;
      has_lower = true;
    } else {
      if (!has_upper || bound < upper) upper = bound;
      has_upper = true;
    }
  }

  /// Adds the constraints L_r(y) >= 0 of a block of rows r, all with
  /// L_r(y) > 0, given through the extremes of their ratios slope / value:
  /// `most` = max_r L_r(c) / L_r(y) and `least` = min_r (0 when no row has a
  /// slope of that sign). A row with a positive slope bounds from below at
  /// x - L_r(y) / L_r(c), tightest where L_r(c) / L_r(y) is largest; one with
  /// a negative slope from above, tightest where it is smallest.
  void tighten_by_ratios(const Scalar& most, const Scalar& least, const Scalar& x) {
    if (most > Scalar(0)) {
      const Scalar bound = x - Scalar(1) / most;
      if (!has_lower || bound > lower) lower = bound;
      has_lower = true;
    }
    if (least < Scalar(0)) {
      const Scalar bound = x - Scalar(1) / least;
      if (!has_upper || bound < upper) upper = bound;
      has_upper = true;
    }
  }
};

/// Whether the design holds its prepared columns as one dense matrix of a
/// binary floating-point type (DenseDesign::columns()): then blocks of its
/// Gram matrix are formed by blocked matrix products over the rows (BLAS-3
/// speed through Eigen) instead of one product per column.
template <class Design>
constexpr bool has_dense_columns = std::is_floating_point_v<typename Design::Scalar> && requires(const Design& d) {
  { d.columns() } -> std::convertible_to<const Matrix<typename Design::Scalar>&>;
};

/// The Gram block Z_S^T Z_S of prepared columns S. On dense columns
/// (has_dense_columns) one symmetric rank-n update of the gathered columns,
/// O(n m^2 / 2) at BLAS-3 speed; otherwise the design's cross products.
template <DesignOperator Design>
Matrix<typename Design::Scalar> gram_block(const Design& design, const std::vector<Index>& columns) {
  using Scalar = typename Design::Scalar;
  const Index m = static_cast<Index>(columns.size());
  if constexpr (has_dense_columns<Design>) {
    const Matrix<Scalar> gathered = design.columns()(Eigen::all, columns);
    Matrix<Scalar> gram = Matrix<Scalar>::Zero(m, m);
    gram.template selfadjointView<Eigen::Lower>().rankUpdate(gathered.transpose());
    gram.template triangularView<Eigen::StrictlyUpper>() = gram.transpose();
    return gram;
  }
  Matrix<Scalar> gram(m, m);
  Vector<Scalar> cross(m);
  for (Index a = 0; a < m; ++a) {
    design.cross_products(columns[static_cast<std::size_t>(a)], std::span<const Index>(columns), cross);
    gram.row(a) = cross.transpose();
    gram(a, a) = design.squared_norm(columns[static_cast<std::size_t>(a)]);
  }
  // The two halves are the same products in another order: keep one.
  gram.template triangularView<Eigen::StrictlyLower>() = gram.transpose();
  return gram;
}

/// The inverse of a symmetric positive definite block; invalid_query when
/// it is singular (an active set whose columns are collinear).
template <class Scalar>
Matrix<Scalar> spd_inverse(const Matrix<Scalar>& gram) {
  const Eigen::LDLT<Matrix<Scalar>> factor(gram);
  if (factor.info() != Eigen::Success || !factor.isPositive())
    throw invalid_query("the active columns are collinear: the least-squares fit on them is not unique");
  return factor.solve(Matrix<Scalar>::Identity(gram.rows(), gram.cols()));
}

/// z with P(|Z| <= z) = level for a standard normal Z: the untruncated
/// interval's half-width in sd (the same bisection as the adjusted ends).
inline double normal_quantile_for(double level) {
  constexpr double inf = std::numeric_limits<double>::infinity();
  return truncated_normal_interval(0.0, 1.0, -inf, inf, level).second;
}

/// The truncated-normal summary of one contrast, on the original scale; z
/// is normal_quantile_for(level) (the naive interval's half-width in sd).
template <class Scalar>
AdjustedCoefficient summarize_contrast(Index predictor, int sign, const Scalar& estimate,
                                       const Scalar& variance_factor, const Limits<Scalar>& limits,
                                       double noise_variance, double scale, double level, double z) {
  constexpr double inf = std::numeric_limits<double>::infinity();
  AdjustedCoefficient c;
  c.predictor = predictor;
  c.sign = sign;
  const double x = to_double(estimate);
  const double sd = std::sqrt(noise_variance * to_double(variance_factor));
  double lower = limits.has_lower ? to_double(limits.lower) : -inf;
  double upper = limits.has_upper ? to_double(limits.upper) : inf;
  // Rounding may put the observed value a hair outside its own limits.
  lower = std::min(lower, x);
  upper = std::max(upper, x);
  const auto [low, high] = truncated_normal_interval(x, sd, lower, upper, level);
  const TruncatedTails at_zero = truncated_normal_tails(x, 0.0, sd, lower, upper);
  c.estimate = x / scale;
  c.standard_error = sd / scale;
  c.lower = low / scale;
  c.upper = high / scale;
  c.naive_lower = (x - z * sd) / scale;
  c.naive_upper = (x + z * sd) / scale;
  c.truncation_lower = lower / scale;
  c.truncation_upper = upper / scale;
  c.p_value = std::min(1.0, 2.0 * std::exp(std::min(at_zero.log_lower, at_zero.log_upper)));
  c.one_sided_p_value = std::exp(sign >= 0 ? at_zero.log_upper : at_zero.log_lower);
  c.naive_p_value = std::min(1.0, 2.0 * std::exp(log_upper_tail(std::abs(x) / sd)));
  return c;
}

/// Prepared column of each predictor (-1: not traced).
template <class Scalar>
std::vector<Index> prepared_positions(const Preparation<Scalar>& prep) {
  std::vector<Index> position(static_cast<std::size_t>(prep.predictors), -1);
  for (std::size_t k = 0; k < prep.columns.size(); ++k)
    position[static_cast<std::size_t>(prep.columns[k])] = static_cast<Index>(k);
  return position;
}

/// The fixed-penalty lasso (Lee et al.): see the file comment.
template <DesignOperator Design>
AdjustedInference adjusted_at_penalty(const Design& design, const Path<typename Design::Scalar>& path,
                                      const typename Design::Scalar& penalty, double level,
                                      double noise_variance, Index residual_df) {
  using Scalar = typename Design::Scalar;
  check_testable(design, path, noise_variance);
  if (path.options().variant != Variant::lasso)
    throw invalid_option("variant", "inference at a fixed penalty is for the lasso (not least angle)");
  const Solution<Scalar> solution = path.at_penalty(penalty);
  if (solution.beyond_path)
    throw invalid_query("the penalty lies below the end of a path that stopped early");
  const Preparation<Scalar>& prep = path.preparation();
  const std::vector<Index> position = prepared_positions(prep);
  AdjustedInference out;
  out.conditioning = Conditioning::penalty;
  out.penalty = to_double(penalty);
  out.level = level;
  out.noise_variance = noise_variance;
  out.residual_df = residual_df;
  std::vector<Index> predictors, columns;
  for (Index j = 0; j < solution.coefficients.size(); ++j)
    if (solution.coefficients(j) != Scalar(0)) {
      predictors.push_back(j);
      columns.push_back(position[static_cast<std::size_t>(j)]);
    }
  if (columns.empty()) return out;
  const double z = normal_quantile_for(level);
  const Index m = static_cast<Index>(columns.size());
  const Matrix<Scalar> inverse = spd_inverse(gram_block(design, columns));
  Vector<Scalar> all_correlations;
  design.response_correlations(all_correlations);
  Vector<Scalar> correlations(m), signs(m);
  for (Index a = 0; a < m; ++a) {
    correlations(a) = all_correlations(columns[static_cast<std::size_t>(a)]);
    signs(a) = solution.coefficients(predictors[static_cast<std::size_t>(a)]) > Scalar(0) ? Scalar(1) : Scalar(-1);
  }
  const Vector<Scalar> estimates = inverse * correlations;          // least squares on M
  const Vector<Scalar> lasso = estimates - penalty * (inverse * signs);  // b_M of the KKT conditions
  // At penalty 0 the lasso is the least-squares fit on every predictor it
  // can hold: that active set is not chosen by y (its event is certain), so
  // the union over the signs, the whole space, is conditioned on and
  // nothing truncates the estimates: the adjusted interval is the naive one.
  const bool chosen = penalty > Scalar(0);
  for (Index i = 0; i < m; ++i) {
    Limits<Scalar> limits;
    // Sign constraint of a: s_a b_a >= 0; along c_i = eta_i / ||eta_i||^2
    // it moves by s_a (Z_M^T Z_M)^{-1}_ai / (Z_M^T Z_M)^{-1}_ii.
    for (Index a = 0; a < m && chosen; ++a)
      limits.tighten(Scalar(signs(a) * lasso(a)), Scalar(signs(a) * inverse(a, i) / inverse(i, i)),
                     estimates(i));
    const Index j = predictors[static_cast<std::size_t>(i)];
    out.coefficients.push_back(summarize_contrast(j, signs(i) > Scalar(0) ? 1 : -1, estimates(i),
                                                  inverse(i, i), limits, noise_variance,
                                                  to_double(prep.scales(j)), level, z));
  }
  return out;
}

/// One event of the path's first steps, on prepared columns.
struct StepEvent {
  bool enter = true;
  Index column = 0;  ///< prepared column
  int sign = 0;      ///< sign it entered with / had before it left
};

/// The events of knot-table rows 1..steps; invalid_query for ties, stops,
/// collinear hold-outs among them, or too few rows.
template <class Scalar>
std::vector<StepEvent> first_events(const Path<Scalar>& path, Index steps) {
  const auto& knots = path.knots();
  if (steps < 1 || static_cast<std::size_t>(steps) >= knots.size())
    throw invalid_query("asked for " + std::to_string(steps) + " steps of a path with " +
                        std::to_string(knots.empty() ? 0 : knots.size() - 1) + " rows after its start");
  const std::vector<Index> position = prepared_positions(path.preparation());
  std::vector<StepEvent> events;
  for (std::size_t r = 1; r <= static_cast<std::size_t>(steps); ++r) {
    const Knot<Scalar>& k = knots[r];
    if (!is_event(k)) throw invalid_query("row " + std::to_string(r) + " of the path is not an event");
    const bool tied = (r > 1 && is_event(knots[r - 1]) && knots[r - 1].penalty == k.penalty) ||
                      (r + 1 < knots.size() && is_event(knots[r + 1]) && knots[r + 1].penalty == k.penalty);
    if (tied) throw invalid_query("several events at one knot (step " + std::to_string(r) + "): ties are not covered");
    events.push_back({k.event == EventKind::enter, position[static_cast<std::size_t>(k.predictor)], k.sign});
  }
  for (const auto& h : path.held_out())
    if (h.step <= steps)
      throw invalid_query("a predictor was held out as collinear within these steps: not covered");
  return events;
}

/// The least-angle / lasso polyhedron of the first k steps (Tibshirani et
/// al.), evaluated at y and at the contrasts of the final active set: see
/// the file comment. `targets` are positions in the final active set M
/// (ascending prepared column order); returns their truncation limits.
template <DesignOperator Design>
class StepPolyhedron {
 public:
  using Scalar = typename Design::Scalar;

  StepPolyhedron(const Design& design, std::vector<StepEvent> events, bool lasso)
      : design_(design), events_(std::move(events)), lasso_(lasso) {
    for (const StepEvent& e : events_)
      if (std::find(ever_.begin(), ever_.end(), e.column) == ever_.end()) ever_.push_back(e.column);
    const Index q = design_.cols(), u = static_cast<Index>(ever_.size());
    ever_position_.assign(static_cast<std::size_t>(q), -1);
    for (Index i = 0; i < u; ++i) ever_position_[static_cast<std::size_t>(ever_[static_cast<std::size_t>(i)])] = i;
    gram_columns_.resize(q, u);
    if constexpr (has_dense_columns<Design>) {
      form_dense_gram_columns();
    } else {
      // z_col^T Z by the design's cross products into a vector of the final
      // size (no reallocation inside the design's call).
      std::vector<Index> all(static_cast<std::size_t>(q));
      for (Index j = 0; j < q; ++j) all[static_cast<std::size_t>(j)] = j;
      Vector<Scalar> column(q);
      for (Index i = 0; i < u; ++i) {
        design_.cross_products(ever_[static_cast<std::size_t>(i)], std::span<const Index>(all), column);
        gram_columns_.col(i) = column;
      }
    }
    design_.response_correlations(correlations_);
    std::vector<std::pair<Index, int>> active;
    for (const StepEvent& e : events_) apply(active, e);
    for (const auto& [col, s] : active) final_.push_back({col, s});
    std::sort(final_.begin(), final_.end());
    Matrix<Scalar> block(final_.size(), final_.size());
    for (std::size_t a = 0; a < final_.size(); ++a)
      for (std::size_t b = 0; b < final_.size(); ++b)
        block(static_cast<Index>(a), static_cast<Index>(b)) = gram_columns_(final_[a].first, ever_index(final_[b].first));
    if (!final_.empty()) inverse_ = spd_inverse(block);
  }

  /// The final active set: prepared column and sign, ascending columns.
  const std::vector<std::pair<Index, int>>& final_set() const { return final_; }
  /// (Z_M^T Z_M)^{-1} of the final active set.
  const Matrix<Scalar>& inverse() const { return inverse_; }

  /// Least-squares estimates on the final set, then the limits of each target.
  std::vector<Limits<Scalar>> limits(const std::vector<Index>& targets, Vector<Scalar>& estimates) const {
    const Index m = static_cast<Index>(final_.size()), t = static_cast<Index>(targets.size());
    const Index q = design_.cols();
    Vector<Scalar> final_correlations(m);
    std::vector<bool> in_final(static_cast<std::size_t>(q), false);
    for (Index a = 0; a < m; ++a) {
      final_correlations(a) = correlations_(final_[static_cast<std::size_t>(a)].first);
      in_final[static_cast<std::size_t>(final_[static_cast<std::size_t>(a)].first)] = true;
    }
    estimates = inverse_ * final_correlations;
    // Z^T [y, c_1, ..., c_t], c_i = Z_M (Z_M^T Z_M)^{-1} e_i / (Z_M^T Z_M)^{-1}_ii.
    // On the rows of M that is e_i / (Z_M^T Z_M)^{-1}_ii; the product is
    // formed for the other rows only, O((q - m) m t) instead of O(q m t).
    std::vector<Index> others;
    for (Index j = 0; j < q; ++j)
      if (!in_final[static_cast<std::size_t>(j)]) others.push_back(j);
    Matrix<Scalar> weights(m, t), others_gram(static_cast<Index>(others.size()), m);
    for (Index i = 0; i < t; ++i) {
      const Index target = targets[static_cast<std::size_t>(i)];
      weights.col(i) = inverse_.col(target) / inverse_(target, target);
    }
    for (Index a = 0; a < m; ++a) {
      const auto column = gram_columns_.col(ever_index(final_[static_cast<std::size_t>(a)].first));
      for (std::size_t r = 0; r < others.size(); ++r) others_gram(static_cast<Index>(r), a) = column(others[r]);
    }
    const Matrix<Scalar> others_projected = others_gram * weights;
    Matrix<Scalar> projected = Matrix<Scalar>::Zero(q, t + 1);
    projected.col(0) = correlations_;
    for (std::size_t r = 0; r < others.size(); ++r)
      projected.row(others[r]).tail(t) = others_projected.row(static_cast<Index>(r));
    for (Index i = 0; i < t; ++i) {
      const Index target = targets[static_cast<std::size_t>(i)];
      projected(final_[static_cast<std::size_t>(target)].first, i + 1) = Scalar(1) / inverse_(target, target);
    }
    Vector<Scalar> x(t);
    for (Index i = 0; i < t; ++i) x(i) = estimates(targets[static_cast<std::size_t>(i)]);
    std::vector<Limits<Scalar>> out(static_cast<std::size_t>(t));
    walk(projected, x, out);
    return out;
  }

 private:
  /// gram_columns_ (sized q x u) = Z^T Z_E for the columns E ever active,
  /// on dense columns (has_dense_columns): the symmetric block Z_E^T Z_E
  /// (gram_block) and one matrix product Z_R^T Z_E for the others R,
  /// O(n (u^2 / 2 + (q - u) u)) at BLAS-3 speed, against u products Z^T z_e
  /// of O(n q) each, which read the whole design u times (issue 22's
  /// measurements, bench/README.md). Other designs: one product per column
  /// (the constructor).
  void form_dense_gram_columns() {
    const Index q = design_.cols(), u = static_cast<Index>(ever_.size());
    const Matrix<Scalar> inner = gram_block(design_, ever_);
    for (Index i = 0; i < u; ++i) gram_columns_.row(ever_[static_cast<std::size_t>(i)]) = inner.row(i);
    std::vector<Index> rest;  // columns never active
    for (Index j = 0; j < q; ++j)
      if (ever_position_[static_cast<std::size_t>(j)] < 0) rest.push_back(j);
    if (rest.empty() || u == 0) return;
    const Matrix<Scalar>& z = design_.columns();
    const Matrix<Scalar> cross = z(Eigen::all, rest).transpose() * z(Eigen::all, ever_);
    for (std::size_t r = 0; r < rest.size(); ++r) gram_columns_.row(rest[r]) = cross.row(static_cast<Index>(r));
  }

  Index ever_index(Index column) const {
    return static_cast<Index>(std::find(ever_.begin(), ever_.end(), column) - ever_.begin());
  }

  static void apply(std::vector<std::pair<Index, int>>& active, const StepEvent& e) {
    if (e.enter)
      active.emplace_back(e.column, e.sign);
    else
      active.erase(std::remove_if(active.begin(), active.end(), [&](const auto& a) { return a.first == e.column; }),
                   active.end());
  }

  /// The steps in order: candidates, their states and the winner's
  /// inequalities, each added to every target's limits. A time is a row
  /// vector: its value at y, then along each contrast c_i.
  void walk(const Matrix<Scalar>& projected, const Vector<Scalar>& x, std::vector<Limits<Scalar>>& out) const {
    using Row = Eigen::Matrix<Scalar, 1, Eigen::Dynamic>;
    const Index q = design_.cols(), width = projected.cols();
    auto add = [&](const Row& constraint) {
      for (Index i = 0; i + 1 < width; ++i)
        out[static_cast<std::size_t>(i)].tighten(constraint(0), constraint(i + 1), x(i));
    };
    Projection projection(*this, projected);
    std::vector<int> sign_of(static_cast<std::size_t>(q), 0);  // 0: inactive
    Row previous(width);
    bool have_previous = false;
    Index entered_last = -1, left_last = -1;
    int left_sign = 0;
    const Index t = width - 1;  // targets
    // Binary floating point: the extremes of each target's slope / value
    // over the candidate rows of a step (see candidate below), and one row's ratios.
    Eigen::Array<Scalar, 1, Eigen::Dynamic> most(t), least(t), ratios(t);
    for (const StepEvent& event : events_) {
      const auto& order = projection.order;
      const Index a = static_cast<Index>(order.size());
      Vector<Scalar> signs(a);
      for (Index i = 0; i < a; ++i) signs(i) = Scalar(sign_of[static_cast<std::size_t>(order[static_cast<std::size_t>(i)])]);
      const Vector<Scalar> direction = projection.inverse() * signs;  // (Z_A^T Z_A)^{-1} s_A
      // Z^T Z_A (Z_A^T Z_A)^{-1} s_A on the inactive columns (the only ones read).
      Vector<Scalar> equiangular(q);
      for (Index j : projection.outside) equiangular(j) = Scalar(0);
      for (Index i = 0; i < a; ++i) {
        const auto source = column(order[static_cast<std::size_t>(i)]);
        const Scalar weight = direction(i);
        for (Index j : projection.outside) equiangular(j) += source(j) * weight;
      }
      const auto fit = projection.fit();                // (Z_A^T Z_A)^{-1} Z_A^T [y, c]
      const RowMatrix& residual = projection.residual;  // Z^T (I - P_A) [y, c]
      // The winner's time.
      Row winner(width);
      if (event.enter) {
        winner = residual.row(event.column) / Scalar(Scalar(event.sign) - equiangular(event.column));
      } else {
        const Index i = projection.position(event.column);
        winner = fit.row(i) / direction(i);
      }
      add(winner);                                     // lambda_l >= 0
      if (have_previous) add(Row(previous - winner));  // lambda_l <= lambda_{l-1}
      // A candidate that could fire before lambda_{l-1} (see the file
      // comment: the sign of s * delta says so on the event) must not beat
      // the winner; lambda_l > 0 covers its times <= 0. Each is the row
      // winner - source / divisor with the source a row of the residual
      // correlations (joins) or of the fit (leaves). In binary floating
      // point a row whose value v at y is positive (every row on the event,
      // but for rounding) enters each target's limits through its ratio
      // slope / v alone (Limits::tighten_by_ratios): the ratios of a row are
      // winner * (1/v) - source * (1/(v divisor)), one packed multiply-add
      // per target with no division and no branch, and each target keeps
      // their maximum and minimum over the step's rows. The bounds are the
      // same quotients to rounding. Other rows, and other scalars, tighten
      // row by row.
      if constexpr (std::is_floating_point_v<Scalar>) {
        most.setZero();
        least.setZero();
      }
      auto candidate = [&](const auto& source, const Scalar& divisor) {
        const Scalar value = winner(0) - source(0) / divisor;
        if constexpr (std::is_floating_point_v<Scalar>) {
          const Scalar reciprocal = Scalar(1) / value, scaled = -reciprocal / divisor;
          if (value > Scalar(0) && std::isfinite(reciprocal) && std::isfinite(scaled)) {
            ratios = winner.tail(t).array() * reciprocal + source.tail(t).array() * scaled;
            most = most.max(ratios);
            least = least.min(ratios);
            return;
          }
        }
        for (Index i = 0; i < t; ++i)
          out[static_cast<std::size_t>(i)].tighten(value, Scalar(winner(i + 1) - source(i + 1) / divisor), x(i));
      };
      for (Index j = 0; j < q; ++j) {
        if (sign_of[static_cast<std::size_t>(j)] != 0) continue;
        for (int s : {1, -1}) {
          if (event.enter && j == event.column && s == event.sign) continue;
          if (j == left_last && s == left_sign) continue;  // joins at lambda_{l-1} exactly
          const Scalar denominator = Scalar(s) - equiangular(j);
          if (!(Scalar(s) * denominator > Scalar(0))) continue;  // its time is >= lambda_{l-1}
          candidate(residual.row(j), denominator);
        }
      }
      if (lasso_)
        for (Index i = 0; i < a; ++i) {
          const Index col = order[static_cast<std::size_t>(i)];
          if ((!event.enter && col == event.column) || col == entered_last) continue;  // winner; leaves at lambda_{l-1}
          // b_a(lambda) = d_a (t - lambda) keeps the sign s_a down to lambda_{l-1}: t < lambda_{l-1} iff s_a d_a < 0.
          if (!(Scalar(sign_of[static_cast<std::size_t>(col)]) * direction(i) < Scalar(0))) continue;
          candidate(fit.row(i), direction(i));
        }
      if constexpr (std::is_floating_point_v<Scalar>)
        for (Index i = 0; i < t; ++i) out[static_cast<std::size_t>(i)].tighten_by_ratios(most(i), least(i), x(i));
      previous = winner;
      have_previous = true;
      entered_last = event.enter ? event.column : -1;
      left_last = event.enter ? -1 : event.column;
      left_sign = event.sign;
      if (event.enter) {
        projection.enter(event.column);
        sign_of[static_cast<std::size_t>(event.column)] = event.sign;
      } else {
        projection.leave(event.column);
        sign_of[static_cast<std::size_t>(event.column)] = 0;
      }
    }
  }

  /// Row-major: the walk reads the fit and the residual correlations by rows
  /// (one candidate row across every target).
  using RowMatrix = Eigen::Matrix<Scalar, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;

  /// Z^T z_col (a column ever active).
  auto column(Index col) const { return gram_columns_.col(ever_position_[static_cast<std::size_t>(col)]); }

  /// The projection on the active columns, one column per event: the inverse
  /// Gram matrix bordered when a column enters and reduced when one leaves
  /// (the partitioned inverse, e.g. Golub & Van Loan, Matrix Computations,
  /// 4th ed., section 3.5 on block inverses), with the fit and the residual
  /// correlations moved by the same rank-one terms. O(q t + a t + a^2) per
  /// event instead of a new factorization and O(q a t) products.
  struct Projection {
    const StepPolyhedron& owner;
    std::vector<Index> order;  ///< active prepared columns, in the order of the rows below
    /// (Z_A^T Z_A)^{-1} and the fit in the leading a rows (and columns) of
    /// storage for every column ever active: updated in place, not copied.
    Matrix<Scalar> inverse_store;
    RowMatrix fit_store;
    RowMatrix residual;  ///< Z^T (I - P_A) [y, c]

    /// Inactive prepared columns (ascending): the only rows of `residual`
    /// the walk reads. The rows of the active columns are 0 (exactly, not
    /// to rounding) and are not updated: Z_A^T (I - P_A) = 0.
    std::vector<Index> outside;

    Projection(const StepPolyhedron& o, const Matrix<Scalar>& projected)
        : owner(o),
          inverse_store(static_cast<Index>(o.ever_.size()), static_cast<Index>(o.ever_.size())),
          fit_store(static_cast<Index>(o.ever_.size()), projected.cols()),
          residual(projected) {
      for (Index j = 0; j < projected.rows(); ++j) outside.push_back(j);
    }

    Index active() const { return static_cast<Index>(order.size()); }
    /// (Z_A^T Z_A)^{-1}
    auto inverse() const { return inverse_store.topLeftCorner(active(), active()); }
    /// (Z_A^T Z_A)^{-1} Z_A^T [y, c]
    auto fit() const { return fit_store.topRows(active()); }
    Index position(Index col) const {
      return static_cast<Index>(std::find(order.begin(), order.end(), col) - order.begin());
    }
    /// Z^T (I - P_A) z_col = Z^T z_col - Z^T Z_A pi, for pi the fit of z_col
    /// on A, on the rows `outside` (the others, 0 on A, are left 0).
    Vector<Scalar> projected_column(Index col, const Vector<Scalar>& pi) const {
      Vector<Scalar> f = Vector<Scalar>::Zero(owner.gram_columns_.rows());
      const auto source = owner.column(col);
      for (Index j : outside) f(j) = source(j);
      for (std::size_t k = 0; k < order.size(); ++k) {
        const auto other = owner.column(order[k]);
        const Scalar weight = pi(static_cast<Index>(k));
        for (Index j : outside) f(j) -= other(j) * weight;
      }
      return f;
    }
    /// residual += f * gamma on the rows `outside`.
    void update_residual(const Vector<Scalar>& f, const Eigen::Matrix<Scalar, 1, Eigen::Dynamic>& gamma) {
      for (Index j : outside) residual.row(j) += f(j) * gamma;
    }
    void enter(Index col) {
      const Index a = static_cast<Index>(order.size());
      Vector<Scalar> g(a);  // Z_A^T z_col
      for (Index k = 0; k < a; ++k) g(k) = owner.column(col)(order[static_cast<std::size_t>(k)]);
      const Vector<Scalar> pi = inverse() * g;
      const Vector<Scalar> f = projected_column(col, pi);
      const Scalar h = f(col);  // ||(I - P_A) z_col||^2
      const Eigen::Matrix<Scalar, 1, Eigen::Dynamic> gamma = residual.row(col) / h;
      outside.erase(std::find(outside.begin(), outside.end(), col));
      update_residual(-f, gamma);
      residual.row(col).setZero();
      fit_store.topRows(a).noalias() -= pi * gamma;
      fit_store.row(a) = gamma;
      const Vector<Scalar> scaled = pi / h;
      inverse_store.topLeftCorner(a, a).noalias() += pi * scaled.transpose();
      inverse_store.block(0, a, a, 1) = -scaled;
      inverse_store.block(a, 0, 1, a) = -scaled.transpose();
      inverse_store(a, a) = Scalar(1) / h;
      order.push_back(col);
    }
    void leave(Index col) {
      const Index i = position(col), a = static_cast<Index>(order.size());
      std::vector<Index> keep;
      for (Index k = 0; k < a; ++k)
        if (k != i) keep.push_back(k);
      const Index b = a - 1;
      Vector<Scalar> pi(b);  // the fit of z_col on the others: -inverse_{-i,i} / inverse_ii
      const auto inverse = this->inverse();
      const auto fit = this->fit();
      Matrix<Scalar> next_inverse(b, b);
      RowMatrix next_fit(b, fit.cols());
      const Eigen::Matrix<Scalar, 1, Eigen::Dynamic> gamma = fit.row(i);
      for (Index r = 0; r < b; ++r) {
        const Index kr = keep[static_cast<std::size_t>(r)];
        pi(r) = -inverse(kr, i) / inverse(i, i);
        for (Index c = 0; c < b; ++c) {
          const Index kc = keep[static_cast<std::size_t>(c)];
          next_inverse(r, c) = inverse(kr, kc) - inverse(kr, i) * inverse(i, kc) / inverse(i, i);
        }
      }
      for (Index r = 0; r < b; ++r) next_fit.row(r) = fit.row(keep[static_cast<std::size_t>(r)]) + pi(r) * gamma;
      order.erase(order.begin() + i);
      inverse_store.topLeftCorner(b, b) = next_inverse;
      fit_store.topRows(b) = next_fit;
      outside.insert(std::lower_bound(outside.begin(), outside.end(), col), col);
      update_residual(projected_column(col, pi), gamma);  // the row of col was 0
    }
  };

  const Design& design_;
  std::vector<StepEvent> events_;
  bool lasso_ = true;                         ///< leave events compete (lasso variant)
  std::vector<Index> ever_;                   ///< prepared columns active at some step, by first entry
  std::vector<Index> ever_position_;          ///< position in ever_ of each prepared column (-1: never active)
  Matrix<Scalar> gram_columns_;               ///< Z^T z_u for u in ever_ (q x |ever_|)
  Vector<Scalar> correlations_;               ///< Z^T y
  std::vector<std::pair<Index, int>> final_;  ///< active set after the steps, ascending column
  Matrix<Scalar> inverse_;                    ///< (Z_M^T Z_M)^{-1} of final_
};

/// The user's predictor of each prepared column.
template <class Scalar>
Index predictor_of(const Preparation<Scalar>& prep, Index column) {
  return prep.columns[static_cast<std::size_t>(column)];
}

/// After k steps (Tibshirani et al.): see the file comment.
template <DesignOperator Design>
AdjustedInference adjusted_after_steps(const Design& design, const Path<typename Design::Scalar>& path,
                                       Index steps, double level, double noise_variance, Index residual_df) {
  using Scalar = typename Design::Scalar;
  check_testable(design, path, noise_variance);
  const Preparation<Scalar>& prep = path.preparation();
  StepPolyhedron<Design> polyhedron(design, first_events(path, steps), path.options().variant == Variant::lasso);
  AdjustedInference out;
  out.conditioning = Conditioning::steps;
  out.steps = steps;
  out.penalty = to_double(path.knots()[static_cast<std::size_t>(steps)].penalty);
  out.level = level;
  out.noise_variance = noise_variance;
  out.residual_df = residual_df;
  const auto& set = polyhedron.final_set();
  std::vector<Index> targets(set.size());
  for (std::size_t i = 0; i < set.size(); ++i) targets[i] = static_cast<Index>(i);
  Vector<Scalar> estimates;
  const std::vector<Limits<Scalar>> limits = polyhedron.limits(targets, estimates);
  const double z = normal_quantile_for(level);
  for (std::size_t i = 0; i < set.size(); ++i) {
    const Index j = predictor_of(prep, set[i].first);
    const Index k = static_cast<Index>(i);
    out.coefficients.push_back(summarize_contrast(j, set[i].second, estimates(k), polyhedron.inverse()(k, k),
                                                  limits[i], noise_variance, to_double(prep.scales(j)), level, z));
  }
  return out;
}

}  // namespace detail

/// Selection-adjusted inference at penalty lambda of a lasso path, for
/// every predictor active there, conditioned on the active set and signs
/// (Lee et al. 2016; see the file comment), on `design` (the prepared
/// problem the path was traced on). `noise_variance` is sigma^2;
/// `residual_df` > 0 records that it was estimated (the results are then
/// approximate). O(m^3) after the m x m Gram block of the active set.
/// Throws invalid_option for an unsupported path, invalid_query for a
/// penalty below the end of a stopped path or collinear active columns.
template <DesignOperator Design>
AdjustedInference adjusted_inference_at_penalty(const Design& design, const Path<typename Design::Scalar>& path,
                                                const typename Design::Scalar& penalty, double level,
                                                double noise_variance, Index residual_df = 0) {
  AdjustedInferenceOptions{level, noise_variance}.validate();
  return detail::adjusted_at_penalty(design, path, penalty, level, noise_variance, residual_df);
}

/// Selection-adjusted inference for the model after the first `steps` rows
/// of the knot table (least-angle or lasso path), for every predictor
/// active then, conditioned on those events and their signs (Tibshirani et
/// al. 2016; see the file comment). Arguments as
/// adjusted_inference_at_penalty(). Cost O(k q m^2) for k steps, q columns,
/// m active, after one Gram column per predictor ever active. Throws
/// invalid_query for ties, collinear hold-outs or too few rows.
template <DesignOperator Design>
AdjustedInference adjusted_inference_after_steps(const Design& design, const Path<typename Design::Scalar>& path,
                                                 Index steps, double level, double noise_variance,
                                                 Index residual_df = 0) {
  AdjustedInferenceOptions{level, noise_variance}.validate();
  return detail::adjusted_after_steps(design, path, steps, level, noise_variance, residual_df);
}

/// The same two from the prepared dense problem the path was traced on,
/// with sigma^2 given or estimated by the full least-squares fit
/// (options.noise_variance; detail::noise_variance_for).
template <class Scalar>
AdjustedInference adjusted_inference_at_penalty(const PreparedDense<Scalar>& prepared, const Path<Scalar>& path,
                                                const Scalar& penalty, const AdjustedInferenceOptions& options = {}) {
  options.validate();
  detail::check_same_problem(prepared.preparation, path);
  const auto [variance, df] = detail::noise_variance_for(prepared, path, options.noise_variance,
                                                         "the noise_variance of AdjustedInferenceOptions");
  return detail::adjusted_at_penalty(prepared.design, path, penalty, options.level, variance, df);
}

/// See the overload above.
template <class Scalar>
AdjustedInference adjusted_inference_after_steps(const PreparedDense<Scalar>& prepared, const Path<Scalar>& path,
                                                 Index steps, const AdjustedInferenceOptions& options = {}) {
  options.validate();
  detail::check_same_problem(prepared.preparation, path);
  const auto [variance, df] = detail::noise_variance_for(prepared, path, options.noise_variance,
                                                         "the noise_variance of AdjustedInferenceOptions");
  return detail::adjusted_after_steps(prepared.design, path, steps, options.level, variance, df);
}

/// The selection-adjusted one-sided p-value of each of the first entries
/// of the path (at most `max_steps` knot-table rows; 0: all), each in the
/// model after its own step and conditioned on the steps up to it
/// (Tibshirani et al. 2016): the sequence ForwardStop reads. Exactly
/// uniform under the global null at the first step. Stops before the first
/// row the polyhedra do not cover (ties, hold-outs, stop rows). Cost: one
/// polyhedron per step, O(k^2 q m) in all.
template <DesignOperator Design>
std::vector<EntryPValue> entry_p_values(const Design& design, const Path<typename Design::Scalar>& path,
                                        double noise_variance, Index max_steps = 0) {
  using Scalar = typename Design::Scalar;
  detail::check_testable(design, path, noise_variance);
  const auto& knots = path.knots();
  const Index rows = static_cast<Index>(knots.size()) - 1;
  const Index last = max_steps > 0 ? std::min(max_steps, rows) : rows;
  std::vector<EntryPValue> out;
  const bool lasso = path.options().variant == Variant::lasso;
  for (Index k = 1; k <= last; ++k) {
    const Knot<Scalar>& row = knots[static_cast<std::size_t>(k)];
    if (row.event != EventKind::enter) {
      if (row.event == EventKind::leave) continue;
      break;
    }
    std::vector<detail::StepEvent> events;
    try {
      events = detail::first_events(path, k);
    } catch (const invalid_query&) {
      break;
    }
    detail::StepPolyhedron<Design> polyhedron(design, events, lasso);
    const auto& set = polyhedron.final_set();
    const Index column = events.back().column;
    const Index target = static_cast<Index>(
        std::find_if(set.begin(), set.end(), [&](const auto& a) { return a.first == column; }) - set.begin());
    Vector<Scalar> estimates;
    const auto limits = polyhedron.limits({target}, estimates);
    const AdjustedCoefficient c = detail::summarize_contrast(
        row.predictor, row.sign, estimates(target), polyhedron.inverse()(target, target), limits[0],
        noise_variance, 1.0, 0.9, 1.6448536269514722);  // only the p-value is read
    out.push_back({row.step, row.predictor, row.sign, c.one_sided_p_value});
  }
  return out;
}

}  // namespace knotpath
