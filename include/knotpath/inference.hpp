#pragma once
/// \file inference.hpp
/// \brief Significance of each entry along the path: the covariance test
/// statistic with its p-value, and the spacing test p-value of each
/// least-angle step.
///
/// References:
///  - R. Lockhart, J. Taylor, R. J. Tibshirani & R. Tibshirani (2014), "A
///    significance test for the lasso", Annals of Statistics 42(2), 413-468
///    (the covariance test; Exp(1) null limit, Theorem 1 for orthogonal
///    designs and Theorem 3 in general; the F(2, n - p) reference when the
///    noise variance is estimated from the full least-squares fit).
///  - R. J. Tibshirani, J. Taylor, R. Lockhart & R. Tibshirani (2016), "Exact
///    post-selection inference for sequential regression procedures", Journal
///    of the American Statistical Association 111, 600-620 (the spacing test
///    for least angle regression; exact at the first step).
///
/// What it computes. Both tests work on the prepared problem of the path
/// (centred and, by default, unit-length columns z_j and centred response y).
///
/// Covariance test, for a predictor entering the lasso path at knot lambda_k
/// with active set A just before it and next knot lambda_{k+1}:
///     T_k = ( <y, Z b(lambda_{k+1})> - <y, Z_A bA(lambda_{k+1})> ) / sigma^2,
/// where b is the lasso solution of the path and bA the lasso solution that
/// uses only the predictors of A (traced here exactly, from the reduced
/// problem's own path). With sigma^2 known, the p-value is P(Exp(1) > T_k) =
/// exp(-T_k). With sigma^2 estimated by the full least-squares fit's residual
/// variance on d = n - p - 1 (without intercept n - p) degrees of freedom,
/// the p-value is P(F(2, d) > T_k) = (1 + 2 T_k / d)^(-d/2).
///
/// Spacing test, for least-angle step k (active set A_{k-1} -> A_k, signs s):
/// with u_k = Z_A (Z_A^T Z_A)^{-1} s_A of the active set after step k and
/// omega_k = || u_k - u_{k-1} ||, the knot is lambda_k = v^T y for a contrast
/// v with ||v|| = 1/omega_k, and under the null (v^T E y = 0) the standardized
/// knot lambda_k omega_k / sigma is a standard normal truncated to
/// [lambda_{k+1} omega_k / sigma, lambda_{k-1} omega_k / sigma] (lambda_0 =
/// +infinity). The p-value is its upper tail probability
///     p_k = [Q(lambda_k w) - Q(lambda_{k-1} w)] / [Q(lambda_{k+1} w) - Q(lambda_{k-1} w)],
/// w = omega_k / sigma, Q the standard normal upper tail. Q underflows beyond
/// about 38, so every tail is evaluated as a logarithm (a continued fraction
/// for the Mills ratio Q(x)/phi(x) for large x) and differences as
/// log Q(a) + log(1 - exp(log Q(b) - log Q(a))): no 0/0.
///
/// Assumptions and limits. Both tests assume y = X beta + Gaussian noise of
/// constant variance with a fixed design; the p-values are valid only under
/// that model (exactly for the first spacing step, asymptotically
/// otherwise), and only for the question each test asks (does the entering
/// predictor improve on the current active set). Supported: the plain lasso
/// (covariance test) and least-angle steps (spacing test: every step of a
/// least-angle path; the steps of a lasso path before its first leave event,
/// where the two paths agree), unweighted data, every predictor penalized alike (no penalty scales, none unpenalized), no
/// sign constraints, no ridge. Anything else throws invalid_option.

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <span>
#include <string>
#include <utility>
#include <vector>

#include <Eigen/Cholesky>

#include "design/concept.hpp"
#include "detail/least_squares.hpp"
#include "detail/scalar.hpp"
#include "detail/truncated_gaussian.hpp"
#include "errors.hpp"
#include "options.hpp"
#include "path.hpp"
#include "prepare.hpp"
#include "problem.hpp"
#include "statistics.hpp"
#include "trace.hpp"

