#pragma once
/// \file criteria.hpp
/// \brief Mallows' Cp, AIC and BIC at every knot of a path, their
/// minimizers, and the noise variance they rest on.
///
/// References:
///  - H. Zou, T. Hastie & R. Tibshirani (2007), "On the degrees of freedom of
///    the lasso", Annals of Statistics 35(5), 2173-2192 (the number of nonzero
///    coefficients is an unbiased estimate of the degrees of freedom of the
///    lasso fit; Cp, AIC and BIC built on it).
///  - H. Zou & T. Hastie (2005), "Regularization and variable selection via
///    the elastic net", J. R. Statist. Soc. B 67(2), 301-320, and
///    R. J. Tibshirani & J. Taylor (2012), "Degrees of freedom in lasso
///    problems", Annals of Statistics 40(2), 1198-1232 (the elastic net's
///    degrees of freedom tr(Z_A (Z_A'Z_A + ridge I)^-1 Z_A') on its active set A).
///  - B. Efron, T. Hastie, I. Johnstone & R. Tibshirani (2004), "Least angle
///    regression", Annals of Statistics 32(2), 407-499, section 4 (after k
///    steps of least angle regression the degrees of freedom are about k).
///  - C. L. Mallows (1973), "Some comments on C_p", Technometrics 15(4), 661-675.
///  - H. Akaike (1974), "A new look at the statistical model identification",
///    IEEE Trans. Automatic Control 19(6), 716-723 (AIC; with the Gaussian
///    likelihood and sigma^2 estimated, n log(RSS / n) + 2 d up to a constant).
///  - S. Reid, R. Tibshirani & J. Friedman (2016), "A study of error variance
///    estimation in lasso regression", Statistica Sinica 26, 35-67 (the
///    estimate RSS / (n - |A|) of the lasso fit at the cross-validated
///    penalty, their recommendation, used here when the full least-squares
///    fit leaves no residual degrees of freedom).
///
/// What it computes. At each knot, with d the degrees of freedom of the fit,
/// RSS the (weighted) residual sum of squares, n the sum of the weights (the
/// number of rows without weights: frequency weights, TraceOptions,
/// "Weights") and sigma^2 the noise variance:
///     Mallows' Cp = RSS / sigma^2 - n + 2 d
///     AIC         = n log(RSS / n) + 2 d      (sigma^2 unknown, estimated by RSS / n)
///     BIC         = RSS / (n sigma^2) + log(n) d / n
/// AIC is not defined (+infinity, never the minimum) where RSS = 0 or
/// d >= n. The degrees of freedom d, plus one for the intercept:
///  - lasso: the number of nonzero coefficients (Zou et al. 2007, unbiased);
///  - elastic net (ridge > 0): tr(Z_A (Z_A'Z_A + ridge I)^-1 Z_A') over the
///    active prepared columns Z_A, the sum of e / (e + ridge) over the
///    eigenvalues e of Z_A'Z_A (Zou & Hastie 2005; Tibshirani & Taylor 2012);
///    it needs the data, so the path-alone overload refuses a ridge;
///  - least angle regression: the number of active predictors, i.e. of steps
///    taken (Efron et al. 2004, section 4; an approximation they prove for
///    orthogonal designs and support by simulation otherwise).
/// For the lasso, between two knots the set of nonzero coefficients is fixed
/// and the RSS falls as the penalty falls, so each criterion's infimum over a
/// segment is reached at its lower knot, where the knot table counts the
/// segment's nonzero coefficients: minimizing over the knots is minimizing
/// over the path. For the other two paths the criteria are read at the knots.
///
/// The noise variance sigma^2 is, in order of preference: the value the user
/// gives; the residual variance of the full least-squares fit,
/// RSS / (n - rank - 1) (without intercept n - rank), when that leaves
/// residual degrees of freedom; otherwise (more predictors than rows) the
/// estimate of Reid, Tibshirani & Friedman (2016) when a cross-validated
/// penalty lambda_cv is given (CriteriaOptions::cross_validated_penalty):
/// RSS(lambda_cv) / (n - |A| - 1) (without intercept n - |A|), |A| the
/// nonzero coefficients at lambda_cv; otherwise, without cross-validation,
/// the rough rule RSS_k / (n - d_k) at the knot with the most nonzero
/// coefficients whose d_k is at most n / 2 (flagged in the result; it is
/// biased low: give a value or a cross-validated penalty when it matters).
/// The size-free penalty mu of each knot is lambda / penalty_scale
/// (scaling.hpp).
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
/// data give up to rounding; otherwise the rough sparse-fit rule above (the
/// RSS between knots needs the data, so the cross-validated estimate is not
/// available), over the same knots the data version would see. A path that
/// stopped early holds neither the least-squares fit nor, in general, every
/// knot the sparse-fit rule would pick from: without a given value it is
/// refused (invalid_query) rather than answered with a figure the data would
/// not give.

