// Multiprecision and exact paths, the double-versus-50-digit cross-check and
// the double path's own health check, against NIST StRD certified values.
#include <gtest/gtest.h>

#include <cmath>
#include <string>

#include <knotpath/precision.hpp>

#include "test_support.hpp"

namespace kp = knotpath;
namespace kt = knotpath::testing;
using kp::Index;

namespace {

// Log relative error (number of correct significant digits), as NIST StRD
// results are judged (McCullough 1998, The American Statistician 52(4)).
template <class Scalar>
double lre(const Scalar& value, const Scalar& reference) {
  if (value == reference) return 40.0;
  using std::abs;
  using std::log10;
  if (reference == Scalar(0)) return -kp::detail::to_double(Scalar(log10(Scalar(abs(value)))));
  return -kp::detail::to_double(Scalar(log10(Scalar(abs(Scalar((value - reference) / reference))))));
}

template <class Scalar>
struct ExactProblem {
  kp::Matrix<Scalar> x;
  kp::Vector<Scalar> y;
};

// Builds y on the polynomial powers x, x^2, ..., x^degree (NIST's model for
// Filip, Pontius and Wampler), parsing every decimal exactly into Scalar.
template <class Scalar>
ExactProblem<Scalar> polynomial_problem(const kt::CsvText& t, int degree) {
  const Index n = static_cast<Index>(t.rows.size());
  ExactProblem<Scalar> p{kp::Matrix<Scalar>(n, degree), kp::Vector<Scalar>(n)};
  for (Index i = 0; i < n; ++i) {
    const auto& row = t.rows[static_cast<std::size_t>(i)];
    p.y(i) = kp::parse_decimal<Scalar>(row[0]);
    const Scalar xi = kp::parse_decimal<Scalar>(row[1]);
    Scalar power(1);
    for (int j = 0; j < degree; ++j) {
      power *= xi;
      p.x(i, j) = power;
    }
  }
  return p;
}

// Design with every column but the first (the response) as a predictor.
template <class Scalar>
ExactProblem<Scalar> table_problem(const kt::CsvText& t) {
  const Index n = static_cast<Index>(t.rows.size());
  const Index p = static_cast<Index>(t.names.size()) - 1;
  ExactProblem<Scalar> out{kp::Matrix<Scalar>(n, p), kp::Vector<Scalar>(n)};
  for (Index i = 0; i < n; ++i) {
    const auto& row = t.rows[static_cast<std::size_t>(i)];
    out.y(i) = kp::parse_decimal<Scalar>(row[0]);
    for (Index j = 0; j < p; ++j) out.x(i, j) = kp::parse_decimal<Scalar>(row[static_cast<std::size_t>(j + 1)]);
  }
  return out;
}

std::vector<kp::float50> certified_values(const std::filesystem::path& file, int count) {
  // Parse the certified text exactly too (the .certified file holds 15-16 digits).
  std::ifstream in(file);
  std::string line;
  std::vector<kp::float50> out(static_cast<std::size_t>(count));
  while (std::getline(in, line)) {
    if (line.empty() || line[0] != 'B') continue;
    const auto c1 = line.find(',');
    const int index = std::stoi(line.substr(1, c1 - 1));
    const auto c2 = line.find(',', c1 + 1);
    if (index < count) out[static_cast<std::size_t>(index)] = kp::parse_decimal<kp::float50>(line.substr(c1 + 1, c2 - c1 - 1));
  }
  return out;
}

// Smallest LRE over intercept and slopes at the end of a 50-digit path.
double min_lre_at_end(const kp::Path<kp::float50>& path, const std::vector<kp::float50>& certified) {
  const auto end = path.at_penalty(kp::float50(0));
  double worst = lre(end.intercept, certified[0]);
  for (Index j = 0; j < end.coefficients.size(); ++j)
    worst = std::min(worst, lre(end.coefficients(j), certified[static_cast<std::size_t>(j + 1)]));
  return worst;
}

}  // namespace