namespace knotpath {

/// Options of entry_significance().
struct InferenceOptions {
  /// Noise variance sigma^2 > 0; negative: estimate it from the full
  /// least-squares fit (needs more rows than predictors plus intercept).
  double noise_variance = -1.0;

  /// Throws invalid_option("noise_variance") when it is 0, NaN or infinite.
  void validate() const { detail::validate_noise_variance(noise_variance); }
};

/// Significance of one entry (an enter row of the knot table). Values that a
/// test does not define for this entry are NaN, with the reason in `note`.
struct EntrySignificance {
  Index step = 0;           ///< knot-table step of the enter row
  Index predictor = 0;      ///< user's 0-based index
  int sign = 0;             ///< sign it entered with
  double penalty = 0;       ///< lambda_k
  double next_penalty = 0;  ///< lambda_{k+1} (NaN when the path stops first)
  double covariance_statistic = std::numeric_limits<double>::quiet_NaN();  ///< T_k
  double covariance_p_value = std::numeric_limits<double>::quiet_NaN();    ///< Exp(1) or F(2, d)
  double spacing_p_value = std::numeric_limits<double>::quiet_NaN();       ///< p_k
  double omega = std::numeric_limits<double>::quiet_NaN();                 ///< omega_k
  std::string note;  ///< why a value is missing (empty when none is)
};

/// The tests along one path.
struct Significance {
  std::vector<EntrySignificance> entries;  ///< one per enter row, in path order
  double noise_variance = 0;               ///< sigma^2 used
  Index residual_df = 0;                   ///< d of the estimate; 0 when sigma^2 was given
};

namespace detail {

/// P(F(2, d) > t) = (1 + 2 t / d)^(-d/2), in logs for large d.
inline double f2_upper_tail(double t, double d) {
  if (t <= 0) return 1.0;
  return std::exp(-0.5 * d * std::log1p(2.0 * t / d));
}

/// Resizes a plain vector to n; a fixed-size view (Eigen::Ref, a block) is
/// left alone (the caller sized it).
template <class Out>
void fit_size(Out& out, Index n) {
  if constexpr (requires { out.conservativeResize(n); }) out.resize(n);
}

/// A view of some columns of a design operator (for the reduced problems).
/// Output arguments are templates so that the view follows whichever vector
/// types (plain vectors or Eigen::Ref views) the tracer passes.
template <DesignOperator Base>
class ColumnSubset {
 public:
  using Scalar = typename Base::Scalar;
  ColumnSubset(const Base& base, std::vector<Index> columns)
      : base_(base), cols_(std::move(columns)), full_(Vector<Scalar>::Zero(base.cols())) {}

  Index rows() const { return base_.rows(); }
  Index cols() const { return static_cast<Index>(cols_.size()); }
  Scalar squared_norm(Index j) const {
    return base_.squared_norm(cols_[static_cast<std::size_t>(j)]);
  }
  Scalar response_squared_norm() const { return base_.response_squared_norm(); }
  template <class Out>
  void response_correlations(Out&& out) const {
    base_.response_correlations(full_);
    gather(out);
  }
  template <class Out>
  void cross_products(Index j, std::span<const Index> active, Out&& out) const {
    map(active);
    fit_size(out, static_cast<Index>(active.size()));
    base_.cross_products(cols_[static_cast<std::size_t>(j)], std::span<const Index>(mapped_),
                         std::forward<Out>(out));
  }
  template <class Coefficients, class Out>
  void direction_correlations(std::span<const Index> active, const Coefficients& d,
                              Out&& out) const {
    map(active);
    base_.direction_correlations(std::span<const Index>(mapped_), d, full_);
    gather(out);
  }

