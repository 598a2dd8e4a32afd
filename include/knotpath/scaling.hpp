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

#include <string_view>

#include "detail/scalar.hpp"

namespace knotpath {

/// The divisor that turns a penalty lambda into the size-free mu: sqrt(n)
/// for standardized columns, n otherwise (n = `weight_sum`).
template <class Scalar>
Scalar penalty_scale(bool standardized, const Scalar& weight_sum) {
  return standardized ? detail::square_root<Scalar>(weight_sum) : weight_sum;
}

/// The conversion of penalty_scale() in words, for help texts and messages
/// that state it (so that none of them states it differently).
inline constexpr std::string_view size_free_penalty_rule =
    "mu = lambda / sqrt(n) for standardized columns, mu = lambda / n for columns kept on their "
    "own scale (n = the sum of the weights)";

}  // namespace knotpath
