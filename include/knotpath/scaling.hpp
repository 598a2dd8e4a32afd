#pragma once
/// \file scaling.hpp
/// \brief The one home of the size-free penalty convention (DESIGN.md,
/// "Comparing penalties across data sets of different size").
///
/// The penalty lambda of 0.5 RSS + lambda sum_j f_j s_j |b_j| grows with the
/// sample size n (the sum of the weights): like sqrt(n) when the columns are
/// standardized (s_j = sqrt(n) sd_j), like n when they keep their own scale
/// (s_j = 1). The size-free penalty is mu = lambda / penalty_scale, the
/// penalty of the per-observation objective (1/2n) RSS + mu sum_j f_j t_j |b_j|
/// (t_j the standard deviation when standardizing, else 1). Everything that
/// shows or compares mu (cross-validation, criteria, reports, charts, the
/// program) takes the divisor from penalty_scale() and nowhere else.

#include "detail/scalar.hpp"

namespace knotpath {

/// The divisor that turns a penalty lambda into the size-free mu: sqrt(n)
/// for standardized columns, n otherwise (n = `weight_sum`).
template <class Scalar>
Scalar penalty_scale(bool standardized, const Scalar& weight_sum) {
  return standardized ? detail::square_root<Scalar>(weight_sum) : weight_sum;
}

}  // namespace knotpath