TEST(ParseDecimal, ExactForRationalsAndCorrectlyRoundedForFloats) {
  EXPECT_EQ(kp::parse_decimal<kp::rational>("0.1"), kp::rational(1) / kp::rational(10));
  EXPECT_EQ(kp::parse_decimal<kp::rational>("-12.5e-3"), kp::rational(-1) / kp::rational(80));
  EXPECT_EQ(kp::parse_decimal<kp::rational>("7"), kp::rational(7));
  EXPECT_EQ(kp::parse_decimal<kp::rational>(".25E+2"), kp::rational(25));
  // 0.1 in 50 digits differs from the double 0.1 by ~5.6e-18 (the double's
  // own rounding error; common practice): parsing must not go through double.
  const kp::float50 tenth = kp::parse_decimal<kp::float50>("0.1");
  EXPECT_LT(kp::detail::to_double(kp::float50(abs(tenth * 10 - 1))), 1e-48);
  EXPECT_THROW((void)kp::parse_decimal<kp::rational>("1.2.3"), kp::invalid_data);
  EXPECT_THROW((void)kp::parse_decimal<kp::float50>("abc"), kp::invalid_data);
  EXPECT_THROW((void)kp::parse_decimal<double>("1e"), kp::invalid_data);
}

// NIST StRD Filip (degree-10 polynomial, 82 observations; certified values):
// the 50-digit path ends at the certified coefficients with LRE >= 12, and
// the double path is flagged suspect by its own health check and by the
// cross-check.
TEST(ExternalNistPrecision, FilipIn50DigitsAndDoubleIsFlagged) {
  KNOTPATH_REQUIRE_REFERENCE(data, "strd/filip.csv");
  KNOTPATH_REQUIRE_REFERENCE(cert, "strd/filip.certified");
  const auto text = kt::read_csv_text(data);
  const auto high = polynomial_problem<kp::float50>(text, 10);
  const kp::Path<kp::float50> path = kp::trace<kp::float50>(high.x, high.y);
  ASSERT_EQ(path.stop_reason(), kp::StopReason::completed);
  EXPECT_TRUE(path.held_out().empty());
  EXPECT_GE(min_lre_at_end(path, certified_values(cert, 11)), 12.0);
  EXPECT_FALSE(path.suspect());

  const auto low = polynomial_problem<double>(text, 10);
  const kp::Path<double> low_path = kp::trace<double>(low.x, low.y);
  EXPECT_TRUE(low_path.suspect()) << "worst estimated error " << low_path.worst_estimated_error();
  const kp::CrossCheck check = kp::compare_paths(low_path, path);
  EXPECT_NE(check.verdict, kp::Verdict::trustworthy);
  EXPECT_TRUE(check.double_suspect);
}

// NIST StRD Longley: LRE >= 13 in 50-digit mode; the double path passes the
// cross-check (trustworthy or degraded) and its endpoint LRE is >= 7.
TEST(ExternalNistPrecision, LongleyIn50DigitsAndDoublePassesTheCrossCheck) {
  KNOTPATH_REQUIRE_REFERENCE(data, "strd/longley.csv");
  KNOTPATH_REQUIRE_REFERENCE(cert, "strd/longley.certified");
  const auto text = kt::read_csv_text(data);
  const auto certified = certified_values(cert, 7);
  const auto high = table_problem<kp::float50>(text);
  const kp::Path<kp::float50> path = kp::trace<kp::float50>(high.x, high.y);
  EXPECT_GE(min_lre_at_end(path, certified), 13.0);

  const auto low = table_problem<double>(text);
  const kp::Path<double> low_path = kp::trace<double>(low.x, low.y);
  const kp::CrossCheck check = kp::compare_paths(low_path, path);
  EXPECT_TRUE(check.same_events);
  EXPECT_NE(check.verdict, kp::Verdict::wrong);
  const auto end = low_path.at_penalty(0.0);
  EXPECT_GE(lre(end.intercept, kp::detail::to_double(certified[0])), 7.0);
  for (Index j = 0; j < 6; ++j)
    EXPECT_GE(lre(end.coefficients(j), kp::detail::to_double(certified[static_cast<std::size_t>(j + 1)])), 7.0);
}

