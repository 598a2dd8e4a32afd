#pragma once
/// \file precision.hpp
/// \brief Scalar types beyond double, exact decimal parsing, and the
/// double-versus-high-precision cross-check that tells a user when a
/// double-precision path cannot be trusted.
///
/// Scalar types (all work with every header of the core):
///  - `double`, `long double`;
///  - `knotpath::float50`: 50 significant decimal digits, binary, header-only
///    (Boost.Multiprecision cpp_bin_float_50);
///  - `knotpath::mpfr_float` (when KNOTPATH_HAVE_MPFR is defined: MPFR-backed,
///    precision chosen at run time with set_mpfr_digits());
///  - `knotpath::rational`: exact rationals (GMP's mpq_t when KNOTPATH_HAVE_GMP
///    is defined, else Boost's header-only cpp_rational). The factor is then
///    the square-root-free L D L^T (factor.hpp), so every knot penalty and
///    every coefficient is an exact rational number. Square roots have no
///    exact counterpart: exact mode requires standardize = false (the penalty
///    then applies to the original-scale coefficients) and weights 0 or 1.
///
/// The cross-check traces the same problem in double and in a high precision
/// and compares: the event sequences (first difference: step, predictors,
/// both penalties), the largest relative knot-penalty difference over the
/// common prefix, the largest coefficient difference along the path (at the
/// union of both paths' knot penalties, relative to the largest coefficient
/// of the high-precision solution there), and the double factor's worst
/// condition estimate. Verdict thresholds:
///  - wrong:       the event sequences differ, or a coefficient differs by more
///                 than 1e-3 relative;
///  - degraded:    same events, but knots differ by more than 1e-9 relative or
///                 coefficients by more than 1e-6 relative;
///  - trustworthy: otherwise.
/// References for the ill-conditioned test designs: NIST Statistical
/// Reference Datasets, linear least squares (certified values).

#include <boost/multiprecision/cpp_bin_float.hpp>
#include <boost/multiprecision/cpp_int.hpp>
#include <boost/multiprecision/eigen.hpp>
#ifdef KNOTPATH_HAVE_GMP
#include <boost/multiprecision/gmp.hpp>
#endif
#ifdef KNOTPATH_HAVE_MPFR
#include <boost/multiprecision/mpfr.hpp>
#endif

#include <algorithm>
#include <cctype>
#include <cmath>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "detail/scalar.hpp"
#include "errors.hpp"
#include "path.hpp"
#include "trace.hpp"

