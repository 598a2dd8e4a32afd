// The program's saved paths end to end: trace --save and select --save,
// knotpath predict (columns by name, row keys, --out, --choice), at --path,
// at --json and the point line of at --csv.

#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include <knotpath/io/report.hpp>
#include <knotpath/io/saved.hpp>

#include "cli_runner.hpp"
#include "lcg.hpp"

namespace {

namespace kp = knotpath;
using kp::testing::Outcome;
using kp::testing::slurp;

class CliPredict : public kp::testing::ProgramTest {
 protected:
  CliPredict() : ProgramTest("predict", "--quiet") {}

  // Training table: a text key, three predictors and the response.
  void write_training() {
    std::ofstream out(file("t.csv"));
    out << "id,a,b,c,y\n";
    for (int i = 0; i < 30; ++i) {
      const double a = std::sin(i * 1.3), b = std::cos(i * 0.7) * 2, c = (i % 5) - 2.0;
      const double y = 1.5 + 3 * a - 2 * b + 0.5 * c + 0.3 * std::sin(i * 5.1);
      out << "r" << i << ',' << kp::io::round_trip(a) << ',' << kp::io::round_trip(b) << ','
          << kp::io::round_trip(c) << ',' << kp::io::round_trip(y) << '\n';
    }
  }
  // New rows: columns shuffled, an extra numeric column, the key last.
  void write_new(const std::string& name, bool with_key, bool with_b = true) {
    std::ofstream out(file(name));
    out << "c,extra," << (with_b ? "b," : "") << "a" << (with_key ? ",patient" : "") << '\n';
    for (int i = 0; i < 4; ++i) {
      out << (i - 1.5) << ',' << 100 + i << ',';
      if (with_b) out << 0.25 * i << ',';
      out << 1.0 - 0.5 * i;
      if (with_key) out << ",p" << i;
      out << '\n';
    }
  }
  kp::io::SavedPath<double> load(const std::string& name) {
    std::ifstream in(file(name));
    return kp::io::load_path<double>(in, name);
  }
};

std::vector<std::string> lines(const std::string& text) {
  std::vector<std::string> out;
  std::stringstream s(text);
  for (std::string line; std::getline(s, line);) out.push_back(line);
  return out;
}

// The prediction the saved path gives for new row i of write_new (a, b, c).
double expected(const kp::Path<double>& path, double lambda, int i) {
  kp::Matrix<double> x(1, 3);
  x << 1.0 - 0.5 * i, 0.25 * i, i - 1.5;  // the path's order: a, b, c
  return path.predict(x, lambda).values(0);
}

TEST_F(CliPredict, PredictsByNameWithRowKeysAndNotesExtraColumns) {
  write_training();
  write_new("new.csv", true);
  ASSERT_EQ(run("trace t.csv --response y --save m.kpath").code, 0);
  const auto saved = load("m.kpath");
  EXPECT_EQ(saved.response, "y");
  const double lambda = saved.path.lambda_max() / 4;
  const std::string penalty = kp::io::round_trip(lambda);
  const Outcome r = run("predict m.kpath new.csv --penalty " + penalty);
  ASSERT_EQ(r.code, 0) << r.err;
  const auto out = lines(r.out);
  ASSERT_EQ(out.size(), 5u) << r.out;
  EXPECT_EQ(out[0], "patient,prediction");
  for (int i = 0; i < 4; ++i)
    EXPECT_EQ(out[static_cast<std::size_t>(i) + 1],
              "p" + std::to_string(i) + "," + kp::io::round_trip(expected(saved.path, lambda, i)));
  EXPECT_NE(r.err.find("\"extra\""), std::string::npos) << r.err;  // the ignored column is noted
  // --out writes the same CSV to a file.
  const Outcome w = run("predict m.kpath new.csv --penalty " + penalty + " --out p.csv");
  ASSERT_EQ(w.code, 0) << w.err;
  EXPECT_EQ(slurp(file("p.csv")), r.out);
  EXPECT_NE(w.out.find("wrote p.csv"), std::string::npos);
}

TEST_F(CliPredict, RowsAreNumberedWithoutAKeyColumn) {
  write_training();
  write_new("new.csv", false);
  ASSERT_EQ(run("trace t.csv --response y --save m.kpath").code, 0);
  const Outcome r = run("predict m.kpath new.csv --mu 0");
  ASSERT_EQ(r.code, 0) << r.err;
  const auto out = lines(r.out);
  ASSERT_EQ(out.size(), 5u);
  EXPECT_EQ(out[0], "row,prediction");
  EXPECT_EQ(out[1].substr(0, 2), "1,");
  EXPECT_EQ(out[4].substr(0, 2), "4,");
}

// predict takes the points `at` takes (one registration, add_point_options):
// a relative budget R predicts at the path's point of L1 budget R times the
// final penalized norm, as Path::at_relative_budget answers it.
TEST_F(CliPredict, ARelativeBudgetPredictsAtThePathsPointOfThatBudget) {
  write_training();
  write_new("new.csv", false);
  ASSERT_EQ(run("trace t.csv --response y --save m.kpath").code, 0);
  const auto saved = load("m.kpath");
  const Outcome r = run("predict m.kpath new.csv --relative-budget 0.5");
  ASSERT_EQ(r.code, 0) << r.err;
  const auto out = lines(r.out);
  ASSERT_EQ(out.size(), 5u) << r.out;
  const kp::Solution<double> point = saved.path.at_relative_budget(0.5);
  for (int i = 0; i < 4; ++i) {
    kp::Matrix<double> x(1, 3);
    x << 1.0 - 0.5 * i, 0.25 * i, i - 1.5;
    const double value = point.intercept + x.row(0).dot(point.coefficients);
    const std::string cell = out[static_cast<std::size_t>(i) + 1];
    EXPECT_NEAR(std::stod(cell.substr(cell.find(',') + 1)), value, 1e-12 * (1 + std::abs(value))) << cell;
  }
  EXPECT_EQ(run("predict m.kpath new.csv --relative-budget 0.5 --penalty 1").code, 2);
}

// predict reads new rows by the cell rules of the commands that trace:
// --decimal comma (with a semicolon or whitespace delimiter) gives the same
// predictions as the decimal-point file, and a --na token is a missing cell
// (refused: no prediction can be made for that row) rather than text.
TEST_F(CliPredict, NewRowsAreReadByTheTableOptionsOfTrace) {
  write_training();
  write_new("new.csv", true);
  ASSERT_EQ(run("trace t.csv --response y --save m.kpath").code, 0);
  const Outcome plain = run("predict m.kpath new.csv --mu 0");
  ASSERT_EQ(plain.code, 0) << plain.err;
  // The same rows with decimal commas and semicolons.
  std::string text = slurp(file("new.csv"));
  for (char& ch : text) ch = ch == ',' ? ';' : ch == '.' ? ',' : ch;
  std::ofstream(file("comma.csv")) << text;
  const Outcome comma = run("predict m.kpath comma.csv --mu 0 --decimal comma");
  ASSERT_EQ(comma.code, 0) << comma.err;
  EXPECT_EQ(comma.out, plain.out);
  // Whitespace-delimited.
  std::string blanks = slurp(file("new.csv"));
  for (char& ch : blanks) ch = ch == ',' ? ' ' : ch;
  std::ofstream(file("blank.txt")) << blanks;
  const Outcome blank = run("predict m.kpath blank.txt --mu 0 --delimiter whitespace");
  ASSERT_EQ(blank.code, 0) << blank.err;
  EXPECT_EQ(blank.out, plain.out);
  // A token of the user's own marks a missing cell: the row is refused with
  // a message, not read as a text column that leaves "a" missing.
  std::ofstream(file("na.csv")) << "a,b,c\n1,2,3\n-99,2,3\n";
  const Outcome na = run("predict m.kpath na.csv --mu 0 --na -99");
  EXPECT_NE(na.code, 0);
  EXPECT_NE(na.err.find("-99"), std::string::npos) << na.err;
  EXPECT_EQ(na.err.find("no column \"a\""), std::string::npos) << na.err;
  // predict has no --missing drop: its message says what to do instead.
  EXPECT_EQ(na.err.find("--missing"), std::string::npos) << na.err;
  EXPECT_NE(na.err.find("fill the cell, or leave the row out"), std::string::npos) << na.err;
  EXPECT_EQ(run("predict m.kpath comma.csv --mu 0 --decimal comma --delimiter comma").code, 2);
}

// A path traced with text columns expanded into indicators predicts new
// rows from the text columns themselves, expanded by the saved levels: the
// same predictions as the 0/1 columns written by hand, a level the new rows
// lack is a column of zeros, and a level the path never saw is refused.
TEST_F(CliPredict, TextColumnsAreExpandedByTheSavedLevels) {
  std::ofstream train(file("text.csv")), hand(file("hand.csv"));
  train << "x,colour,y\n";
  hand << "x,colour=green,colour=red,y\n";
  const char* levels[] = {"blue", "green", "red"};
  for (int i = 0; i < 24; ++i) {
    const double x = std::sin(i * 0.9);
    const std::string level = levels[i % 3];
    const double y = 2 * x + (level == "green" ? 1.0 : level == "red" ? -1.5 : 0.0) + 0.2 * std::cos(i * 3.7);
    train << kp::io::round_trip(x) << ',' << level << ',' << kp::io::round_trip(y) << '\n';
    hand << kp::io::round_trip(x) << ',' << (level == "green") << ',' << (level == "red") << ','
         << kp::io::round_trip(y) << '\n';
  }
  train.close();
  hand.close();
  ASSERT_EQ(run("trace text.csv --response y --indicators colour --save m.kpath").code, 0);
  ASSERT_EQ(run("trace hand.csv --response y --save h.kpath").code, 0);
  ASSERT_EQ(load("m.kpath").expanded.size(), 1u);
  EXPECT_EQ(load("m.kpath").expanded[0].reference, "blue");
  // New rows without "green": its indicator is zero in every row.
  std::ofstream(file("new.csv")) << "colour,x\nred,0.5\nblue,-0.25\nred,1\n";
  std::ofstream(file("new_hand.csv")) << "colour=green,colour=red,x\n0,1,0.5\n0,0,-0.25\n0,1,1\n";
  const Outcome text = run("predict m.kpath new.csv --mu 0.01");
  ASSERT_EQ(text.code, 0) << text.err;
  const Outcome by_hand = run("predict h.kpath new_hand.csv --mu 0.01");
  ASSERT_EQ(by_hand.code, 0) << by_hand.err;
  EXPECT_EQ(text.out, by_hand.out);
  // A level the path never saw cannot be scored as the reference.
  std::ofstream(file("odd.csv")) << "colour,x\nred,0.5\npurple,1\n";
  const Outcome odd = run("predict m.kpath odd.csv --mu 0.01");
  EXPECT_EQ(odd.code, 3);
  EXPECT_NE(odd.err.find("column \"colour\" holds \"purple\", a level the saved path was not traced with"),
            std::string::npos) << odd.err;
  EXPECT_TRUE(odd.out.empty());
}

TEST_F(CliPredict, AMissingPredictorColumnIsNamed) {
  write_training();
  write_new("new.csv", true, false);
  ASSERT_EQ(run("trace t.csv --response y --save m.kpath").code, 0);
  const Outcome r = run("predict m.kpath new.csv --penalty 0");
  EXPECT_EQ(r.code, 3);
  EXPECT_NE(r.err.find("no column \"b\""), std::string::npos) << r.err;
  EXPECT_TRUE(r.out.empty());
}

TEST_F(CliPredict, ChoicesOfSelectReachPredictAndAt) {
  write_training();
  write_new("new.csv", true);
  const Outcome s = run("select t.csv --response y --folds 5 --no-tests --save s.kpath");
  ASSERT_EQ(s.code, 0) << s.err;
  const auto saved = load("s.kpath");
  for (const char* name : {"least-error", "parsimonious"}) {
    SCOPED_TRACE(name);
    const auto* choice = saved.choice(name);
    ASSERT_NE(choice, nullptr);
    // at on the table at the chosen penalty (17 digits read back exactly) ...
    const Outcome at = run("at t.csv --response y --json --penalty " + kp::io::round_trip(choice->penalty));
    ASSERT_EQ(at.code, 0) << at.err;
    const auto doc = nlohmann::json::parse(at.out);
    EXPECT_EQ(doc["penalty"].get<double>(), choice->penalty);
    // ... and at --path --choice give the same point ...
    const Outcome by_choice = run(std::string("at --path s.kpath --json --choice ") + name);
    ASSERT_EQ(by_choice.code, 0) << by_choice.err;
    const auto doc2 = nlohmann::json::parse(by_choice.out);
    EXPECT_EQ(doc2["penalty"], doc["penalty"]);
    EXPECT_EQ(doc2["intercept"], doc["intercept"]);
    EXPECT_EQ(doc2["coefficients"], doc["coefficients"]);
    // ... whose coefficients give predict's values.
    const Outcome p = run(std::string("predict s.kpath new.csv --choice ") + name);
    ASSERT_EQ(p.code, 0) << p.err;
    const auto out = lines(p.out);
    ASSERT_EQ(out.size(), 5u);
    for (int i = 0; i < 4; ++i) {
      const double a = 1.0 - 0.5 * i, b = 0.25 * i, c = i - 1.5;
      double value = doc["intercept"].get<double>();
      for (const auto& term : doc["coefficients"]) {
        const std::string n = term["name"];
        value += term["value"].get<double>() * (n == "a" ? a : n == "b" ? b : c);
      }
      const std::string cell = out[static_cast<std::size_t>(i) + 1].substr(3);
      EXPECT_NEAR(std::stod(cell), value, 1e-12 * (1 + std::abs(value))) << out[static_cast<std::size_t>(i) + 1];
    }
  }
}

TEST_F(CliPredict, AChoiceOfAFileWithoutChoicesIsAUsageError) {
  write_training();
  write_new("new.csv", true);
  ASSERT_EQ(run("trace t.csv --response y --save m.kpath").code, 0);
  const Outcome r = run("predict m.kpath new.csv --choice least-error");
  EXPECT_EQ(r.code, 2);
  EXPECT_NE(r.err.find("holds no choices"), std::string::npos) << r.err;
  const Outcome a = run("at --path m.kpath --choice parsimonious");
  EXPECT_EQ(a.code, 2);
  const Outcome t = run("at t.csv --response y --choice parsimonious");
  EXPECT_EQ(t.code, 2);
  EXPECT_NE(t.err.find("--path"), std::string::npos) << t.err;
  const Outcome mixed = run("at --path m.kpath --penalty 1 --ridge 2");
  EXPECT_EQ(mixed.code, 2);
}

TEST_F(CliPredict, ADamagedSavedFileIsAClearError) {
  write_training();
  write_new("new.csv", true);
  ASSERT_EQ(run("trace t.csv --response y --save m.kpath").code, 0);
  const std::string text = slurp(file("m.kpath"));
  std::ofstream(file("cut.kpath")) << text.substr(0, text.size() / 3);
  const Outcome r = run("predict cut.kpath new.csv --penalty 1");
  EXPECT_EQ(r.code, 3);
  EXPECT_NE(r.err.find("cut.kpath"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("not a saved path"), std::string::npos) << r.err;
  EXPECT_EQ(run("predict t.csv new.csv --penalty 1").code, 3);  // a table is not a saved path
}

TEST_F(CliPredict, AtJsonStatesThePointAndItsCoefficients) {
  write_training();
  ASSERT_EQ(run("trace t.csv --response y --save m.kpath").code, 0);
  const auto saved = load("m.kpath");
  const double lambda = saved.path.lambda_max() / 3;
  const auto s = saved.path.at_penalty(lambda);
  const Outcome r = run("at t.csv --response y --json --penalty " + kp::io::round_trip(lambda));
  ASSERT_EQ(r.code, 0) << r.err;
  const auto doc = nlohmann::json::parse(r.out);
  EXPECT_EQ(doc["format"], "knotpath-point");
  EXPECT_EQ(doc["asked_kind"], "penalty");
  EXPECT_EQ(doc["penalty"].get<double>(), lambda);
  EXPECT_EQ(doc["mu"].get<double>(), kp::io::mu_as_double(saved.path, lambda));
  EXPECT_EQ(doc["intercept"].get<double>(), s.intercept);
  ASSERT_EQ(doc["coefficients"].size(), 3u);
  EXPECT_EQ(doc["coefficients"][1]["name"], "b");
  EXPECT_EQ(doc["coefficients"][1]["value"].get<double>(), s.coefficients(1));
  // The same from the saved path.
  const Outcome p = run("at --path m.kpath --json --penalty " + kp::io::round_trip(lambda));
  ASSERT_EQ(p.code, 0) << p.err;
  EXPECT_EQ(nlohmann::json::parse(p.out)["coefficients"], doc["coefficients"]);
}

TEST_F(CliPredict, AtCsvStartsWithThePointItAnswers) {
  write_training();
  ASSERT_EQ(run("trace t.csv --response y --save m.kpath").code, 0);
  const auto saved = load("m.kpath");
  const double lambda = saved.path.lambda_max() / 2;
  const Outcome r = run("at t.csv --response y --csv --penalty " + kp::io::round_trip(lambda));
  ASSERT_EQ(r.code, 0) << r.err;
  const auto out = lines(r.out);
  ASSERT_GE(out.size(), 2u);
  EXPECT_EQ(out[0], "# point: penalty " + kp::io::round_trip(lambda) + ", mu " +
                        kp::io::round_trip(kp::io::mu_as_double(saved.path, lambda)));
  EXPECT_EQ(out[1], "predictor,coefficient");
}

TEST_F(CliPredict, AnExactPathPredictsInFractions) {
  std::ofstream(file("e.csv")) << "a,b,y\n1,2,3\n2,1,5\n3,5,4\n4,2,9\n5,7,8\n";
  std::ofstream(file("n.csv")) << "b,a\n1,1\n";
  ASSERT_EQ(run("trace e.csv --response y --no-standardize --precision exact --save e.kpath").code, 0);
  const Outcome r = run("predict e.kpath n.csv --penalty 1/2");
  // 1/2 is not a decimal: refused as a usage error; the decimal 0.5 is exact.
  EXPECT_EQ(r.code, 2);
  const Outcome ok = run("predict e.kpath n.csv --penalty 0.5");
  ASSERT_EQ(ok.code, 0) << ok.err;
  const auto out = lines(ok.out);
  ASSERT_EQ(out.size(), 2u);
  EXPECT_NE(out[1].find('/'), std::string::npos) << out[1];  // an exact fraction
}

// predict reads its table in blocks (issue 20, point 1: memory independent
// of the row count): the bytes of every block height equal those of the
// whole reading, with row keys and without, to standard output and to a
// file, in double and in 50 digits (each row's prediction is the same
// product whichever block holds it; common practice for row-wise scoring).
TEST_F(CliPredict, BlocksOfAnyHeightPredictTheWholeReadingsBytes) {
  write_training();
  ASSERT_EQ(run("trace t.csv --response y --save m.kpath").code, 0);
  ASSERT_EQ(run("trace t.csv --response y --precision 50 --save m50.kpath").code, 0);
  knotpath::testing::Lcg lcg(20);
  std::ofstream keyed(file("many.csv")), plain(file("plain.csv"));
  keyed << "c,patient,b,a\n";
  plain << "a,b,c\n";
  for (int i = 0; i < 1000; ++i) {
    const double a = 4 * lcg.centred(), b = 4 * lcg.centred(), c = 4 * lcg.centred();
    keyed << kp::io::round_trip(c) << ",p" << i << ',' << kp::io::round_trip(b) << ',' << kp::io::round_trip(a)
          << '\n';
    plain << kp::io::round_trip(a) << ',' << kp::io::round_trip(b) << ',' << kp::io::round_trip(c) << '\n';
  }
  keyed.close();
  plain.close();
  for (const char* saved : {"m.kpath", "m50.kpath"})
    for (const char* table : {"many.csv", "plain.csv"}) {
      const std::string ask = fmt::format("predict {} {} --mu 0.05", saved, table);
      const Outcome whole = run(ask + " --read whole");
      ASSERT_EQ(whole.code, 0) << whole.err;
      ASSERT_EQ(lines(whole.out).size(), 1001u);
      for (const char* reading : {"--read blocks --block-rows 7", "--read blocks --block-rows 1000",
                                  "--block-rows 333", ""}) {
        const Outcome blocks = run(ask + " " + reading);
        ASSERT_EQ(blocks.code, 0) << blocks.err;
        EXPECT_EQ(blocks.out, whole.out) << ask << " " << reading;
        EXPECT_EQ(blocks.err, whole.err) << ask << " " << reading;
      }
      ASSERT_EQ(run(ask + " --read blocks --block-rows 64 --out scores.csv").code, 0);
      EXPECT_EQ(slurp(file("scores.csv")), whole.out) << ask;
    }
}

// A bad row stops the blocks read there: the error names its line; written
// to a file, nothing is left (the output is atomic); to standard output, the
// rows of the blocks before it have been written and the status says the
// output is incomplete (README, "Tables larger than memory").
TEST_F(CliPredict, ABadRowInALaterBlockEndsTheOutputWithItsLine) {
  write_training();
  ASSERT_EQ(run("trace t.csv --response y --save m.kpath").code, 0);
  std::ofstream table(file("bad.csv"));
  table << "a,b,c\n";
  for (int i = 0; i < 50; ++i) table << (i == 30 ? std::string("oops") : std::to_string(0.1 * i)) << ",1,2\n";
  table.close();
  const Outcome to_file = run("predict m.kpath bad.csv --mu 0.05 --block-rows 10 --out scores.csv");
  EXPECT_EQ(to_file.code, 3);
  EXPECT_NE(to_file.err.find("line 32"), std::string::npos) << to_file.err;
  EXPECT_FALSE(std::filesystem::exists(file("scores.csv")));
  const Outcome to_stdout = run("predict m.kpath bad.csv --mu 0.05 --block-rows 10");
  EXPECT_EQ(to_stdout.code, 3);
  EXPECT_EQ(lines(to_stdout.out).size(), 31u);  // the header and the first three blocks
  const Outcome whole = run("predict m.kpath bad.csv --mu 0.05 --read whole");
  EXPECT_EQ(whole.code, 3);
  EXPECT_TRUE(whole.out.empty());
}

// A path with indicator columns checks the new levels over the whole table
// first: auto reads it whole, and --read blocks is refused as a usage error.
TEST_F(CliPredict, APathWithIndicatorsIsScoredFromTheWholeTable) {
  std::ofstream train(file("text.csv"));
  train << "x,colour,y\n";
  const char* levels[] = {"blue", "green", "red"};
  for (int i = 0; i < 24; ++i)
    train << kp::io::round_trip(std::sin(i * 0.9)) << ',' << levels[i % 3] << ','
          << kp::io::round_trip(std::cos(i * 1.7) + (i % 3)) << '\n';
  train.close();
  ASSERT_EQ(run("trace text.csv --response y --indicators colour --save m.kpath").code, 0);
  std::ofstream(file("new.csv")) << "colour,x\nred,0.5\nblue,-0.25\nred,1\n";
  const Outcome automatic = run("predict m.kpath new.csv --mu 0.01 --block-rows 1");
  ASSERT_EQ(automatic.code, 0) << automatic.err;
  EXPECT_EQ(automatic.out, run("predict m.kpath new.csv --mu 0.01 --read whole").out);
  const Outcome blocks = run("predict m.kpath new.csv --mu 0.01 --read blocks");
  EXPECT_EQ(blocks.code, 2);
  EXPECT_NE(blocks.err.find("--read blocks cannot score a path traced with indicator columns"), std::string::npos)
      << blocks.err;
}

}  // namespace
