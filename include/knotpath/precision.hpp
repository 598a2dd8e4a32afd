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
/// and returns both paths with their comparison. Given the data as decimal
/// text (DecimalProblem) each arithmetic reads the text itself, so the
/// high-precision reference is the exact problem; given doubles, it is the
/// problem those doubles hold. It compares: the event sequences (first difference: step, predictors,
/// both penalties), the largest relative knot-penalty difference over the
/// common prefix, the largest coefficient difference along the path (at the
/// union of both paths' knot penalties, relative to the largest coefficient
/// or intercept of the high-precision solution at that penalty, as
/// Knot::estimated_error promises; for a row without a nonzero coefficient
/// over the segments that meet there: detail::segment_size; the intercept's
/// difference relative to at least the response's spread,
/// response_spread()), and the double
/// factor's worst
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
#include <charconv>
#include <cmath>
#include <optional>
#include <string>
#include <string_view>
#include <utility>
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
  if constexpr (std::is_same_v<Scalar, double> || std::is_same_v<Scalar, float>) {
    // Correctly rounded in one step, the reading of the table reader (a
    // detour through long double could round twice); a value out of range
    // keeps the long double reading below (overflow to infinity, underflow
    // toward zero).
    Scalar value{};
    const std::string_view body = t.front() == '+' ? t.substr(1) : t;
    const auto [end, ec] = std::from_chars(body.data(), body.data() + body.size(), value);
    if (ec == std::errc() && end == body.data() + body.size()) return value;
    return static_cast<Scalar>(std::stold(std::string(t)));
  } else if constexpr (std::is_same_v<Scalar, long double>) {
    return std::stold(std::string(t));
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

namespace detail {

/// max(|intercept|, max_j |beta_j|) of a solution: the size a coefficient
/// difference is relative to.
template <class Scalar>
double solution_size(const Solution<Scalar>& s) {
  double size = std::abs(to_double(s.intercept));
  for (Index j = 0; j < s.coefficients.size(); ++j) size = std::max(size, std::abs(to_double(s.coefficients(j))));
  return size;
}

/// solution_size at every knot of `path`, in knot order.
template <class Scalar>
std::vector<double> knot_sizes(const Path<Scalar>& path) {
  std::vector<double> out;
  out.reserve(path.knots().size());
  for (const auto& k : path.knots()) out.push_back(knotpath::solution_size(k));
  return out;
}

/// The largest solution size over the knots of `path` that bracket the
/// penalty `lambda` (knots are in decreasing penalty): the last knot above
/// it, every knot at it, and the first knot below it. The size a row
/// without a nonzero coefficient (the start, the first entry) is measured
/// against: just below the knot where the first coefficient enters, the
/// exact solution is as small as the distance to the knot, and a knot
/// penalty that is off by one rounding would otherwise read as a relative
/// error of 1.
template <class Scalar>
double segment_size(const Path<Scalar>& path, const std::vector<double>& sizes, double lambda) {
  const auto& knots = path.knots();
  if (knots.empty()) return 0;
  // Binary searches, O(log K): the first knot not above lambda, and the
  // first knot below it.
  const auto not_above = std::partition_point(
      knots.begin(), knots.end(), [&](const auto& k) { return to_double(k.penalty) > lambda; });
  const auto below = std::partition_point(
      not_above, knots.end(), [&](const auto& k) { return to_double(k.penalty) >= lambda; });
  const auto first = static_cast<std::size_t>(std::max<std::ptrdiff_t>(not_above - knots.begin() - 1, 0));
  const auto last = std::min(static_cast<std::size_t>(below - knots.begin()), knots.size() - 1);
  double size = 0;
  for (std::size_t k = first; k <= last; ++k) size = std::max(size, sizes[k]);
  return size;
}

}  // namespace detail

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
  // Coefficients at the union of both paths' knot penalties. A knot's row
  // promises the error of its printed coefficients relative to the largest
  // of them (Knot::estimated_error), so a row with a nonzero coefficient is
  // measured against the high-precision solution at its own penalty. A row
  // without one (the start, the first entry) has no such size: there the
  // difference is a knot penalty's rounding seen through the slope of the
  // solution that leaves zero, and it is measured against the solution over
  // the segments at the penalty (detail::segment_size). Before 2026-12-05
  // every row was measured against the segments, so an early knot whose
  // solution is small against the next knot's read up to 5 times below its
  // own relative error (RELIABILITY.md, "Health check calibration").
  struct Row {
    double penalty;
    bool zero;  // no nonzero coefficient printed
  };
  std::vector<Row> rows;
  for (const auto& k : a) rows.push_back({k.penalty, k.coefficients.empty()});
  for (const auto& k : b) rows.push_back({detail::to_double(k.penalty), k.coefficients.empty()});
  // The intercept's difference is relative to at least the response's
  // spread (response_spread(), prepare.hpp).
  const std::vector<double> knot_size = detail::knot_sizes(high);
  const double spread = response_spread(high.preparation());
  for (const auto& [lambda, zero] : rows) {
    const auto sl = low.at_penalty(lambda);
    const auto sh = high.at_penalty(High(lambda));
    const double intercept_diff = std::abs(sl.intercept - detail::to_double(sh.intercept));
    double diff = 0;
    for (Index j = 0; j < sl.coefficients.size(); ++j)
      diff = std::max(diff, std::abs(sl.coefficients(j) - detail::to_double(sh.coefficients(j))));
    const double own = detail::solution_size(sh);
    const double top = zero ? std::max(own, detail::segment_size(high, knot_size, lambda)) : own;
    const double measured = std::max(top > 0 ? diff / top : diff,
                                     std::max(top, spread) > 0 ? intercept_diff / std::max(top, spread)
                                                               : intercept_diff);
    out.max_coefficient_difference = std::max(out.max_coefficient_difference, measured);
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

/// Parses a column of decimal cells into Scalar, cell by cell with
/// parse_decimal() (exact for rationals, correctly rounded otherwise). The
/// one home of cell parsing for the high-precision side: the text overload of
/// cross_check() and the knotpath program's --precision and verify commands
/// use it. Throws invalid_data with row() set to the 0-based index of the
/// first cell that is not a finite decimal number.
template <class Scalar>
Vector<Scalar> parse_decimal_cells(const std::vector<std::string>& cells) {
  Vector<Scalar> out(static_cast<Index>(cells.size()));
  for (std::size_t i = 0; i < cells.size(); ++i) {
    try {
      out(static_cast<Index>(i)) = parse_decimal<Scalar>(cells[i]);
    } catch (const invalid_data&) {
      throw invalid_data::at_row(i, "'" + cells[i] + "' is not a decimal number");
    }
  }
  return out;
}

/// A problem as the decimal text it was written in, column by column (the
/// layout of io::Table::decimal_text), so that every arithmetic can read it
/// from the text itself: doubles correctly rounded, 50-digit floats to 50
/// digits, rationals exactly. Converting doubles instead would hand the high
/// precision the double-rounded problem, whose answer on an ill-conditioned
/// design can differ from the true one in the 8th digit (NIST StRD Filip).
struct DecimalProblem {
  std::vector<std::vector<std::string>> columns;  ///< predictor columns, each of n cells
  std::vector<std::string> response;              ///< n cells
  std::vector<std::string> weights;               ///< n cells, or empty: unweighted
};

/// A DecimalProblem parsed into one arithmetic (parse_decimal_problem()).
template <class Scalar>
struct ParsedProblem {
  Matrix<Scalar> x;         ///< n x p design
  Vector<Scalar> y;         ///< response, length n
  Vector<Scalar> weights;   ///< length n, or empty: unweighted
};

/// Parses every cell of a DecimalProblem into Scalar (parse_decimal_cells()).
/// Throws invalid_data when a column, the weights or a cell disagree with the
/// response's length (column() names the predictor column, when it is one)
/// or a cell is not a decimal number (row() and, for a predictor, column()
/// name it).
template <class Scalar>
ParsedProblem<Scalar> parse_decimal_problem(const DecimalProblem& text) {
  const std::size_t n = text.response.size();
  auto parse = [](const std::vector<std::string>& cells, const std::string& what,
                  std::optional<std::size_t> column) {
    try {
      return parse_decimal_cells<Scalar>(cells);
    } catch (const invalid_data& e) {
      throw invalid_data::at_row(e.row().value_or(0), what + " cell " + e.detail(), column);
    }
  };
  ParsedProblem<Scalar> out;
  out.y = parse(text.response, "response", std::nullopt);
  if (!text.weights.empty()) {
    if (text.weights.size() != n)
      throw invalid_data("weights have " + std::to_string(text.weights.size()) +
                         " cells, the response " + std::to_string(n));
    out.weights = parse(text.weights, "weight", std::nullopt);
  }
  out.x.resize(static_cast<Index>(n), static_cast<Index>(text.columns.size()));
  for (std::size_t j = 0; j < text.columns.size(); ++j) {
    if (text.columns[j].size() != n)
      throw invalid_data("predictor column " + std::to_string(j) + " has " +
                             std::to_string(text.columns[j].size()) + " cells, the response " +
                             std::to_string(n),
                         std::nullopt, j);
    out.x.col(static_cast<Index>(j)) =
        parse(text.columns[j], "predictor", j);
  }
  return out;
}

/// The cross-check's summary (the CrossCheck it derives from, so it reads
/// and slices like one) together with the two paths it compared.
template <class High>
struct CrossCheckPaths : CrossCheck {
  Path<double> double_path;  ///< the problem traced in double
  Path<High> high_path;      ///< the same problem traced in High
};

namespace detail {

/// Compares two traced paths and keeps them beside the summary.
template <class High>
CrossCheckPaths<High> keep_cross_check(Path<double> low, Path<High> high) {
  CrossCheckPaths<High> out;
  static_cast<CrossCheck&>(out) = compare_paths(low, high);
  out.double_path = std::move(low);
  out.high_path = std::move(high);
  return out;
}

}  // namespace detail

/// Traces (x, y) in double and in `High` precision (50 digits by default,
/// the doubles converted exactly) and compares the two paths. The reference
/// is the problem the doubles hold, not the decimals they were read from:
/// on an ill-conditioned design give the text (the overload below) instead.
/// Cost: the high precision trace dominates (roughly 50-200 times the double
/// trace). Throws what trace() throws (invalid_option, invalid_data).
template <class High = float50>
CrossCheckPaths<High> cross_check(const Matrix<double>& x, const Vector<double>& y,
                                  const TraceOptions& options = {},
                                  const Vector<double>& weights = Vector<double>()) {
  Path<double> low = trace<double>(x, y, options, weights);
  Path<High> high = trace<High>(convert<High>(x), convert<High>(y), options, convert<High>(weights));
  return detail::keep_cross_check(std::move(low), std::move(high));
}

/// Traces the problem written as decimal text in double (cells correctly
/// rounded to double) and in `High` precision (cells parsed from the same
/// text: the reference is the exact problem, to High's precision) and
/// compares the two paths. On NIST StRD Filip the 50-digit end of the path
/// then meets the certified values to 12 or more digits, where the double
/// overload's meets them to about 8. Throws what parse_decimal_problem() and
/// trace() throw (invalid_data, invalid_option).
template <class High = float50>
CrossCheckPaths<High> cross_check(const DecimalProblem& data, const TraceOptions& options = {}) {
  const ParsedProblem<double> d = parse_decimal_problem<double>(data);
  Path<double> low = trace<double>(d.x, d.y, options, d.weights);
  const ParsedProblem<High> h = parse_decimal_problem<High>(data);
  Path<High> high = trace<High>(h.x, h.y, options, h.weights);
  return detail::keep_cross_check(std::move(low), std::move(high));
}

}  // namespace knotpath
