// Tests of repeated cross-validation over fold seeds and of the stability
// counts (cross_validation.hpp): one repeat is today's cross-validation bit
// for bit; R repeats average the R single curves of seeds seed, seed + 1, ...;
// the activity fractions are counts over the R K fold paths; a strong
// predictor is active in every fold path and a null one rarely.
#include <gtest/gtest.h>

#include <cmath>
#include <vector>

#include <knotpath/cross_validation.hpp>
#include <knotpath/detail/random.hpp>

namespace kp = knotpath;
using kp::Index;
using kp::Matrix;
using kp::Vector;

namespace {

/// Invented data (fixed seed): y = 3 x0 - 2 x1 + noise, x2..x(p-1) null.
struct Data {
  Matrix<double> x;
  Vector<double> y;
};

Data invented(Index n, Index p, std::uint64_t seed, double noise = 1.0) {
  kp::detail::SplitMix64 rng(seed);
  Data d;
  d.x.resize(n, p);
  d.y.resize(n);
  for (Index i = 0; i < n; ++i) {
    for (Index j = 0; j < p; ++j) d.x(i, j) = rng.normal();
    d.y(i) = 3.0 * d.x(i, 0) - 2.0 * d.x(i, 1) + noise * rng.normal();
  }
  return d;
}

/// Penalties spread over the curve's domain, each piece's ends and middle.
std::vector<double> probes(const kp::CrossValidation<double>& cv) {
  std::vector<double> out;
  for (const auto& piece : cv.pieces) {
    out.push_back(piece.mu_high);
    out.push_back(0.5 * (piece.mu_high + piece.mu_low));
  }
  out.push_back(cv.mu_low);
  out.push_back(2.0 * cv.mu_high);  // above every knot: constant
  return out;
}

}  // namespace

// With one repeat (the default) nothing changes: the same operations as a
// cross-validation without the option (common practice: a new option at its
// default must not move old results).
TEST(RepeatedCrossValidation, OneRepeatIsTheSingleCrossValidationBitForBit) {
  const Data d = invented(60, 7, 11);
  kp::CrossValidationOptions plain;
  plain.folds = 5;
  plain.seed = 4242;
  kp::CrossValidationOptions once = plain;
  once.repeats = 1;
  const auto a = kp::cross_validate<double>(d.x, d.y, {}, plain);
  const auto b = kp::cross_validate<double>(d.x, d.y, {}, once);
  EXPECT_EQ(b.repeats, 1u);
  EXPECT_EQ(a.fold_of, b.fold_of);
  ASSERT_EQ(a.pieces.size(), b.pieces.size());
  for (std::size_t i = 0; i < a.pieces.size(); ++i) {
    EXPECT_EQ(a.pieces[i].mu_high, b.pieces[i].mu_high);
    EXPECT_EQ(a.pieces[i].constant, b.pieces[i].constant);
    EXPECT_EQ(a.pieces[i].linear, b.pieces[i].linear);
    EXPECT_EQ(a.pieces[i].quadratic, b.pieces[i].quadratic);
  }
  EXPECT_EQ(a.minimum.mu, b.minimum.mu);
  EXPECT_EQ(a.minimum.error, b.minimum.error);
  EXPECT_EQ(a.minimum.standard_error, b.minimum.standard_error);
  EXPECT_EQ(a.parsimonious.mu, b.parsimonious.mu);
  EXPECT_EQ(b.spread_at_mu(b.minimum.mu), 0.0);
  for (double mu : probes(a)) EXPECT_EQ(a.repeat_error_at_mu(0, mu), a.error_at_mu(mu));
}

