#pragma once
// Double copies of results computed in another arithmetic (internals of the
// knotpath program): `select --precision` computes in the chosen arithmetic
// and prints and writes through the same double code as a double run, every
// number rounded to the nearest double (io::nearest_double). The copies keep
// each knot's health fields, so the copy of a clean high-precision path is
// clean and the copy of a suspect one is suspect.

#include <optional>
#include <type_traits>
#include <utility>
#include <vector>

#include <knotpath/criteria.hpp>
#include <knotpath/cross_validation.hpp>
#include <knotpath/io/report.hpp>

namespace knotpath::cli {

/// The nearest double of a scalar (the value itself for double).
template <class Scalar>
double as_double(const Scalar& v) {
  if constexpr (std::is_same_v<Scalar, double>)
    return v;
  else
    return io::nearest_double(v);
}

/// A vector of scalars as doubles.
template <class Scalar>
Vector<double> as_double(const Vector<Scalar>& v) {
  Vector<double> out(v.size());
  for (Index i = 0; i < v.size(); ++i) out(i) = as_double(v(i));
  return out;
}

/// The preparation record in doubles.
template <class Scalar>
Preparation<double> double_copy(const Preparation<Scalar>& p) {
  Preparation<double> d;
  d.observations = p.observations;
  d.used_observations = p.used_observations;
  d.predictors = p.predictors;
  d.intercept = p.intercept;
  d.standardized = p.standardized;
  d.weight_sum = as_double(p.weight_sum);
  d.response_mean = as_double(p.response_mean);
  d.total_sum_of_squares = as_double(p.total_sum_of_squares);
  d.means = as_double(p.means);
  d.scales = as_double(p.scales);
  d.columns = p.columns;
  d.penalty_weights = p.penalty_weights;
  d.constraints = p.constraints;
  d.excluded = p.excluded;
  d.centring_amplification = p.centring_amplification;
  return d;
}

/// One knot in doubles, with its health fields.
template <class Scalar>
Knot<double> double_copy(const Knot<Scalar>& k) {
  Knot<double> d;
  d.step = k.step;
  d.penalty = as_double(k.penalty);
  d.event = k.event;
  d.predictor = k.predictor;
  d.sign = k.sign;
  d.correlation = k.correlation;
  d.active_count = k.active_count;
  d.penalized_l1 = as_double(k.penalized_l1);
  d.plain_l1 = as_double(k.plain_l1);
  d.rss = as_double(k.rss);
  d.intercept = as_double(k.intercept);
  for (const auto& [j, v] : k.coefficients) d.coefficients.emplace_back(j, as_double(v));
  d.condition_estimate = k.condition_estimate;
  d.prepared_error = k.prepared_error;
  d.estimated_error = k.estimated_error;
  d.suspect = k.suspect;
  return d;
}

/// A path in doubles (its queries then interpolate the rounded knots).
template <class Scalar>
Path<double> double_copy(const Path<Scalar>& path) {
  std::vector<Knot<double>> knots;
  for (const auto& k : path.knots()) knots.push_back(double_copy(k));
  std::vector<HeldOut<double>> held;
  for (const auto& h : path.held_out()) {
    HeldOut<double> d;
    d.step = h.step;
    d.penalty = as_double(h.penalty);
    d.predictor = h.predictor;
    d.squared_sine = h.squared_sine;
    d.saturated = h.saturated;
    held.push_back(d);
  }
  return Path<double>(double_copy(path.preparation()), path.options(), std::move(knots),
                      std::move(held), path.stop_reason(), as_double(path.ridge()));
}

/// A point of the cross-validation curve in doubles.
template <class Scalar>
CurvePoint<double> double_copy(const CurvePoint<Scalar>& c) {
  return {as_double(c.mu), as_double(c.lambda), as_double(c.error), as_double(c.standard_error)};
}

/// A cross-validation in doubles: the folds (paths and quadratic segments),
/// the curve's pieces and the two choices, each rounded once.
template <class Scalar>
CrossValidation<double> double_copy(const CrossValidation<Scalar>& cv) {
  CrossValidation<double> d;
  d.fold_of = cv.fold_of;
  d.repeats = cv.repeats;
  for (const auto& f : cv.folds) {
    Fold<double> g;
    g.held_out = f.held_out;
    g.training_weight = as_double(f.training_weight);
    g.held_out_weight = as_double(f.held_out_weight);
    g.scale = as_double(f.scale);
    g.path = double_copy(f.path);
    g.error_above = as_double(f.error_above);
    for (const auto& s : f.segments)
      g.segments.push_back({as_double(s.mu_high), as_double(s.mu_low), as_double(s.a),
                            as_double(s.b), as_double(s.c)});
    d.folds.push_back(std::move(g));
  }
  d.full_path = double_copy(cv.full_path);
  d.full_scale = as_double(cv.full_scale);
  d.total_weight = as_double(cv.total_weight);
  d.mu_high = as_double(cv.mu_high);
  d.mu_low = as_double(cv.mu_low);
  for (const auto& p : cv.pieces)
    d.pieces.push_back({as_double(p.mu_high), as_double(p.mu_low), as_double(p.constant),
                        as_double(p.linear), as_double(p.quadratic)});
  d.minimum = double_copy(cv.minimum);
  d.parsimonious = double_copy(cv.parsimonious);
  return d;
}

/// The information criteria in doubles.
template <class Scalar>
InformationCriteria<double> double_copy(const InformationCriteria<Scalar>& ic) {
  InformationCriteria<double> d;
  for (const auto& k : ic.knots)
    d.knots.push_back({k.step, as_double(k.penalty), as_double(k.mu), k.nonzero, k.parameters,
                       as_double(k.degrees_of_freedom), as_double(k.rss), as_double(k.mallows_cp),
                       as_double(k.aic), as_double(k.bic)});
  d.noise_variance = as_double(ic.noise_variance);
  d.source = ic.source;
  d.residual_df = as_double(ic.residual_df);
  d.observations = ic.observations;
  d.sample_size = as_double(ic.sample_size);
  d.best_cp = ic.best_cp;
  d.best_aic = ic.best_aic;
  d.best_bic = ic.best_bic;
  return d;
}

}  // namespace knotpath::cli
