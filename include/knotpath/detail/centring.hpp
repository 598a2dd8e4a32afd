#pragma once
/// \file detail/centring.hpp
/// \brief How many digits centring can cost, in every storage.
///
/// Centring a column whose mean m_k is many times its spread keeps only the
/// digits the mean leaves (Higham, Accuracy and Stability of Numerical
/// Algorithms, 2nd ed., section 1.7 on cancellation; section from memory):
/// the dense copy and Gram mode subtract the mean (or a shift near it) once,
/// explicitly, so the prepared column carries a relative error of that
/// factor times the unit roundoff; the view and sparse designs compute
/// z_k^T v as (x_k^T v - m_k sum_i sqrt(w_i) v_i) / s_k and lose it in every
/// product. The factor is max_k |m_k| sqrt(W) / ||sqrt(w) o (x_k - m_k)||,
/// W the sum of the weights, with the spread in the denominator computed in
/// two passes by the preparation (a one-pass spread, as the sparse design's
/// x^T W x - W m^2, would itself be lost to the cancellation it measures);
/// the tracer multiplies it by the unit roundoff in every knot's estimated
/// error when the problem has an intercept (Preparation, trace.hpp).

#include <algorithm>
#include <cmath>

#include "scalar.hpp"

namespace knotpath::detail {

/// max(1, |mean| sqrt(weight_sum) / spread) for one column; 1 when the
/// spread is 0 or not finite (nothing to measure against).
template <class Scalar>
double centring_amplification(const Scalar& mean, const Scalar& spread, const Scalar& weight_sum) {
  const double centred = to_double(spread);
  if (!(centred > 0) || !std::isfinite(centred)) return 1;
  return std::max(1.0, std::abs(to_double(mean)) * std::sqrt(to_double(weight_sum)) / centred);
}

}  // namespace knotpath::detail