#include <cmath>
#include <limits>
#include <optional>
#include <string>
#include <vector>

#include <Eigen/Cholesky>

#include "detail/least_squares.hpp"
#include "detail/scalar.hpp"
#include "errors.hpp"
#include "options.hpp"
#include "path.hpp"
#include "prepare.hpp"
#include "problem.hpp"
#include "statistics.hpp"

namespace knotpath {

/// Where the noise variance of the criteria came from.
enum class NoiseVarianceSource {
  given,          ///< the user's value
  least_squares,  ///< residual variance of the full least-squares fit (of the data, or the last knot of a completed path)
  cross_validated_fit,  ///< RSS / (n - |A| - intercept) at the cross-validated penalty (Reid et al. 2016)
  sparse_fit,     ///< RSS / (n - d) of a lasso fit with d <= n/2 (rough, biased low; see the file comment)
};

/// Options of information_criteria().
struct CriteriaOptions {
  /// Noise variance sigma^2 > 0 (of a row of weight 1); negative: estimate it.
  double noise_variance = -1.0;
  /// The penalty lambda chosen by cross-validation (its least error,
  /// CrossValidation::minimum.lambda); negative: none. When the full
  /// least-squares fit leaves no residual degrees of freedom, sigma^2 is
  /// estimated from the fit at this penalty (Reid et al. 2016; file comment).
  double cross_validated_penalty = -1.0;

  /// Throws invalid_option("noise_variance") when it is 0, NaN or infinite,
  /// invalid_option("cross_validated_penalty") when it is NaN or infinite.
  void validate() const {
    detail::validate_noise_variance(noise_variance);
    if (!std::isfinite(cross_validated_penalty))
      throw invalid_option("cross_validated_penalty", "must be finite (negative: none)");
  }
};

/// The criteria at one knot.
template <class Scalar>
struct KnotCriteria {
  Index step = 0;        ///< knot-table step
  Scalar penalty{0};     ///< lambda
  Scalar mu{0};          ///< size-free penalty
  Index nonzero = 0;     ///< nonzero coefficients
  Index parameters = 0;  ///< nonzero + intercept
  /// d, the degrees of freedom of the fit (plus the intercept): the lasso's
  /// nonzero count, the elastic net's trace, least angle's active count (file comment).
  Scalar degrees_of_freedom{0};
  Scalar rss{0};         ///< weighted residual sum of squares
  Scalar mallows_cp{0};  ///< RSS / sigma^2 - n + 2 d
  Scalar aic{0};         ///< n log(RSS / n) + 2 d; +infinity where RSS = 0 or d >= n
  Scalar bic{0};         ///< RSS / (n sigma^2) + log(n) d / n
};

/// Cp, AIC and BIC along a path.
template <class Scalar>
struct InformationCriteria {
  std::vector<KnotCriteria<Scalar>> knots;                  ///< one per knot-table row
  Scalar noise_variance{0};                                 ///< sigma^2 used by all three criteria
  NoiseVarianceSource source = NoiseVarianceSource::given;  ///< where sigma^2 came from
  Scalar residual_df{0};   ///< degrees of freedom of the variance estimate (0 when given)
  Index observations = 0;  ///< rows with positive weight
  Scalar sample_size{0};   ///< n of the criteria: the sum of the weights (TraceOptions, "Weights")
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
    const Index counted =
        path.options().variant == Variant::least_angle ? knot.active_count : c.nonzero;
    c.degrees_of_freedom = Scalar(static_cast<double>(counted + intercept));
    c.rss = knot.rss;
    rows.push_back(c);
  }
  return rows;
}

/// The fit at the cross-validated penalty: its RSS and nonzero count.
template <class Scalar>
struct CrossValidatedFit {
  Scalar rss{0};      ///< weighted residual sum of squares at lambda_cv
  Index nonzero = 0;  ///< |A|, the nonzero coefficients at lambda_cv
};