// NIST StRD Pontius (quadratic) and Wampler1-4 (degree 5): 50-digit
// endpoints with LRE >= 12.
TEST(ExternalNistPrecision, PontiusAndWamplerIn50Digits) {
  const std::pair<const char*, int> sets[] = {{"pontius", 2}, {"wampler1", 5}, {"wampler2", 5},
                                              {"wampler3", 5}, {"wampler4", 5}};
  int found = 0;
  for (const auto& [name, degree] : sets) {
    auto data = kt::reference_file(std::string("strd/") + name + ".csv");
    auto cert = kt::reference_file(std::string("strd/") + name + ".certified");
    if (!data || !cert) continue;
    ++found;
    const auto high = polynomial_problem<kp::float50>(kt::read_csv_text(*data), degree);
    const kp::Path<kp::float50> path = kp::trace<kp::float50>(high.x, high.y);
    EXPECT_GE(min_lre_at_end(path, certified_values(*cert, degree + 1)), 12.0) << name;
  }
  if (found == 0) GTEST_SKIP() << "NIST StRD files not found under " << kt::data_dir();
}

// Exact mode: Wampler1 (y = 1 + x + ... + x^5, NIST StRD, certified
// coefficients exactly 1) ends at exactly 1 for every coefficient.
TEST(ExactRational, Wampler1EndsAtExactlyOne) {
  kp::Matrix<kp::rational> x(21, 5);
  kp::Vector<kp::rational> y(21);
  for (Index i = 0; i < 21; ++i) {
    kp::rational power(1), sum(1);
    for (Index j = 0; j < 5; ++j) {
      power *= kp::rational(i);
      x(i, j) = power;
      sum += power;
    }
    y(i) = sum;
  }
  kp::TraceOptions opt;
  opt.standardize = false;  // exact mode has no square roots
  const kp::Path<kp::rational> path = kp::trace<kp::rational>(x, y, opt);
  ASSERT_EQ(path.stop_reason(), kp::StopReason::completed);
  const auto end = path.at_penalty(kp::rational(0));
  EXPECT_EQ(end.intercept, kp::rational(1));
  for (Index j = 0; j < 5; ++j) EXPECT_EQ(end.coefficients(j), kp::rational(1)) << "B" << j + 1;
}

TEST(ExactRational, StandardizationIsRefusedWithTheFieldNamed) {
  kp::Matrix<kp::rational> x(3, 1);
  x << 1, 2, 4;
  kp::Vector<kp::rational> y(3);
  y << 1, 0, 2;
  try {
    (void)kp::trace<kp::rational>(x, y);
    FAIL() << "expected invalid_option";
  } catch (const kp::invalid_option& e) {
    EXPECT_EQ(e.field(), "standardize");
  }
}

// Exact mode on the diabetes data (Efron et al. 2004): the same event
// sequence as double and knot penalties equal to double's to 1e-12 relative.
TEST(ExactRational, DiabetesMatchesDouble) {
  KNOTPATH_REQUIRE_REFERENCE(data, "open/diabetes.csv");
  const auto text = kt::read_csv_text(data);
  // The response is the last column here; move it first for table_problem.
  kt::CsvText reordered = text;
  for (auto& row : reordered.rows) std::rotate(row.rbegin(), row.rbegin() + 1, row.rend());
  const auto exact = table_problem<kp::rational>(reordered);
  const auto low = table_problem<double>(reordered);
  kp::TraceOptions opt;
  opt.standardize = false;
  const kp::Path<kp::rational> exact_path = kp::trace<kp::rational>(exact.x, exact.y, opt);
  const kp::Path<double> low_path = kp::trace<double>(low.x, low.y, opt);
  ASSERT_EQ(exact_path.knots().size(), low_path.knots().size());
  const double top = low_path.lambda_max();
  for (std::size_t k = 0; k < low_path.knots().size(); ++k) {
    EXPECT_EQ(exact_path.knots()[k].event, low_path.knots()[k].event) << k;
    EXPECT_EQ(exact_path.knots()[k].predictor, low_path.knots()[k].predictor) << k;
    // Knot penalties relative to lambda_max (the last knot is exactly 0).
    EXPECT_NEAR(kp::detail::to_double(exact_path.knots()[k].penalty), low_path.knots()[k].penalty, 1e-12 * top) << k;
  }
}

