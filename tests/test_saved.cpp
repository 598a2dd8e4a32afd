// Saved paths (io/saved.hpp): a path saved and loaded answers every query
// bit for bit as the original, in every arithmetic; a file of a newer
// format version, of another arithmetic, or damaged is a clear error.

#include <gtest/gtest.h>

#include <bit>
#include <cmath>
#include <cstdint>
#include <limits>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include <knotpath/io/report.hpp>
#include <knotpath/io/saved.hpp>
#include <knotpath/knotpath.hpp>

namespace {

namespace kp = knotpath;
using kp::Index;
template <class S>
using Matrix = kp::Matrix<S>;
template <class S>
using Vector = kp::Vector<S>;

// Exact identity: for binary floating types the same bits (so -0 and +0
// differ), for the others equality of value.
template <class S>
bool same(const S& a, const S& b) {
  if constexpr (std::is_same_v<S, double>)
    return std::bit_cast<std::uint64_t>(a) == std::bit_cast<std::uint64_t>(b);
  else
    return a == b;
}
bool same_double(double a, double b) { return std::bit_cast<std::uint64_t>(a) == std::bit_cast<std::uint64_t>(b); }

template <class S>
void expect_same_solution(const kp::Solution<S>& a, const kp::Solution<S>& b, const std::string& where) {
  SCOPED_TRACE(where);
  EXPECT_TRUE(same(a.penalty, b.penalty));
  EXPECT_TRUE(same(a.penalized_l1, b.penalized_l1));
  EXPECT_TRUE(same(a.plain_l1, b.plain_l1));
  EXPECT_TRUE(same(a.intercept, b.intercept));
  EXPECT_EQ(a.beyond_path, b.beyond_path);
  EXPECT_EQ(a.stopped_path, b.stopped_path);
  ASSERT_EQ(a.coefficients.size(), b.coefficients.size());
  for (Index j = 0; j < a.coefficients.size(); ++j) EXPECT_TRUE(same(a.coefficients(j), b.coefficients(j))) << j;
}

template <class S>
kp::io::SavedPath<S> round_trip(const kp::io::SavedPath<S>& saved) {
  std::stringstream file;
  kp::io::save_path(file, saved);
  return kp::io::load_path<S>(file, "test");
}

// Every record and every query of `a` and `b` agree exactly.
template <class S>
void expect_same_path(const kp::Path<S>& a, const kp::Path<S>& b, const Matrix<S>& new_rows) {
  ASSERT_EQ(a.knots().size(), b.knots().size());
  for (std::size_t i = 0; i < a.knots().size(); ++i) {
    SCOPED_TRACE("knot " + std::to_string(i));
    const auto &x = a.knots()[i], &y = b.knots()[i];
    EXPECT_EQ(x.step, y.step);
    EXPECT_TRUE(same(x.penalty, y.penalty));
    EXPECT_EQ(x.event, y.event);
    EXPECT_EQ(x.predictor, y.predictor);
    EXPECT_EQ(x.sign, y.sign);
    EXPECT_TRUE(same_double(x.correlation, y.correlation));
    EXPECT_EQ(x.active_count, y.active_count);
    EXPECT_TRUE(same(x.penalized_l1, y.penalized_l1));
    EXPECT_TRUE(same(x.plain_l1, y.plain_l1));
    EXPECT_TRUE(same(x.rss, y.rss));
    EXPECT_TRUE(same(x.intercept, y.intercept));
    EXPECT_TRUE(same_double(x.condition_estimate, y.condition_estimate));
    EXPECT_TRUE(same_double(x.prepared_error, y.prepared_error));
    EXPECT_TRUE(same_double(x.estimated_error, y.estimated_error));
    EXPECT_EQ(x.suspect, y.suspect);
    expect_same_solution(a.at_penalty(x.penalty), b.at_penalty(y.penalty), "at the knot");
  }
  EXPECT_EQ(a.stop_reason(), b.stop_reason());
  EXPECT_TRUE(same(a.ridge(), b.ridge()));
  EXPECT_EQ(a.options().predictor_names, b.options().predictor_names);
  EXPECT_EQ(a.options().penalty_scales, b.options().penalty_scales);
  EXPECT_EQ(a.options().unpenalized, b.options().unpenalized);
  EXPECT_EQ(a.options().left_out, b.options().left_out);
  EXPECT_EQ(a.options().sign_constraints, b.options().sign_constraints);
  EXPECT_EQ(a.options().variant, b.options().variant);
  ASSERT_EQ(a.excluded().size(), b.excluded().size());
  for (std::size_t i = 0; i < a.excluded().size(); ++i) {
    EXPECT_EQ(a.excluded()[i].predictor, b.excluded()[i].predictor);
    EXPECT_EQ(a.excluded()[i].reason, b.excluded()[i].reason);
  }
  ASSERT_EQ(a.held_out().size(), b.held_out().size());
  for (std::size_t i = 0; i < a.held_out().size(); ++i) {
    EXPECT_EQ(a.held_out()[i].predictor, b.held_out()[i].predictor);
    EXPECT_EQ(a.held_out()[i].step, b.held_out()[i].step);
    EXPECT_TRUE(same(a.held_out()[i].penalty, b.held_out()[i].penalty));
    EXPECT_TRUE(same_double(a.held_out()[i].squared_sine, b.held_out()[i].squared_sine));
  }
  const auto ea = a.events(), eb = b.events();
  ASSERT_EQ(ea.size(), eb.size());
  for (std::size_t i = 0; i < ea.size(); ++i) {
    EXPECT_EQ(ea[i].knot, eb[i].knot);
    EXPECT_EQ(ea[i].predictor, eb[i].predictor);
    EXPECT_TRUE(same(ea[i].penalty, eb[i].penalty));
  }
  EXPECT_EQ(a.saturation_step(), b.saturation_step());
  // Random penalties (between and beyond the knots), budgets and fractions.
  std::mt19937 rng(7);
  std::uniform_real_distribution<double> u(0.0, 1.2);
  const S top = a.lambda_max();
  const S reach = a.knots().back().penalized_l1;
  std::vector<S> lambdas;
  for (int r = 0; r < 25; ++r) {
    const S lambda = S(u(rng)) * top;
    lambdas.push_back(lambda);
    expect_same_solution(a.at_penalty(lambda), b.at_penalty(lambda), "random penalty");
    expect_same_solution(a.at_mu(a.mu_of(lambda)), b.at_mu(b.mu_of(lambda)), "random mu");
    const S budget = S(u(rng)) * reach;
    expect_same_solution(a.at_budget(budget), b.at_budget(budget), "random budget");
    const double f = std::min(1.0, u(rng));
    expect_same_solution(a.at_relative_budget(f), b.at_relative_budget(f), "random fraction");
  }
  const auto pa = a.predict_many(new_rows, lambdas), pb = b.predict_many(new_rows, lambdas);
  ASSERT_EQ(pa.values.rows(), pb.values.rows());
  for (Index i = 0; i < pa.values.rows(); ++i)
    for (Index c = 0; c < pa.values.cols(); ++c) EXPECT_TRUE(same(pa.values(i, c), pb.values(i, c)));
}

template <class S>
struct Data {
  Matrix<S> x;
  Vector<S> y, w;
};

// A small design with a constant column (excluded up front) and a
// duplicated one (held out as collinear), integer-valued so that exact
// arithmetic reads it exactly.
template <class S>
Data<S> small_data(int n = 24) {
  std::mt19937 rng(11);
  std::uniform_int_distribution<int> cell(-9, 9);
  Data<S> d;
  d.x.resize(n, 7);
  d.y.resize(n);
  d.w.resize(n);
  for (int i = 0; i < n; ++i) {
    for (int j = 0; j < 5; ++j) d.x(i, j) = S(cell(rng));
    d.x(i, 5) = S(3);         // constant
    d.x(i, 6) = d.x(i, 1);    // duplicate of column 1
    d.y(i) = S(2 * cell(rng)) + d.x(i, 0) * S(3) - d.x(i, 2);
    d.w(i) = S(1 + (i % 3 == 0));
  }
  return d;
}

template <class S>
void expect_round_trip(const kp::Path<S>& path, const Matrix<S>& new_rows) {
  kp::io::SavedPath<S> saved{path, "y", {{"least-error", path.lambda_max() / S(3)}},
                             {{"colour, shade", {"blue", "red \"dark\"", "x=y"}, "blue", {"colour, shade=red \"dark\"", "colour, shade=x=y"}}}};
  const auto loaded = round_trip(saved);
  EXPECT_EQ(loaded.response, "y");
  ASSERT_EQ(loaded.expanded.size(), 1u);
  EXPECT_EQ(loaded.expanded[0].source, saved.expanded[0].source);
  EXPECT_EQ(loaded.expanded[0].levels, saved.expanded[0].levels);
  EXPECT_EQ(loaded.expanded[0].reference, "blue");
  EXPECT_EQ(loaded.expanded[0].names, saved.expanded[0].names);
  ASSERT_EQ(loaded.choices.size(), 1u);
  EXPECT_TRUE(same(loaded.choices[0].penalty, saved.choices[0].penalty));
  ASSERT_NE(loaded.choice("least-error"), nullptr);
  EXPECT_EQ(loaded.choice("parsimonious"), nullptr);
  expect_same_path(path, loaded.path, new_rows);
  // Saving the loaded path again writes the same file.
  std::stringstream first, second;
  kp::io::save_path(first, saved);
  kp::io::save_path(second, loaded);
  EXPECT_EQ(first.str(), second.str());
}

TEST(SavedPath, DoublesReadBackToTheLastBit) {
  using kp::io::saved_detail::read_number;
  using kp::io::saved_detail::write_number;
  // 0.1 as an IEEE 754 binary64 is 0x1.999999999999ap-4 (IEEE 754-2008;
  // C99 %a form): the hexadecimal form writes its significand digit for digit.
  EXPECT_EQ(write_number(0.1), "1.999999999999ap-4");
  const double values[] = {0.1, -0.0, 1.0 / 3.0, std::numeric_limits<double>::denorm_min(),
                           std::numeric_limits<double>::max(), -std::numeric_limits<double>::min(), 6.02214076e23};
  for (double v : values) EXPECT_TRUE(same_double(read_number<double>(write_number(v)), v)) << write_number(v);
  std::mt19937_64 rng(3);
  for (int i = 0; i < 10000; ++i) {
    double v = std::bit_cast<double>(rng());
    if (!std::isfinite(v)) continue;
    ASSERT_TRUE(same_double(read_number<double>(write_number(v)), v)) << write_number(v);
  }
  const long double third = 1.0L / 3.0L;
  EXPECT_EQ(read_number<long double>(write_number(third)), third);
}

TEST(SavedPath, DensePathAnswersEveryQueryAsTheOriginal) {
  const auto d = small_data<double>();
  kp::TraceOptions o;
  o.predictor_names = {"age", "bmi", "bp", "s1", "s2", "flat", "bmi_copy"};
  const auto path = kp::trace<double>(d.x, d.y, o);
  ASSERT_FALSE(path.excluded().empty());
  ASSERT_FALSE(path.held_out().empty());
  expect_round_trip(path, Matrix<double>(d.x.topRows(6)));
}

TEST(SavedPath, WeightsRidgeFactorsAndSignsRoundTrip) {
  const auto d = small_data<double>();
  kp::TraceOptions o;
  o.with_intercept = true;
  o.ridge = 0.25;
  o.penalty_scales = {1.0, 1.0, 2.5, 1.0, 1.0, 1.0, 1.0};
  o.unpenalized = {0};
  o.left_out = {4};
  o.sign_constraints = {kp::SignConstraint::none, kp::SignConstraint::nonnegative, kp::SignConstraint::nonpositive,
                        kp::SignConstraint::none, kp::SignConstraint::none, kp::SignConstraint::none,
                        kp::SignConstraint::none};
  o.max_knots = 2;
  const auto path = kp::trace<double>(d.x, d.y, o, d.w);
  EXPECT_TRUE(path.stopped_early());
  expect_round_trip(path, Matrix<double>(d.x.topRows(5)));
  // Least angle, no intercept, own scale.
  kp::TraceOptions lar;
  lar.variant = kp::Variant::least_angle;
  lar.with_intercept = false;
  lar.standardize = false;
  expect_round_trip(kp::trace<double>(d.x, d.y, lar), Matrix<double>(d.x.topRows(5)));
}

TEST(SavedPath, ExactPathKeepsItsFractions) {
  const auto d = small_data<kp::rational>();
  kp::TraceOptions o;
  o.standardize = false;
  const auto path = kp::trace<kp::rational>(d.x, d.y, o);
  std::stringstream file;
  kp::io::save_path(file, kp::io::SavedPath<kp::rational>{path, "y", {}, {}});
  EXPECT_NE(file.str().find("\"arithmetic\": \"exact\""), std::string::npos);
  EXPECT_NE(file.str().find('/'), std::string::npos);  // fractions, not decimals
  expect_round_trip(path, Matrix<kp::rational>(d.x.topRows(4)));
}

TEST(SavedPath, MultiprecisionPathsKeepEveryDigit) {
  {
    const auto d = small_data<kp::float50>();
    expect_round_trip(kp::trace<kp::float50>(d.x, d.y, kp::TraceOptions{}), Matrix<kp::float50>(d.x.topRows(4)));
  }
  {
    const auto d = small_data<long double>();
    expect_round_trip(kp::trace<long double>(d.x, d.y, kp::TraceOptions{}), Matrix<long double>(d.x.topRows(4)));
  }
#ifdef KNOTPATH_HAVE_MPFR
  kp::set_mpfr_digits(40);
  const auto d = small_data<kp::mpfr_float>();
  const auto path = kp::trace<kp::mpfr_float>(d.x, d.y, kp::TraceOptions{});
  std::stringstream file;
  kp::io::save_path(file, kp::io::SavedPath<kp::mpfr_float>{path, "y", {}, {}});
  kp::set_mpfr_digits(20);  // the loader restores the file's precision
  const auto loaded = kp::io::load_path<kp::mpfr_float>(file, "test");
  EXPECT_EQ(kp::mpfr_float::default_precision(), 40u);
  expect_same_path(path, loaded.path, Matrix<kp::mpfr_float>(d.x.topRows(4)));
  kp::set_mpfr_digits(50);
#endif
}

TEST(SavedPath, TheAuditOfALoadedPathIsTheOriginals) {
  const auto d = small_data<double>();
  const auto path = kp::trace<double>(d.x, d.y, kp::TraceOptions{});
  const auto loaded = round_trip(kp::io::SavedPath<double>{path, "y", {}, {}});
  kp::io::RunContext context;
  context.source = "test";
  context.response = "y";
  for (Index j = 0; j < path.predictor_count(); ++j) context.predictor_names.push_back(path.predictor_name(j));
  EXPECT_EQ(kp::io::audit_text(path, context), kp::io::audit_text(loaded.path, context));
  EXPECT_EQ(kp::io::path_document(path, context).dump(), kp::io::path_document(loaded.path, context).dump());
}

std::string saved_text() {
  const auto d = small_data<double>();
  std::stringstream file;
  kp::io::save_path(file, kp::io::SavedPath<double>{kp::trace<double>(d.x, d.y, kp::TraceOptions{}), "y", {}, {}});
  return file.str();
}

std::string load_error(const std::string& text) {
  std::stringstream in(text);
  try {
    kp::io::load_path<double>(in, "model.kpath");
  } catch (const kp::io::saved_path_error& e) {
    return e.what();
  }
  return "(no error)";
}

TEST(SavedPath, NewerVersionIsAClearError) {
  std::string text = saved_text();
  const std::string key = "\"format_version\": 1";
  ASSERT_NE(text.find(key), std::string::npos);
  text.replace(text.find(key), key.size(), "\"format_version\": 2");
  const std::string e = load_error(text);
  EXPECT_NE(e.find("model.kpath"), std::string::npos) << e;
  EXPECT_NE(e.find("format version 2, newer"), std::string::npos) << e;
}

TEST(SavedPath, DamagedOrForeignFilesAreClearErrors) {
  const std::string text = saved_text();
  EXPECT_NE(load_error(text.substr(0, text.size() / 2)).find("not a complete JSON document"), std::string::npos);
  EXPECT_NE(load_error("{\"a\": 1}").find("not a saved path"), std::string::npos);
  EXPECT_NE(load_error("x,y\n1,2\n").find("not a saved path"), std::string::npos);
  // One digit of one number changed: the checksum catches it.
  std::string edited = text;
  const auto at = edited.find("\"penalty\": \"") + 12;
  edited[at] = edited[at] == '1' ? '2' : '1';
  EXPECT_NE(load_error(edited).find("checksum"), std::string::npos) << load_error(edited);
  // Another arithmetic than the one asked for.
  std::stringstream in(text);
  EXPECT_THROW(kp::io::load_path<kp::rational>(in, "model.kpath"), kp::io::saved_path_error);
  std::stringstream again(text);
  EXPECT_EQ(kp::io::read_saved_header(again, "model.kpath").arithmetic, "double");
}

}  // namespace
