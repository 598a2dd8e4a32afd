#pragma once
// Scalar-type helpers shared by the core: what "epsilon" means for a type,
// whether it is exact, and conversions for reporting. Users do not call these.

#include <cmath>
#include <limits>
#include <stdexcept>
#include <type_traits>

#include <Eigen/Core>

#include "../errors.hpp"

namespace knotpath {

/// Dense column vector of the scalar type.
template <class Scalar>
using Vector = Eigen::Matrix<Scalar, Eigen::Dynamic, 1>;
/// Dense column-major matrix of the scalar type.
template <class Scalar>
using Matrix = Eigen::Matrix<Scalar, Eigen::Dynamic, Eigen::Dynamic>;
/// Index type used throughout (Eigen's).
using Index = Eigen::Index;

namespace detail {

/// True for scalar types with exact arithmetic (rationals).
template <class Scalar>
inline constexpr bool is_exact_v = std::numeric_limits<Scalar>::is_exact;

/// True when an Eigen dense object of type Derived can be read in place as
/// column-major memory of Scalar with an outer stride (Matrix, Map, Ref,
/// blocks of whole columns): what the no-copy view design needs.
template <class Derived, class Scalar>
inline constexpr bool viewable_v = std::is_same_v<typename Derived::Scalar, Scalar> && !Derived::IsRowMajor &&
                                   (Derived::Flags & Eigen::DirectAccessBit) != 0 &&
                                   Derived::InnerStrideAtCompileTime == 1;

/// Machine epsilon of the scalar type; 0 for exact types.
template <class Scalar>
Scalar epsilon() {
  if constexpr (is_exact_v<Scalar>)
    return Scalar(0);
  else
    return std::numeric_limits<Scalar>::epsilon();
}

/// Resolves an "automatic" (negative) tolerance to factor * epsilon.
template <class Scalar>
Scalar resolve_tolerance(double given, double automatic_factor) {
  if (given >= 0.0) return Scalar(given);
  return Scalar(automatic_factor) * epsilon<Scalar>();
}

/// Converts any supported scalar to double (for reports and health figures).
template <class Scalar>
double to_double(const Scalar& x) {
  return static_cast<double>(x);
}

template <class Scalar>
Scalar abs_value(const Scalar& x) {
  return x < Scalar(0) ? Scalar(-x) : x;
}

/// Square root; exact (rational) types have none: callers check up front and
/// this throws internal_error if one is reached anyway.
template <class Scalar>
Scalar square_root(const Scalar& x) {
  if constexpr (is_exact_v<Scalar>) {
    throw internal_error("square root requested in exact rational arithmetic");
  } else {
    using std::sqrt;
    return Scalar(sqrt(x));
  }
}

/// -1, 0 or +1.
template <class Scalar>
int sign_of(const Scalar& x) {
  return (Scalar(0) < x) - (x < Scalar(0));
}

}  // namespace detail
}  // namespace knotpath