/// Sets sigma^2, its source and residual df (the rule of the file comment;
/// its first two steps are given_or_least_squares_variance; `cv_fit` is the
/// fit at the cross-validated penalty, when one was given). Throws
/// invalid_query when no estimate exists or the estimate is 0.
template <class Scalar>
void set_noise_variance(InformationCriteria<Scalar>& out,
                        const NoiseVarianceEstimate<Scalar>& estimate,
                        const std::optional<CrossValidatedFit<Scalar>>& cv_fit = std::nullopt) {
  const Scalar n = out.sample_size;
  const Index intercept = out.knots.empty() ? 0 : out.knots.front().parameters - out.knots.front().nonzero;
  if (estimate.given) {
    out.noise_variance = estimate.variance;
    out.source = NoiseVarianceSource::given;
    return;
  }
  if (estimate.residual_df > 0 && estimate.weighted_residual_df > Scalar(0)) {
    out.noise_variance = estimate.variance;
    out.source = NoiseVarianceSource::least_squares;
    out.residual_df = estimate.weighted_residual_df;
    return;
  }
  const Scalar cv_df =
      cv_fit ? Scalar(n - Scalar(static_cast<double>(cv_fit->nonzero + intercept))) : Scalar(0);
  if (cv_fit && cv_df > Scalar(0) && cv_fit->rss > Scalar(0)) {
    out.residual_df = cv_df;
    out.noise_variance = cv_fit->rss / cv_df;
    out.source = NoiseVarianceSource::cross_validated_fit;
    return;
  }
  // The sparse fit with the most nonzero coefficients among those with d <= n / 2.
  const KnotCriteria<Scalar>* pick = nullptr;
  for (const auto& c : out.knots) {
    const Scalar d(static_cast<double>(c.parameters));
    if (Scalar(2) * d <= n && (!pick || c.parameters > pick->parameters)) pick = &c;
  }
  if (!pick || !(n - Scalar(static_cast<double>(pick->parameters)) > Scalar(0)))
    throw invalid_query("cannot estimate the noise variance from " + std::to_string(out.observations) +
                        " rows; give CriteriaOptions::noise_variance");
  out.residual_df = n - Scalar(static_cast<double>(pick->parameters));
  out.noise_variance = pick->rss / out.residual_df;
  out.source = NoiseVarianceSource::sparse_fit;
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
  const Index fitted = end.active_count + (prep.intercept ? 1 : 0);
  out.residual_df = prep.used_observations - fitted;
  out.weighted_residual_df = prep.weight_sum - Scalar(static_cast<double>(fitted));
  if (out.residual_df > 0 && out.weighted_residual_df > Scalar(0))
    out.variance = end.rss / out.weighted_residual_df;
  return out;
}

/// Cp, AIC and BIC of every knot row, and their minimizers (the first, the
/// largest penalty, among ties).
template <class Scalar>
void score_criteria(InformationCriteria<Scalar>& out) {
  using std::log;
  const Scalar nn = out.sample_size;
  const Scalar s2 = out.noise_variance;
  for (auto& c : out.knots) {
    const Scalar d = c.degrees_of_freedom;
    c.mallows_cp = c.rss / s2 - nn + Scalar(2) * d;
    c.aic = c.rss > Scalar(0) && d < nn ? Scalar(nn * Scalar(log(Scalar(c.rss / nn))) + Scalar(2) * d)
                                        : std::numeric_limits<Scalar>::infinity();
    c.bic = c.rss / (nn * s2) + Scalar(log(nn)) * d / nn;
  }
  for (std::size_t i = 1; i < out.knots.size(); ++i) {
    if (out.knots[i].mallows_cp < out.knots[out.best_cp].mallows_cp) out.best_cp = i;
    if (out.knots[i].aic < out.knots[out.best_aic].aic) out.best_aic = i;
    if (out.knots[i].bic < out.knots[out.best_bic].bic) out.best_bic = i;
  }
}

/// The path-alone criteria cover the lasso and least angle paths; the
/// elastic net's degrees of freedom need the data's active columns.
template <class Scalar>
void check_supported_without_data(const Path<Scalar>& path) {
  if (path.options().ridge != 0.0)
    throw invalid_option("ridge",
                         "information criteria of an elastic-net path need the data (its "
                         "degrees of freedom are a trace over the active columns)");
}

