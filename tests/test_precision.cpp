// Multiprecision and exact paths, the double-versus-50-digit cross-check and
// the double path's own health check, against NIST StRD certified values.
#include <gtest/gtest.h>

#include <cmath>
#include <optional>
#include <string>

#include <knotpath/precision.hpp>

#include "decimal_text.hpp"
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

// NIST StRD Filip as decimal text: y and the power columns x, x^2, ...,
// x^degree written exactly (decimal_power), the model NIST certifies.
kp::DecimalProblem polynomial_text(const kt::CsvText& t, int degree) {
  kp::DecimalProblem out;
  out.columns.resize(static_cast<std::size_t>(degree));
  for (const auto& row : t.rows) {
    out.response.push_back(row[0]);
    for (int k = 1; k <= degree; ++k)
      out.columns[static_cast<std::size_t>(k - 1)].push_back(kt::decimal_power(row[1], k));
  }
  return out;
}

// NIST StRD Filip (certified values): cross_check from the decimal text has
// the exact problem as its reference, so the 50-digit end of its path (penalty
// 0, the least-squares fit) meets every certified value to >= 12 digits. The
// double overload, given the same cells correctly rounded to double, hands the
// 50 digits the double-rounded problem: on a design this ill-conditioned its
// 50-digit end misses the certified values from the 8th digit on (measured
// here: intercept -1467.48958177, LRE 7.7; the text overload's LRE is 14.3;
// issue 17 saw -1467.489641 on doubles made another way). If the text
// overload went through double, the two high paths would be the same and
// this fails.
TEST(ExternalNistPrecision, FilipCrossCheckFromDecimalTextMeetsCertifiedValues) {
  KNOTPATH_REQUIRE_REFERENCE(data, "strd/filip.csv");
  KNOTPATH_REQUIRE_REFERENCE(cert, "strd/filip.certified");
  const auto certified = certified_values(cert, 11);
  const kp::DecimalProblem text = polynomial_text(kt::read_csv_text(data), 10);
  const auto from_text = kp::cross_check<kp::float50>(text);
  ASSERT_EQ(from_text.high_path.stop_reason(), kp::StopReason::completed);
  EXPECT_TRUE(from_text.high_path.held_out().empty());
  EXPECT_GE(min_lre_at_end(from_text.high_path, certified), 12.0);

  const auto doubles = kp::parse_decimal_problem<double>(text);
  const auto from_doubles = kp::cross_check<kp::float50>(doubles.x, doubles.y);
  ASSERT_EQ(from_doubles.high_path.stop_reason(), kp::StopReason::completed);
  const kp::float50 intercept = from_doubles.high_path.at_penalty(kp::float50(0)).intercept;
  EXPECT_LT(lre(intercept, certified[0]), 10.0) << intercept.str(15);
  EXPECT_LT(min_lre_at_end(from_doubles.high_path, certified), 10.0);
  // Both double paths trace the same doubles (the text's cells correctly
  // rounded): the same knots, bit for bit.
  ASSERT_EQ(from_text.double_path.knots().size(), from_doubles.double_path.knots().size());
  for (std::size_t k = 0; k < from_text.double_path.knots().size(); ++k)
    EXPECT_EQ(from_text.double_path.knots()[k].penalty, from_doubles.double_path.knots()[k].penalty) << k;
  // Both verdicts still say the double path cannot be trusted.
  EXPECT_NE(from_text.verdict, kp::Verdict::trustworthy);
  EXPECT_NE(from_doubles.verdict, kp::Verdict::trustworthy);
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

// The paths cross_check returns are the two it compared: the summary's knot
// counts are theirs, compare_paths on them gives the same summary, and each
// equals an independent trace of the same data in its arithmetic.
TEST(Float50, CrossCheckReturnsTheTwoTracedPaths) {
  const kt::Problem prob = kt::ar1_problem(40, 8, 0.6, 35);
  kp::TraceOptions options;
  options.variant = kp::Variant::lasso;
  const auto result = kp::cross_check<kp::float50>(prob.x, prob.y, options);
  EXPECT_EQ(result.double_knots, result.double_path.knots().size());
  EXPECT_EQ(result.high_knots, result.high_path.knots().size());
  ASSERT_GT(result.double_knots, 2u);
  const kp::CrossCheck again = kp::compare_paths(result.double_path, result.high_path);
  EXPECT_EQ(again.same_events, result.same_events);
  EXPECT_EQ(again.max_relative_knot_difference, result.max_relative_knot_difference);
  EXPECT_EQ(again.max_coefficient_difference, result.max_coefficient_difference);
  EXPECT_EQ(again.verdict, result.verdict);

  const kp::Path<double> low = kp::trace<double>(prob.x, prob.y, options);
  const kp::Path<kp::float50> high =
      kp::trace<kp::float50>(kp::convert<kp::float50>(prob.x), kp::convert<kp::float50>(prob.y), options);
  ASSERT_EQ(low.knots().size(), result.double_path.knots().size());
  ASSERT_EQ(high.knots().size(), result.high_path.knots().size());
  for (std::size_t k = 0; k < low.knots().size(); ++k) {
    EXPECT_EQ(low.knots()[k].penalty, result.double_path.knots()[k].penalty) << k;
    EXPECT_EQ(low.knots()[k].predictor, result.double_path.knots()[k].predictor) << k;
  }
  for (std::size_t k = 0; k < high.knots().size(); ++k) {
    EXPECT_EQ(high.knots()[k].penalty, result.high_path.knots()[k].penalty) << k;
    EXPECT_EQ(high.knots()[k].predictor, result.high_path.knots()[k].predictor) << k;
  }
}

// The text overload on a small problem written as decimals that are not
// binary fractions: its high path is the trace of the cells parsed into 50
// digits, its double path the trace of the cells correctly rounded to double.
TEST(Float50, CrossCheckFromTextTracesTheParsedCells) {
  kp::DecimalProblem text;
  text.columns = {{"0.1", "0.7", "1.3", "2.9", "0.35", "1.1"},
                  {"3.3", "0.2", "-1.7", "0.45", "2.05", "-0.6"},
                  {"1.01", "0.99", "-0.3", "0.77", "1.9", "0.15"}};
  text.response = {"1.2", "-0.4", "0.3", "2.2", "0.9", "0.1"};
  text.weights = {"1", "0.5", "2", "1", "1.5", "1"};
  const auto result = kp::cross_check<kp::float50>(text);
  const auto high_data = kp::parse_decimal_problem<kp::float50>(text);
  EXPECT_EQ(high_data.x(0, 0) * 10, kp::float50(1));  // 0.1 to 50 digits, not the double 0.1
  const auto high = kp::trace<kp::float50>(high_data.x, high_data.y, {}, high_data.weights);
  const auto low = kp::trace<double>(high_data.x.cast<double>().eval(), high_data.y.cast<double>().eval(), {},
                                     high_data.weights.cast<double>().eval());
  ASSERT_EQ(high.knots().size(), result.high_path.knots().size());
  ASSERT_EQ(low.knots().size(), result.double_path.knots().size());
  for (std::size_t k = 0; k < high.knots().size(); ++k)
    EXPECT_EQ(high.knots()[k].penalty, result.high_path.knots()[k].penalty) << k;
  for (std::size_t k = 0; k < low.knots().size(); ++k)
    EXPECT_EQ(low.knots()[k].penalty, result.double_path.knots()[k].penalty) << k;
  EXPECT_EQ(result.verdict, kp::Verdict::trustworthy);
}

// Cells that are not decimals, and columns of the wrong length, are refused
// with the place named (row() 0-based; column() for a predictor column).
TEST(Float50, DecimalProblemRefusesBadCellsWithThePlace) {
  kp::DecimalProblem text;
  text.columns = {{"1", "2", "3"}, {"0.5", "x7", "1.5"}};
  text.response = {"1", "2", "4"};
  try {
    (void)kp::parse_decimal_problem<kp::float50>(text);
    FAIL() << "expected invalid_data";
  } catch (const kp::invalid_data& e) {
    EXPECT_EQ(e.row(), std::optional<std::size_t>(1));
    EXPECT_EQ(e.column(), std::optional<std::size_t>(1));
    EXPECT_NE(std::string(e.what()).find("'x7'"), std::string::npos) << e.what();
  }
  text.columns[1][1] = "2.5";
  text.response[2] = "4e";
  try {
    (void)kp::cross_check<kp::float50>(text);
    FAIL() << "expected invalid_data";
  } catch (const kp::invalid_data& e) {
    EXPECT_EQ(e.row(), std::optional<std::size_t>(2));
    EXPECT_FALSE(e.column().has_value());
    EXPECT_NE(std::string(e.what()).find("response"), std::string::npos) << e.what();
  }
  text.response[2] = "4";
  text.columns[0].pop_back();
  try {
    (void)kp::parse_decimal_problem<double>(text);
    FAIL() << "expected invalid_data";
  } catch (const kp::invalid_data& e) {
    EXPECT_EQ(e.column(), std::optional<std::size_t>(0));
  }
  text.columns[0].push_back("3");
  text.weights = {"1", "1"};
  EXPECT_THROW((void)kp::parse_decimal_problem<double>(text), kp::invalid_data);
}

// parse_decimal<double> is correctly rounded in one step. The cell below is
// exactly 1 + 2^-53 + 2^-70 (worked out with exact fractions): just above the
// midpoint of 1 and 1 + 2^-52, so it rounds up; read through the 64-bit
// long double first it would land on the midpoint (2^-70 is below half of
// long double's 2^-63 spacing) and round to even, down to 1 (common
// practice: the double-rounding hazard).
TEST(ParseDecimal, DoubleIsCorrectlyRoundedInOneStep) {
  const char* above_midpoint = "1.0000000000000001110231494954629083427022351315827108919620513916015625";
  EXPECT_EQ(kp::parse_decimal<double>(above_midpoint), std::nextafter(1.0, 2.0));
  EXPECT_EQ(kp::parse_decimal<double>("0.1"), 0.1);
  EXPECT_EQ(kp::parse_decimal<double>("+.5"), 0.5);
  EXPECT_EQ(kp::parse_decimal<double>("-6.860120914"), -6.860120914);
  EXPECT_EQ(kp::parse_decimal<double>("2.2250738585072014e-308"), 2.2250738585072014e-308);
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