namespace knotpath {

/// 50 significant decimal digits (binary floating point, header-only).
using float50 = boost::multiprecision::cpp_bin_float_50;

#ifdef KNOTPATH_HAVE_GMP
/// Exact rational numbers (GMP).
using rational = boost::multiprecision::mpq_rational;
#else
/// Exact rational numbers (Boost, header-only).
using rational = boost::multiprecision::cpp_rational;
#endif

#ifdef KNOTPATH_HAVE_MPFR
/// MPFR float whose precision (decimal digits) is chosen at run time.
using mpfr_float = boost::multiprecision::mpfr_float;
/// Sets the precision of mpfr_float values created afterwards.
inline void set_mpfr_digits(unsigned digits) { mpfr_float::default_precision(digits); }
#endif

/// Parses decimal text ("-12.5e-3", "7", ".25") into Scalar. For rational
/// types the result is the exact value of the decimal; for floating types it
/// is the correctly rounded value in that type (never via double). Throws
/// invalid_data for text that is not a finite decimal number.
template <class Scalar>
Scalar parse_decimal(std::string_view text) {
  std::string_view t = text;
  while (!t.empty() && std::isspace(static_cast<unsigned char>(t.front()))) t.remove_prefix(1);
  while (!t.empty() && std::isspace(static_cast<unsigned char>(t.back()))) t.remove_suffix(1);
  bool negative = false;
  std::size_t i = 0;
  if (i < t.size() && (t[i] == '+' || t[i] == '-')) negative = t[i++] == '-';
  std::string digits;
  long long exponent = 0;
  bool any_digit = false, seen_point = false;
  for (; i < t.size(); ++i) {
    const char ch = t[i];
    if (std::isdigit(static_cast<unsigned char>(ch))) {
      digits.push_back(ch);
      any_digit = true;
      if (seen_point) --exponent;
    } else if (ch == '.' && !seen_point) {
      seen_point = true;
    } else {
      break;
    }
  }
  if (i < t.size() && (t[i] == 'e' || t[i] == 'E')) {
    ++i;
    bool exp_negative = false;
    if (i < t.size() && (t[i] == '+' || t[i] == '-')) exp_negative = t[i++] == '-';
    long long e = 0;
    bool exp_digit = false;
    for (; i < t.size() && std::isdigit(static_cast<unsigned char>(t[i])); ++i) {
      exp_digit = true;
      if (e < 100000) e = e * 10 + (t[i] - '0');
    }
    if (!exp_digit) any_digit = false;
    exponent += exp_negative ? -e : e;
  }
  if (!any_digit || i != t.size())
    throw invalid_data("'" + std::string(text) + "' is not a decimal number");
  if constexpr (std::is_same_v<Scalar, double> || std::is_same_v<Scalar, float> ||
                std::is_same_v<Scalar, long double>) {
    return static_cast<Scalar>(std::stold(std::string(t)));
  } else if constexpr (detail::is_exact_v<Scalar>) {
    using boost::multiprecision::cpp_int;
    if (exponent > 4000 || exponent < -4000)
      throw invalid_data("'" + std::string(text) + "' has an exponent out of range");
    // Leading zeros dropped: cpp_int reads "025" as octal.
    digits.erase(0, std::min(digits.find_first_not_of('0'), digits.size()));
    cpp_int mantissa(digits.empty() ? std::string("0") : digits);
    cpp_int power = boost::multiprecision::pow(cpp_int(10), static_cast<unsigned>(std::llabs(exponent)));
    Scalar value = exponent >= 0 ? Scalar(mantissa * power) : Scalar(mantissa) / Scalar(power);
    return negative ? Scalar(-value) : value;
  } else {
    return Scalar(std::string(t));  // Boost.Multiprecision rounds decimal text correctly
  }
}

/// Converts a matrix or vector elementwise (double values are exact binary
/// numbers, so conversion to any wider type is exact).
template <class To, class From, int Rows, int Cols>
Eigen::Matrix<To, Rows, Cols> convert(const Eigen::Matrix<From, Rows, Cols>& m) {
  Eigen::Matrix<To, Rows, Cols> out(m.rows(), m.cols());
  for (Index i = 0; i < m.size(); ++i) out.data()[i] = To(m.data()[i]);
  return out;
}

/// The verdict thresholds of compare_paths() (file comment), relative.
struct VerdictThresholds {
  static constexpr double wrong_coefficient = 1e-3;     ///< above: wrong
  static constexpr double degraded_knot = 1e-9;         ///< above (same events): degraded
  static constexpr double degraded_coefficient = 1e-6;  ///< above (same events): degraded
};

/// Verdict of the cross-check.
enum class Verdict {
  trustworthy,  ///< double agrees with the high precision within the documented thresholds
  degraded,     ///< same events, but knots or coefficients lost digits
  wrong,        ///< the event sequence differs or coefficients are off by > 1e-3 relative
};

/// The spelling of a verdict: "trustworthy", "degraded" or "wrong".
inline std::string to_string(Verdict v) {
  switch (v) {
    case Verdict::trustworthy: return "trustworthy";
    case Verdict::degraded: return "degraded";
    case Verdict::wrong: return "wrong";
  }
  return "?";
}

/// Where two paths' event sequences first differ.
struct Divergence {
  Index step = 0;                 ///< knot-table step of the first difference
  std::string low_event;          ///< event in the double path ("enter", "leave", "end", ...)
  Index low_predictor = -1;       ///< its predictor (-1 for none)
  double low_penalty = 0;         ///< its penalty
  std::string high_event;         ///< the same for the high-precision path
  Index high_predictor = -1;      ///< its predictor (-1 for none)
  double high_penalty = 0;        ///< its penalty (rounded to double)
};

/// Result of the cross-check.
struct CrossCheck {
  bool same_events = true;                 ///< identical event sequences (kind and predictor)
  std::optional<Divergence> first_difference;  ///< when they differ
  /// Largest knot-penalty difference over the common prefix, relative to
  /// the high-precision lambda_max.
  double max_relative_knot_difference = 0;
  double max_coefficient_difference = 0;   ///< relative, at the union of the knot penalties
  double condition_estimate = 1;           ///< worst factor condition estimate of the double path
  bool double_suspect = false;             ///< the double path's own health check flagged it
  std::size_t double_knots = 0;            ///< rows of the double path's knot table
  std::size_t high_knots = 0;              ///< rows of the high-precision path's knot table
  Verdict verdict = Verdict::trustworthy;  ///< summary by the thresholds in the file comment
};

/// Compares a double path with a high-precision path of the same problem
/// (fills every field of CrossCheck; thresholds in the file comment).
/// O(K (log K + p)) with K the knots of both paths. Throws invalid_query when
/// either path is empty.
template <class High>
CrossCheck compare_paths(const Path<double>& low, const Path<High>& high) {
  CrossCheck out;
  out.condition_estimate = low.worst_condition_estimate();
  out.double_suspect = low.suspect();
  out.double_knots = low.knots().size();
  out.high_knots = high.knots().size();
  const auto& a = low.knots();
  const auto& b = high.knots();
  const std::size_t common = std::min(a.size(), b.size());
  const double scale = std::max(detail::to_double(high.lambda_max()), 1e-300);
  for (std::size_t k = 0; k < common; ++k) {
    const bool same = a[k].event == b[k].event && a[k].predictor == b[k].predictor;
    if (!same) {
      out.same_events = false;
      Divergence d;
      d.step = static_cast<Index>(k);
      d.low_event = to_string(a[k].event);
      d.low_predictor = a[k].predictor;
      d.low_penalty = a[k].penalty;
      d.high_event = to_string(b[k].event);
      d.high_predictor = b[k].predictor;
      d.high_penalty = detail::to_double(b[k].penalty);
      out.first_difference = d;
      break;
    }
    const double hp = detail::to_double(b[k].penalty);
    out.max_relative_knot_difference =
        std::max(out.max_relative_knot_difference, std::abs(a[k].penalty - hp) / scale);
  }
  if (out.same_events && a.size() != b.size()) {
    out.same_events = false;
    Divergence d;
    d.step = static_cast<Index>(common);
    const bool low_longer = a.size() > b.size();
    d.low_event = low_longer ? to_string(a[common].event) : "(none)";
    d.low_predictor = low_longer ? a[common].predictor : -1;
    d.low_penalty = low_longer ? a[common].penalty : 0.0;
    d.high_event = low_longer ? "(none)" : to_string(b[common].event);
    d.high_predictor = low_longer ? -1 : b[common].predictor;
    d.high_penalty = low_longer ? 0.0 : detail::to_double(b[common].penalty);
    out.first_difference = d;
  }
  // Coefficients at the union of both paths' knot penalties.
  std::vector<double> penalties;
  for (const auto& k : a) penalties.push_back(k.penalty);
  for (const auto& k : b) penalties.push_back(detail::to_double(k.penalty));
  for (double lambda : penalties) {
    const auto sl = low.at_penalty(lambda);
    const auto sh = high.at_penalty(High(lambda));
    double top = std::abs(detail::to_double(sh.intercept)), diff = 0;
    diff = std::abs(sl.intercept - detail::to_double(sh.intercept));
    for (Index j = 0; j < sl.coefficients.size(); ++j) {
      const double h = detail::to_double(sh.coefficients(j));
      top = std::max(top, std::abs(h));
      diff = std::max(diff, std::abs(sl.coefficients(j) - h));
    }
    out.max_coefficient_difference =
        std::max(out.max_coefficient_difference, top > 0 ? diff / top : diff);
  }
  if (!out.same_events || out.max_coefficient_difference > VerdictThresholds::wrong_coefficient)
    out.verdict = Verdict::wrong;
  else if (out.max_relative_knot_difference > VerdictThresholds::degraded_knot ||
           out.max_coefficient_difference > VerdictThresholds::degraded_coefficient)
    out.verdict = Verdict::degraded;
  else
    out.verdict = Verdict::trustworthy;
  return out;
}

/// Traces (x, y) in double and in `High` precision (50 digits by default,
/// data converted exactly) and compares the two paths. Cost: the high
/// precision trace dominates (roughly 50-200 times the double trace).
/// Throws what trace() throws (invalid_option, invalid_data).
template <class High = float50>
CrossCheck cross_check(const Matrix<double>& x, const Vector<double>& y, const TraceOptions& options = {},
                       const Vector<double>& weights = Vector<double>()) {
  const Path<double> low = trace<double>(x, y, options, weights);
  const Path<High> high =
      trace<High>(convert<High>(x), convert<High>(y), options, convert<High>(weights));
  return compare_paths(low, high);
}

}  // namespace knotpath