// The averaged curve is the mean of the R single curves with seeds seed,
// seed + 1, ..., seed + R - 1 (repeated K-fold cross-validation averages the
// repeats' estimates: common practice), its standard error the mean of
// theirs, its spread their standard deviation; the minimum is the exact
// minimum of that mean.
TEST(RepeatedCrossValidation, AveragedCurveIsTheMeanOfTheSingleRunsWithThoseSeeds) {
  const Data d = invented(60, 7, 12);
  const std::size_t repeats = 4;
  kp::CrossValidationOptions cv;
  cv.folds = 5;
  cv.seed = 77;
  cv.repeats = repeats;
  const auto many = kp::cross_validate<double>(d.x, d.y, {}, cv);
  ASSERT_EQ(many.repeats, repeats);
  ASSERT_EQ(many.folds.size(), repeats * 5);
  EXPECT_EQ(many.folds_per_repeat(), 5u);
  std::vector<kp::CrossValidation<double>> single;
  for (std::size_t r = 0; r < repeats; ++r) {
    kp::CrossValidationOptions one = cv;
    one.repeats = 1;
    one.seed = cv.seed + r;
    single.push_back(kp::cross_validate<double>(d.x, d.y, {}, one));
  }
  EXPECT_EQ(many.fold_of, single[0].fold_of);
  EXPECT_NE(single[0].fold_of, single[1].fold_of);  // the seeds do draw other folds
  for (double mu : probes(many)) {
    double mean = 0, se = 0;
    for (const auto& s : single) {
      mean += s.error_at_mu(mu) / repeats;
      se += s.standard_error_at_mu(mu) / repeats;
    }
    double squares = 0;
    for (const auto& s : single) squares += std::pow(s.error_at_mu(mu) - mean, 2);
    const double spread = std::sqrt(squares / (repeats - 1));
    EXPECT_NEAR(many.error_at_mu(mu), mean, 1e-12 * mean) << "mu " << mu;
    EXPECT_NEAR(many.standard_error_at_mu(mu), se, 1e-12 * mean) << "mu " << mu;
    EXPECT_NEAR(many.spread_at_mu(mu), spread, 1e-9 * mean) << "mu " << mu;
    for (std::size_t r = 0; r < repeats; ++r)
      EXPECT_NEAR(many.repeat_error_at_mu(r, mu), single[r].error_at_mu(mu), 1e-12 * mean);
  }
  // The pieces are the averaged curve itself, and its minimum is never
  // above the mean curve anywhere on the probes nor on a fine grid.
  for (const auto& piece : many.pieces)
    for (double s : {0.0, 0.3, 1.0}) {
      const double mu = piece.mu_low + s * (piece.mu_high - piece.mu_low);
      EXPECT_NEAR(piece.at(s), many.error_at_mu(mu), 1e-10 * many.minimum.error);
    }
  for (int i = 0; i <= 400; ++i) {
    const double mu = many.mu_low + (many.mu_high - many.mu_low) * i / 400.0;
    EXPECT_LE(many.minimum.error, many.error_at_mu(mu) + 1e-12 * many.minimum.error);
  }
  EXPECT_NEAR(many.minimum.standard_error, many.standard_error_at_mu(many.minimum.mu), 1e-15);
  // One-standard-error rule on the averaged curve (Hastie, Tibshirani &
  // Friedman 2009, section 7.10): the largest mu within min + SE.
  EXPECT_GE(many.parsimonious.mu, many.minimum.mu);
  EXPECT_LE(many.error_at_mu(many.parsimonious.mu),
            many.minimum.error + many.minimum.standard_error + 1e-12 * many.minimum.error);
}