// On well-conditioned random designs the 50-digit and double paths agree:
// identical events and knots to 1e-12 (relative to lambda_max).
TEST(Float50, AgreesWithDoubleOnWellConditionedDesigns) {
  for (unsigned seed : {31u, 32u, 33u}) {
    const kt::Problem prob = kt::ar1_problem(60, 12, 0.3, seed);
    const kp::CrossCheck check = kp::cross_check<kp::float50>(prob.x, prob.y);
    EXPECT_TRUE(check.same_events) << seed;
    EXPECT_LE(check.max_relative_knot_difference, 1e-12) << seed;
    EXPECT_EQ(check.verdict, kp::Verdict::trustworthy) << seed;
    EXPECT_FALSE(check.double_suspect);
  }
}

TEST(LongDouble, TracesAndMatchesDouble) {
  const kt::Problem prob = kt::ar1_problem(50, 8, 0.2, 41);
  const auto ld = kp::trace<long double>(kp::convert<long double>(prob.x), kp::convert<long double>(prob.y));
  const auto d = kp::trace<double>(prob.x, prob.y);
  ASSERT_EQ(ld.knots().size(), d.knots().size());
  for (std::size_t k = 0; k < d.knots().size(); ++k)
    EXPECT_NEAR(static_cast<double>(ld.knots()[k].penalty), d.knots()[k].penalty, 1e-12 * d.lambda_max());
}

#ifdef KNOTPATH_HAVE_MPFR
// The MPFR-backed type at a user-chosen precision traces Longley (NIST StRD)
// to the certified values; 40 digits leave >= 13 correct after the ~1e8
// condition of the standardized Gram matrix.
TEST(MpfrFloat, LongleyAtFortyDigits) {
  KNOTPATH_REQUIRE_REFERENCE(data, "strd/longley.csv");
  KNOTPATH_REQUIRE_REFERENCE(cert, "strd/longley.certified");
  kp::set_mpfr_digits(40);
  const auto problem = table_problem<kp::mpfr_float>(kt::read_csv_text(data));
  const kp::Path<kp::mpfr_float> path = kp::trace<kp::mpfr_float>(problem.x, problem.y);
  const auto certified = certified_values(cert, 7);
  const auto end = path.at_penalty(kp::mpfr_float(0));
  EXPECT_GE(lre(kp::float50(end.intercept), certified[0]), 13.0);
  for (Index j = 0; j < 6; ++j)
    EXPECT_GE(lre(kp::float50(end.coefficients(j)), certified[static_cast<std::size_t>(j + 1)]), 13.0);
}
#endif

// The header-only rational fallback (used when GMP is absent) instantiates
// the whole core too: a tiny exact problem with a known least-squares end.
TEST(ExactRational, HeaderOnlyRationalFallbackWorks) {
  using R = boost::multiprecision::cpp_rational;
  kp::Matrix<R> x(4, 2);
  x << 1, 0, 0, 1, 1, 1, 2, 1;
  kp::Vector<R> y(4);
  y << 1, 2, 3, 5;  // not an exact linear function of x: the end is a genuine least-squares fit
  kp::TraceOptions opt;
  opt.standardize = false;
  const kp::Path<R> path = kp::trace<R>(x, y, opt);
  const auto end = path.at_penalty(R(0));
  // Normal equations of the centred problem, solved exactly by Cramer's rule.
  const R n(4);
  const R m1 = x.col(0).sum() / n, m2 = x.col(1).sum() / n, my = y.sum() / n;
  R s11(0), s12(0), s22(0), s1y(0), s2y(0);
  for (Index i = 0; i < 4; ++i) {
    const R a = x(i, 0) - m1, b = x(i, 1) - m2, c = y(i) - my;
    s11 += a * a; s12 += a * b; s22 += b * b; s1y += a * c; s2y += b * c;
  }
  const R det = s11 * s22 - s12 * s12;
  EXPECT_EQ(end.coefficients(0), (s22 * s1y - s12 * s2y) / det);
  EXPECT_EQ(end.coefficients(1), (s11 * s2y - s12 * s1y) / det);
  EXPECT_EQ(end.intercept, my - m1 * end.coefficients(0) - m2 * end.coefficients(1));
}
