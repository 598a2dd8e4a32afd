#pragma once
// A small fixed-seed generator for invented test tables: the same numbers on
// every platform and compiler (the standard's distributions are not fixed
// across libraries; std::mt19937_64's sequence is, but its distributions are
// not). Test and benchmark code only.

#include <cstdint>

namespace knotpath::testing {

/// A 64-bit linear congruential generator with Knuth's MMIX constants
/// (common practice); its top 53 bits make a double.
class Lcg {
 public:
  /// A generator started at `seed`.
  explicit Lcg(std::uint64_t seed) : state_(seed) {}

  /// Uniform on [0, 1).
  double uniform() {
    state_ = state_ * 6364136223846793005ULL + 1442695040888963407ULL;
    return static_cast<double>(state_ >> 11) / 9007199254740992.0;
  }

  /// Uniform on [-0.5, 0.5).
  double centred() { return uniform() - 0.5; }

 private:
  std::uint64_t state_;
};

}  // namespace knotpath::testing
