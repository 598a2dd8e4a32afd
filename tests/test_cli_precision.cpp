// End-to-end tests of the program's arithmetics: `trace`/`at` with
// --precision, and `knotpath verify` (double against 50 digits), on NIST
// StRD Filip and Longley, on a small table whose exact least-squares fit is
// worked out by hand, and on an invented ill-conditioned resin table of the
// kind the README's verify example uses (made here; the README's own table
// comes from tools/resin-table.py and is checked in test_cli_outputs.cpp).

#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include <knotpath/precision.hpp>

#include "cli_runner.hpp"
#include "decimal_text.hpp"
#include "test_support.hpp"

namespace {

using knotpath::testing::decimal_power;
using knotpath::testing::Outcome;
using knotpath::testing::slurp;

namespace fs = std::filesystem;
namespace kp = knotpath;
using json = nlohmann::json;



void spit(const fs::path& file, const std::string& text) {
  std::ofstream out(file, std::ios::binary);
  out << text;
}

std::vector<std::string> split(const std::string& line) {
  std::vector<std::string> cells;
  std::stringstream s(line);
  std::string cell;
  while (std::getline(s, cell, ',')) cells.push_back(cell);
  if (!line.empty() && line.back() == ',') cells.emplace_back();
  return cells;
}

std::vector<std::vector<std::string>> csv_rows(const std::string& text) {
  std::vector<std::vector<std::string>> rows;
  std::stringstream s(text);
  std::string line;
  while (std::getline(s, line)) rows.push_back(split(line));
  return rows;
}

// Writes y,x1..x{degree} (x1 = x, xk = x^k exact) from a two-column y,x CSV.
void write_polynomial_table(const fs::path& target, const knotpath::testing::CsvText& data, int degree) {
  std::ofstream out(target);
  out << "y";
  for (int k = 1; k <= degree; ++k) out << ",x" << k;
  out << '\n';
  for (const auto& row : data.rows) {
    out << row[0];
    for (int k = 1; k <= degree; ++k) out << ',' << decimal_power(row[1], k);
    out << '\n';
  }
}

// Log relative error (correct significant digits), the measure NIST StRD
// results are judged by (McCullough 1998, The American Statistician 52(4)).
double lre(const kp::float50& value, const kp::float50& reference) {
  if (value == reference) return 40.0;
  const kp::float50 rel = abs((value - reference) / reference);
  return -static_cast<double>(kp::float50(log10(rel)));
}

std::vector<kp::float50> certified_values(const fs::path& file, int count) {
  std::ifstream in(file);
  std::string line;
  std::vector<kp::float50> out(static_cast<std::size_t>(count));
  while (std::getline(in, line)) {
    if (line.empty() || line[0] != 'B') continue;
    const auto c1 = line.find(',');
    const int index = std::stoi(line.substr(1, c1 - 1));
    const auto c2 = line.find(',', c1 + 1);
    if (index < count)
      out[static_cast<std::size_t>(index)] =
          kp::parse_decimal<kp::float50>(line.substr(c1 + 1, c2 - c1 - 1));
  }
  return out;
}

// The verdict rule of precision.hpp (and of verify's report), applied to
// the figures verify reports: the verdict must follow from them.
std::string verdict_from_figures(const json& doc) {
  if (!doc["same_events"].get<bool>() || doc["max_coefficient_difference"].get<double>() > 1e-3)
    return "wrong";
  if (doc["max_relative_knot_difference"].get<double>() > 1e-9 ||
      doc["max_coefficient_difference"].get<double>() > 1e-6)
    return "degraded";
  return "trustworthy";
}

// An invented ill-conditioned design of the kind of the README's verify
// example (fixed seed; not the README's table itself): the hardness of a cured resin against the cure temperature's
// excess over 60 C as a degree-9 polynomial. Excesses have 2 decimals in
// [1, 4], so the power columns are exact finite decimals, all positive and
// nearly collinear.
void write_resin_table(const fs::path& target) {
  std::mt19937 engine(20240607u);
  std::uniform_int_distribution<int> centi(100, 400);
  std::normal_distribution<double> noise(0.0, 0.002);
  std::ofstream out(target);
  out << "hardness";
  for (int k = 1; k <= 9; ++k) out << ",t" << k;
  out << '\n';
  for (int i = 0; i < 60; ++i) {
    const int c = centi(engine);
    const double t = c / 100.0;
    const double hardness = 71.5 + 2.0 * t - 1.1 * t * t + 0.35 * t * t * t -
                            0.04 * t * t * t * t + noise(engine);
    out << fmt::format("{:.4f}", hardness);
    const std::string text = fmt::format("{}{}.{:02d}", c < 0 ? "-" : "", std::abs(c) / 100, std::abs(c) % 100);
    for (int k = 1; k <= 9; ++k) out << ',' << decimal_power(text, k);
    out << '\n';
  }
}

class CliPrecision : public knotpath::testing::ProgramTest {
 protected:
  CliPrecision() : ProgramTest("prec", "--quiet") {}
};

TEST(DecimalPower, IsExact) {
  // Worked by hand: 1.5^3 = 3.375, (-0.25)^2 = 0.0625, (-0.25)^3 = -0.015625.
  EXPECT_EQ(decimal_power("1.5", 3), "3.375");
  EXPECT_EQ(decimal_power("-0.25", 2), "0.0625");
  EXPECT_EQ(decimal_power("-0.25", 3), "-0.015625");
  EXPECT_EQ(decimal_power("-6.860120914", 1), "-6.860120914");
}

// NIST StRD Filip (degree-10 polynomial, 82 observations): the double path
// cannot be trusted; verify must say so in its report, its JSON and its
// exit status (6 degraded or 7 wrong, documented in README.md).
TEST_F(CliPrecision, VerifyOnNistFilipIsNotTrustworthy) {
  KNOTPATH_REQUIRE_REFERENCE(data, "strd/filip.csv");
  write_polynomial_table(file("filip10.csv"), knotpath::testing::read_csv_text(data), 10);
  const Outcome r = run("verify filip10.csv --response y --json v.json");
  EXPECT_TRUE(r.code == 6 || r.code == 7) << r.code << "\n" << r.out << r.err;
  EXPECT_EQ(r.out.find("verdict:                        trustworthy"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("thresholds: wrong:"), std::string::npos) << r.out;
  const json doc = json::parse(slurp(file("v.json")));
  EXPECT_EQ(doc["format"], "knotpath-verify");
  EXPECT_NE(doc["verdict"], "trustworthy");
  EXPECT_EQ(doc["verdict"], verdict_from_figures(doc));
  EXPECT_EQ(doc["exit_status"], r.code);
  EXPECT_EQ(r.code, doc["verdict"] == "wrong" ? 7 : 6);
  EXPECT_TRUE(doc["double_suspect"].get<bool>()) << "the double path's own health check";
  // NIST rates Filip "higher difficulty"; the factor's condition estimate
  // must show it beyond 1e8 = 1/sqrt(double epsilon), where a Cholesky-type
  // solve has lost half of double's digits (common practice).
  EXPECT_GT(doc["condition_estimate"].get<double>(), 1e8);
  if (!doc["same_events"].get<bool>()) {
    EXPECT_NE(r.out.find("DIFFER from step"), std::string::npos);
    EXPECT_TRUE(doc["first_difference"].is_object());
  }
}

// NIST StRD Filip certified values: `trace --precision 50` ends (penalty 0,
// with intercept) at the certified coefficients with LRE >= 12 on every
// one. The certified values carry 15 significant digits, so 12 leaves room
// for the last digits of rounding in NIST's own table.
TEST_F(CliPrecision, TraceIn50DigitsEndsAtNistFilipCertifiedValues) {
  KNOTPATH_REQUIRE_REFERENCE(data, "strd/filip.csv");
  KNOTPATH_REQUIRE_REFERENCE(cert, "strd/filip.certified");
  write_polynomial_table(file("filip10.csv"), knotpath::testing::read_csv_text(data), 10);
  const Outcome r = run("trace filip10.csv --response y --precision 50 --knots k.csv --json k.json");
  ASSERT_EQ(r.code, 0) << r.err;
  EXPECT_NE(r.out.find("arithmetic: 50 significant digits"), std::string::npos) << r.out;
  const auto rows = csv_rows(slurp(file("k.csv")));
  ASSERT_GE(rows.size(), 3u);
  const auto& last = rows.back();
  ASSERT_EQ(last.size(), 9u + 10u);
  EXPECT_EQ(last[3], "end");
  EXPECT_EQ(last[1], "0");
  const auto certified = certified_values(cert, 11);
  double worst = lre(kp::parse_decimal<kp::float50>(last[8]), certified[0]);
  for (std::size_t j = 1; j <= 10; ++j)
    worst = std::min(worst, lre(kp::parse_decimal<kp::float50>(last[8 + j]), certified[j]));
  EXPECT_GE(worst, 12.0);
  // 50-digit numbers are written with all their digits (53 significant).
  const json doc = json::parse(slurp(file("k.json")));
  EXPECT_EQ(doc["precision"]["digits"], 50);
  EXPECT_TRUE(doc["knots"].back()["intercept"].is_string());
  EXPECT_GE(doc["knots"].back()["intercept"].get<std::string>().size(), 50u);
  EXPECT_TRUE(doc["knots"].back()["decimal"]["intercept"].is_number());
}

// The double trace of NIST StRD Filip is flagged by its own health check:
// the audit says SUSPECT, marks the knots and points to verify; the JSON
// carries the health member.
TEST_F(CliPrecision, DoubleTraceOfNistFilipPrintsTheSuspectWarning) {
  KNOTPATH_REQUIRE_REFERENCE(data, "strd/filip.csv");
  write_polynomial_table(file("filip10.csv"), knotpath::testing::read_csv_text(data), 10);
  const Outcome r = run("trace filip10.csv --response y --json k.json");
  ASSERT_EQ(r.code, 0) << r.err;
  EXPECT_NE(r.out.find("WARNING: SUSPECT PATH"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("knotpath verify filip10.csv --response y"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("health"), std::string::npos) << "the health column";
  const json doc = json::parse(slurp(file("k.json")));
  ASSERT_TRUE(doc.contains("health"));
  EXPECT_TRUE(doc["health"]["suspect"].get<bool>());
  EXPECT_FALSE(doc["health"]["suspect_steps"].empty());
  EXPECT_NE(doc["health"]["advice"].get<std::string>().find("knotpath verify"), std::string::npos);
}

// NIST StRD Longley: a hard but not hopeless design; the double path passes
// the cross-check (trustworthy or degraded), exit status 0 or 6.
TEST_F(CliPrecision, VerifyOnNistLongleyPasses) {
  KNOTPATH_REQUIRE_REFERENCE(data, "strd/longley.csv");
  const Outcome r = run(fmt::format("verify '{}' --response y --json v.json", data.string()));
  EXPECT_TRUE(r.code == 0 || r.code == 6) << r.code << "\n" << r.out << r.err;
  const json doc = json::parse(slurp(file("v.json")));
  EXPECT_TRUE(doc["same_events"].get<bool>());
  EXPECT_NE(doc["verdict"], "wrong");
  EXPECT_EQ(doc["verdict"], verdict_from_figures(doc));
  EXPECT_EQ(r.code, doc["verdict"] == "trustworthy" ? 0 : 6);
}

// Exact mode on a small table, against a least-squares fit worked out by
// hand. Data (x1, x2, y):
//   (0, 1, 1), (1, 0, 2.5), (2, 1, 2), (3, 0.5, 4), (0.25, 0, 1.5)
// Means: x1 6.25/5 = 5/4, x2 2.5/5 = 1/2, y 11/5.
// Centred sums (S11 = sum x1^2 - n m1^2, ...):
//   sum x1^2 = 14.0625 -> S11 = 14.0625 - 7.8125 = 6.25 = 25/4
//   sum x2^2 = 2.25    -> S22 = 2.25 - 1.25 = 1
//   sum x1 x2 = 3.5    -> S12 = 3.5 - 3.125 = 3/8
//   sum x1 y = 18.875  -> S1y = 18.875 - 13.75 = 5.125 = 41/8
//   sum x2 y = 5       -> S2y = 5 - 5.5 = -1/2
// Normal equations [25/4 3/8; 3/8 1] b = [41/8; -1/2]; det = 25/4 - 9/64 = 391/64
//   b1 = (41/8 * 1 - 3/8 * (-1/2)) / det = (85/16)(64/391) = 340/391 = 20/23
//   b2 = (25/4 * (-1/2) - 3/8 * 41/8) / det = (-323/64)(64/391) = -323/391 = -19/23
//   b0 = 11/5 - 5/4 * 20/23 + 1/2 * 19/23 = (506 - 250 + 95) / 230 = 351/230
TEST_F(CliPrecision, ExactModePrintsTheHandComputedLeastSquaresFractions) {
  spit(file("small.csv"), "x1,x2,y\n0,1,1\n1,0,2.5\n2,1,2\n3,0.5,4\n0.25,0,1.5\n");
  const std::string b0 = "351/230", b1 = "20/23", b2 = "-19/23";
  // The hand-computed fractions solve the normal equations (checked here in
  // exact arithmetic, so a slip in the comment above cannot go unnoticed).
  {
    using R = kp::rational;
    const R s11 = R(25) / 4, s12 = R(3) / 8, s22 = 1, s1y = R(41) / 8, s2y = R(-1) / 2;
    const R c1 = R(20) / 23, c2 = R(-19) / 23;
    EXPECT_EQ(s11 * c1 + s12 * c2, s1y);
    EXPECT_EQ(s12 * c1 + s22 * c2, s2y);
    EXPECT_EQ(R(11) / 5 - R(5) / 4 * c1 - R(1) / 2 * c2, R(351) / 230);
  }
  const Outcome r = run("trace small.csv --response y --precision exact --no-standardize "
                        "--knots k.csv --json k.json");
  ASSERT_EQ(r.code, 0) << r.err;
  EXPECT_NE(r.out.find("arithmetic: exact rational"), std::string::npos) << r.out;
  const auto rows = csv_rows(slurp(file("k.csv")));
  ASSERT_GE(rows.size(), 3u);
  const std::vector<std::string> header{
      "step",      "penalty",         "mu",         "event",           "predictor",
      "active",    "l1_norm",         "r_squared",  "intercept",       "x1",
      "x2",        "decimal:penalty", "decimal:mu", "decimal:l1_norm", "decimal:r_squared",
      "decimal:intercept", "decimal:x1", "decimal:x2"};
  EXPECT_EQ(rows[0], header);
  const auto& last = rows.back();
  ASSERT_EQ(last.size(), header.size());
  EXPECT_EQ(last[3], "end");
  EXPECT_EQ(last[1], "0/1");
  EXPECT_EQ(last[2], "0/1");  // mu = lambda / n, exact without standardization
  EXPECT_EQ(last[8], b0);
  EXPECT_EQ(last[9], b1);
  EXPECT_EQ(last[10], b2);
  // mu of the start is its penalty over n = 5 rows, as an exact fraction.
  {
    const kp::rational start(rows[1][1].c_str()), mu(rows[1][2].c_str());  // "p/q" text
    EXPECT_GT(start, 0);
    EXPECT_EQ(mu, start / 5) << rows[1][1] << " " << rows[1][2];
  }
  // Decimal approximations: nearest doubles, within one rounding (2^-53
  // relative) of the fractions.
  EXPECT_NEAR(std::stod(last[15]), 351.0 / 230.0, 1e-15);
  EXPECT_NEAR(std::stod(last[16]), 20.0 / 23.0, 1e-15);
  EXPECT_NEAR(std::stod(last[17]), -19.0 / 23.0, 1e-15);
  // JSON: exact fractions as strings, nearest doubles in "decimal".
  const json doc = json::parse(slurp(file("k.json")));
  EXPECT_EQ(doc["precision"]["exact"], true);
  const json& end = doc["knots"].back();
  EXPECT_EQ(end["intercept"], b0);
  EXPECT_EQ(end["coefficients"]["x1"], b1);
  EXPECT_EQ(end["coefficients"]["x2"], b2);
  EXPECT_NEAR(end["decimal"]["coefficients"]["x1"].get<double>(), 20.0 / 23.0, 1e-15);
  // `at` answers with the same fractions.
  const Outcome at = run("at small.csv --response y --precision exact --no-standardize "
                         "--relative-budget 1 --csv");
  ASSERT_EQ(at.code, 0) << at.err;
  ASSERT_EQ(at.out.rfind("# point: penalty 0/1, mu 0\n", 0), 0u) << at.out;  // the point, exactly
  const auto lines = csv_rows(at.out.substr(at.out.find('\n') + 1));
  ASSERT_EQ(lines.size(), 4u);
  EXPECT_EQ(lines[0], (std::vector<std::string>{"predictor", "coefficient", "decimal:coefficient"}));
  EXPECT_EQ(lines[1][1], b0);
  EXPECT_EQ(lines[2][1], b1);
  EXPECT_EQ(lines[3][1], b2);
  // Standardizing needs square roots: refused with the reason.
  const Outcome refused = run("trace small.csv --response y --precision exact");
  EXPECT_EQ(refused.code, 2);
  EXPECT_NE(refused.err.find("--no-standardize"), std::string::npos) << refused.err;
}

// Regression: `at --mu` in exact mode was refused with "lambda = mu *
// sqrt(n) is irrational", but exact mode needs --no-standardize, where the
// size-free penalty is mu = lambda / n (scaling.hpp): a rational query. The
// same point asked as --mu M and as --penalty M * n (n = 5 rows) gives the
// same fractions.
TEST_F(CliPrecision, ExactModeAnswersMuThroughLambdaOverN) {
  spit(file("small.csv"), "x1,x2,y\n0,1,1\n1,0,2.5\n2,1,2\n3,0.5,4\n0.25,0,1.5\n");
  const std::string common = "at small.csv --response y --precision exact --no-standardize --csv ";
  const Outcome by_mu = run(common + "--mu 0.03");
  ASSERT_EQ(by_mu.code, 0) << by_mu.err;
  const Outcome by_penalty = run(common + "--penalty 0.15");
  ASSERT_EQ(by_penalty.code, 0) << by_penalty.err;
  EXPECT_EQ(by_mu.out, by_penalty.out);
  // A point inside the path (some coefficient not zero), not the start.
  EXPECT_NE(by_mu.out.find("x1,"), std::string::npos);
  ASSERT_EQ(by_mu.out.rfind("# point: penalty 3/20, mu 0.029999999999999999\n", 0), 0u) << by_mu.out;
  const auto lines = csv_rows(by_mu.out.substr(by_mu.out.find('\n') + 1));
  ASSERT_EQ(lines.size(), 4u);
  EXPECT_TRUE(lines[2][1] != "0/1" || lines[3][1] != "0/1") << by_mu.out;
  // The help text states both conversions.
  const Outcome help = run("at --help");
  EXPECT_NE(help.out.find("lambda / sqrt(n) for standardized columns"), std::string::npos) << help.out;
  EXPECT_NE(help.out.find("mu = lambda / n for columns kept on their own scale"), std::string::npos)
      << help.out;
}

// On a well-conditioned table the 50-digit, long double and MPFR traces give
// the double path's knots; 1e-12 relative to lambda_max is far above double
// rounding on a design of condition ~10 (common practice) and far below any
// real difference.
TEST_F(CliPrecision, OtherArithmeticsAgreeWithDoubleOnAWellConditionedTable) {
  const auto p = knotpath::testing::ar1_problem(40, 5, 0.3, 7, 2, 1.0);
  {
    std::ofstream out(file("t.csv"));
    for (const auto& name : p.names) out << name << ',';
    out << "y\n";
    for (kp::Index i = 0; i < p.x.rows(); ++i) {
      for (kp::Index j = 0; j < p.x.cols(); ++j) out << fmt::format("{:.17g},", p.x(i, j));
      out << fmt::format("{:.17g}\n", p.y(i));
    }
  }
  ASSERT_EQ(run("trace t.csv --response y --knots d.csv").code, 0);
  const auto reference = csv_rows(slurp(file("d.csv")));
  std::vector<std::string> modes{"--precision long-double", "--precision 50"};
#ifdef KNOTPATH_HAVE_MPFR
  modes.push_back("--precision mpfr --digits 30");
#endif
  const double top = std::stod(reference[1][1]);
  for (const auto& mode : modes) {
    SCOPED_TRACE(mode);
    const Outcome r = run("trace t.csv --response y --knots h.csv " + mode);
    ASSERT_EQ(r.code, 0) << r.err;
    const auto rows = csv_rows(slurp(file("h.csv")));
    ASSERT_EQ(rows.size(), reference.size());
    for (std::size_t k = 1; k < rows.size(); ++k) {
      EXPECT_EQ(rows[k][3], reference[k][3]);
      EXPECT_EQ(rows[k][4], reference[k][4]);
      EXPECT_NEAR(std::stod(rows[k][1]), std::stod(reference[k][1]), 1e-12 * top);
    }
  }
  // A clean path in double: no health column, no warning, and verify agrees.
  const Outcome plain = run("trace t.csv --response y");
  EXPECT_EQ(plain.out.find("SUSPECT"), std::string::npos);
  const Outcome v = run("verify t.csv --response y");
  EXPECT_EQ(v.code, 0) << v.out << v.err;
  EXPECT_NE(v.out.find("event sequences:                identical"), std::string::npos) << v.out;
  // --digits belongs to mpfr.
  EXPECT_EQ(run("trace t.csv --response y --precision 50 --digits 60").code, 2);
}

// The invented resin table (fixed seed), as in the README's verify example:
// the degree-9 polynomial columns make double unreliable; verify must not
// call it trustworthy. KNOTPATH_KEEP_EXAMPLE=DIR keeps a copy of the table.
TEST_F(CliPrecision, VerifyOnTheInventedResinTableIsNotTrustworthy) {
  write_resin_table(file("resin.csv"));
  if (const char* keep = std::getenv("KNOTPATH_KEEP_EXAMPLE"); keep && *keep)
    fs::copy_file(file("resin.csv"), fs::path(keep) / "resin.csv",
                  fs::copy_options::overwrite_existing);
  const Outcome r = run("verify resin.csv --response hardness --json v.json");
  EXPECT_TRUE(r.code == 6 || r.code == 7) << r.code << "\n" << r.out << r.err;
  const json doc = json::parse(slurp(file("v.json")));
  EXPECT_EQ(doc["verdict"], verdict_from_figures(doc));
}

// `at` in double says when the point it answers lies on a suspect stretch of
// the path (the invented resin table: nearly collinear compositional
// columns, flagged suspect by the path's own health check), and stays quiet
// at the start of the path, where no factor has been formed yet (common
// practice: the all-zero solution at lambda_max needs no solve).
TEST_F(CliPrecision, AtWarnsWhereTheDoublePathIsSuspect) {
  write_resin_table(file("resin.csv"));
  const Outcome end = run("at resin.csv --response hardness --relative-budget 1");
  ASSERT_EQ(end.code, 0) << end.err;
  EXPECT_NE(end.err.find("WARNING: SUSPECT POINT"), std::string::npos) << end.err;
  EXPECT_NE(end.err.find("knotpath verify resin.csv --response hardness"), std::string::npos) << end.err;
  const Outcome start = run("at resin.csv --response hardness --relative-budget 0");
  ASSERT_EQ(start.code, 0) << start.err;
  EXPECT_EQ(start.err.find("SUSPECT"), std::string::npos) << start.err;
}

}  // namespace
