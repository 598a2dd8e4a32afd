#pragma once
// The full least-squares fit of the data a path was traced on: re-preparing
// those data (checked against the path) and the residual sum of squares and
// rank of the fit. The criteria and the entry tests estimate the noise
// variance from it. Users do not call these.

#include <utility>

#include <Eigen/QR>

#include "../errors.hpp"
#include "../path.hpp"
#include "../prepare.hpp"
#include "scalar.hpp"

namespace knotpath::detail {

/// Re-prepares the data a path was traced on and checks that they match it.
template <class Scalar>
PreparedDense<Scalar> prepare_for(const Matrix<Scalar>& x, const Vector<Scalar>& y, const Path<Scalar>& path,
                                  const Vector<Scalar>& weights) {
  PreparedDense<Scalar> prepared = prepare_dense<Scalar>(x, y, path.options(), weights);
  const auto& a = prepared.preparation;
  const auto& b = path.preparation();
  // The path may have been prepared another way (e.g. from sufficient
  // statistics), so the figures agree to rounding, not bit for bit.
  const Scalar tol = Scalar(1e-9);
  auto close = [&](const Scalar& u, const Scalar& v, const Scalar& size) {
    return abs_value<Scalar>(Scalar(u - v)) <= tol * size;
  };
  bool same = a.predictors == b.predictors && a.used_observations == b.used_observations &&
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

}  // namespace knotpath::detail
