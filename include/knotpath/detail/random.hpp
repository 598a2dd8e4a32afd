#pragma once
// The library's one random generator: SplitMix64 (G. L. Steele, D. Lea &
// C. H. Flood (2014), "Fast splittable pseudorandom number generators",
// OOPSLA 2014). It is fully specified, so the demonstration data and the
// seeded cross-validation folds are identical on every platform (the standard
// library's distributions are implementation-defined). Users do not call it.

#include <cmath>
#include <cstdint>

namespace knotpath::detail {

/// SplitMix64 with uniform and standard normal deviates of our own.
class SplitMix64 {
 public:
  explicit SplitMix64(std::uint64_t seed) : state_(seed) {}
  std::uint64_t next() {
    std::uint64_t z = (state_ += 0x9E3779B97F4A7C15ULL);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
    return z ^ (z >> 31);
  }
  /// Uniform in (0, 1).
  double uniform() {
    return (static_cast<double>(next() >> 11) + 0.5) * (1.0 / 9007199254740992.0);
  }
  /// Standard normal by the Box-Muller transform.
  double normal() {
    const double u = uniform(), v = uniform();
    return std::sqrt(-2.0 * std::log(u)) * std::cos(6.283185307179586 * v);
  }

 private:
  std::uint64_t state_;
};

}  // namespace knotpath::detail
