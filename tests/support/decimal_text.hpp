#pragma once
// Exact decimal text for the tests that feed decimal text to the
// high-precision side (the program's --precision and verify, the library's
// text cross-check). Test code only; nothing here is library API.

#include <algorithm>
#include <cstddef>
#include <string>

#include <boost/multiprecision/cpp_int.hpp>

namespace knotpath::testing {

/// Exact decimal text of x^k for decimal text x (x = m / 10^d, so x^k =
/// m^k / 10^(d k) is a finite decimal): the power columns of a polynomial
/// design, written without any rounding. x is plain decimal text (sign,
/// digits, at most one point; no exponent).
inline std::string decimal_power(const std::string& x, int k) {
  using boost::multiprecision::cpp_int;
  std::string digits;
  bool negative = false;
  std::size_t decimals = 0;
  bool point = false;
  for (char c : x) {
    if (c == '-') negative = true;
    else if (c == '.') point = true;
    else if (c >= '0' && c <= '9') {
      digits += c;
      if (point) ++decimals;
    }
  }
  digits.erase(0, std::min(digits.find_first_not_of('0'), digits.size()));
  if (digits.empty()) return "0";
  const cpp_int m(digits);
  std::string s = cpp_int(pow(m, static_cast<unsigned>(k))).str();
  const std::size_t d = decimals * static_cast<std::size_t>(k);
  if (s.size() <= d) s.insert(0, d + 1 - s.size(), '0');
  if (d > 0) s.insert(s.size() - d, ".");
  return (negative && k % 2 == 1 ? "-" : "") + s;
}

}  // namespace knotpath::testing
