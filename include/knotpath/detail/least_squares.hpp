#pragma once
// The full least-squares fit of the data a path was traced on, and the
// noise variance sigma^2 it gives: the one home of the rule shared by the
// criteria (criteria.hpp) and the entry tests (inference.hpp), and of the
// check of the noise_variance option. Users do not call these.

#include <cmath>
#include <string>
#include <utility>

#include <Eigen/Cholesky>
#include <Eigen/QR>

#include "../design/gram.hpp"
#include "../errors.hpp"
#include "../factor.hpp"
#include "../options.hpp"
#include "../path.hpp"
#include "../prepare.hpp"
#include "../problem.hpp"
#include "scalar.hpp"

namespace knotpath::detail {

/// Re-prepares the data a path was traced on and checks that they match it.
/// A prepared problem given with a path must be the one the path was traced
/// on: the same kept columns of the same predictors over the same rows.
template <class Scalar>
void check_same_problem(const Preparation<Scalar>& problem, const Path<Scalar>& path) {
  const Preparation<Scalar>& traced = path.preparation();
  if (problem.predictors != traced.predictors || problem.used_observations != traced.used_observations ||
      problem.columns != traced.columns || problem.intercept != traced.intercept)
    throw invalid_query("the prepared problem given is not the one the path was traced on");
}

template <class Scalar>
PreparedDense<Scalar> prepare_for(const Matrix<Scalar>& x, const Vector<Scalar>& y,
                                  const Path<Scalar>& path, const Vector<Scalar>& weights) {
  PreparedDense<Scalar> prepared = prepare_dense<Scalar>(x, y, path.options(), weights);
  const auto& a = prepared.preparation;
  const auto& b = path.preparation();
  // The path may have been prepared another way (e.g. from sufficient
  // statistics), so the figures agree to rounding, not bit for bit.
  const Scalar tol = Scalar(1e-9);
  auto close = [&](const Scalar& u, const Scalar& v, const Scalar& size) {
    return abs_value<Scalar>(Scalar(u - v)) <= tol * size;
  };
  bool same =
      a.predictors == b.predictors && a.used_observations == b.used_observations &&
      a.columns == b.columns && a.intercept == b.intercept &&
      close(a.weight_sum, b.weight_sum, b.weight_sum) &&
      close(a.response_mean, b.response_mean,
            abs_value<Scalar>(b.response_mean) + square_root<Scalar>(b.total_sum_of_squares)) &&
      close(a.total_sum_of_squares, b.total_sum_of_squares, b.total_sum_of_squares);
  for (Index j = 0; same && j < b.predictors; ++j) {
    const Scalar spread = b.standardized ? b.scales(j) : Scalar(1);
    same = close(a.scales(j), b.scales(j), b.scales(j)) &&
           close(a.means(j), b.means(j), abs_value<Scalar>(b.means(j)) + spread);
  }
  if (!same)
    throw invalid_query("the data (or weights) given do not match the data the path was traced on");
  return prepared;
}

/// Residual sum of squares and rank of the least-squares fit of the prepared problem.
template <class Scalar>
std::pair<Scalar, Index> least_squares_fit(const DenseDesign<Scalar>& design) {
  if (design.cols() == 0) return {design.response_squared_norm(), 0};
  Eigen::ColPivHouseholderQR<Matrix<Scalar>> qr(design.columns());
  const Vector<Scalar> b = qr.solve(design.response());
  const Vector<Scalar> r = design.response() - design.columns() * b;
  return {r.squaredNorm(), qr.rank()};
}

/// Largest estimated relative error of the residual sum of squares that
/// the normal-equations fit of a Gram design may have (least_squares_fit
/// below): the criteria and the entry tests use sigma^2 to a few digits, so
/// eight are ample, and a fit that cannot promise them is refused.
inline constexpr double gram_fit_tolerance = 1e-8;

/// The same fit from the Gram matrix alone, by the normal equations: a
/// Cholesky factor of the Jacobi-scaled G = Z^T Z, b = G^-1 Z^T y, and
/// RSS = y^T y - (Z^T y)^T b. O(q^3), independent of the number of rows.
/// The normal equations square the condition number, and the subtraction
/// cancels when the fit is close: the RSS's relative error is about
/// kappa(G) u y^T y / RSS (Higham, Accuracy and Stability of Numerical
/// Algorithms, 2nd ed. 2002, section 20.4, for the normal equations'
/// forward error). When that estimate (kappa in the 1-norm, Hager's
/// estimator of the inverse's norm, factor.hpp) exceeds gram_fit_tolerance, or G is not positive
/// definite (rank-deficient: only the data's pivoted QR can say which
/// columns are redundant), throws invalid_query: the caller refits from the
/// data (the dense overload above).
template <class Scalar>
std::pair<Scalar, Index> least_squares_fit(const GramDesign<Scalar>& design) {
  const Index q = design.cols();
  if (q == 0) return {design.response_squared_norm(), 0};
  auto refuse = [](const std::string& why) {
    throw invalid_query("the least-squares fit from the Gram matrix alone " + why +
                        "; fit from the data instead");
  };
  Vector<Scalar> d(q);  // Jacobi scaling: the scaled G has a unit diagonal
  for (Index j = 0; j < q; ++j) {
    if (!(design.squared_norm(j) > Scalar(0))) refuse("meets a column of zero norm");
    d(j) = Scalar(1) / square_root<Scalar>(design.squared_norm(j));
  }
  const Matrix<Scalar> scaled = d.asDiagonal() * design.gram() * d.asDiagonal();
  const Eigen::LLT<Matrix<Scalar>> factor(scaled);
  if (factor.info() != Eigen::Success) refuse("is rank-deficient");
  Vector<Scalar> c;
  design.response_correlations(c);
  const Vector<Scalar> scaled_c = d.asDiagonal() * c;
  const Scalar yy = design.response_squared_norm();
  const Scalar rss = yy - scaled_c.dot(factor.solve(scaled_c));
  Matrix<Scalar> work(q, 4);
  const double inverse_norm = hager_inverse_norm1<Scalar>(
      q, [&](const auto& in, auto& out) { out = factor.solve(in); }, work);
  const double condition = to_double(Scalar(scaled.cwiseAbs().colwise().sum().maxCoeff())) * inverse_norm;
  const double u = to_double(epsilon<Scalar>()) / 2;  // 0 for exact types: no rounding to fear
  const double share = to_double(Scalar(rss / yy));   // RSS / y^T y
  if (!(share > 0) || !(u * condition <= gram_fit_tolerance * share))
    refuse("would lose too many digits (condition estimate " + std::to_string(condition) +
           ", residual share " + std::to_string(share) + ")");
  return {rss, q};
}

/// The check of a noise_variance option: negative asks for an estimate,
/// anything else must be finite and > 0. Throws invalid_option("noise_variance").
inline void validate_noise_variance(double noise_variance) {
  if (std::isnan(noise_variance) || noise_variance == 0.0 || std::isinf(noise_variance))
    throw invalid_option("noise_variance", "must be finite and > 0 (negative: estimate)");
}

/// sigma^2 by the first two steps of the noise-variance rule.
template <class Scalar>
struct NoiseVarianceEstimate {
  Scalar variance{0};     ///< sigma^2; 0 when not given and the fit leaves no residual df
  bool given = false;     ///< the user's value (the fields below are then 0)
  Index residual_df = 0;  ///< rows with positive weight - rank - intercept; <= 0: none left
  /// n - rank - intercept with n the sum of the weights (frequency weights,
  /// options.hpp TraceOptions, "Weights"): the divisor of `variance`. Equals
  /// residual_df without weights.
  Scalar weighted_residual_df{0};
  Index rank = 0;         ///< rank of the full least-squares fit
};

/// The noise-variance rule: the value given when it is > 0; else the residual
/// variance of the full least-squares fit, RSS / (n - rank - 1) (n - rank
/// without intercept; n = the sum of the weights, the number of rows when
/// unweighted: frequency weights, see TraceOptions) when that leaves residual
/// degrees of freedom. What to do otherwise is the caller's (the criteria fall
/// back on a sparse fit, the entry tests refuse).
template <class Scalar, class Design>
NoiseVarianceEstimate<Scalar> given_or_least_squares_variance(double given, const Design& design,
                                                              const Preparation<Scalar>& prep) {
  NoiseVarianceEstimate<Scalar> out;
  if (given > 0) {
    out.variance = Scalar(given);
    out.given = true;
    return out;
  }
  const auto [rss, rank] = least_squares_fit(design);
  out.rank = rank;
  const Index fitted = rank + (prep.intercept ? 1 : 0);
  out.residual_df = prep.used_observations - fitted;
  out.weighted_residual_df = prep.weight_sum - Scalar(static_cast<double>(fitted));
  if (out.residual_df > 0 && out.weighted_residual_df > Scalar(0))
    out.variance = rss / out.weighted_residual_df;
  return out;
}

}  // namespace knotpath::detail
