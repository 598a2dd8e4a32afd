// End-to-end tests of the knotpath program: they run the built executable
// (KNOTPATH_CLI_PATH) on small tables and compare what it prints and writes
// with the library's own answers, check every documented bad-input case
// (message, exit code, no output file), the demo, and the published lasso
// sequence of the diabetes data.

#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include <knotpath/demo.hpp>
#include <knotpath/io/report.hpp>
#include <knotpath/io/roles.hpp>
#include <knotpath/io/table.hpp>

#include "cli_runner.hpp"
#include "test_support.hpp"

namespace {

using knotpath::testing::Outcome;
using knotpath::testing::slurp;

namespace fs = std::filesystem;
using knotpath::Index;
using knotpath::Matrix;
using knotpath::Vector;



void spit(const fs::path& file, const std::string& text) {
  std::ofstream out(file, std::ios::binary);
  out << text;
}

// Each test works in its own scratch folder.
class Cli : public knotpath::testing::ProgramTest {
 protected:
  Cli() : ProgramTest("cli") {}
};

// A small table: the problem's predictors, the response y and a weights column w.
void write_problem(const fs::path& file, const knotpath::testing::Problem& p, const Vector<double>& w) {
  std::ofstream out(file);
  for (const auto& name : p.names) out << name << ',';
  out << "y,w\n";
  for (Index i = 0; i < p.x.rows(); ++i) {
    for (Index j = 0; j < p.x.cols(); ++j) out << knotpath::io::round_trip(p.x(i, j)) << ',';
    out << knotpath::io::round_trip(p.y(i)) << ',' << knotpath::io::round_trip(w(i)) << '\n';
  }
}

struct KnotTable {
  std::vector<std::string> header;
  std::vector<std::vector<std::string>> rows;
};

std::vector<std::string> split(const std::string& line) {
  std::vector<std::string> cells;
  std::stringstream s(line);
  std::string cell;
  while (std::getline(s, cell, ',')) cells.push_back(cell);
  if (!line.empty() && line.back() == ',') cells.emplace_back();
  return cells;
}

KnotTable read_knots(const std::string& text) {
  KnotTable t;
  std::stringstream s(text);
  std::string line;
  std::getline(s, line);
  t.header = split(line);
  while (std::getline(s, line)) t.rows.push_back(split(line));
  return t;
}

// The CLI parses the 17-significant-digit table back into the very doubles
// the library is given here (17 digits round-trip, IEEE 754-2008 section 5.12.2),
// and runs the same code: results agree to rounding noise. 1e-12 relative
// leaves room for different inlining/vectorisation between the two builds.
constexpr double kSameComputation = 1e-12;

bool close(double a, double b) { return std::abs(a - b) <= kSameComputation * (1.0 + std::abs(b)); }

// Compares a knot table printed by the program with the library's path.
void expect_same_path(const KnotTable& table, const knotpath::Path<double>& path,
                      const std::vector<std::string>& names) {
  std::vector<std::string> header{"step",   "penalty", "mu",        "event",    "predictor",
                                  "active", "l1_norm", "r_squared", "intercept"};
  header.insert(header.end(), names.begin(), names.end());
  ASSERT_EQ(table.header, header);
  ASSERT_EQ(table.rows.size(), path.knots().size());
  for (std::size_t k = 0; k < path.knots().size(); ++k) {
    const auto& knot = path.knots()[k];
    const auto& row = table.rows[k];
    ASSERT_EQ(row.size(), header.size());
    EXPECT_EQ(std::stol(row[0]), knot.step);
    EXPECT_TRUE(close(std::stod(row[1]), knot.penalty)) << row[1] << " vs " << knot.penalty;
    EXPECT_TRUE(close(std::stod(row[2]), path.mu_of(knot.penalty))) << row[2];
    const std::string event = (knot.event == knotpath::EventKind::end ||
                               knot.event == knotpath::EventKind::stop)
                                  ? knotpath::to_string(path.stop_reason())
                                  : knotpath::to_string(knot.event);
    EXPECT_EQ(row[3], event);
    EXPECT_EQ(row[4], knot.predictor >= 0 ? names[static_cast<std::size_t>(knot.predictor)] : "");
    EXPECT_EQ(std::stol(row[5]), knot.active_count);
    EXPECT_TRUE(close(std::stod(row[6]), knot.penalized_l1));
    const double r2 = 1.0 - knot.rss / path.preparation().total_sum_of_squares;
    EXPECT_TRUE(close(std::stod(row[7]), r2));
    EXPECT_TRUE(close(std::stod(row[8]), knot.intercept));
    const Vector<double> beta = path.dense_coefficients(k);
    for (Index j = 0; j < beta.size(); ++j)
      EXPECT_TRUE(close(std::stod(row[9 + static_cast<std::size_t>(j)]), beta(j)))
          << "step " << k << " predictor " << j;
  }
}

knotpath::testing::Problem small_problem() {
  return knotpath::testing::ar1_problem(60, 6, 0.5, 11, 3, 1.0);
}

Vector<double> small_weights(Index n) {
  Vector<double> w(n);
  for (Index i = 0; i < n; ++i) w(i) = 0.5 + static_cast<double>(i % 4) * 0.25;
  return w;
}

TEST_F(Cli, TraceOfASmallTableMatchesTheLibraryPath) {
  const auto p = small_problem();
  write_problem(file("t.csv"), p, small_weights(p.x.rows()));
  Outcome r = run("trace t.csv --response y --drop w --knots knots.csv --json path.json");
  ASSERT_EQ(r.code, 0) << r.err;
  EXPECT_EQ(r.err, "") << "no progress line when stderr is not a terminal";
  const auto path = knotpath::trace<double>(p.x, p.y);
  expect_same_path(read_knots(slurp(file("knots.csv"))), path, p.names);
  // The audit has one line per knot, after the heading and column titles.
  EXPECT_NE(r.out.find("step"), std::string::npos);
  EXPECT_NE(r.out.find("stop: end"), std::string::npos);
  EXPECT_NE(r.out.find("wrote knots.csv"), std::string::npos);

  const auto doc = nlohmann::json::parse(slurp(file("path.json")));
  EXPECT_EQ(doc["format"], "knotpath-path");
  ASSERT_EQ(doc["knots"].size(), path.knots().size());
  EXPECT_EQ(doc["events"].size(), path.events().size());
  EXPECT_EQ(doc["stop_reason"], "end");
  EXPECT_EQ(doc["data"]["columns_not_used"], nlohmann::json::array({"w"}));
  EXPECT_TRUE(close(doc["lambda_max"].get<double>(), path.lambda_max()));
  // mu = lambda / sqrt(n) (DESIGN.md, "Comparing penalties"), n = 60 rows.
  EXPECT_TRUE(close(doc["mu_max"].get<double>(), path.lambda_max() / std::sqrt(60.0)));
}

TEST_F(Cli, ModelOptionsReachTheLibrary) {
  const auto p = small_problem();
  const Vector<double> w = small_weights(p.x.rows());
  write_problem(file("t.csv"), p, w);
  {
    Outcome r = run("trace t.csv --response y --weights w --variant least-angle --no-standardize "
                "--penalty-scale x1=0.5,x3=2 --unpenalized x4 --ridge 0.1 --max-knots 4 --knots k.csv "
                "--json k.json");
    ASSERT_EQ(r.code, 0) << r.err;
    knotpath::TraceOptions o;
    o.variant = knotpath::Variant::least_angle;
    o.standardize = false;
    o.penalty_scales = {1, 0.5, 1, 2, 1, 1};
    o.unpenalized = {4};
    o.ridge = 0.1;
    o.max_knots = 4;
    const auto path = knotpath::trace<double>(p.x, p.y, o, w);
    EXPECT_EQ(path.stop_reason(), knotpath::StopReason::max_knots);
    expect_same_path(read_knots(slurp(file("k.csv"))), path, p.names);
    const auto doc = nlohmann::json::parse(slurp(file("k.json")));
    EXPECT_EQ(doc["options"]["variant"], "least-angle");
    EXPECT_EQ(doc["options"]["penalty_scales"]["x3"], 2.0);
    EXPECT_EQ(doc["options"]["unpenalized"], nlohmann::json::array({"x4"}));
    EXPECT_EQ(doc["data"]["weights"], "w");
  }
  {
    Outcome r = run("trace t.csv --response y --drop w,x5 --nonnegative all --no-intercept "
                "--min-penalty 1.5 --knots k2.csv");
    ASSERT_EQ(r.code, 0) << r.err;
    knotpath::TraceOptions o;
    o.sign_constraints = {knotpath::SignConstraint::nonnegative};
    o.with_intercept = false;
    o.min_penalty = 1.5;
    const Matrix<double> x = p.x.leftCols(5);
    const auto path = knotpath::trace<double>(x, p.y, o);
    std::vector<std::string> names(p.names.begin(), p.names.begin() + 5);
    expect_same_path(read_knots(slurp(file("k2.csv"))), path, names);
  }
  {
    Outcome r = run("trace t.csv --response y --use x0,x2,x4 --nonpositive x2 --max-active 2 "
                "--knots k3.csv");
    ASSERT_EQ(r.code, 0) << r.err;
    knotpath::TraceOptions o;
    o.sign_constraints = {knotpath::SignConstraint::none, knotpath::SignConstraint::nonpositive,
                          knotpath::SignConstraint::none};
    o.max_active = 2;
    Matrix<double> x(p.x.rows(), 3);
    x << p.x.col(0), p.x.col(2), p.x.col(4);
    const auto path = knotpath::trace<double>(x, p.y, o);
    expect_same_path(read_knots(slurp(file("k3.csv"))), path, {"x0", "x2", "x4"});
  }
}

// The program chooses its predictors by the library's rule (io/roles.hpp):
// a table read with ColumnRoles::read_options and split by the same roles
// gives the names, order, design, response and weights the program traced.
TEST_F(Cli, TheLibrarysSplitIsWhatTheProgramTraces) {
  const auto p = small_problem();
  const Vector<double> w = small_weights(p.x.rows());
  write_problem(file("t.csv"), p, w);
  {
    // --use in its own order, a penalty scale naming a column outside it.
    Outcome r =
        run("trace t.csv --response y --weights w --use x4,x0,x2 --penalty-scale x3=2 "
            "--knots k.csv");
    ASSERT_EQ(r.code, 0) << r.err;
    knotpath::io::ColumnRoles roles;
    roles.response = "y";
    roles.weights = "w";
    roles.use = {"x4", "x0", "x2"};
    roles.referenced = {"x3"};
    knotpath::io::Table table =
        knotpath::io::read_table(file("t.csv").string(), roles.read_options());
    const knotpath::io::TableSplit split = knotpath::io::split_table(table, roles);
    ASSERT_EQ(split.names, (std::vector<std::string>{"x0", "x2", "x3", "x4"}));
    Matrix<double> x(p.x.rows(), 4);
    x << p.x.col(0), p.x.col(2), p.x.col(3), p.x.col(4);
    EXPECT_EQ(split.x, x);  // 17 significant digits round-trip (see kSameComputation)
    EXPECT_EQ(split.y, p.y);
    EXPECT_EQ(split.weights, w);
    knotpath::TraceOptions o;
    o.penalty_scales = {1, 1, 2, 1};
    const auto path = knotpath::trace<double>(split.x, split.y, o, split.weights);
    expect_same_path(read_knots(slurp(file("k.csv"))), path, split.names);
  }
  {
    // Unweighted with --drop: the w column is a predictor like the others.
    Outcome r = run("trace t.csv --response y --drop x1,x5 --knots k2.csv");
    ASSERT_EQ(r.code, 0) << r.err;
    knotpath::io::ColumnRoles roles;
    roles.response = "y";
    roles.drop = {"x1", "x5"};
    knotpath::io::Table table =
        knotpath::io::read_table(file("t.csv").string(), roles.read_options());
    const knotpath::io::TableSplit split = knotpath::io::split_table(table, roles);
    ASSERT_EQ(split.names, (std::vector<std::string>{"x0", "x2", "x3", "x4", "w"}));
    EXPECT_EQ(split.weights.size(), 0);
    const auto path = knotpath::trace<double>(split.x, split.y);
    expect_same_path(read_knots(slurp(file("k2.csv"))), path, split.names);
  }
}

// The program words the library's role conflicts (io::role_conflict) and
// data errors in its own terms, with their exit statuses; when a command
// line has two faults, the one reported is the one it always reported.
TEST_F(Cli, ColumnRoleErrorsKeepTheirMessagesAndStatuses) {
  spit(file("t.csv"), "a,b,y,w\n1,2,3,1\n2,1,5,2\n3,5,4,1\n");
  spit(file("yw.csv"), "y,w\n1,2\n2,1\n3,5\n");
  struct Case {
    std::string args, message;
    int code;
  };
  const std::vector<Case> cases = {
      {"t.csv --response y --drop b,y", "the response \"y\" is also listed in --drop", 2},
      {"t.csv --response y --weights y", "the weights column cannot be the response", 2},
      {"t.csv --response y --use a,y", "the response \"y\" is also listed in --use", 2},
      {"t.csv --response y --weights w --drop w",
       "\"w\" is listed in --drop and used by another option", 2},
      {"t.csv --response y --use a --drop a",
       "\"a\" is listed in --drop and used by another option", 2},
      {"t.csv --response y --penalty-scale a=2 --drop a",
       "\"a\" is listed in --drop and used by another option", 2},
      {"t.csv --response y --weights w --drop w --nonnegative a --nonpositive a",
       "\"a\" is listed in both --nonnegative and --nonpositive", 2},
      {"t.csv --response y --drop y --nonnegative a --nonpositive a",
       "the response \"y\" is also listed in --drop", 2},
      {"t.csv --response y --weights w --penalty-scale w=2",
       "\"w\" is not a predictor (it is the response or the weights)", 2},
      {"yw.csv --response y --weights w",
       "yw.csv: no numeric predictor columns besides the response", 3},
      {"t.csv --response y --weights w --use w",
       "t.csv: no numeric predictor columns besides the response", 3},
  };
  for (const auto& c : cases) {
    SCOPED_TRACE(c.args);
    Outcome r = run("trace " + c.args);
    EXPECT_EQ(r.code, c.code);
    EXPECT_EQ(r.err, "knotpath: " + c.message + "\n");
    EXPECT_EQ(r.out, "");
  }
}

TEST_F(Cli, AtAgreesWithTheLibraryQueries) {
  const auto p = small_problem();
  write_problem(file("t.csv"), p, small_weights(p.x.rows()));
  const auto path = knotpath::trace<double>(p.x, p.y);
  const double lambda = 0.3 * path.lambda_max();
  const double budget = 0.4 * path.knots().back().penalized_l1;
  struct Query {
    std::string option;
    knotpath::Solution<double> expected;
  };
  const std::vector<Query> queries = {
      {fmt::format("--penalty {:.17g}", lambda), path.at_penalty(lambda)},
      {fmt::format("--mu {:.17g}", lambda / std::sqrt(60.0)), path.at_penalty(lambda)},
      {fmt::format("--budget {:.17g}", budget), path.at_budget(budget)},
      {"--relative-budget 0.5", path.at_relative_budget(0.5)},
  };
  for (const auto& q : queries) {
    Outcome r = run("at t.csv --response y --drop w --csv " + q.option);
    ASSERT_EQ(r.code, 0) << r.err;
    std::stringstream s(r.out);
    std::string line;
    std::getline(s, line);
    EXPECT_EQ(line.rfind("# point: penalty ", 0), 0u) << line;  // the point answered
    std::getline(s, line);
    EXPECT_EQ(line, "predictor,coefficient");
    std::getline(s, line);
    auto cells = split(line);
    ASSERT_EQ(cells.size(), 2u);
    EXPECT_EQ(cells[0], "(intercept)");
    // The mu query goes through lambda = mu * sqrt(n), one rounding more.
    EXPECT_TRUE(close(std::stod(cells[1]), q.expected.intercept)) << q.option;
    for (Index j = 0; j < p.x.cols(); ++j) {
      ASSERT_TRUE(std::getline(s, line));
      cells = split(line);
      EXPECT_EQ(cells[0], p.names[static_cast<std::size_t>(j)]);
      EXPECT_TRUE(close(std::stod(cells[1]), q.expected.coefficients(j)))
          << q.option << " " << cells[0] << " " << cells[1] << " vs " << q.expected.coefficients(j);
    }
    EXPECT_FALSE(std::getline(s, line)) << "one line per term only";
  }
  // The aligned form names the point with its penalty and mu.
  Outcome r = run("at t.csv --response y --drop w --relative-budget 0.5");
  ASSERT_EQ(r.code, 0) << r.err;
  EXPECT_NE(r.out.find("(mu "), std::string::npos);
  EXPECT_NE(r.out.find("(intercept)"), std::string::npos);
}

// Issue 18, point 6: a query outside the traced path. Before, `--penalty`
// below a stopped path's end printed the last knot with exit status 0 (a
// note on stderr only), and a penalty above lambda_max printed the start's
// penalty as if it were the answer's.
TEST_F(Cli, AtRefusesPointsThePathCannotAnswerAndSaysWhenAnAnswerOutsideIsExact) {
  const auto p = small_problem();
  write_problem(file("t.csv"), p, small_weights(p.x.rows()));
  const auto path = knotpath::trace<double>(p.x, p.y);
  const double top = path.lambda_max();
  const std::string table = "at t.csv --response y --drop w ";
  // Below the end of a path stopped by --min-penalty: no answer, status 8
  // (README, "Exit codes"), no coefficients on stdout.
  const std::string floor = fmt::format("--min-penalty {:.17g} ", 0.5 * top);
  for (const std::string& query :
       {fmt::format("--penalty {:.17g}", 0.25 * top),
        fmt::format("--mu {:.17g}", 0.25 * top / std::sqrt(60.0)), std::string("--budget 1e6")}) {
    SCOPED_TRACE(query);
    for (const std::string& precision : {std::string(), std::string(" --precision 50")}) {
      const Outcome r = run(table + floor + query + precision);
      EXPECT_EQ(r.code, 8) << r.out << r.err;
      EXPECT_EQ(r.out, "");
      EXPECT_NE(r.err.find("the penalty floor (--min-penalty) was reached"), std::string::npos)
          << r.err;
      EXPECT_NE(r.err.find("Trace further"), std::string::npos) << r.err;
    }
  }
  // A fraction of a stopped path's final norm is answered, and the heading
  // says whose norm that is.
  {
    const Outcome r = run(table + floor + "--relative-budget 0.5");
    ASSERT_EQ(r.code, 0) << r.err;
    EXPECT_NE(r.out.find("(share of the final L1 norm) (the traced path stopped early: the penalty floor"),
              std::string::npos)
        << r.out;
  }
  // Above lambda_max: the exact answer (all coefficients 0), said in words,
  // headed by the penalty asked.
  {
    const Outcome r = run(table + fmt::format("--penalty {:.17g}", 5 * top));
    ASSERT_EQ(r.code, 0) << r.err;
    EXPECT_EQ(r.out.rfind(fmt::format("penalty {:.17g}: penalty {:.10g} ", 5 * top, 5 * top), 0), 0u)
        << r.out;
    EXPECT_NE(r.out.find("above lambda_max"), std::string::npos) << r.out;
    EXPECT_NE(r.out.find("so this answer is exact"), std::string::npos) << r.out;
    const Outcome csv = run(table + fmt::format("--penalty {:.17g} --csv", 5 * top));
    ASSERT_EQ(csv.code, 0) << csv.err;
    EXPECT_NE(csv.err.find("knotpath: note: this is above lambda_max"), std::string::npos) << csv.err;
    for (Index j = 0; j < p.x.cols(); ++j)
      EXPECT_NE(csv.out.find(p.names[static_cast<std::size_t>(j)] + ",0\n"), std::string::npos)
          << csv.out;
  }
  // A budget above the end of a completed lasso path does not bind: the end
  // is the exact answer. With a ridge or on a least-angle path no point of
  // the path has that norm: status 8.
  const double beyond = 2 * path.knots().back().penalized_l1;
  const std::string budget = fmt::format("--budget {:.17g}", beyond);
  {
    const Outcome r = run(table + budget);
    ASSERT_EQ(r.code, 0) << r.err;
    EXPECT_NE(r.out.find("the budget does not bind"), std::string::npos) << r.out;
    EXPECT_NE(r.out.find(": penalty 0 (mu 0)"), std::string::npos) << r.out;
  }
  for (const std::string& model : {std::string("--ridge 0.5 "), std::string("--variant least-angle ")}) {
    const Outcome r = run(table + model + budget);
    EXPECT_EQ(r.code, 8) << model << r.out;
    EXPECT_EQ(r.out, "");
    EXPECT_NE(r.err.find("Ask for a budget of at most"), std::string::npos) << r.err;
  }
}

// Issue 18, point 7: what a budget returns is said in the heading (and in
// --help): least RSS under the budget for the lasso, the elastic-net point
// of that norm with a ridge, the first point reaching it on a least-angle
// path. Before, every heading said "L1 budget S" alone.
TEST_F(Cli, AtSaysWhatABudgetReturnsOnEachKindOfPath) {
  const auto p = small_problem();
  write_problem(file("t.csv"), p, small_weights(p.x.rows()));
  const std::string table = "at t.csv --response y --drop w --budget 1 ";
  const std::vector<std::pair<std::string, std::string>> cases = {
      {"", "(least RSS with L1 norm at most the budget)"},
      {"--ridge 0.5", "(the elastic-net point with that L1 norm: least RSS plus ridge term"},
      {"--variant least-angle", "(the first point of the least-angle path whose L1 norm reaches it)"},
  };
  for (const auto& [model, words] : cases) {
    const Outcome r = run(table + model);
    ASSERT_EQ(r.code, 0) << model << r.err;
    EXPECT_EQ(r.out.rfind("L1 budget 1 " + words, 0), 0u) << r.out;
  }
  const Outcome help = run("at --help");
  EXPECT_NE(help.out.find("with --ridge the elastic-net point of L1 norm S"), std::string::npos)
      << help.out;
  EXPECT_NE(help.out.find("the first"), std::string::npos);
}

// Issue 18, point 7: when p > n every predictor that reaches the boundary
// after the active set saturated is held out at a rounding-level penalty.
// The audit listed each on its own line (dozens); it now gives one line
// with the count, and the JSON names them once each in "saturation".
TEST_F(Cli, HeldOutAfterSaturationIsOneAuditLineAndNamedInTheJson) {
  const auto p = knotpath::testing::ar1_problem(12, 40, 0.2, 7, 3, 1.0);
  write_problem(file("wide.csv"), p, Vector<double>::Ones(p.x.rows()));
  const auto path = knotpath::trace<double>(p.x, p.y);
  std::vector<std::string> saturated;
  std::size_t attempts = 0;
  for (const auto& h : path.held_out()) {
    if (!h.saturated) continue;
    ++attempts;
    const std::string& name = p.names[static_cast<std::size_t>(h.predictor)];
    if (std::find(saturated.begin(), saturated.end(), name) == saturated.end())
      saturated.push_back(name);
  }
  ASSERT_GE(saturated.size(), 2u) << "the design must saturate and hold several out";
  const Outcome r = run("trace wide.csv --response y --drop w --json wide.json");
  ASSERT_EQ(r.code, 0) << r.err;
  std::size_t lines = 0;
  for (std::size_t at = r.out.find("held out"); at != std::string::npos;
       at = r.out.find("held out", at + 1))
    ++lines;
  EXPECT_EQ(lines, 1u) << r.out;
  EXPECT_NE(r.out.find(fmt::format("held out after saturation: {} predictors", saturated.size())),
            std::string::npos)
      << r.out;
  const auto doc = nlohmann::json::parse(slurp(file("wide.json")));
  EXPECT_EQ(doc["saturation"]["step"], *path.saturation_step());
  EXPECT_EQ(doc["saturation"]["held_out_count"], saturated.size());
  EXPECT_EQ(doc["saturation"]["held_out_attempts"], attempts);
  EXPECT_EQ(doc["saturation"]["held_out"], nlohmann::json(saturated));
  // Each held-out entry names the knot where it happened: the last knot at
  // or above its penalty (before, the row its entry would have taken, past
  // the end of the table or at a lower penalty).
  for (const auto& h : doc["held_out"]) {
    const auto step = h["step"].get<std::size_t>();
    ASSERT_LT(step, doc["knots"].size());
    EXPECT_GE(doc["knots"][step]["penalty"].get<double>(), h["penalty"].get<double>());
    if (step + 1 < doc["knots"].size()) {
      EXPECT_LT(doc["knots"][step + 1]["penalty"].get<double>(), h["penalty"].get<double>());
    }
  }
}

TEST_F(Cli, ReadsStandardInputWithDash) {
  const auto p = small_problem();
  write_problem(file("t.csv"), p, small_weights(p.x.rows()));
  ASSERT_EQ(run("trace t.csv --response y --drop w --knots a.csv").code, 0);
  Outcome r = run("trace - --response y --drop w --knots b.csv", file("t.csv").string());
  ASSERT_EQ(r.code, 0) << r.err;
  EXPECT_NE(r.out.find("<stdin>"), std::string::npos);
  EXPECT_EQ(slurp(file("a.csv")), slurp(file("b.csv")));
}

TEST_F(Cli, BadInputGivesItsMessageExitCodeAndNoOutput) {
  struct Case {
    std::string name, text, message;
  };
  // Messages as documented in README.md ("Exit codes" and the reader's errors).
  const std::vector<Case> cases = {
      {"empty file", "", "bad.csv, line 1: the table is empty (no header row)"},
      {"header only", "a,b,y\n", "bad.csv, line 2: the table has a header but no data rows"},
      {"non-numeric cell", "a,b,y\n1,2,3\n4,x,5\n",
       "bad.csv, line 3, column 2: cell \"x\" in numeric column \"b\" is not a number"},
      {"empty cell", "a,b,y\n1,,3\n4,5,6\n", "bad.csv, line 2, column 2: empty cell in column \"b\""},
      {"NaN", "a,b,y\n1,NaN,3\n4,5,6\n", "bad.csv, line 2, column 2: missing value \"NaN\" in column \"b\""},
      {"Inf", "a,b,y\n1,2,3\n4,5,-Inf\n", "bad.csv, line 3, column 3: cell \"-Inf\" in column \"y\" is not a finite number"},
      {"ragged row", "a,b,y\n1,2,3\n4,5\n", "bad.csv, line 3, column 3: this row has 2 fields but the header has 3 (ragged row)"},
      {"duplicate names", "a,b,a,y\n1,2,3,4\n", "bad.csv, line 1, column 3: duplicate column name \"a\""},
      {"unknown response", "a,b,z\n1,2,3\n", "bad.csv, line 1: unknown column \"y\" (the header has: a, b, z)"},
      {"unterminated quote", "a,b,y\n1,\"2,3\n", "bad.csv, line 2, column 2: unterminated quoted field"},
      {"text response", "a,b,y\nx,2,high\n", "bad.csv, line 2, column 3: column \"y\" is a text column"},
  };
  for (const auto& c : cases) {
    SCOPED_TRACE(c.name);
    spit(file("bad.csv"), c.text);
    spit(file("old.csv"), "previous content\n");
    Outcome r = run("trace bad.csv --response y --knots out.csv --json out.json");
    EXPECT_EQ(r.code, 3);
    EXPECT_EQ(r.out, "");
    EXPECT_NE(r.err.find("knotpath: " + c.message), std::string::npos) << r.err;
    Outcome again = run("trace bad.csv --response y --knots old.csv");
    EXPECT_EQ(again.code, 3);
    EXPECT_EQ(slurp(file("old.csv")), "previous content\n") << "existing file replaced on error";
    EXPECT_EQ(listing(), (std::vector<std::string>{"bad.csv", "old.csv"})) << "stray output";
  }
  // The text column that is not asked for is skipped, and said so.
  spit(file("mixed.csv"), "city,a,y\nOslo,1,2\nBergen,2,1\nTromso,3,5\n");
  Outcome r = run("trace mixed.csv --response y");
  EXPECT_EQ(r.code, 0) << r.err;
  EXPECT_NE(r.out.find("text columns skipped: city"), std::string::npos);
}

TEST_F(Cli, MissingDropReportsDroppedRows) {
  spit(file("m.csv"), "a,b,y\n1,2,3\n2,,5\n3,1,4\n4,3,NA\n5,4,9\n6,1,2\n");
  Outcome strict = run("trace m.csv --response y");
  EXPECT_EQ(strict.code, 3);
  Outcome r = run("trace m.csv --response y --missing drop --json m.json");
  ASSERT_EQ(r.code, 0) << r.err;
  EXPECT_NE(r.out.find("rows dropped for missing cells: 2"), std::string::npos) << r.out;
  const auto doc = nlohmann::json::parse(slurp(file("m.json")));
  EXPECT_EQ(doc["data"]["rows_dropped_missing"], 2);
  EXPECT_EQ(doc["data"]["rows_used"], 4);
}

TEST_F(Cli, UsageAndOutputErrorsHaveTheirExitCodes) {
  spit(file("t.csv"), "a,b,y\n1,2,3\n2,1,5\n3,5,4\n");
  EXPECT_EQ(run("").code, 2);                                        // no command
  EXPECT_EQ(run("trace t.csv").code, 2);                             // no --response
  EXPECT_EQ(run("trace t.csv --response y --colour red").code, 2);   // unknown option
  EXPECT_EQ(run("trace t.csv --response y --variant other").code, 2);
  EXPECT_EQ(run("at t.csv --response y").code, 2);                   // no point given
  EXPECT_EQ(run("at t.csv --response y --penalty 1 --relative-budget 0.5").code, 2);
  EXPECT_EQ(run("at t.csv --response y --relative-budget 1.5").code, 2);
  // Names of our own (issue 19): the old spelling of the relative budget is
  // refused, not kept as an alias.
  EXPECT_EQ(run("at t.csv --response y --fraction 0.5").code, 2);
  EXPECT_EQ(run("trace t.csv --response y --penalty-scale a").code, 2);
  // A penalty scale is finite and > 0: 0 and inf have options of their own
  // (--unpenalized, --drop), and the old spelling is refused (issue 19).
  EXPECT_EQ(run("trace t.csv --response y --penalty-scale a=0").code, 2);
  EXPECT_EQ(run("trace t.csv --response y --penalty-scale a=inf").code, 2);
  EXPECT_EQ(run("trace t.csv --response y --penalty-factor a=2").code, 2);
  // Sign constraints need the lasso variant (TraceOptions::validate); the
  // message names the program's options, not the library's field.
  Outcome sign = run("trace t.csv --response y --variant least-angle --nonnegative a");
  EXPECT_EQ(sign.code, 2);
  EXPECT_NE(sign.err.find("--nonnegative"), std::string::npos) << sign.err;
  EXPECT_EQ(sign.err.find("sign_constraints"), std::string::npos) << sign.err;
  Outcome io = run("trace t.csv --response y --knots no-such-folder/k.csv");
  EXPECT_EQ(io.code, 5);
  EXPECT_NE(io.err.find("cannot write no-such-folder/k.csv"), std::string::npos) << io.err;
  EXPECT_EQ(run("trace missing.csv --response y").code, 5);
  // A successful run replaces an existing output file.
  spit(file("k.csv"), "previous content\n");
  ASSERT_EQ(run("trace t.csv --response y --knots k.csv").code, 0);
  EXPECT_EQ(slurp(file("k.csv")).rfind("step,penalty,mu,event,", 0), 0u);
}

TEST_F(Cli, HelpForEveryCommandHasAnExampleAndVersionIsProjectVersion) {
  for (const std::string command : {"", "trace ", "at ", "demo "}) {
    Outcome r = run(command + "--help");
    EXPECT_EQ(r.code, 0) << command;
    EXPECT_NE(r.out.find("Example"), std::string::npos) << command << r.out;
  }
  Outcome v = run("--version");
  EXPECT_EQ(v.code, 0);
  EXPECT_NE(v.out.find(KNOTPATH_EXPECTED_VERSION), std::string::npos) << v.out;
}

TEST_F(Cli, DemoRunsAndItsOutputsParse) {
  Outcome r = run("demo --out demo-out");
  ASSERT_EQ(r.code, 0) << r.err;
  EXPECT_NE(r.out.find("wrote demo-out/knots.csv"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("wrote demo-out/path.json"), std::string::npos) << r.out;
  const auto data = knotpath::demo::greenhouse();
  const KnotTable table = read_knots(slurp(file("demo-out/knots.csv")));
  // The header fixed in DESIGN.md ("Contracts other code relies on").
  std::vector<std::string> header{"step",   "penalty", "mu",        "event",    "predictor",
                                  "active", "l1_norm", "r_squared", "intercept"};
  header.insert(header.end(), data.predictor_names.begin(), data.predictor_names.end());
  EXPECT_EQ(table.header, header);
  const auto doc = nlohmann::json::parse(slurp(file("demo-out/path.json")));
  EXPECT_EQ(doc["knots"].size(), table.rows.size());
  EXPECT_EQ(doc["data"]["response"], data.response_name);
  // The demo traces its own table; the library on the in-memory data must
  // give the same path (the table round-trips the doubles).
  expect_same_path(table, knotpath::trace<double>(data.x, data.y), data.predictor_names);
  EXPECT_EQ(table.rows.back()[3], "end");
}

TEST_F(Cli, DiabetesKnotTableHasThePublishedLassoSequence) {
  KNOTPATH_REQUIRE_REFERENCE(diabetes, "open/diabetes.csv");
  Outcome r = run(fmt::format("trace '{}' --response progression --knots k.csv", diabetes.string()));
  ASSERT_EQ(r.code, 0) << r.err;
  const KnotTable table = read_knots(slurp(file("k.csv")));
  // Efron, Hastie, Johnstone & Tibshirani (2004), "Least angle regression",
  // Ann. Statist. 32(2), 407-499: the lasso path of these data enters
  // bmi, s5, bp, s3, sex, s6, s1, s4, s2, age; s3 then leaves (step 11) and
  // re-enters (step 12) before the least-squares end.
  const std::vector<std::pair<std::string, std::string>> expected = {
      {"start", ""},    {"enter", "bmi"}, {"enter", "s5"}, {"enter", "bp"},  {"enter", "s3"},
      {"enter", "sex"}, {"enter", "s6"},  {"enter", "s1"}, {"enter", "s4"},  {"enter", "s2"},
      {"enter", "age"}, {"leave", "s3"},  {"enter", "s3"}, {"end", ""}};
  ASSERT_EQ(table.rows.size(), expected.size());
  for (std::size_t k = 0; k < expected.size(); ++k) {
    EXPECT_EQ(table.rows[k][0], std::to_string(k));
    EXPECT_EQ(table.rows[k][3], expected[k].first) << "step " << k;
    EXPECT_EQ(table.rows[k][4], expected[k].second) << "step " << k;
  }
  // The end of the path is the least-squares fit; its R^2 on these data is
  // 0.5177 to four places (from memory); 5e-5 is half a unit in the last place.
  EXPECT_NEAR(std::stod(table.rows.back()[7]), 0.5177, 5e-5);
}

}  // namespace
