// End-to-end tests of `knotpath select` and of the --report DIR option of
// trace, select and demo: they run the built executable (KNOTPATH_CLI_PATH)
// on small tables and check what it prints and writes against the library
// (cross_validate, information_criteria, entry_significance), against an
// independent coordinate-descent refit of every fold, and against published
// formulas; the reports are parsed with tinyxml2 (Debian libtinyxml2-dev).

#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <functional>
#include <iterator>
#include <map>
#include <random>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include <fmt/format.h>
#include <tinyxml2.h>
#include <nlohmann/json.hpp>

#include <Eigen/QR>

#include <knotpath/criteria.hpp>
#include <knotpath/cross_validation.hpp>
#include <knotpath/demo.hpp>
#include <knotpath/detail/random.hpp>
#include <knotpath/inference.hpp>
#include <knotpath/io/charts.hpp>
#include <knotpath/io/report.hpp>
#include <knotpath/precision.hpp>

#include "cli_runner.hpp"
#include "test_support.hpp"

namespace {

using knotpath::testing::Outcome;
using knotpath::testing::slurp;

namespace fs = std::filesystem;
using knotpath::Index;
using knotpath::Matrix;
using knotpath::Vector;
using json = nlohmann::json;

class Select : public knotpath::testing::ProgramTest {
 protected:
  Select() : ProgramTest("select", "--quiet") {}
};

// The problem as a table (x0..x{p-1}, y, and a fold label column when given).
void write_table(const fs::path& file, const knotpath::testing::Problem& p,
                 const std::vector<int>& labels = {}) {
  std::ofstream out(file);
  for (const auto& name : p.names) out << name << ',';
  out << 'y' << (labels.empty() ? "" : ",part") << '\n';
  for (Index i = 0; i < p.x.rows(); ++i) {
    for (Index j = 0; j < p.x.cols(); ++j) out << knotpath::io::round_trip(p.x(i, j)) << ',';
    out << knotpath::io::round_trip(p.y(i));
    if (!labels.empty()) out << ',' << labels[static_cast<std::size_t>(i)];
    out << '\n';
  }
}

double relative(double a, double b) {
  return std::abs(a - b) / std::max({std::abs(a), std::abs(b), 1e-300});
}

// Held-out squared error of all rows at the size-free penalty mu, every fold
// refitted by the independent coordinate-descent solver of test_support.hpp
// on its training rows (intercept, standardized columns): the K-fold
// cross-validation estimate of Hastie, Tibshirani & Friedman, The Elements of
// Statistical Learning (2nd ed.), section 7.10.1. With standardized columns
// the fold's own penalty is lambda = mu * sqrt(n_train) (the size-free
// penalty documented in cross_validation.hpp and the README).
double refit_cv_error(const Matrix<double>& x, const Vector<double>& y,
                      const std::vector<int>& fold, int k, double mu) {
  double sse = 0;
  for (int f = 0; f < k; ++f) {
    std::vector<Index> train, test;
    for (Index i = 0; i < x.rows(); ++i)
      (fold[static_cast<std::size_t>(i)] == f ? test : train).push_back(i);
    Matrix<double> xt(static_cast<Index>(train.size()), x.cols());
    Vector<double> yt(static_cast<Index>(train.size()));
    for (std::size_t r = 0; r < train.size(); ++r) {
      xt.row(static_cast<Index>(r)) = x.row(train[r]);
      yt(static_cast<Index>(r)) = y(train[r]);
    }
    const auto c = knotpath::testing::centre(xt, yt, true, true);
    const double lambda = mu * std::sqrt(static_cast<double>(train.size()));
    const Vector<double> b = knotpath::testing::coordinate_descent(c.z, c.y, lambda);
    const Vector<double> beta = b.cwiseQuotient(c.scale);
    const double intercept = c.ymean - c.mean.dot(beta);
    for (Index i : test) {
      const double r = y(i) - intercept - x.row(i).dot(beta);
      sse += r * r;
    }
  }
  return sse / static_cast<double>(x.rows());
}

struct ParsedXml {
  tinyxml2::XMLDocument doc;
  tinyxml2::XMLError error = tinyxml2::XML_SUCCESS;
};

std::unique_ptr<ParsedXml> parse_xml(const fs::path& file) {
  auto p = std::make_unique<ParsedXml>();
  const std::string text = slurp(file);
  p->error = p->doc.Parse(text.c_str(), text.size());
  return p;
}

// Every attribute that could fetch something (src, href, xlink:href) points
// inside the document (#id) or nowhere: the report must be readable offline.
void expect_only_embedded(const tinyxml2::XMLElement* e, const std::string& file) {
  for (; e; e = e->NextSiblingElement()) {
    for (const char* name : {"src", "href", "xlink:href"})
      if (const char* v = e->Attribute(name)) {
        EXPECT_EQ(v[0], '#') << file << ": " << e->Name() << ' ' << name << '=' << v;
      }
    EXPECT_STRNE(e->Name(), "script") << file;
    expect_only_embedded(e->FirstChildElement(), file);
  }
}

// Checks a report folder: the files, each parsing as XML, only embedded content.
void expect_report(const fs::path& dir, bool with_selection) {
  std::vector<std::string> want{"activity.svg", "budget.svg", "report.html", "traces.svg"};
  if (with_selection) want.push_back("selection.svg");
  // select's adjusted intervals (chart 5) when some predictor is active at a choice.
  if (with_selection && fs::exists(dir / "intervals.svg")) want.push_back("intervals.svg");
  // select --repeats R > 1: the stability chart (chart 6).
  if (with_selection && fs::exists(dir / "stability.svg")) want.push_back("stability.svg");
  std::sort(want.begin(), want.end());
  std::vector<std::string> have;
  for (const auto& entry : fs::directory_iterator(dir)) have.push_back(entry.path().filename());
  std::sort(have.begin(), have.end());
  EXPECT_EQ(have, want) << dir;
  for (const auto& name : want) {
    const auto parsed = parse_xml(dir / name);
    ASSERT_EQ(parsed->error, tinyxml2::XML_SUCCESS) << name << ": " << parsed->doc.ErrorStr();
    const tinyxml2::XMLElement* root = parsed->doc.RootElement();
    ASSERT_NE(root, nullptr) << name;
    EXPECT_STREQ(root->Name(), name == "report.html" ? "html" : "svg") << name;
    expect_only_embedded(root, name);
  }
  const std::string html = slurp(dir / "report.html");
  // The caution box (ReportOptions::cautions) with the usual caution.
  EXPECT_NE(html.find("<div class=\"cautions\">"), std::string::npos);
  EXPECT_NE(html.find("sole basis for decisions with consequences for people"), std::string::npos);
  EXPECT_EQ(html.find("p-values are valid only under the model") != std::string::npos,
            with_selection);
  EXPECT_EQ(html.find("<h2>Selection</h2>") != std::string::npos, with_selection);
}

// A small problem with a sparse truth and fold labels 1..4 (user's numbering).
struct Fixture {
  knotpath::testing::Problem p = knotpath::testing::ar1_problem(64, 8, 0.4, 20261207u, 3, 1.5);
  std::vector<int> labels;
  Fixture() {
    for (Index i = 0; i < p.x.rows(); ++i) labels.push_back(1 + static_cast<int>((i * 5) % 4));
  }
};

// ------------------------------------------------------------------------------------------

TEST_F(Select, AgreesWithTheLibraryOnSeededFolds) {
  Fixture fx;
  write_table(file("t.csv"), fx.p);
  Outcome r = run("select t.csv --response y --folds 5 --seed 11 --threads 2 --json s.json");
  ASSERT_EQ(r.code, 0) << r.err;
  const json doc = json::parse(slurp(file("s.json")));

  knotpath::CrossValidationOptions cv;
  cv.folds = 5;
  cv.seed = 11;
  const auto lib = knotpath::cross_validate<double>(fx.p.x, fx.p.y, knotpath::TraceOptions{}, cv);
  // The table holds 17 significant digits, so the program reads the same
  // doubles and runs the same code: agreement to rounding. 1e-12 relative
  // leaves room for different floating-point contraction between the two
  // builds (the task's tolerance).
  const auto& c = doc["cross_validation"];
  EXPECT_EQ(c["folds"]["from"], "seed");
  EXPECT_EQ(c["folds"]["count"], 5);
  EXPECT_LE(relative(c["minimum"]["penalty"].get<double>(), lib.minimum.lambda), 1e-12);
  EXPECT_LE(relative(c["minimum"]["mu"].get<double>(), lib.minimum.mu), 1e-12);
  EXPECT_LE(relative(c["minimum"]["cv_error"].get<double>(), lib.minimum.error), 1e-12);
  EXPECT_LE(relative(c["minimum"]["standard_error"].get<double>(), lib.minimum.standard_error),
            1e-12);
  EXPECT_LE(relative(c["parsimonious"]["penalty"].get<double>(), lib.parsimonious.lambda), 1e-12);
  EXPECT_LE(relative(c["parsimonious"]["cv_error"].get<double>(), lib.parsimonious.error), 1e-12);
  EXPECT_EQ(c["pieces"].get<std::size_t>(), lib.pieces.size());
  EXPECT_EQ(c["curve_at_knots"].size(), lib.knot_points().size());

  // Coefficients at the choices: the library's path queried there.
  // Only the nonzero coefficients are listed, as in the path document.
  const auto at = lib.full_path.at_penalty(lib.minimum.lambda);
  EXPECT_LE(relative(c["minimum"]["intercept"].get<double>(), at.intercept), 1e-12);
  for (Index j = 0; j < at.coefficients.size(); ++j) {
    const std::string& name = fx.p.names[static_cast<std::size_t>(j)];
    EXPECT_EQ(c["minimum"]["coefficients"].contains(name), at.coefficients(j) != 0) << name;
    if (at.coefficients(j) != 0) {
      EXPECT_NEAR(c["minimum"]["coefficients"][name].get<double>(), at.coefficients(j),
                  1e-12 * (1 + std::abs(at.coefficients(j))));
    }
  }

  const auto ic = knotpath::information_criteria<double>(fx.p.x, fx.p.y, lib.full_path);
  const auto& d = doc["information_criteria"];
  EXPECT_EQ(d["noise_variance_source"], "least-squares");
  EXPECT_LE(relative(d["noise_variance"].get<double>(), ic.noise_variance), 1e-12);
  EXPECT_EQ(d["best_mallows_cp"]["step"].get<Index>(), ic.knots[ic.best_cp].step);
  EXPECT_EQ(d["best_aic"]["step"].get<Index>(), ic.knots[ic.best_aic].step);
  EXPECT_EQ(d["best_bic"]["step"].get<Index>(), ic.knots[ic.best_bic].step);

  const auto sig = knotpath::entry_significance<double>(fx.p.x, fx.p.y, lib.full_path);
  const auto& e = doc["significance"]["entries"];
  ASSERT_EQ(e.size(), sig.entries.size());
  for (std::size_t k = 0; k < e.size(); ++k) {
    EXPECT_EQ(e[k]["step"].get<Index>(), sig.entries[k].step);
    if (std::isfinite(sig.entries[k].covariance_p_value)) {
      EXPECT_LE(
          relative(e[k]["covariance_p_value"].get<double>(), sig.entries[k].covariance_p_value),
          1e-9);
    } else {
      EXPECT_TRUE(e[k]["covariance_p_value"].is_null());
    }
    if (std::isfinite(sig.entries[k].spacing_p_value)) {
      EXPECT_LE(relative(e[k]["spacing_p_value"].get<double>(), sig.entries[k].spacing_p_value),
                1e-9);
    }
  }

  // The printed text: both choices, the criteria, coefficients, cautions.
  EXPECT_NE(r.out.find(fmt::format("{:.7g}", lib.minimum.lambda)), std::string::npos) << r.out;
  EXPECT_NE(r.out.find(fmt::format("{:.7g}", lib.parsimonious.lambda)), std::string::npos) << r.out;
  for (const char* needle :
       {"least CV error (exact)", "parsimonious (within 1 SE)", "Mallows' Cp", "AIC", "BIC",
        "(intercept)", "p(spacing)", "caution: the p-values are valid only under",
        "selection effects", "sole basis for decisions with consequences for people",
        "wrote s.json"})
    EXPECT_NE(r.out.find(needle), std::string::npos) << needle << '\n' << r.out;

  // The thread count does not change the result (cross_validation.hpp's promise).
  Outcome one = run("select t.csv --response y --folds 5 --seed 11 --threads 1 --json s1.json");
  ASSERT_EQ(one.code, 0) << one.err;
  EXPECT_EQ(json::parse(slurp(file("s1.json")))["cross_validation"], c);
}

TEST_F(Select, FoldColumnMatchesAnIndependentRefitAndThePublishedFormulas) {
  Fixture fx;
  write_table(file("t.csv"), fx.p, fx.labels);
  Outcome r = run("select t.csv --response y --fold-column part --json s.json");
  ASSERT_EQ(r.code, 0) << r.err;
  const json doc = json::parse(slurp(file("s.json")));
  const auto& c = doc["cross_validation"];
  EXPECT_EQ(c["folds"]["from"], "column");
  EXPECT_EQ(c["folds"]["count"], 4);
  // The fold column is no predictor.
  EXPECT_FALSE(c["minimum"]["coefficients"].contains("part"));
  EXPECT_EQ(doc["path"]["data"]["predictors"].size(), 8u);

  // Labels 1..4 are folds 0..3 in ascending order of the label.
  std::vector<int> fold;
  for (int l : fx.labels) fold.push_back(l - 1);
  const double mu = c["minimum"]["mu"].get<double>();
  const double error = c["minimum"]["cv_error"].get<double>();
  // Coordinate descent converges to 1e-13 relative change, so each refit's
  // predictions carry errors near 1e-11 of their size; 1e-8 relative is ample.
  EXPECT_LE(relative(refit_cv_error(fx.p.x, fx.p.y, fold, 4, mu), error), 1e-8);
  EXPECT_LE(relative(refit_cv_error(fx.p.x, fx.p.y, fold, 4, c["parsimonious"]["mu"].get<double>()),
                     c["parsimonious"]["cv_error"].get<double>()),
            1e-8);
  // The exact minimum is never above the refitted error at any grid point
  // (80 log-spaced penalties over the curve's domain); the 1e-9 slack covers
  // the refits' own convergence error.
  const double hi = c["mu_high"].get<double>(), lo = std::max(c["mu_low"].get<double>(), hi * 1e-4);
  for (int g = 0; g <= 80; ++g) {
    const double m = hi * std::pow(lo / hi, g / 80.0);
    EXPECT_LE(error, refit_cv_error(fx.p.x, fx.p.y, fold, 4, m) * (1 + 1e-9)) << "mu " << m;
  }

  // Mallows' Cp at each knot: RSS / sigma^2 - n + 2 d, with sigma^2 the
  // residual variance of the full least-squares fit on n - p - 1 df and
  // d = nonzero + 1 (Mallows 1973, Technometrics 15(4); df of the lasso:
  // Zou, Hastie & Tibshirani 2007, Ann. Statist. 35(5), Theorem 1).
  const Index n = fx.p.x.rows(), p = fx.p.x.cols();
  Matrix<double> design(n, p + 1);
  design << Vector<double>::Ones(n), fx.p.x;
  const Vector<double> beta = design.colPivHouseholderQr().solve(fx.p.y);
  const double sigma2 = (fx.p.y - design * beta).squaredNorm() / static_cast<double>(n - p - 1);
  const auto& d = doc["information_criteria"];
  // Two least-squares solves in double on a well-conditioned design: 1e-10.
  EXPECT_LE(relative(d["noise_variance"].get<double>(), sigma2), 1e-10);
  std::size_t best = 0;
  std::vector<double> cp;
  for (const auto& k : d["knots"]) {
    cp.push_back(k["rss"].get<double>() / sigma2 - static_cast<double>(n) +
                 2.0 * (k["nonzero"].get<double>() + 1));
    // Cp is O(n); the rss is recomputed by the library, so 1e-9 absolute on this scale.
    EXPECT_NEAR(k["mallows_cp"].get<double>(), cp.back(), 1e-9 * n);
    if (cp.back() < cp[best]) best = cp.size() - 1;
  }
  EXPECT_EQ(d["best_mallows_cp"]["step"], d["knots"][best]["step"]);

  // Covariance statistic of the first entry: with unit-length columns the
  // active set before it is empty and b(lambda_2) = s (lambda_1 - lambda_2) on
  // that column, so T_1 = lambda_1 (lambda_1 - lambda_2) / sigma^2 (Lockhart,
  // Taylor, Tibshirani & Tibshirani 2014, Ann. Statist. 42(2), section 2; the
  // form is from memory and re-derived here). p-value with the F(2, n-p-1)
  // reference: (1 + 2T/d)^(-d/2) (same paper, section 4 -- from memory).
  const auto& first = doc["significance"]["entries"][0];
  const double l1 = first["penalty"].get<double>();
  double l2 = 0;
  for (const auto& k : doc["path"]["knots"])
    if (k["penalty"].get<double>() < l1) {
      l2 = k["penalty"].get<double>();
      break;
    }
  const double t1 = l1 * (l1 - l2) / sigma2;
  // Both sides are O(1) sums of a few products: 1e-9 relative.
  EXPECT_LE(relative(first["covariance_statistic"].get<double>(), t1), 1e-9);
  const double df = static_cast<double>(n - p - 1);
  EXPECT_LE(relative(first["covariance_p_value"].get<double>(), std::pow(1 + 2 * t1 / df, -df / 2)),
            1e-9);
}

TEST_F(Select, JsonHasTheDocumentedFields) {
  Fixture fx;
  write_table(file("t.csv"), fx.p);
  Outcome r = run("select t.csv --response y --leave-one-out --noise-variance 2.25 --json s.json");
  ASSERT_EQ(r.code, 0) << r.err;
  const json doc = json::parse(slurp(file("s.json")));
  EXPECT_EQ(doc["format"], "knotpath-selection");
  for (const char* key :
       {"program", "cross_validation", "information_criteria", "significance", "cautions", "path"})
    EXPECT_TRUE(doc.contains(key)) << key;
  const auto& c = doc["cross_validation"];
  EXPECT_EQ(c["folds"]["from"], "leave-one-out");
  EXPECT_EQ(c["folds"]["count"].get<Index>(), fx.p.x.rows());
  for (const char* key :
       {"penalty", "mu", "cv_error", "standard_error", "active", "intercept", "coefficients"}) {
    EXPECT_TRUE(c["minimum"].contains(key)) << key;
    EXPECT_TRUE(c["parsimonious"].contains(key)) << key;
  }
  // The one-standard-error choice is never below the minimizer.
  EXPECT_GE(c["parsimonious"]["mu"].get<double>(), c["minimum"]["mu"].get<double>());
  EXPECT_EQ(doc["information_criteria"]["noise_variance_source"], "given");
  EXPECT_EQ(doc["information_criteria"]["noise_variance"], 2.25);
  EXPECT_EQ(doc["significance"]["noise_variance"], 2.25);
  EXPECT_EQ(doc["significance"]["covariance_reference"], "Exp(1)");
  // Known sigma^2: the Exp(1) p-value exp(-T) (Lockhart et al. 2014, Theorem 1).
  // Both sides are exp of the same printed double (17 digits), a value in
  // [0, 1]: 1e-12 absolute is far above the rounding of one exp.
  for (const auto& e : doc["significance"]["entries"])
    if (!e["covariance_statistic"].is_null()) {
      EXPECT_NEAR(e["covariance_p_value"].get<double>(),
                  std::exp(-e["covariance_statistic"].get<double>()), 1e-12);
    }
  EXPECT_EQ(doc["path"]["knots"].size(), doc["information_criteria"]["knots"].size());
}

// Issue 18, point 10: what select says about its numbers. A strong effect
// (p-values far below 1e-10: printed as "< 1e-10", the JSON keeps the
// number); the threshold of the parsimonious choice with the standard error
// that set it (at the minimum), not the one at the choice; the tests' null
// hypotheses and limits; "exact" explained; the AIC form named. Then pure
// noise with more predictors than rows: the noise variance of the criteria
// comes from the fit at the least CV error (Reid, Tibshirani & Friedman
// 2016), the JSON names that estimator, and the tests' refusal names the
// program's option --noise-variance, not a library field.
TEST_F(Select, WordingNamesEstimatorsThresholdAndTheLimitsOfTheTests) {
  knotpath::testing::Problem strong;
  knotpath::detail::SplitMix64 g(4242);
  strong.x.resize(120, 4);
  strong.y.resize(120);
  for (Index i = 0; i < 120; ++i) {
    for (Index j = 0; j < 4; ++j) strong.x(i, j) = g.normal();
    strong.y(i) = 5.0 * strong.x(i, 0) + 0.5 * g.normal();
  }
  for (int j = 0; j < 4; ++j) strong.names.push_back("x" + std::to_string(j));
  write_table(file("strong.csv"), strong);
  Outcome r = run("select strong.csv --response y --folds 5 --json s.json");
  ASSERT_EQ(r.code, 0) << r.err;
  const json doc = json::parse(slurp(file("s.json")));
  const double p1 = doc["significance"]["entries"][0]["covariance_p_value"].get<double>();
  EXPECT_LT(p1, 1e-10);
  EXPECT_GE(p1, 0.0);
  EXPECT_NE(r.out.find("< 1e-10"), std::string::npos) << r.out;
  EXPECT_EQ(r.out.find(fmt::format("{:.3g}", p1)), std::string::npos) << r.out;
  const auto& c = doc["cross_validation"];
  const double se = c["minimum"]["standard_error"].get<double>();
  const double threshold = c["minimum"]["cv_error"].get<double>() + se;
  EXPECT_LE(relative(c["one_standard_error_rule"]["threshold"].get<double>(), threshold), 1e-15);
  EXPECT_EQ(c["one_standard_error_rule"]["standard_error_at_minimum"].get<double>(), se);
  EXPECT_NE(r.out.find(fmt::format("is at most {:.7g} = least CV error {:.7g} + its standard error "
                                   "{:.4g}",
                                   threshold, c["minimum"]["cv_error"].get<double>(), se)),
            std::string::npos)
      << r.out;
  // Issue 19, point 4: the two choices in sentences of our own, not a
  // table with a header row; each sentence carries the JSON's numbers, and
  // the standard error only where it belongs (at the minimum).
  EXPECT_EQ(r.out.find("  choice "), std::string::npos) << r.out;
  const auto plural = [](std::size_t n) { return n == 1 ? "" : "s"; };
  const auto least_active = c["minimum"]["active"].get<std::size_t>();
  EXPECT_NE(r.out.find(fmt::format(
                "  least CV error (exact): {:.7g} (standard error {:.4g}) at "
                "lambda {:.7g}, mu {:.7g}, with {} predictor{} active\n",
                c["minimum"]["cv_error"].get<double>(), se, c["minimum"]["penalty"].get<double>(),
                c["minimum"]["mu"].get<double>(), least_active, plural(least_active))),
            std::string::npos)
      << r.out;
  const auto lean_active = c["parsimonious"]["active"].get<std::size_t>();
  const std::string lean = fmt::format(
      "  parsimonious (within 1 SE): lambda {:.7g}, mu {:.7g}, with {} predictor{} active and CV "
      "error {:.7g},\n    the largest mu",
      c["parsimonious"]["penalty"].get<double>(), c["parsimonious"]["mu"].get<double>(),
      lean_active, plural(lean_active), c["parsimonious"]["cv_error"].get<double>());
  EXPECT_NE(r.out.find(lean), std::string::npos) << lean << '\n' << r.out;
  for (const char* needle :
       {"different questions", "exact only at step 1 and only with a known noise variance",
        "reference law is asymptotic", "multiple-testing problem",
        "grid-free minimizer of this K-fold curve", "unknown-variance form n log(RSS/n) + 2 d"})
    EXPECT_NE(r.out.find(needle), std::string::npos) << needle << '\n' << r.out;
  EXPECT_EQ(doc["significance"]["reading"].size(), 4u);

  knotpath::testing::Problem noise;
  noise.x.resize(40, 80);
  noise.y.resize(40);
  for (Index i = 0; i < 40; ++i) {
    for (Index j = 0; j < 80; ++j) noise.x(i, j) = g.normal();
    noise.y(i) = g.normal();
  }
  for (int j = 0; j < 80; ++j) noise.names.push_back("x" + std::to_string(j));
  write_table(file("noise.csv"), noise);
  Outcome wide = run("select noise.csv --response y --json w.json");
  ASSERT_EQ(wide.code, 0) << wide.err;
  const json w = json::parse(slurp(file("w.json")));
  EXPECT_EQ(w["information_criteria"]["noise_variance_source"], "cross-validated-fit");
  EXPECT_NE(wide.out.find("Reid, Tibshirani & Friedman 2016"), std::string::npos) << wide.out;
  EXPECT_NE(wide.out.find("tests: not computed"), std::string::npos) << wide.out;
  EXPECT_NE(wide.out.find("--noise-variance"), std::string::npos) << wide.out;
  EXPECT_EQ(wide.out.find("Options::"), std::string::npos) << wide.out;
  EXPECT_EQ(w.dump().find("Options::"), std::string::npos);
}

TEST_F(Select, ReportParsesAndNothingIsLeftOnError) {
  Fixture fx;
  write_table(file("t.csv"), fx.p);
  Outcome r = run("select t.csv --response y --folds 4 --report rep");
  ASSERT_EQ(r.code, 0) << r.err;
  EXPECT_NE(r.out.find("wrote rep/report.html"), std::string::npos) << r.out;
  expect_report(file("rep"), true);

  Outcome t = run("trace t.csv --response y --report trace-rep");
  ASSERT_EQ(t.code, 0) << t.err;
  EXPECT_NE(t.out.find("wrote trace-rep/report.html"), std::string::npos) << t.out;
  expect_report(file("trace-rep"), false);

  // Bad input: exit 3 (documented), no JSON, no report folder, no temporary folder.
  const auto before = listing();
  std::ofstream(file("bad.csv")) << "a,b,y\n1,2,3\n4,oops,6\n7,8,9\n";
  Outcome bad = run("select bad.csv --response y --folds 2 --json bad.json --report bad-rep");
  EXPECT_EQ(bad.code, 3) << bad.err;
  EXPECT_NE(bad.err.find("oops"), std::string::npos) << bad.err;
  auto after = listing();
  after.erase(std::remove(after.begin(), after.end(), "bad.csv"), after.end());
  EXPECT_EQ(after, before);

  // The report cannot be written (its parent is a file): exit 5, and no
  // partial report anywhere.
  std::ofstream(file("blocker")) << "x";
  Outcome io = run("select t.csv --response y --folds 4 --report blocker/rep");
  EXPECT_EQ(io.code, 5) << io.err;
  EXPECT_TRUE(fs::is_regular_file(file("blocker")));
  after = listing();
  after.erase(std::remove(after.begin(), after.end(), "bad.csv"), after.end());
  after.erase(std::remove(after.begin(), after.end(), "blocker"), after.end());
  EXPECT_EQ(after, before);

  // An existing report is replaced file by file.
  const std::string old = slurp(file("rep/report.html"));
  Outcome again = run("select t.csv --response y --folds 5 --report rep");
  ASSERT_EQ(again.code, 0) << again.err;
  EXPECT_NE(slurp(file("rep/report.html")), old);
  expect_report(file("rep"), true);
}

// The cells of the table with this id in a parsed report (header row first).
std::vector<std::vector<std::string>> table_cells(const tinyxml2::XMLElement* root,
                                                  const std::string& id) {
  std::vector<std::vector<std::string>> rows;
  std::function<void(const tinyxml2::XMLElement*)> rows_of = [&](const tinyxml2::XMLElement* e) {
    for (; e; e = e->NextSiblingElement()) {
      if (std::string(e->Name()) == "tr") {
        rows.emplace_back();
        for (const auto* c = e->FirstChildElement(); c; c = c->NextSiblingElement())
          rows.back().push_back(c->GetText() ? c->GetText() : "");
      } else {
        rows_of(e->FirstChildElement());
      }
    }
  };
  std::function<void(const tinyxml2::XMLElement*)> find = [&](const tinyxml2::XMLElement* e) {
    for (; e; e = e->NextSiblingElement()) {
      if (const char* at = e->Attribute("id"); at && id == at && std::string(e->Name()) == "table")
        rows_of(e->FirstChildElement());
      else
        find(e->FirstChildElement());
    }
  };
  find(root);
  return rows;
}

// Issue 19, point 3: the select report shows the numbers, not only the
// charts: the two choices in the printout's sentences, the coefficients at
// each (the JSON's values to the 8 digits shown), the criteria at every knot
// with the least rows marked, the entry tests; plain tables (no script).
TEST_F(Select, ReportShowsBothChoicesTheirCoefficientsTheCriteriaAndTheTests) {
  Fixture fx;
  write_table(file("t.csv"), fx.p);
  Outcome r = run("select t.csv --response y --folds 4 --json s.json --report rep");
  ASSERT_EQ(r.code, 0) << r.err;
  const json doc = json::parse(slurp(file("s.json")));
  const auto parsed = parse_xml(file("rep/report.html"));
  ASSERT_EQ(parsed->error, tinyxml2::XML_SUCCESS) << parsed->doc.ErrorStr();
  const auto* root = parsed->doc.RootElement();
  const std::string html = slurp(file("rep/report.html"));
  EXPECT_EQ(html.find("<script"), std::string::npos);

  // The sentences of the printout, word for word.
  for (const char* start : {"  least CV error (exact): ", "  parsimonious (within 1 SE): "}) {
    const auto at = r.out.find(start);
    ASSERT_NE(at, std::string::npos) << r.out;
    const std::string sentence =
        r.out.substr(at + 2, r.out.find_first_of(",\n", r.out.find("active", at)) - at - 2);
    EXPECT_NE(html.find(sentence), std::string::npos) << sentence;
  }

  // Coefficients: intercept first, then every predictor nonzero at either choice.
  const auto coefficients = table_cells(root, "kp-choices");
  ASSERT_GE(coefficients.size(), 2u);
  EXPECT_EQ(coefficients[1][0], "(intercept)");
  const auto& cv = doc["cross_validation"];
  std::map<std::string, std::vector<std::string>> row_of;
  for (std::size_t i = 1; i < coefficients.size(); ++i) {
    ASSERT_EQ(coefficients[i].size(), 3u);
    row_of[coefficients[i][0]] = coefficients[i];
  }
  std::set<std::string> nonzero;
  for (const auto& [column, key] :
       {std::pair<std::size_t, const char*>{1, "minimum"}, {2, "parsimonious"}}) {
    EXPECT_LE(
        relative(std::stod(row_of["(intercept)"][column]), cv[key]["intercept"].get<double>()),
        1e-7);
    for (const auto& [name, value] : cv[key]["coefficients"].items()) {
      nonzero.insert(name);
      ASSERT_TRUE(row_of.count(name)) << name;
      EXPECT_LE(relative(std::stod(row_of[name][column]), value.get<double>()), 1e-7)
          << name << ' ' << key;
    }
  }
  EXPECT_EQ(coefficients.size(), nonzero.size() + 2);  // header, intercept, the nonzero ones

  // The criteria at every knot; the rows where each is least are marked.
  const auto criteria = table_cells(root, "kp-criteria");
  const auto& ic = doc["information_criteria"];
  ASSERT_EQ(criteria.size(), ic["knots"].size() + 1);
  for (std::size_t k = 0; k < ic["knots"].size(); ++k) {
    const auto& c = ic["knots"][k];
    EXPECT_EQ(criteria[k + 1][0], std::to_string(c["step"].get<long>()));
    EXPECT_LE(relative(std::stod(criteria[k + 1][6]), c["mallows_cp"].get<double>()), 1e-6);
    EXPECT_LE(relative(std::stod(criteria[k + 1][8]), c["bic"].get<double>()), 1e-6);
  }
  for (const char* best : {"best_mallows_cp", "best_aic", "best_bic"})
    EXPECT_NE(
        html.find(fmt::format("<tr class=\"marked\"><td>{}</td>", ic[best]["step"].get<long>())),
        std::string::npos)
        << best;

  // The entry tests: one row per entry, the predictor named, the p-values shown.
  const auto tests = table_cells(root, "kp-entry-tests");
  const auto& entries = doc["significance"]["entries"];
  ASSERT_EQ(tests.size(), entries.size() + 1);
  for (std::size_t k = 0; k < entries.size(); ++k) {
    EXPECT_EQ(tests[k + 1][0], std::to_string(entries[k]["step"].get<long>()));
    EXPECT_EQ(tests[k + 1][1], entries[k]["predictor"].get<std::string>());
    if (entries[k]["covariance_p_value"].is_number() &&
        entries[k]["covariance_p_value"].get<double>() >= 1e-10) {
      EXPECT_LE(
          relative(std::stod(tests[k + 1][6]), entries[k]["covariance_p_value"].get<double>()),
          5e-3);
    }
  }
  EXPECT_NE(html.find("multiple-testing problem"), std::string::npos);
  EXPECT_NE(html.find("sole basis for decisions with consequences for people"), std::string::npos);

  // Without the tests, the section says why instead of showing an empty table.
  Outcome quiet = run("select t.csv --response y --folds 4 --no-tests --report rep2");
  ASSERT_EQ(quiet.code, 0) << quiet.err;
  const std::string html2 = slurp(file("rep2/report.html"));
  EXPECT_NE(html2.find("<p>Not computed: skipped (--no-tests)</p>"), std::string::npos);
  EXPECT_EQ(html2.find("id=\"kp-entry-tests\""), std::string::npos);
}

// The size-free penalty of the report follows the scaling of the path:
// mu = lambda / sqrt(n) on standardized columns, lambda / n with
// --no-standardize (DESIGN.md, "Comparing penalties"); here n = 64 rows.
TEST_F(Select, ReportMuFollowsTheScalingOfThePath) {
  Fixture fx;
  write_table(file("t.csv"), fx.p);
  const double n = static_cast<double>(fx.p.x.rows());
  struct Case {
    const char* flag;
    const char* definition;
    double divisor;
  };
  for (const Case& c : {Case{"", "\xCE\xBC = \xCE\xBB/\xE2\x88\x9An", std::sqrt(n)},
                        Case{" --no-standardize", "\xCE\xBC = \xCE\xBB/n", n}}) {
    fs::remove_all(file("mu-rep"));
    Outcome r = run(
        std::string("select t.csv --response y --folds 4 --json mu.json --report mu-rep") + c.flag);
    ASSERT_EQ(r.code, 0) << r.err;
    const std::string html = slurp(file("mu-rep/report.html"));
    const std::string selection = slurp(file("mu-rep/selection.svg"));
    // The selection axis and the audit header name the definition in use.
    EXPECT_NE(selection.find(std::string(c.definition) + " ("), std::string::npos) << c.flag;
    EXPECT_NE(html.find(std::string("<th>") + c.definition + "</th>"), std::string::npos) << c.flag;
    // The audit's first mu is lambda_max / divisor, written with 6 significant
    // digits: a relative 1e-5 holds it.
    const json doc = json::parse(slurp(file("mu.json")));
    const double mu_max = doc["path"]["knots"][0]["penalty"].get<double>() / c.divisor;
    const std::string row = "<tr><td>0</td><td>";
    const auto at = html.find(row);
    ASSERT_NE(at, std::string::npos);
    const auto mu_cell = html.find("</td><td>", at + row.size()) + 9;
    EXPECT_NEAR(std::strtod(html.c_str() + mu_cell, nullptr), mu_max, 1e-5 * mu_max) << c.flag;
  }
}

TEST_F(Select, UsageAndInputErrorsHaveTheirCodes) {
  Fixture fx;
  write_table(file("t.csv"), fx.p, fx.labels);
  // Documented exit codes: 2 usage, 3 bad input.
  EXPECT_EQ(run("select t.csv --response y --folds 1").code, 2);
  EXPECT_EQ(run("select t.csv --response y --folds 5 --leave-one-out").code, 2);
  EXPECT_EQ(run("select t.csv --response y --fold-column part --seed 3").code, 2);
  EXPECT_EQ(run("select t.csv --response y --noise-variance -1").code, 2);
  EXPECT_EQ(run("select t.csv --response y --fold-column y").code, 2);
  EXPECT_EQ(run("select t.csv --response y --fold-column nothere").code, 3);
  std::ofstream(file("frac.csv")) << "a,b,y,part\n1,2,3,0.5\n4,1,6,1\n7,8,2,0\n2,2,2,1\n";
  Outcome frac = run("select frac.csv --response y --fold-column part");
  EXPECT_EQ(frac.code, 3) << frac.err;
  EXPECT_NE(frac.err.find("not a whole number"), std::string::npos) << frac.err;
  Outcome help = run("select --help");
  EXPECT_EQ(help.code, 0);
  EXPECT_NE(help.out.find("Example"), std::string::npos) << help.out;
  EXPECT_NE(help.out.find("--fold-column"), std::string::npos) << help.out;
}

TEST_F(Select, DemoRunsTheSelectionAndWritesItsReport) {
  Outcome r = run("demo --out demo-out");
  ASSERT_EQ(r.code, 0) << r.err;
  // The demo's earlier lines are kept (test_cli checks them too).
  EXPECT_NE(r.out.find("wrote demo-out/knots.csv"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("wrote demo-out/report/report.html"), std::string::npos) << r.out;
  expect_report(file("demo-out/report"), true);

  // The selection section shows the library's exact choices on the demo data
  // (10 folds, default seed), printed with 6 significant digits.
  const auto data = knotpath::demo::greenhouse();
  const auto cv = knotpath::cross_validate<double>(data.x, data.y, knotpath::TraceOptions{},
                                                   knotpath::CrossValidationOptions{});
  EXPECT_NE(r.out.find(fmt::format("least CV error:             lambda {:.6g}", cv.minimum.lambda)),
            std::string::npos)
      << r.out;
  EXPECT_NE(
      r.out.find(fmt::format("parsimonious (within 1 SE): lambda {:.6g}", cv.parsimonious.lambda)),
      std::string::npos)
      << r.out;

  // --report moves the report elsewhere.
  Outcome moved = run("demo --out demo2 --report elsewhere");
  ASSERT_EQ(moved.code, 0) << moved.err;
  EXPECT_NE(moved.out.find("wrote elsewhere/report.html"), std::string::npos) << moved.out;
  EXPECT_FALSE(fs::exists(file("demo2/report")));
  expect_report(file("elsewhere"), true);
}

TEST(ReportCautions, AreEscapedAndShownOnlyWhenGiven) {
  const auto data = knotpath::demo::greenhouse();
  const auto path = knotpath::trace<double>(data.x, data.y);
  const auto chart = knotpath::charts::chart_path(path, data.predictor_names, data.response_name);
  knotpath::charts::ReportOptions ro;
  EXPECT_EQ(knotpath::charts::report_html(chart, ro).find("class=\"cautions\""), std::string::npos);
  ro.cautions = {"p < 0.05 & \"selection\" effects"};
  const std::string html = knotpath::charts::report_html(chart, ro);
  EXPECT_NE(html.find("<li>p &lt; 0.05 &amp; &quot;selection&quot; effects</li>"),
            std::string::npos);
  tinyxml2::XMLDocument doc;
  EXPECT_EQ(doc.Parse(html.c_str(), html.size()), tinyxml2::XML_SUCCESS) << doc.ErrorStr();
}

}  // namespace

// ------------------------------------------------------------------------------------------
// Issue 18: select reports the health of its path, can choose in higher
// precision, prints the audit's notes, names penalties as the path document
// does, and can skip the entry tests.

namespace {

// An invented scenario: the temperature of a cooling kiln read at 40 evenly
// spaced times t in [0, 1], a cubic trend plus noise, regressed on the powers
// t, t^2, ..., t^9 (a degree-9 polynomial design: its columns are nearly
// collinear, condition number near 1e12 after standardizing; the trouble of
// the Vandermonde/Hilbert-like designs is common practice). The cells are
// kept as written (17 significant digits) so that a reference can parse the
// same decimal text.
struct KilnTable {
  std::vector<std::vector<std::string>> cells;  // rows: t1..t9, temperature
  void write(const fs::path& file) const {
    std::ofstream out(file);
    for (int k = 1; k <= 9; ++k) out << 't' << k << ',';
    out << "temperature\n";
    for (const auto& row : cells) {
      for (std::size_t c = 0; c < row.size(); ++c) out << (c ? "," : "") << row[c];
      out << '\n';
    }
  }
};

KilnTable kiln_table() {
  std::mt19937_64 gen(20261218u);
  std::normal_distribution<double> noise(0.0, 0.5);
  KilnTable table;
  for (int i = 0; i < 40; ++i) {
    const double t = i / 39.0;
    std::vector<std::string> row;
    double power = 1;
    for (int k = 1; k <= 9; ++k) row.push_back(knotpath::io::round_trip(power *= t));
    row.push_back(knotpath::io::round_trip(20 + 60 * t - 45 * t * t + 12 * t * t * t + noise(gen)));
    table.cells.push_back(row);
  }
  return table;
}

}  // namespace

TEST_F(Select, SuspectPathIsWarnedInTextJsonAndReport) {
  kiln_table().write(file("kiln.csv"));
  Outcome trace = run("trace kiln.csv --response temperature");
  ASSERT_EQ(trace.code, 0) << trace.err;
  ASSERT_NE(trace.out.find("WARNING: SUSPECT PATH"), std::string::npos)
      << "the scenario must give a suspect double path\n"
      << trace.out;
  Outcome r = run("select kiln.csv --response temperature --json s.json --report rep");
  ASSERT_EQ(r.code, 0) << r.err;
  // The same warning paragraph as trace (io::suspect_warning), and the
  // advice to choose in higher precision.
  const auto from = trace.out.find("WARNING: SUSPECT PATH");
  EXPECT_NE(r.out.find(trace.out.substr(from)), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("knotpath select --precision 50"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("  suspect\n"), std::string::npos) << r.out;
  const json doc = json::parse(slurp(file("s.json")));
  ASSERT_TRUE(doc.contains("health"));
  EXPECT_TRUE(doc["health"]["suspect"].get<bool>());
  EXPECT_FALSE(doc["health"]["suspect_steps"].empty());
  EXPECT_TRUE(doc["health"]["advice"].is_string());
  EXPECT_EQ(doc["health"], doc["path"]["health"]);
  EXPECT_NE(slurp(file("rep/report.html")).find("SUSPECT PATH"), std::string::npos);
}

TEST_F(Select, PrecisionFiftyChoosesAsAFiftyDigitReference) {
  const KilnTable table = kiln_table();
  table.write(file("kiln.csv"));
  Outcome r = run("select kiln.csv --response temperature --precision 50 --json s.json");
  ASSERT_EQ(r.code, 0) << r.err;
  EXPECT_NE(r.out.find("arithmetic: 50 significant digits"), std::string::npos) << r.out;
  const json doc = json::parse(slurp(file("s.json")));
  EXPECT_EQ(doc["precision"]["digits"], 50);
  // In 50 digits the path is clean: no warning.
  EXPECT_FALSE(doc["health"]["suspect"].get<bool>());
  EXPECT_EQ(r.out.find("WARNING"), std::string::npos) << r.out;

  // The reference: the library's cross-validation in 50-digit arithmetic
  // (knotpath::float50) on the table's decimal text parsed exactly, default
  // folds and seed as the program's.
  using knotpath::float50;
  const Index n = static_cast<Index>(table.cells.size());
  Matrix<float50> x(n, 9);
  Vector<float50> y(n);
  for (Index i = 0; i < n; ++i) {
    const auto& row = table.cells[static_cast<std::size_t>(i)];
    for (Index j = 0; j < 9; ++j)
      x(i, j) = knotpath::parse_decimal<float50>(row[static_cast<std::size_t>(j)]);
    y(i) = knotpath::parse_decimal<float50>(row[9]);
  }
  const auto cv = knotpath::cross_validate<float50>(x, y, knotpath::TraceOptions{},
                                                    knotpath::CrossValidationOptions{});
  const auto& c = doc["cross_validation"];
  // The program writes the nearest doubles of the same 50-digit values:
  // agreement to the rounding of one double (1e-15 relative).
  EXPECT_LE(relative(c["minimum"]["penalty"].get<double>(), static_cast<double>(cv.minimum.lambda)),
            1e-15);
  EXPECT_LE(relative(c["parsimonious"]["penalty"].get<double>(),
                     static_cast<double>(cv.parsimonious.lambda)),
            1e-15);
  EXPECT_LE(relative(c["minimum"]["cv_error"].get<double>(), static_cast<double>(cv.minimum.error)),
            1e-15);
  EXPECT_EQ(c["pieces"].get<std::size_t>(), cv.pieces.size());

  // Exact arithmetic cannot cross-validate (square roots): a usage error.
  Outcome exact = run("select kiln.csv --response temperature --precision exact --no-standardize");
  EXPECT_EQ(exact.code, 2);
  EXPECT_NE(exact.err.find("select --precision exact is unavailable"), std::string::npos)
      << exact.err;
  EXPECT_EQ(run("select kiln.csv --response temperature --precision 50 --report rep").code, 2);
}

TEST_F(Select, PrintsAndWritesTheAuditNotes) {
  // A text column, a constant column and a row with a missing cell.
  std::ofstream(file("notes.csv")) << "site,a,b,flat,y\n"
                                      "north,1,2,5,3.1\n"
                                      "south,2,1,5,2.0\n"
                                      "east,3,5,5,6.2\n"
                                      "west,NA,2,5,1.0\n"
                                      "north,4,3,5,5.1\n"
                                      "south,5,8,5,9.4\n"
                                      "east,6,4,5,7.0\n"
                                      "west,7,9,5,11.3\n"
                                      "north,8,5,5,8.8\n"
                                      "south,9,7,5,11.9\n";
  Outcome trace = run("trace notes.csv --response y --missing drop");
  ASSERT_EQ(trace.code, 0) << trace.err;
  Outcome r = run("select notes.csv --response y --missing drop --folds 3 --json s.json");
  ASSERT_EQ(r.code, 0) << r.err;
  const json doc = json::parse(slurp(file("s.json")));
  std::vector<std::string> want{"rows dropped for missing cells: 1",
                                "excluded: flat (constant column (absorbed by the intercept))",
                                "text columns skipped: site"};
  for (const auto& line : want) {
    EXPECT_NE(trace.out.find(line + "\n"), std::string::npos) << line << '\n' << trace.out;
    EXPECT_NE(r.out.find(line + "\n"), std::string::npos) << line << '\n' << r.out;
    EXPECT_NE(std::find(doc["audit_notes"].begin(), doc["audit_notes"].end(), line),
              doc["audit_notes"].end())
        << line;
  }
}

TEST_F(Select, JsonNamesPenaltiesAsThePathDocumentAndHasAVersion) {
  Fixture fx;
  write_table(file("t.csv"), fx.p);
  Outcome r = run("select t.csv --response y --folds 4 --json s.json");
  ASSERT_EQ(r.code, 0) << r.err;
  const json doc = json::parse(slurp(file("s.json")));
  EXPECT_EQ(doc["format_version"], 1);
  EXPECT_EQ(doc["path"]["format_version"], 1);
  // No "lambda" member anywhere: the path document's word is "penalty".
  std::function<void(const json&, const std::string&)> no_lambda = [&](const json& j,
                                                                       const std::string& at) {
    if (j.is_object())
      for (auto it = j.begin(); it != j.end(); ++it) {
        EXPECT_NE(it.key(), "lambda") << at;
        no_lambda(it.value(), at + "/" + it.key());
      }
    else if (j.is_array())
      for (const auto& e : j) no_lambda(e, at + "[]");
  };
  no_lambda(doc, "");
  for (const auto& k : doc["information_criteria"]["knots"]) EXPECT_TRUE(k.contains("penalty"));
  for (const auto& e : doc["significance"]["entries"]) EXPECT_TRUE(e.contains("penalty"));
  for (const auto& p : doc["cross_validation"]["curve_at_knots"]) EXPECT_TRUE(p.contains("penalty"));
  // Only nonzero coefficients, one per active predictor (no unpenalized ones here).
  for (const char* choice : {"minimum", "parsimonious"}) {
    const auto& c = doc["cross_validation"][choice];
    EXPECT_EQ(c["coefficients"].size(), c["active"].get<std::size_t>()) << choice;
    for (const auto& [name, value] : c["coefficients"].items()) EXPECT_NE(value.get<double>(), 0.0);
  }
}

TEST_F(Select, NoTestsSkipsTheEntryTests) {
  Fixture fx;
  write_table(file("t.csv"), fx.p);
  Outcome r = run("select t.csv --response y --folds 4 --no-tests --json s.json");
  ASSERT_EQ(r.code, 0) << r.err;
  const json doc = json::parse(slurp(file("s.json")));
  EXPECT_EQ(doc["significance"]["note"], "skipped (--no-tests)");
  EXPECT_NE(r.out.find("tests: not computed: skipped (--no-tests)"), std::string::npos) << r.out;
  // The rest of the selection is that of a run with the tests.
  Outcome full = run("select t.csv --response y --folds 4 --json f.json");
  ASSERT_EQ(full.code, 0) << full.err;
  EXPECT_EQ(json::parse(slurp(file("f.json")))["cross_validation"], doc["cross_validation"]);
}

// --repeats R: the curve, its choices and the stability counts are the
// library's repeated cross-validation (seeds SEED .. SEED + R - 1); the
// fractions are counts over the R K fold paths, the estimate of a selection
// probability in Meinshausen & Buhlmann (2010, JRSS B 72(4), section 2.2):
// the share of resamples (here fold training sets) selecting the predictor.
TEST_F(Select, RepeatsAverageTheCurveAndCountActivityOverTheFoldPaths) {
  Fixture fx;
  write_table(file("t.csv"), fx.p, fx.labels);
  Outcome r = run("select t.csv --response y --drop part --folds 4 --seed 11 --repeats 3 --json s.json --report rep");
  ASSERT_EQ(r.code, 0) << r.err;
  const json doc = json::parse(slurp(file("s.json")));
  knotpath::CrossValidationOptions cv;
  cv.folds = 4;
  cv.seed = 11;
  cv.repeats = 3;
  const auto lib = knotpath::cross_validate<double>(fx.p.x, fx.p.y, knotpath::TraceOptions{}, cv);
  const auto& c = doc["cross_validation"];
  EXPECT_EQ(c["folds"]["count"], 4);
  EXPECT_EQ(c["folds"]["repeats"], 3);
  EXPECT_EQ(c["folds"]["seeds"], json::parse("[11, 12, 13]"));
  EXPECT_LE(relative(c["minimum"]["mu"].get<double>(), lib.minimum.mu), 1e-12);
  EXPECT_LE(relative(c["minimum"]["cv_error"].get<double>(), lib.minimum.error), 1e-12);
  EXPECT_LE(relative(c["minimum"]["standard_error"].get<double>(), lib.minimum.standard_error), 1e-12);
  EXPECT_LE(relative(c["parsimonious"]["mu"].get<double>(), lib.parsimonious.mu), 1e-12);
  EXPECT_EQ(c["pieces"].get<std::size_t>(), lib.pieces.size());
  for (const auto& p : c["curve_at_knots"])
    EXPECT_NEAR(p["spread"].get<double>(), lib.spread_at_mu(p["mu"].get<double>()),
                1e-9 * lib.minimum.error);
  const auto& st = c["stability"];
  EXPECT_EQ(st["fold_paths"], 12);
  const auto least = knotpath::predictor_activity(lib, lib.minimum.mu);
  const auto lean = knotpath::predictor_activity(lib, lib.parsimonious.mu);
  ASSERT_EQ(st["predictors"].size(), fx.p.names.size());
  for (std::size_t j = 0; j < fx.p.names.size(); ++j) {
    const auto& e = st["predictors"][j];
    EXPECT_EQ(e["predictor"], fx.p.names[j]);
    EXPECT_EQ(e["minimum"]["fold_paths_active"].get<std::size_t>(), least.active_in_folds[j]) << j;
    EXPECT_EQ(e["parsimonious"]["fold_paths_active"].get<std::size_t>(), lean.active_in_folds[j]) << j;
    EXPECT_EQ(e["minimum"]["fraction"].get<double>(), static_cast<double>(least.active_in_folds[j]) / 12.0);
    EXPECT_EQ(e["minimum"]["full_path_active"].get<bool>(), static_cast<bool>(least.active_in_full_path[j]));
  }
  for (const char* needle : {"4 folds drawn with each of 3 seeds (11 to 13), the curve averaged over them",
                             "stability: share of the 12 fold paths (3 seeds x 4 folds)",
                             "Meinshausen & Buhlmann (2010)", "mean over the 3 seeds"})
    EXPECT_NE(r.out.find(needle), std::string::npos) << needle << '\n' << r.out;
  const std::string html = slurp(file("rep") / "report.html");
  EXPECT_NE(html.find("Stability across folds and seeds"), std::string::npos);
  EXPECT_NE(slurp(file("rep") / "selection.svg").find("averaged over 3 seeds"), std::string::npos);
  // The stability chart: one row per predictor active somewhere at either
  // choice, a filled square for each (row, choice) the full path has.
  expect_report(file("rep"), true);
  ASSERT_TRUE(fs::exists(file("rep") / "stability.svg"));
  const std::string svg = slurp(file("rep") / "stability.svg");
  std::size_t listed = 0, full = 0;
  for (std::size_t j = 0; j < fx.p.names.size(); ++j) {
    listed += least.active_in_folds[j] > 0 || lean.active_in_folds[j] > 0 || least.active_in_full_path[j] ||
              lean.active_in_full_path[j];
    full += static_cast<std::size_t>(least.active_in_full_path[j]) + static_cast<std::size_t>(lean.active_in_full_path[j]);
  }
  auto count = [&](const std::string& needle) {
    std::size_t n = 0;
    for (auto at = svg.find(needle); at != std::string::npos; at = svg.find(needle, at + 1)) ++n;
    return n;
  };
  EXPECT_EQ(count("class=\"stability-row\""), listed);
  EXPECT_EQ(count("class=\"full\""), full);
  EXPECT_EQ(count("class=\"not-full\""), 2 * listed - full);
}

// One seed (the default, or --repeats 1) prints and writes what select wrote
// before the option existed: no stability listing, no new JSON members
// (common practice: an option at its default changes nothing).
TEST_F(Select, OneRepeatChangesNothingAndRepeatsAreRefusedOnFixedFolds) {
  Fixture fx;
  write_table(file("t.csv"), fx.p, fx.labels);
  Outcome plain = run("select t.csv --response y --drop part --folds 4 --json a.json");
  Outcome once = run("select t.csv --response y --drop part --folds 4 --repeats 1 --json b.json");
  ASSERT_EQ(plain.code, 0) << plain.err;
  ASSERT_EQ(once.code, 0) << once.err;
  std::string a = plain.out, b = once.out;
  a.replace(a.find("wrote a.json"), 12, "");
  b.replace(b.find("wrote b.json"), 12, "");
  EXPECT_EQ(a, b);
  EXPECT_EQ(slurp(file("a.json")), slurp(file("b.json")));
  EXPECT_EQ(a.find("stability"), std::string::npos);
  const json doc = json::parse(slurp(file("a.json")));
  EXPECT_FALSE(doc["cross_validation"].contains("stability"));
  EXPECT_FALSE(doc["cross_validation"]["folds"].contains("repeats"));
  // Usage errors (exit status 2): the folds of a column or of leave-one-out
  // are the same on every repeat.
  Outcome loo = run("select t.csv --response y --drop part --leave-one-out --repeats 2");
  EXPECT_EQ(loo.code, 2);
  EXPECT_NE(loo.err.find("option 'repeats': needs folds drawn from the seed; leave-one-out gives the same folds on every repeat"), std::string::npos) << loo.err;
  Outcome col = run("select t.csv --response y --fold-column part --repeats 2");
  EXPECT_EQ(col.code, 2);
  EXPECT_NE(col.err.find("a fold column (fold_of) gives the same folds on every repeat"), std::string::npos) << col.err;
  EXPECT_EQ(run("select t.csv --response y --drop part --repeats 0").code, 2);
  EXPECT_EQ(run("select t.csv --response y --fold-column part --repeats 1").code, 0);
  EXPECT_NE(run("select --help").out.find("--repeats"), std::string::npos);
}