/// The prepared coefficients Z-scale of a solution (b_k = beta_j s_j for the
/// k-th traced column j), so that the fit is design.columns() * b.
template <class Scalar>
Vector<Scalar> prepared_coefficients(const Preparation<Scalar>& prep, const Vector<Scalar>& beta) {
  Vector<Scalar> b(static_cast<Index>(prep.columns.size()));
  for (std::size_t k = 0; k < prep.columns.size(); ++k)
    b(static_cast<Index>(k)) = beta(prep.columns[k]) * prep.scales(prep.columns[k]);
  return b;
}

/// The fit at the cross-validated penalty lambda_cv (its RSS from the
/// prepared data, its nonzero count).
template <class Scalar>
CrossValidatedFit<Scalar> cross_validated_fit(const PreparedDense<Scalar>& problem,
                                              const Path<Scalar>& path, const Scalar& lambda_cv) {
  const Solution<Scalar> at = path.at_penalty(lambda_cv);
  const Vector<Scalar> b = prepared_coefficients(path.preparation(), at.coefficients);
  const Vector<Scalar> r = problem.design.response() - problem.design.columns() * b;
  CrossValidatedFit<Scalar> out;
  out.rss = r.squaredNorm();
  for (Index j = 0; j < at.coefficients.size(); ++j) out.nonzero += at.coefficients(j) != Scalar(0);
  return out;
}

/// G = Z_A'Z_A of the prepared columns `columns`: a product of the dense
/// columns, or read off a Gram design.
template <class Scalar>
Matrix<Scalar> active_gram(const DenseDesign<Scalar>& design, const std::vector<Index>& columns) {
  Matrix<Scalar> za(design.columns().rows(), static_cast<Index>(columns.size()));
  for (std::size_t a = 0; a < columns.size(); ++a)
    za.col(static_cast<Index>(a)) = design.columns().col(columns[a]);
  return za.transpose() * za;
}

/// The same read off a Gram design, O(|A|^2).
template <class Scalar>
Matrix<Scalar> active_gram(const GramDesign<Scalar>& design, const std::vector<Index>& columns) {
  const auto k = static_cast<Index>(columns.size());
  Matrix<Scalar> g(k, k);
  for (Index a = 0; a < k; ++a)
    for (Index b = 0; b < k; ++b)
      g(a, b) = design.gram()(columns[static_cast<std::size_t>(a)], columns[static_cast<std::size_t>(b)]);
  return g;
}

/// The elastic net's degrees of freedom at every knot row:
/// tr((G + ridge I)^-1 G), G = Z_A'Z_A over the nonzero coefficients' prepared
/// columns, plus the intercept (file comment).
template <class Design>
void set_elastic_net_df(InformationCriteria<typename Design::Scalar>& out, const Design& design,
                        const Path<typename Design::Scalar>& path) {
  using Scalar = typename Design::Scalar;
  const Preparation<Scalar>& prep = path.preparation();
  const Scalar ridge(path.options().ridge);
  std::vector<Index> column_of(static_cast<std::size_t>(prep.predictors), -1);
  for (std::size_t k = 0; k < prep.columns.size(); ++k)
    column_of[static_cast<std::size_t>(prep.columns[k])] = static_cast<Index>(k);
  const auto& knots = path.knots();
  for (std::size_t i = 0; i < knots.size(); ++i) {
    const auto& nz = knots[i].coefficients;
    std::vector<Index> columns;
    for (const auto& entry : nz) columns.push_back(column_of[static_cast<std::size_t>(entry.first)]);
    const Matrix<Scalar> g = active_gram(design, columns);
    Matrix<Scalar> shifted = g;
    shifted.diagonal().array() += ridge;
    const Scalar trace = nz.empty() ? Scalar(0) : Scalar(Eigen::LLT<Matrix<Scalar>>(shifted).solve(g).trace());
    auto& c = out.knots[i];
    c.degrees_of_freedom = trace + Scalar(static_cast<double>(c.parameters - c.nonzero));
  }
}