 private:
  void map(std::span<const Index> active) const {
    mapped_.clear();
    for (Index a : active) mapped_.push_back(cols_[static_cast<std::size_t>(a)]);
  }
  template <class Out>
  void gather(Out& out) const {
    fit_size(out, cols());
    for (Index i = 0; i < cols(); ++i) out(i) = full_(cols_[static_cast<std::size_t>(i)]);
  }
  const Base& base_;
  std::vector<Index> cols_;
  mutable std::vector<Index> mapped_;
  mutable Vector<Scalar> full_;  // length base.cols()
};

/// Throws invalid_option for a path the tests do not cover (see the file
/// comment) or a noise variance that is not finite and > 0, invalid_query
/// when `design` has not the path's prepared columns.
template <DesignOperator Design>
void check_testable(const Design& design, const Path<typename Design::Scalar>& path,
                    double noise_variance) {
  const Preparation<typename Design::Scalar>& prep = path.preparation();
  if (!(noise_variance > 0.0) || !std::isfinite(noise_variance))
    throw invalid_option("noise_variance", "must be finite and > 0");
  if (path.options().ridge != 0.0)
    throw invalid_option("ridge", "the significance tests are for the plain lasso (ridge = 0)");
  for (double f : prep.penalty_weights)
    if (f != 1.0)
      throw invalid_option("penalty_scales",
                           "the significance tests assume every predictor is penalized alike "
                           "(no penalty scales, no unpenalized predictors)");
  for (SignConstraint c : prep.constraints)
    if (c != SignConstraint::none)
      throw invalid_option("sign_constraints", "the significance tests assume no sign constraints");
  if (design.cols() != static_cast<Index>(prep.columns.size()))
    throw invalid_query("the design does not match the path's prepared columns");
}

/// sigma^2 for the tests on a prepared dense problem: `given` when > 0,
/// else the full least-squares fit's residual variance (the rule of
/// given_or_least_squares_variance), with its residual degrees of freedom
/// (0 when given). Throws invalid_query when it cannot be estimated (too few
/// rows, or an exact fit): the caller must give it, through the option
/// `option` names. The one home of this refusal for the entry tests and the
/// adjusted inference.
template <class Scalar>
std::pair<double, Index> noise_variance_for(const PreparedDense<Scalar>& prepared, const Path<Scalar>& path,
                                            double given, const std::string& option) {
  const auto estimate = given_or_least_squares_variance<Scalar>(given, prepared.design, path.preparation());
  if (!estimate.given && estimate.residual_df <= 0)
    throw invalid_query("the noise variance cannot be estimated by least squares with " +
                        std::to_string(path.preparation().used_observations) + " rows and rank " +
                        std::to_string(estimate.rank) + "; give " + option);
  if (!(estimate.variance > Scalar(0)))
    throw invalid_query("the least-squares fit is exact (zero residual variance); give " + option);
  return {to_double(estimate.variance), estimate.given ? Index(0) : estimate.residual_df};
}

/// True for the knot-table rows that change the active set.
template <class Scalar>
bool is_event(const Knot<Scalar>& knot) {
  return knot.event == EventKind::enter || knot.event == EventKind::leave;
}

/// The events at one knot of a path, and the knot that follows them.
struct EventGroup {
  std::size_t first = 0;  ///< first row of the group (an event row)
  std::size_t end = 0;    ///< one past its last row; the rows share one penalty
  double lambda = 0;      ///< their penalty lambda_k
  double next = std::numeric_limits<double>::quiet_NaN();  ///< lambda_{k+1}; NaN when none is known
  std::size_t next_row = 0;    ///< knot-table row of lambda_{k+1} (the table's size when none)
  std::string next_note;       ///< why `next` is NaN (empty when it is known)
  bool next_is_leave = false;  ///< a leave event at lambda_{k+1}

  bool tied() const { return end - first > 1; }
};

/// The group of events whose first row is `first`.
template <class Scalar>
EventGroup event_group(const std::vector<Knot<Scalar>>& knots, std::size_t first) {
  EventGroup g;
  g.first = first;
  g.end = first;
  while (g.end < knots.size() && is_event(knots[g.end]) &&
         knots[g.end].penalty == knots[first].penalty)
    ++g.end;
  g.lambda = to_double(knots[first].penalty);
  g.next_row = knots.size();
  for (std::size_t i = g.end; i < knots.size(); ++i) {
    if (knots[i].penalty == knots[first].penalty) continue;
    if (knots[i].event == EventKind::stop) {
      g.next_note = "the path stopped before the next knot";
    } else {
      g.next = to_double(knots[i].penalty);
      g.next_row = i;
    }
    break;
  }
  if (std::isnan(g.next) && g.next_note.empty()) g.next_note = "no knot follows";
  // On a lasso path a leave at the next knot means the least-angle path
  // would have had a different next knot.
  for (std::size_t i = g.next_row;
       i < knots.size() && knots[i].penalty == knots[g.next_row].penalty; ++i)
    if (knots[i].event == EventKind::leave) g.next_is_leave = true;
  return g;
}

/// The two tests along one path. Walking the knot table in order, it keeps
/// the active set A_{k-1} just before each group of events and the penalty
/// lambda_{k-1} of the previous group; each enter row is tested against them.
template <DesignOperator Design>
class EntryTests {
 public:
  using Scalar = typename Design::Scalar;

