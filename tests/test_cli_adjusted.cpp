// knotpath select's inference after selection (issue 22): the numbers it
// prints and writes are the library's (adjusted_inference.hpp) on the same
// data, and the options and cautions reach the output.
#include <gtest/gtest.h>

#include <cmath>
#include <string>

#include <nlohmann/json.hpp>

#include <knotpath/adjusted_inference.hpp>
#include <knotpath/core.hpp>
#include <knotpath/demo.hpp>

#include "cli_runner.hpp"

namespace {

namespace kp = knotpath;
using kp::Index;

class SelectAdjusted : public kp::testing::ProgramTest {
 protected:
  SelectAdjusted() : ProgramTest("adjusted", "--quiet") {}
};

// With a given noise variance and level 0.95, both choices' adjusted and
// naive intervals and p-values in the JSON equal the library's at the same
// penalties on the demo data (the table the program reads holds the demo's
// numbers to 17 digits: agreement to 1e-9 of each number's size).
TEST_F(SelectAdjusted, JsonNumbersAreTheLibrarysAtTheChosenPenalties) {
  ASSERT_EQ(run("demo").code, 0);
  const auto r = run("select knotpath-demo/greenhouse.csv --response yield_kg_m2 --noise-variance 0.15 --level 0.95 "
                     "--json s.json");
  ASSERT_EQ(r.code, 0) << r.err;
  EXPECT_NE(r.out.find("inference after selection (95% intervals; noise variance 0.15 given: exact law)"),
            std::string::npos)
      << r.out;
  EXPECT_NE(r.out.find("each interval is for the projected coefficient"), std::string::npos);
  EXPECT_NE(r.out.find("no substitute for a designed study"), std::string::npos);
  const auto doc = nlohmann::json::parse(kp::testing::slurp(file("s.json")));
  const auto& a = doc.at("adjusted_inference");
  EXPECT_EQ(a.at("exact"), true);
  const auto data = kp::demo::greenhouse();
  const kp::Path<double> path = kp::trace<double>(data.x, data.y);
  const auto prepared = kp::prepare_dense<double>(data.x, data.y, path.options());
  ASSERT_EQ(a.at("points").size(), 2u);
  for (const auto& point : a.at("points")) {
    const double lambda = point.at("penalty");
    kp::AdjustedInferenceOptions o;
    o.level = 0.95;
    o.noise_variance = 0.15;
    const kp::AdjustedInference lib = kp::adjusted_inference_at_penalty(prepared, path, lambda, o);
    ASSERT_EQ(point.at("coefficients").size(), lib.coefficients.size());
    for (std::size_t i = 0; i < lib.coefficients.size(); ++i) {
      const auto& c = lib.coefficients[i];
      const auto& j = point.at("coefficients")[i];
      EXPECT_EQ(j.at("predictor"), data.predictor_names[static_cast<std::size_t>(c.predictor)]);
      auto near = [](double got, double want) { return std::abs(got - want) <= 1e-9 * std::max(1.0, std::abs(want)); };
      EXPECT_TRUE(near(j.at("estimate"), c.estimate)) << j;
      EXPECT_TRUE(near(j.at("naive_lower"), c.naive_lower)) << j;
      EXPECT_TRUE(near(j.at("p_value"), c.p_value)) << j;
      if (std::isfinite(c.lower)) {
        EXPECT_TRUE(near(j.at("lower"), c.lower)) << j;
      }
      if (std::isfinite(c.upper)) {
        EXPECT_TRUE(near(j.at("upper"), c.upper)) << j;
      }
    }
  }
  // ForwardStop's choice is the rule applied to the entries written.
  std::vector<double> p;
  for (const auto& e : a.at("entries")) p.push_back(e.at("p_value"));
  EXPECT_EQ(a.at("forward_stop").at("kept_entries"), kp::forward_stop(p, 0.1).chosen);
}

// A level outside (0, 1) is a usage error; --no-tests skips the adjusted
// inference with a note in the JSON; the report gets the chart's file.
TEST_F(SelectAdjusted, OptionsAndReport) {
  ASSERT_EQ(run("demo").code, 0);
  EXPECT_EQ(run("select knotpath-demo/greenhouse.csv --response yield_kg_m2 --level 1.5").code, 2);
  ASSERT_EQ(run("select knotpath-demo/greenhouse.csv --response yield_kg_m2 --no-tests --json n.json").code, 0);
  const auto doc = nlohmann::json::parse(kp::testing::slurp(file("n.json")));
  EXPECT_TRUE(doc.at("adjusted_inference").contains("note"));
  ASSERT_EQ(run("select knotpath-demo/greenhouse.csv --response yield_kg_m2 --report rep").code, 0);
  EXPECT_TRUE(std::filesystem::exists(file("rep/intervals.svg")));
  EXPECT_NE(kp::testing::slurp(file("rep/report.html")).find("Inference after selection"), std::string::npos);
}

}  // namespace
