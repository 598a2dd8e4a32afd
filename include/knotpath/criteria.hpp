#pragma once
/// \file criteria.hpp
/// \brief Mallows' Cp, AIC and BIC at every knot of a lasso path, their
/// minimizers, and the noise variance they rest on.
///
/// References:
///  - H. Zou, T. Hastie & R. Tibshirani (2007), "On the degrees of freedom of
///    the lasso", Annals of Statistics 35(5), 2173-2192 (the number of nonzero
///    coefficients is an unbiased estimate of the degrees of freedom of the
///    lasso fit; Cp, AIC and BIC built on it).
///  - C. L. Mallows (1973), "Some comments on C_p", Technometrics 15(4), 661-675.
///  - S. Reid, R. Tibshirani & J. Friedman (2016), "A study of error variance
///    estimation in lasso regression", Statistica Sinica 26, 35-67 (the
///    residual-variance estimate RSS / (n - df) of a sparse lasso fit, used
///    here only when the full least-squares fit leaves no residual degrees of
///    freedom).
///
/// What it computes. At each knot, with d = number of nonzero
/// coefficients plus one for the intercept (Zou et al. 2007: an unbiased
/// estimate of the degrees of freedom), RSS the (weighted) residual sum of
/// squares, n the number of rows with positive weight and sigma^2 the noise
/// variance:
///     Mallows' Cp = RSS / sigma^2 - n + 2 d
///     AIC         = RSS / (n sigma^2) + 2 d / n
///     BIC         = RSS / (n sigma^2) + log(n) d / n
/// (Cp and AIC have the same minimizer when sigma^2 is fixed.) Between two
/// knots the set of nonzero coefficients is fixed and the RSS falls as the
/// penalty falls, so each criterion's infimum over a segment is reached at
/// its lower knot, where the knot table counts the segment's nonzero
/// coefficients: minimizing over the knots is minimizing over the path.
/// sigma^2 is, in order of preference: the value the user gives; the
/// residual variance of the full least-squares fit, RSS / (n - rank - 1)
/// (without intercept n - rank), when that leaves residual degrees of
/// freedom; otherwise RSS_k / (n - d_k) at the knot with the most nonzero
/// coefficients whose d_k is at most n / 2 (a rough estimate, flagged in the
/// result; give a value when it matters). The size-free penalty mu of each
/// knot is lambda / penalty_scale (scaling.hpp).
///
/// From the path alone (information_criteria(path, options): paths traced
/// from sparse designs, sufficient statistics or any other source) the rule
/// reads the least-squares fit off the path instead of the data. A completed
/// path (StopReason::completed) ends at penalty 0, where every predictor's
/// correlation with the residual is 0: its last knot is the least-squares fit
/// of the traced columns, with RSS_end its residual sum of squares and its
/// active count a_end (independent columns, held-out ones lying in their span)
/// the fit's rank. So sigma^2 = RSS_end / (n - a_end - 1) (n - a_end without
/// intercept) when that leaves residual degrees of freedom, the figure the
/// data give up to rounding; otherwise the sparse-fit rule above, over the
/// same knots the data version would see. A path that stopped early holds
/// neither the least-squares fit nor, in general, every knot the sparse-fit
/// rule would pick from: without a given value it is refused (invalid_query)
/// rather than answered with a figure the data would not give.

#include <cmath>
#include <string>
#include <vector>

#include "detail/least_squares.hpp"
#include "detail/scalar.hpp"
#include "errors.hpp"
#include "options.hpp"
#include "path.hpp"
#include "prepare.hpp"
#include "problem.hpp"

namespace knotpath {

/// Where the noise variance of the criteria came from.
enum class NoiseVarianceSource {
  given,          ///< the user's value
  least_squares,  ///< residual variance of the full least-squares fit (of the data, or the last knot of a completed path)
  sparse_fit,     ///< RSS / (n - d) of a lasso fit with d <= n/2 (rough; see the file comment)
};

/// Options of information_criteria().
struct CriteriaOptions {
  /// Noise variance sigma^2 > 0 (of a row of weight 1); negative: estimate it.
  double noise_variance = -1.0;