  EntryTests(const Design& design, const Path<Scalar>& path, double noise_variance,
             Index residual_df)
      : design_(design),
        path_(path),
        prep_(path.preparation()),
        noise_variance_(noise_variance),
        residual_df_(residual_df),
        position_(static_cast<std::size_t>(prep_.predictors), -1) {
    for (std::size_t k = 0; k < prep_.columns.size(); ++k)
      position_[static_cast<std::size_t>(prep_.columns[k])] = static_cast<Index>(k);
    design_.response_correlations(correlations_);
  }

  /// One EntrySignificance per enter row, in path order.
  Significance run() {
    Significance out;
    out.noise_variance = noise_variance_;
    out.residual_df = residual_df_;
    const auto& knots = path_.knots();
    std::size_t r = 0;
    while (r < knots.size()) {
      if (!is_event(knots[r])) {
        ++r;
        continue;
      }
      const EventGroup group = event_group(knots, r);
      for (std::size_t i = group.first; i < group.end; ++i)
        if (knots[i].event == EventKind::enter) out.entries.push_back(test_entry(knots[i], group));
      update_active(group);
      previous_lambda_ = group.lambda;
      r = group.end;
    }
    return out;
  }

 private:
  EntrySignificance test_entry(const Knot<Scalar>& row, const EventGroup& group) const {
    EntrySignificance e;
    e.step = row.step;
    e.predictor = row.predictor;
    e.sign = row.sign;
    e.penalty = group.lambda;
    e.next_penalty = group.next;
    std::vector<std::string> notes;
    if (group.tied()) notes.push_back("several events at one knot");
    if (!group.next_note.empty()) notes.push_back(group.next_note);
    const bool usable = !group.tied() && group.next_note.empty();
    if (path_.options().variant != Variant::lasso)
      notes.push_back("the covariance test is computed for the lasso variant");
    else if (usable)
      covariance_test(e, group);
    if (left_before_ || group.next_is_leave)
      notes.push_back("the spacing test covers least-angle steps (before the first leave event)");
    else if (usable)
      spacing_test(e, row, group);
    for (std::size_t k = 0; k < notes.size(); ++k) e.note += (k ? "; " : "") + notes[k];
    return e;
  }

  /// T_k = (<y, Z b(lambda_{k+1})> - <y, Z_A bA(lambda_{k+1})>) / sigma^2 and its p-value.
  void covariance_test(EntrySignificance& e, const EventGroup& group) const {
    const Scalar next = path_.knots()[group.next_row].penalty;
    const Scalar reduced = active_.empty() ? Scalar(0) : reduced_fit(next, group.next);
    const Scalar full = fitted_inner(path_.at_penalty(next));
    e.covariance_statistic = to_double(Scalar(full - reduced)) / noise_variance_;
    e.covariance_p_value =
        residual_df_ > 0 ? f2_upper_tail(e.covariance_statistic, static_cast<double>(residual_df_))
                         : std::exp(-std::max(0.0, e.covariance_statistic));
  }

