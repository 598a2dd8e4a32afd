#pragma once
/// \file demo.hpp
/// \brief The built-in demonstration data: an invented scenario with a known
/// sparse truth, generated in code from a fixed seed (identical on every
/// platform: the generator and the normal deviates are our own, not the
/// standard library's implementation-defined distributions).
///
/// Scenario (invented): 240 greenhouse-weeks of a tomato grower. The response
/// is the weekly yield in kg per square metre; fourteen recorded conditions
/// are candidate predictors. Only five of them drive the yield in the
/// generating model (light_hours, co2_ppm, day_temp_c, nutrient_ec and
/// shading_pct); the others are noise or correlated stand-ins (night_temp_c
/// follows day_temp_c, vent_hours follows day_temp_c, shading_pct works
/// against light_hours).

#include <array>
#include <cmath>
#include <cstdint>
#include <string>
#include <vector>

#include "detail/random.hpp"
#include "detail/scalar.hpp"

namespace knotpath::demo {

/// The demonstration data set.
struct DemoData {
  std::vector<std::string> predictor_names;  ///< 14 names
  std::string response_name;                 ///< "yield_kg_m2"
  Matrix<double> x;                          ///< 240 x 14
  Vector<double> y;                          ///< 240
  Vector<double> true_coefficients;          ///< the generating model's slopes (14)
  double true_intercept = 0;                 ///< and its intercept
  double noise_sd = 0;                       ///< standard deviation of the noise
};

namespace detail {
/// The generator of the data (detail/random.hpp), under the name examples use.
using knotpath::detail::SplitMix64;
}  // namespace detail

/// Generates the demonstration data (seed fixed unless given).
inline DemoData greenhouse(std::uint64_t seed = 20261201) {
  detail::SplitMix64 rng(seed);
  DemoData d;
  d.response_name = "yield_kg_m2";
  d.predictor_names = {"day_temp_c",  "night_temp_c",  "co2_ppm",     "humidity_pct",
                       "light_hours", "irrigation_l",  "nutrient_ec", "substrate_ph",
                       "plants_m2",   "pruning_score", "hives",       "shading_pct",
                       "vent_hours",  "staff_hours"};
  const Index n = 240, p = 14;
  d.x.resize(n, p);
  d.y.resize(n);
  d.noise_sd = 0.35;
  d.true_intercept = -6.0;
  d.true_coefficients = Vector<double>::Zero(p);
  d.true_coefficients(0) = 0.12;    // day_temp_c
  d.true_coefficients(2) = 0.004;   // co2_ppm
  d.true_coefficients(4) = 0.45;    // light_hours
  d.true_coefficients(6) = 0.6;     // nutrient_ec
  d.true_coefficients(11) = -0.03;  // shading_pct
  for (Index i = 0; i < n; ++i) {
    const double season = std::sin(6.283185307179586 * static_cast<double>(i % 52) / 52.0);
    const double day = 22.0 + 3.0 * season + 1.2 * rng.normal();
    const double light = 11.0 + 3.5 * season + 0.8 * rng.normal();
    double row[14];
    row[0] = day;
    row[1] = day - 6.0 + 0.9 * rng.normal();
    row[2] = 700.0 + 120.0 * rng.normal();
    row[3] = 72.0 + 6.0 * rng.normal();
    row[4] = light;
    row[5] = 4.0 + 0.6 * season + 0.5 * rng.normal();
    row[6] = 2.8 + 0.35 * rng.normal();
    row[7] = 5.9 + 0.2 * rng.normal();
    row[8] = 2.5 + 0.3 * rng.normal();
    row[9] = 3.0 + 1.0 * rng.normal();
    row[10] = std::floor(4.0 + 1.5 * rng.uniform());
    row[11] = 30.0 + 25.0 * (light - 11.0) / 3.5 + 6.0 * rng.normal();
    row[12] = 5.0 + 0.8 * (day - 22.0) + 1.0 * rng.normal();
    row[13] = 38.0 + 4.0 * rng.normal();
    for (Index j = 0; j < p; ++j) d.x(i, j) = row[j];
    double mean = d.true_intercept;
    for (Index j = 0; j < p; ++j) mean += d.true_coefficients(j) * row[j];
    d.y(i) = mean + d.noise_sd * rng.normal();
  }
  return d;
}

}  // namespace knotpath::demo