  /// Throws invalid_option("noise_variance") when it is 0, NaN or infinite.
  void validate() const { detail::validate_noise_variance(noise_variance); }
};

/// The criteria at one knot.
template <class Scalar>
struct KnotCriteria {
  Index step = 0;        ///< knot-table step
  Scalar penalty{0};     ///< lambda
  Scalar mu{0};          ///< size-free penalty
  Index nonzero = 0;     ///< nonzero coefficients
  Index parameters = 0;  ///< d = nonzero + intercept
  Scalar rss{0};         ///< weighted residual sum of squares
  Scalar mallows_cp{0};  ///< RSS / sigma^2 - n + 2 d
  Scalar aic{0};         ///< RSS / (n sigma^2) + 2 d / n
  Scalar bic{0};         ///< RSS / (n sigma^2) + log(n) d / n
};

/// Cp, AIC and BIC along a path.
template <class Scalar>
struct InformationCriteria {
  std::vector<KnotCriteria<Scalar>> knots;                  ///< one per knot-table row
  Scalar noise_variance{0};                                 ///< sigma^2 used by all three criteria
  NoiseVarianceSource source = NoiseVarianceSource::given;  ///< where sigma^2 came from
  Index residual_df = 0;   ///< degrees of freedom of the variance estimate (0 when given)
  Index observations = 0;  ///< n: rows with positive weight
  std::size_t best_cp =
      0;  ///< index into knots of the minimum (the first, largest penalty, among ties)
  std::size_t best_aic = 0;  ///< index into knots of the AIC minimum (first among ties)
  std::size_t best_bic = 0;  ///< index into knots of the BIC minimum (first among ties)
};

namespace detail {

/// The knot rows of the criteria with their size-free penalty, d and RSS
/// (the scores come later, once sigma^2 is known).
template <class Scalar>
std::vector<KnotCriteria<Scalar>> criteria_rows(const Path<Scalar>& path) {
  const Preparation<Scalar>& prep = path.preparation();
  const Index intercept = prep.intercept ? 1 : 0;
  std::vector<KnotCriteria<Scalar>> rows;
  for (const auto& knot : path.knots()) {
    KnotCriteria<Scalar> c;
    c.step = knot.step;
    c.penalty = knot.penalty;
    c.mu = path.mu_of(knot.penalty);
    c.nonzero = static_cast<Index>(knot.coefficients.size());
    c.parameters = c.nonzero + intercept;
    c.rss = knot.rss;
    rows.push_back(c);
  }
  return rows;
}

/// Sets sigma^2, its source and residual df (the rule of the file comment;
/// its first two steps are given_or_least_squares_variance). Throws
/// invalid_query when no estimate exists or the estimate is 0.
template <class Scalar>
void set_noise_variance(InformationCriteria<Scalar>& out,
                        const NoiseVarianceEstimate<Scalar>& estimate) {
  const Index n = out.observations;
  if (estimate.given) {
    out.noise_variance = estimate.variance;
    out.source = NoiseVarianceSource::given;
    return;
  }
  if (estimate.residual_df > 0) {
    out.noise_variance = estimate.variance;
    out.source = NoiseVarianceSource::least_squares;
    out.residual_df = estimate.residual_df;
  } else {
    // The sparse fit with the most nonzero coefficients among those with d <= n / 2.
    const KnotCriteria<Scalar>* pick = nullptr;
    for (const auto& c : out.knots)
      if (2 * c.parameters <= n && (!pick || c.parameters > pick->parameters)) pick = &c;
    if (!pick || n - pick->parameters <= 0)
      throw invalid_query("cannot estimate the noise variance from " + std::to_string(n) +
                          " rows; give CriteriaOptions::noise_variance");
    out.residual_df = n - pick->parameters;
    out.noise_variance = pick->rss / Scalar(static_cast<double>(out.residual_df));
    out.source = NoiseVarianceSource::sparse_fit;
  }
  if (!(out.noise_variance > Scalar(0)))
    throw invalid_query(
        "the estimated noise variance is 0 (the data are fitted exactly); give "
        "CriteriaOptions::noise_variance");
}

/// The noise-variance rule from a path alone (file comment): the value
/// given, or the least-squares fit read off the last knot of a completed
/// path (residual_df <= 0 leaves the sparse-fit rule to set_noise_variance).
/// Throws invalid_query for an empty path, or for a path that stopped early
/// when no value is given.
template <class Scalar>
NoiseVarianceEstimate<Scalar> given_or_path_variance(double given, const Path<Scalar>& path) {
  NoiseVarianceEstimate<Scalar> out;
  if (given > 0) {
    out.variance = Scalar(given);
    out.given = true;
    return out;
  }
  if (path.knots().empty()) throw invalid_query("the path is empty");
  if (path.stop_reason() != StopReason::completed)
    throw invalid_query("the path stopped early (" + to_string(path.stop_reason()) +
                        "), so its last knot is not the least-squares fit and the noise "
                        "variance cannot be estimated from the path alone; give "
                        "CriteriaOptions::noise_variance");
  const Knot<Scalar>& end = path.knots().back();
  const Preparation<Scalar>& prep = path.preparation();
  out.rank = end.active_count;
  out.residual_df = prep.used_observations - end.active_count - (prep.intercept ? 1 : 0);
  if (out.residual_df > 0) out.variance = end.rss / Scalar(static_cast<double>(out.residual_df));
  return out;
}

/// Cp, AIC and BIC of every knot row, and their minimizers (the first, the
/// largest penalty, among ties).
template <class Scalar>
void score_criteria(InformationCriteria<Scalar>& out) {
  using std::log;
  const Scalar nn(static_cast<double>(out.observations));
  const Scalar s2 = out.noise_variance;
  for (auto& c : out.knots) {
    const Scalar d(static_cast<double>(c.parameters));
    c.mallows_cp = c.rss / s2 - nn + Scalar(2) * d;
    c.aic = c.rss / (nn * s2) + Scalar(2) * d / nn;
    c.bic = c.rss / (nn * s2) + Scalar(log(nn)) * d / nn;
  }
  for (std::size_t i = 1; i < out.knots.size(); ++i) {
    if (out.knots[i].mallows_cp < out.knots[out.best_cp].mallows_cp) out.best_cp = i;
    if (out.knots[i].aic < out.knots[out.best_aic].aic) out.best_aic = i;
    if (out.knots[i].bic < out.knots[out.best_bic].bic) out.best_bic = i;
  }
}

/// Information criteria are defined for the plain lasso path only.
template <class Scalar>
void check_supported(const Path<Scalar>& path) {
  const TraceOptions& options = path.options();
  if (options.ridge != 0.0)
    throw invalid_option("ridge",
                         "information criteria need the plain lasso (ridge = 0): the "
                         "number of nonzero coefficients is not the elastic net's "
                         "degrees of freedom");
  if (options.variant != Variant::lasso)
    throw invalid_option("variant",
                         "information criteria need the lasso variant (df = number "
                         "of nonzero coefficients holds for the lasso)");
}

}  // namespace detail

/// Mallows' Cp, AIC and BIC at every knot of a lasso path, and their
/// minimizers (see the file comment for the formulas and the variance).
/// `x`, `y`, `weights` are the data the path was traced on (checked).
/// Throws invalid_option for a ridge (elastic net: the count of nonzero
/// coefficients is not its degrees of freedom) or the least angle variant
/// (its coefficients may cross zero inside a segment), invalid_query when the
/// data do not match the path.
template <class Scalar>
InformationCriteria<Scalar> information_criteria(const Matrix<Scalar>& x, const Vector<Scalar>& y,
                                                 const Path<Scalar>& path,
                                                 const CriteriaOptions& criteria = {},
                                                 const Vector<Scalar>& weights = Vector<Scalar>()) {
  criteria.validate();
  detail::check_supported(path);
  return information_criteria(detail::prepare_for(x, y, path, weights), path, criteria);
}

/// The same from the prepared dense problem the path was traced on (the
/// caller's own prepare_dense(), problem.hpp): nothing is prepared or
/// checked again beyond the problem's columns and rows matching the path's
/// (invalid_query otherwise).
template <class Scalar>
InformationCriteria<Scalar> information_criteria(const PreparedDense<Scalar>& problem, const Path<Scalar>& path,
                                                 const CriteriaOptions& criteria = {}) {
  criteria.validate();
  detail::check_supported(path);
  detail::check_same_problem(problem.preparation, path);
  InformationCriteria<Scalar> out;
  out.observations = path.preparation().used_observations;
  out.knots = detail::criteria_rows(path);
  detail::set_noise_variance(
      out, detail::given_or_least_squares_variance<Scalar>(criteria.noise_variance, problem.design,
                                                           path.preparation()));
  detail::score_criteria(out);
  return out;
}

/// The same from the path alone, for paths traced from any source (sparse
/// designs, sufficient statistics, ...): the knots carry the RSS and the
/// nonzero coefficients, and sigma^2 is the value given or, without one, the
/// path rule of the file comment (the least-squares fit read off the last
/// knot of a completed path). Throws invalid_option as above, invalid_query
/// for an empty path, a path that stopped early with no value given, or no
/// estimate (see the file comment).
template <class Scalar>
InformationCriteria<Scalar> information_criteria(const Path<Scalar>& path,
                                                 const CriteriaOptions& criteria = {}) {
  criteria.validate();
  detail::check_supported(path);
  InformationCriteria<Scalar> out;
  out.observations = path.preparation().used_observations;
  out.knots = detail::criteria_rows(path);
  detail::set_noise_variance(out,
                             detail::given_or_path_variance<Scalar>(criteria.noise_variance, path));
  detail::score_criteria(out);
  return out;
}

}  // namespace knotpath