  /// <y, Z_A bA(next)>: the lasso of the active predictors alone, traced
  /// exactly down to `next` (`next_double` is the same penalty as a double).
  Scalar reduced_fit(const Scalar& next, double next_double) const {
    std::vector<Index> cols;
    for (const auto& [col, s] : active_) cols.push_back(col);
    std::sort(cols.begin(), cols.end());
    ColumnSubset<Design> subset(design_, cols);
    Preparation<Scalar> sub = prep_;
    sub.columns.clear();
    for (Index col : cols) sub.columns.push_back(prep_.columns[static_cast<std::size_t>(col)]);
    sub.penalty_weights.assign(cols.size(), 1.0);
    sub.constraints.assign(cols.size(), SignConstraint::none);
    TraceOptions reduced_options = path_.options();
    reduced_options.penalty_scales.clear();
    reduced_options.unpenalized.clear();
    reduced_options.left_out.clear();
    reduced_options.sign_constraints.clear();
    reduced_options.max_knots = 0;
    reduced_options.max_active = 0;
    reduced_options.min_penalty = next_double;
    const Path<Scalar> reduced_path = trace_design(subset, sub, reduced_options);
    return fitted_inner(reduced_path.at_penalty(next));
  }

  /// <y, Z b> of an original-scale solution: sum_j c0_j s_j beta_j.
  Scalar fitted_inner(const Solution<Scalar>& s) const {
    Scalar sum(0);
    for (Index j = 0; j < s.coefficients.size(); ++j)
      if (s.coefficients(j) != Scalar(0))
        sum += correlations_(position_[static_cast<std::size_t>(j)]) * prep_.scales(j) *
               s.coefficients(j);
    return sum;
  }

  /// omega_k and the truncated-Gaussian p-value of the step that adds `row`.
  void spacing_test(EntrySignificance& e, const Knot<Scalar>& row, const EventGroup& group) const {
    e.omega = omega(row);
    const double w = e.omega / std::sqrt(noise_variance_);
    const double inf = std::numeric_limits<double>::infinity();
    e.spacing_p_value =
        truncated_gaussian_upper_tail(group.lambda * w, group.next * w,
                                      std::isinf(previous_lambda_) ? inf : previous_lambda_ * w);
  }

  /// omega_k = || u_k - u_{k-1} || from the Gram matrix of A_k (A_{k-1} first, then the entering
  /// column).
  double omega(const Knot<Scalar>& row) const {
    std::vector<Index> cols;
    Vector<Scalar> s(static_cast<Index>(active_.size() + 1));
    for (std::size_t a = 0; a < active_.size(); ++a) {
      cols.push_back(active_[a].first);
      s(static_cast<Index>(a)) = Scalar(active_[a].second);
    }
    cols.push_back(position_[static_cast<std::size_t>(row.predictor)]);
    s(static_cast<Index>(active_.size())) = Scalar(row.sign);
    const Index m = static_cast<Index>(cols.size());
    Matrix<Scalar> gram(m, m);
    Vector<Scalar> cross;
    for (Index a = 0; a < m; ++a) {
      cross.resize(a);
      design_.cross_products(cols[static_cast<std::size_t>(a)],
                             std::span<const Index>(cols.data(), static_cast<std::size_t>(a)),
                             cross);
      for (Index b = 0; b < a; ++b) gram(a, b) = gram(b, a) = cross(b);
      gram(a, a) = design_.squared_norm(cols[static_cast<std::size_t>(a)]);
    }
    Vector<Scalar> delta = gram.ldlt().solve(s);
    if (m > 1) delta.head(m - 1) -= gram.topLeftCorner(m - 1, m - 1).ldlt().solve(s.head(m - 1));
    const double omega2 = to_double(Scalar(delta.dot(gram * delta)));
    return std::sqrt(std::max(0.0, omega2));
  }

  /// Applies a whole group of events to the active set.
  void update_active(const EventGroup& group) {
    const auto& knots = path_.knots();
    for (std::size_t i = group.first; i < group.end; ++i) {
      const Index col = position_[static_cast<std::size_t>(knots[i].predictor)];
      if (knots[i].event == EventKind::enter) {
        active_.emplace_back(col, knots[i].sign);
      } else {
        left_before_ = true;
        active_.erase(std::remove_if(active_.begin(), active_.end(),
                                     [&](const auto& a) { return a.first == col; }),
                      active_.end());
      }
    }
  }

