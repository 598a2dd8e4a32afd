#pragma once
/// \file detail/centring.hpp
/// \brief How many digits implicit centring can cost (the view and sparse
/// designs).
///
/// A design that centres implicitly computes z_k^T v as
/// (x_k^T v - m_k sum_i sqrt(w_i) v_i) / s_k: when the column's mean m_k is
/// many times its spread, the two terms nearly cancel and the difference
/// keeps only the digits the mean leaves (Higham, Accuracy and Stability of
/// Numerical Algorithms, 2nd ed., section 1.7 on cancellation; section from
/// memory). The factor is max_k |m_k| sqrt(W) / (s_k ||z_k||), W the sum of
/// the weights; the tracer multiplies it by the unit roundoff in every
/// knot's estimated error (trace.hpp).

#include <algorithm>
#include <cmath>

#include "scalar.hpp"

namespace knotpath::detail {

/// max(1, max_k |m_k| sqrt(weight_sum) / (s_k sqrt(squared_norms_k))) over
/// the columns with a positive centred norm. All vectors have one entry per
/// design column.
template <class Scalar>
double centring_amplification(const Vector<Scalar>& means, const Vector<Scalar>& scales,
                              const Vector<Scalar>& squared_norms, const Scalar& weight_sum) {
  const double root_weight = std::sqrt(to_double(weight_sum));
  double amplification = 1;
  for (Index k = 0; k < squared_norms.size(); ++k) {
    const double centred = std::sqrt(std::max(0.0, to_double(squared_norms(k)))) * to_double(scales(k));
    if (centred > 0) amplification = std::max(amplification, std::abs(to_double(means(k))) * root_weight / centred);
  }
  return amplification;
}

}  // namespace knotpath::detail