// The fractions are counts over the R K fold paths: Meinshausen & Buhlmann
// (2010, JRSS B 72(4), section 2.2) define a predictor's selection
// probability at a penalty as the probability that it is selected on a
// random resample; its estimate is the count of resamples selecting it over
// the number of resamples. Here the resamples are the fold training sets.
TEST(RepeatedCrossValidation, ActivityFractionsAreCountsOverAllFoldPaths) {
  const Data d = invented(60, 7, 13);
  kp::CrossValidationOptions cv;
  cv.folds = 5;
  cv.seed = 9;
  cv.repeats = 3;
  const auto many = kp::cross_validate<double>(d.x, d.y, {}, cv);
  for (double mu : {many.minimum.mu, many.parsimonious.mu, 0.5 * many.mu_high}) {
    const kp::PredictorActivity act = kp::predictor_activity(many, mu);
    ASSERT_EQ(act.fold_paths, 15u);
    ASSERT_EQ(act.active_in_folds.size(), 7u);
    // Recount from single runs of each seed, each fold traced again and read
    // at its own penalty mu * scale.
    std::vector<std::size_t> count(7, 0);
    for (std::size_t r = 0; r < 3; ++r) {
      kp::CrossValidationOptions one = cv;
      one.repeats = 1;
      one.seed = cv.seed + r;
      const auto single = kp::cross_validate<double>(d.x, d.y, {}, one);
      for (const auto& f : single.folds) {
        const auto s = f.path.at_penalty(mu * f.scale);
        for (Index j = 0; j < 7; ++j) count[static_cast<std::size_t>(j)] += s.coefficients(j) != 0.0;
      }
    }
    const auto full = many.full_path.at_penalty(mu * many.full_scale);
    for (std::size_t j = 0; j < 7; ++j) {
      EXPECT_EQ(act.active_in_folds[j], count[j]) << "predictor " << j << " at mu " << mu;
      EXPECT_EQ(act.fraction(j), static_cast<double>(count[j]) / 15.0);
      EXPECT_EQ(act.active_in_full_path[j], full.coefficients(static_cast<Index>(j)) != 0.0);
    }
  }
  EXPECT_THROW(kp::predictor_activity(many, -1.0), kp::invalid_query);
}

// On invented data with two strong predictors and five null ones, at the
// parsimonious choice the strong ones are active in every fold path and the
// null ones in few (the behaviour Meinshausen & Buhlmann 2010 report for
// selection probabilities: near 1 for relevant variables, small for noise).
TEST(RepeatedCrossValidation, StrongPredictorsAreActiveInEveryFoldAndNullOnesRarely) {
  const Data d = invented(100, 7, 2026);
  kp::CrossValidationOptions cv;
  cv.folds = 5;
  cv.seed = 31;
  cv.repeats = 5;
  const auto many = kp::cross_validate<double>(d.x, d.y, {}, cv);
  const kp::PredictorActivity act = kp::predictor_activity(many, many.parsimonious.mu);
  EXPECT_EQ(act.fraction(0), 1.0);
  EXPECT_EQ(act.fraction(1), 1.0);
  EXPECT_TRUE(act.active_in_full_path[0]);
  EXPECT_TRUE(act.active_in_full_path[1]);
  double null_mean = 0;
  for (std::size_t j = 2; j < 7; ++j) {
    EXPECT_LT(act.fraction(j), 0.5) << "null predictor " << j;
    null_mean += act.fraction(j) / 5.0;
  }
  EXPECT_LT(null_mean, 0.2);
}

// Repeats are for folds drawn from a seed: the user's folds and leave one out
// are the same on every repeat, so R > 1 is refused there, and R = 0 always.
TEST(RepeatedCrossValidation, RepeatsAreRefusedWhereTheFoldsAreNotRandom) {
  const Data d = invented(20, 3, 14);
  kp::CrossValidationOptions cv;
  cv.repeats = 0;
  EXPECT_THROW(cv.validate(20), kp::invalid_option);
  cv.repeats = 2;
  cv.leave_one_out = true;
  EXPECT_THROW(kp::cross_validate<double>(d.x, d.y, {}, cv), kp::invalid_option);
  cv.leave_one_out = false;
  cv.fold_of.assign(20, 0);
  for (std::size_t i = 0; i < 20; i += 2) cv.fold_of[i] = 1;
  EXPECT_THROW(kp::cross_validate<double>(d.x, d.y, {}, cv), kp::invalid_option);
  cv.repeats = 1;
  EXPECT_NO_THROW(kp::cross_validate<double>(d.x, d.y, {}, cv));
  EXPECT_EQ(kp::repeat_seed(5, 3), 8u);
  EXPECT_EQ(kp::repeat_seed(~std::uint64_t{0}, 1), 0u);  // wraps modulo 2^64
}
