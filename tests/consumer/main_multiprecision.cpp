// Uses the installed package's multiprecision component: knotpath::rational
// is GMP's mpq_rational and knotpath::mpfr_float exists. An exact path of a
// design with a known exact end (y = 1 + x + x^2 + x^3 at x = 0..7: every
// coefficient of the unpenalized end is exactly 1), and the same design at
// 30 MPFR digits.
#include <cstdio>
#include <type_traits>

#include <knotpath/knotpath.hpp>

#if !defined(KNOTPATH_HAVE_GMP) || !defined(KNOTPATH_HAVE_MPFR)
#error "knotpath::multiprecision must define KNOTPATH_HAVE_GMP and KNOTPATH_HAVE_MPFR"
#endif
static_assert(std::is_same_v<knotpath::rational, boost::multiprecision::mpq_rational>);

template <class Scalar>
knotpath::Path<Scalar> cubic_path() {
  knotpath::Matrix<Scalar> x(8, 3);
  knotpath::Vector<Scalar> y(8);
  for (knotpath::Index i = 0; i < 8; ++i) {
    Scalar power(1), sum(1);
    for (knotpath::Index j = 0; j < 3; ++j) {
      power *= Scalar(i);
      x(i, j) = power;
      sum += power;
    }
    y(i) = sum;
  }
  knotpath::TraceOptions options;
  options.standardize = false;  // exact mode has no square roots
  return knotpath::trace<Scalar>(x, y, options);
}

int main() {
  const auto exact = cubic_path<knotpath::rational>();
  const auto end = exact.at_penalty(knotpath::rational(0));
  bool ok = exact.stop_reason() == knotpath::StopReason::completed && end.intercept == 1;
  for (knotpath::Index j = 0; j < 3; ++j) ok = ok && end.coefficients(j) == 1;

  knotpath::set_mpfr_digits(30);
  const auto wide = cubic_path<knotpath::mpfr_float>();
  const auto wide_end = wide.at_penalty(knotpath::mpfr_float(0));
  ok = ok && abs(wide_end.intercept - 1) < 1e-20;
  std::printf("exact path: %zu knots, end intercept %s; MPFR path: %zu knots\n", exact.knots().size(),
              end.intercept.str().c_str(), wide.knots().size());
  return ok ? 0 : 1;
}