  const Design& design_;
  const Path<Scalar>& path_;
  const Preparation<Scalar>& prep_;
  double noise_variance_;        ///< sigma^2
  Index residual_df_;            ///< d of the estimate; 0: sigma^2 is known
  std::vector<Index> position_;  ///< prepared column of each predictor (-1: left out)
  Vector<Scalar> correlations_;  ///< Z^T y of the prepared problem
  std::vector<std::pair<Index, int>>
      active_;  ///< prepared column and sign of A_{k-1}, in entry order
  double previous_lambda_ =
      std::numeric_limits<double>::infinity();  ///< lambda_{k-1} (+inf before the first)
  bool left_before_ = false;                    ///< a leave event came before this group
};

}  // namespace detail

/// Covariance and spacing tests for every entry of `path`, whose prepared
/// problem is `design` (the operator the path was traced with, or one
/// equivalent to it). `noise_variance` is sigma^2; `residual_df` > 0 says it
/// was estimated on that many degrees of freedom (covariance p-values then
/// use F(2, residual_df)); 0 says it is known. Throws invalid_option for an
/// unsupported path (see the file comment). Cost: one reduced path of at
/// most k columns per entry, O(k^3) for the spacing test's omega. The
/// reduced traces use `design`'s scratch space: do not use the same design
/// object in another thread meanwhile.
template <DesignOperator Design>
Significance entry_significance(const Design& design, const Path<typename Design::Scalar>& path,
                                double noise_variance, Index residual_df = 0) {
  detail::check_testable(design, path, noise_variance);
  return detail::EntryTests<Design>(design, path, noise_variance, residual_df).run();
}

/// The same from the sufficient statistics of the (unweighted) data the path
/// was traced on (statistics.hpp): the reduced paths and omega run on the
/// prepared Gram matrix (prepare_gram() with the path's options), so after
/// the O(n p^2) pass that formed the statistics each step costs O(k^2),
/// independent of the number of rows. `noise_variance` and `residual_df` as
/// above. The results agree with the dense route (the overload on x and y)
/// to rounding, not bit for bit: both prepare the columns and trace the
/// reduced paths by the same rules, with sums formed in another order;
/// tests/test_inference.cpp (EntryTestsFromStatistics) measures the
/// difference. Throws invalid_query when the statistics do not give the
/// path's prepared columns and rows, invalid_option as above.
template <class Scalar>
Significance entry_significance(const SufficientStatistics<Scalar>& statistics,
                                const Path<Scalar>& path, double noise_variance,
                                Index residual_df = 0) {
  const PreparedGram<Scalar> prepared = prepare_gram(statistics, path.options());
  detail::check_same_problem(prepared.preparation, path);
  return entry_significance(prepared.design, path, noise_variance, residual_df);
}

/// Covariance and spacing tests for every entry of a path traced (without
/// weights) on x and y. sigma^2 is options.noise_variance, or the residual
/// variance of the full least-squares fit on n - rank - 1 degrees of freedom
/// (n - rank without intercept). Throws invalid_query when the data do not
/// match the path (or the path was traced with weights) or when sigma^2
/// cannot be estimated (too few rows: give it).
template <class Scalar>
Significance entry_significance(const Matrix<Scalar>& x, const Vector<Scalar>& y,
                                const Path<Scalar>& path, const InferenceOptions& options = {}) {
  return entry_significance(detail::prepare_for(x, y, path, Vector<Scalar>()), path, options);
}

/// The same from the prepared dense problem the path was traced on (the
/// caller's own prepare_dense(), problem.hpp, without weights): nothing is
/// prepared again; invalid_query when its columns or rows do not match the
/// path's.
template <class Scalar>
Significance entry_significance(const PreparedDense<Scalar>& prepared, const Path<Scalar>& path,
                                const InferenceOptions& options = {}) {
  options.validate();
  detail::check_same_problem(prepared.preparation, path);
  const auto [variance, df] = detail::noise_variance_for(prepared, path, options.noise_variance,
                                                         "InferenceOptions::noise_variance");
  return entry_significance(prepared.design, path, variance, df);
}

}  // namespace knotpath
