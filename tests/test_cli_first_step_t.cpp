// knotpath select's first-step t-test (noise variance unknown): the numbers
// it prints and writes are the library's (first_step_t.hpp) on the same data,
// also where the entry tests cannot estimate sigma^2 (more predictors than
// rows), and --no-tests leaves it out.
#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <string>

#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include <knotpath/core.hpp>
#include <knotpath/demo.hpp>
#include <knotpath/detail/random.hpp>
#include <knotpath/first_step_t.hpp>

#include "cli_runner.hpp"

namespace {

namespace kp = knotpath;
using kp::Index;

class SelectFirstStep : public kp::testing::ProgramTest {
 protected:
  SelectFirstStep() : ProgramTest("firststep", "--quiet") {}
};

bool near(double got, double want) { return std::abs(got - want) <= 1e-9 * std::max(1.0, std::abs(want)); }

// The demo table: the JSON member equals the library's test on the demo's
// data (the table holds them to 17 digits), the printout has the line and
// the report the sentence.
TEST_F(SelectFirstStep, DemoJsonTextAndReportAreTheLibrarys) {
  ASSERT_EQ(run("demo").code, 0);
  const auto r = run("select knotpath-demo/greenhouse.csv --response yield_kg_m2 --json s.json --report rep");
  ASSERT_EQ(r.code, 0) << r.err;
  const auto data = kp::demo::greenhouse();
  const kp::Path<double> path = kp::trace<double>(data.x, data.y);
  const kp::FirstStepT lib = kp::first_step_t_test(data.x, data.y, path);
  ASSERT_TRUE(lib.note.empty()) << lib.note;
  const auto doc = nlohmann::json::parse(kp::testing::slurp(file("s.json")));
  const auto& f = doc.at("significance").at("first_step_unknown_variance");
  EXPECT_EQ(f.at("predictor"), data.predictor_names[static_cast<std::size_t>(lib.predictor)]);
  EXPECT_EQ(f.at("sign"), lib.sign);
  EXPECT_TRUE(near(f.at("t_statistic"), lib.statistic)) << f;
  EXPECT_TRUE(near(f.at("truncation_lower"), lib.lower)) << f;
  EXPECT_TRUE(f.at("truncation_upper").is_null()) << f;
  EXPECT_EQ(f.at("degrees_of_freedom"), lib.degrees_of_freedom);
  EXPECT_TRUE(std::abs(f.at("p_value").get<double>() - lib.p_value) <= 1e-9 * lib.p_value) << f;
  EXPECT_NE(r.out.find("first step, noise variance unknown: " +
                       data.predictor_names[static_cast<std::size_t>(lib.predictor)] + " (+) t = " +
                       fmt::format("{:.4g}", lib.statistic)),
            std::string::npos)
      << r.out;
  EXPECT_NE(kp::testing::slurp(file("rep/report.html")).find("First step, noise variance unknown"), std::string::npos);
}

// More predictors than rows (8 x 12, invented here with a fixed seed): the
// entry tests are not computed (no estimate of sigma^2) but the t-test is,
// with the library's p-value; --no-tests leaves it out of text and JSON.
TEST_F(SelectFirstStep, WideTableGetsTheTestAndNoTestsLeavesItOut) {
  const Index n = 8, p = 12;
  kp::detail::SplitMix64 rng(1410);
  kp::Matrix<double> x(n, p);
  kp::Vector<double> y(n);
  {
    std::ofstream f(file("wide.csv"));
    f << "y";
    for (Index j = 0; j < p; ++j) f << ",x" << j;
    f << '\n';
    for (Index i = 0; i < n; ++i) {
      for (Index j = 0; j < p; ++j) x(i, j) = rng.normal();
      y(i) = x(i, 3) + 0.5 * rng.normal();
      f << fmt::format("{:.17g}", y(i));
      for (Index j = 0; j < p; ++j) f << fmt::format(",{:.17g}", x(i, j));
      f << '\n';
    }
  }
  const auto r = run("select wide.csv --response y --folds 4 --json w.json");
  ASSERT_EQ(r.code, 0) << r.err;
  EXPECT_NE(r.out.find("tests: not computed"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("first step, noise variance unknown: x"), std::string::npos) << r.out;
  const kp::Path<double> path = kp::trace<double>(x, y);
  const kp::FirstStepT lib = kp::first_step_t_test(x, y, path);
  ASSERT_TRUE(lib.note.empty()) << lib.note;
  const auto doc = nlohmann::json::parse(kp::testing::slurp(file("w.json")));
  const auto& f = doc.at("significance").at("first_step_unknown_variance");
  EXPECT_EQ(f.at("predictor"), fmt::format("x{}", lib.predictor));
  EXPECT_EQ(f.at("degrees_of_freedom"), static_cast<double>(n - 2));
  EXPECT_TRUE(near(f.at("p_value"), lib.p_value)) << f;
  const auto skipped = run("select wide.csv --response y --folds 4 --no-tests --json s.json");
  ASSERT_EQ(skipped.code, 0) << skipped.err;
  EXPECT_EQ(skipped.out.find("first step, noise variance unknown"), std::string::npos) << skipped.out;
  const auto doc2 = nlohmann::json::parse(kp::testing::slurp(file("s.json")));
  EXPECT_FALSE(doc2.at("significance").contains("first_step_unknown_variance"));
}

}  // namespace
