#pragma once
// The design decoder of the fuzz_trace target: turns a fuzzer input into a
// small design (n <= 12 rows, p <= 10 predictors), trace options and
// optional weights. Shared by tests/fuzz/fuzz_trace.cpp and the golden
// corpus (tests/golden/golden_dump.cpp), so a seed file means the same
// design in both. Test code only; nothing here is library API. Included by
// relative path: tools/fuzz.sh compiles fuzz_trace.cpp with -Iinclude only.

#include <cmath>
#include <cstddef>
#include <cstdint>
#include <cstring>
#include <limits>

#include <knotpath/knotpath.hpp>

namespace knotpath::testing {

/// Reads the input byte by byte; past the end every byte reads as 0.
struct Bytes {
  const std::uint8_t* data;
  std::size_t size, pos = 0;
  std::uint8_t next() { return pos < size ? data[pos++] : 0; }
  double value(int mode) {
    switch (mode) {
      case 0:
        return static_cast<double>(static_cast<int>(next() % 7) - 3);  // ties, duplicates
      case 1: {
        const int v = static_cast<int>(next()) | (static_cast<int>(next()) << 8);
        return static_cast<double>(v - 32768) / 256.0;
      }
      case 2: {  // spread over many magnitudes
        const int m = static_cast<int>(next()) - 128;
        const int e = static_cast<int>(next() % 64) - 32;
        return std::ldexp(static_cast<double>(m), e);
      }
      default: {  // raw bytes: any double, NaN and Inf included
        double d = 0;
        std::uint8_t raw[8];
        for (auto& b : raw) b = next();
        std::memcpy(&d, raw, 8);
        return d;
      }
    }
  }
};

/// One decoded fuzzer input: trace<double>(x, y, options, weights).
struct FuzzDesign {
  Matrix<double> x;
  Vector<double> y;
  Vector<double> weights;  ///< empty: unit weights
  TraceOptions options;
};

/// Decodes the input. The order of the reads is the input format: header
/// (n, p, flags, more), options, then the columns of x, y and the weights.
inline FuzzDesign decode_design(const std::uint8_t* data, std::size_t size) {
  Bytes in{data, size};
  const Index n = 1 + in.next() % 12;
  const Index p = 1 + in.next() % 10;
  const std::uint8_t flags = in.next();
  const std::uint8_t more = in.next();
  const int mode = more & 3;
  FuzzDesign d;
  TraceOptions& o = d.options;
  o.variant = (flags & 1) ? Variant::least_angle : Variant::lasso;
  o.with_intercept = (flags & 2) == 0;
  o.standardize = (flags & 4) == 0;
  o.storage = static_cast<Storage>((flags >> 3) % 4);  // automatic, dense, gram, view
  if (flags & 32) o.ridge = static_cast<double>(in.next()) / 64.0;
  if (flags & 64) {
    // One byte per predictor: 255 leaves it out, b % 8 == 0 leaves it
    // unpenalized, else its penalty scale is (b % 8) / 2.
    o.penalty_scales.assign(static_cast<std::size_t>(p), 1.0);
    for (std::size_t j = 0; j < static_cast<std::size_t>(p); ++j) {
      const std::uint8_t b = in.next();
      if (b == 255)
        o.left_out.push_back(j);
      else if (b % 8 == 0)
        o.unpenalized.push_back(j);
      else
        o.penalty_scales[j] = static_cast<double>(b % 8) / 2.0;
    }
  }
  if (flags & 128) {
    const std::uint8_t b = in.next();
    o.sign_constraints = {static_cast<SignConstraint>(b % 3)};
  }
  if (more & 4) o.max_knots = in.next() % 16;
  if (more & 8) o.max_active = in.next() % 6;
  d.x.resize(n, p);
  d.y.resize(n);
  for (Index j = 0; j < p; ++j)
    for (Index i = 0; i < n; ++i) d.x(i, j) = in.value(mode);
  if (more & 16)  // a duplicated column
    d.x.col(p - 1) = d.x.col(0);
  for (Index i = 0; i < n; ++i) d.y(i) = in.value(mode);
  if (more & 32) {
    d.weights.resize(n);
    for (Index i = 0; i < n; ++i) d.weights(i) = static_cast<double>(in.next() % 4) / 2.0;
  }
  return d;
}

}  // namespace knotpath::testing