/// The criteria of a path from the prepared design it was traced on (dense
/// or Gram): the knot rows, the elastic net's degrees of freedom, sigma^2 by
/// the rule of the file comment and the scores. `fallback(estimate)` gives
/// the cross-validated fit (or nothing) when the least-squares fit leaves no
/// residual degree of freedom.
template <class Design, class Fallback>
InformationCriteria<typename Design::Scalar> criteria_of(const Design& design,
                                                         const Path<typename Design::Scalar>& path,
                                                         const CriteriaOptions& criteria,
                                                         Fallback&& fallback) {
  using Scalar = typename Design::Scalar;
  InformationCriteria<Scalar> out;
  out.observations = path.preparation().used_observations;
  out.sample_size = path.preparation().weight_sum;
  out.knots = criteria_rows(path);
  if (path.options().ridge != 0.0) set_elastic_net_df(out, design, path);
  const auto estimate =
      given_or_least_squares_variance<Scalar>(criteria.noise_variance, design, path.preparation());
  set_noise_variance(out, estimate, fallback(estimate));
  score_criteria(out);
  return out;
}

}  // namespace detail

/// Mallows' Cp, AIC and BIC at every knot of a lasso, elastic-net or least
/// angle path, and their minimizers (see the file comment for the formulas,
/// the degrees of freedom and the variance). `x`, `y`, `weights` are the data
/// the path was traced on (checked). Throws invalid_option for a bad option,
/// invalid_query when the data do not match the path or no variance can be
/// estimated.
template <class Scalar>
InformationCriteria<Scalar> information_criteria(const Matrix<Scalar>& x, const Vector<Scalar>& y,
                                                 const Path<Scalar>& path,
                                                 const CriteriaOptions& criteria = {},
                                                 const Vector<Scalar>& weights = Vector<Scalar>()) {
  criteria.validate();
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
  detail::check_same_problem(problem.preparation, path);
  return detail::criteria_of(problem.design, path, criteria, [&](const auto& estimate) {
    std::optional<detail::CrossValidatedFit<Scalar>> cv_fit;
    if (!estimate.given && estimate.residual_df <= 0 && criteria.cross_validated_penalty >= 0)
      cv_fit = detail::cross_validated_fit(problem, path, Scalar(criteria.cross_validated_penalty));
    return cv_fit;
  });
}

/// The same from the sufficient statistics of the data the path was traced
/// on (SufficientStatistics::from_rows() of the same x, y and weights; the
/// prepared problem must match the path's, invalid_query otherwise): O(p^2)
/// to prepare and O(p^3) for the full least-squares fit, independent of the
/// number of rows, where the data route pays a QR of the n x p design. The
/// fit is solved by the normal equations (detail::least_squares_fit of a
/// Gram design), which square the condition number: when its estimated
/// error exceeds detail::gram_fit_tolerance, or the design is rank-deficient,
/// or no residual degree of freedom is left (the cross-validated fit needs the
/// data), throws invalid_query, and the data route must be taken. The figures
/// otherwise agree with the data route to that tolerance.
template <class Scalar>
InformationCriteria<Scalar> information_criteria(const SufficientStatistics<Scalar>& statistics,
                                                 const Path<Scalar>& path,
                                                 const CriteriaOptions& criteria = {}) {
  criteria.validate();
  const PreparedGram<Scalar> problem = prepare_gram(statistics, path.options());
  detail::check_same_problem(problem.preparation, path);
  return detail::criteria_of(problem.design, path, criteria, [](const auto& estimate) {
    if (!estimate.given && estimate.residual_df <= 0)
      throw invalid_query("no residual degree of freedom is left: the noise variance needs the data");
    return std::optional<detail::CrossValidatedFit<Scalar>>();
  });
}

/// The same from the path alone, for paths traced from any source (sparse
/// designs, sufficient statistics, ...): the knots carry the RSS and the
/// nonzero coefficients, and sigma^2 is the value given or, without one, the
/// path rule of the file comment (the least-squares fit read off the last
/// knot of a completed path). Throws invalid_option for an elastic-net path
/// (its degrees of freedom need the data) or a bad option, invalid_query
/// for an empty path, a path that stopped early with no value given, or no
/// estimate (see the file comment).
template <class Scalar>
InformationCriteria<Scalar> information_criteria(const Path<Scalar>& path,
                                                 const CriteriaOptions& criteria = {}) {
  criteria.validate();
  detail::check_supported_without_data(path);
  InformationCriteria<Scalar> out;
  out.observations = path.preparation().used_observations;
  out.sample_size = path.preparation().weight_sum;
  out.knots = detail::criteria_rows(path);
  detail::set_noise_variance(out,
                             detail::given_or_path_variance<Scalar>(criteria.noise_variance, path));
  detail::score_criteria(out);
  return out;
}

}  // namespace knotpath
