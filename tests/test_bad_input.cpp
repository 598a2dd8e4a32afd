// Hostile input through the knotpath program: every class of bad table the
// reliability issue lists that tests/test_cli.cpp does not already cover
// (that file has: empty file, header only, non-numeric cell, empty cell, NaN,
// Inf, ragged row, duplicate names, unknown response, unterminated quote,
// text response). Each case checks the exit code documented in README.md
// ("Exit codes": 3 = bad input data), a message that names the problem and
// where it is, an empty stdout, no output file created and an existing
// output file left as it was. The huge and garbage inputs also check that
// the message stays short and free of raw control bytes.

#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include <fmt/format.h>
#include <gtest/gtest.h>

#include "cli_runner.hpp"

namespace {

using knotpath::testing::Outcome;
using knotpath::testing::slurp;

namespace fs = std::filesystem;



void spit(const fs::path& file, const std::string& text) {
  std::ofstream out(file, std::ios::binary);
  out << text;
}

class BadInput : public knotpath::testing::ProgramTest {
 protected:
  BadInput() : ProgramTest("bad") {}

  // Runs `trace` on bad.csv holding `text` (plus `extra` options) and checks
  // the documented failure: exit 3, the message, nothing written or replaced.
  void expect_refused(const std::string& text, const std::string& message,
                      const std::string& extra = "") {
    spit(file("bad.csv"), text);
    spit(file("old.csv"), "previous content\n");
    Outcome r = run("trace bad.csv --response y --knots out.csv --json out.json " + extra);
    EXPECT_EQ(r.code, 3) << r.err;
    EXPECT_EQ(r.out, "");
    EXPECT_NE(r.err.find("knotpath: " + message), std::string::npos) << r.err.substr(0, 400);
    // One short line: the message quotes no megabytes and no raw control bytes.
    EXPECT_LT(r.err.size(), 600u) << r.err.substr(0, 400);
    EXPECT_EQ(std::count(r.err.begin(), r.err.end(), '\n'), 1);
    for (char c : r.err) EXPECT_TRUE(c == '\n' || static_cast<unsigned char>(c) >= 0x20) << int(c);
    Outcome again = run("trace bad.csv --response y --knots old.csv " + extra);
    EXPECT_EQ(again.code, 3);
    EXPECT_EQ(slurp(file("old.csv")), "previous content\n") << "existing file replaced on error";
    EXPECT_EQ(listing(), (std::vector<std::string>{"bad.csv", "old.csv"})) << "stray output";
  }
};

TEST_F(BadInput, DataWithNothingToTraceIsRefused) {
  {
    SCOPED_TRACE("response constant");
    expect_refused("a,b,y\n1,2,5\n2,1,5\n3,4,5\n",
                   "bad.csv: the response \"y\" is constant (every row holds 5)");
  }
  {
    SCOPED_TRACE("all predictors constant");
    expect_refused("a,b,y\n1,2,3\n1,2,5\n1,2,4\n",
                   "bad.csv: no predictor can enter the path; every one was left out: \"a\" "
                   "(constant column");
  }
  {
    SCOPED_TRACE("single row");
    expect_refused("a,b,y\n1,2,3\n", "bad.csv: only one row of data");
  }
  {
    SCOPED_TRACE("single row of positive weight");
    expect_refused("a,b,y,w\n1,2,3,1\n2,5,1,0\n", "bad.csv: only one row has a positive weight",
                   "--weights w");
  }
  // Without an intercept a constant response is an ordinary problem.
  spit(file("c.csv"), "a,b,y\n1,2,5\n2,1,5\n3,4,5\n");
  EXPECT_EQ(run("trace c.csv --response y --no-intercept").code, 0);
}

// The library's row problems are named by the file's line (the library
// counts kept rows from 0): after a blank line and a dropped row, the bad
// weight of the third kept row is on line 6 (common practice: editors and
// error messages count lines from 1, the header included).
TEST_F(BadInput, RowProblemsNameTheLineOfTheFile) {
  const std::string table = "a,b,y,w\n1,2,3,1\n\n4,NA,5,1\n2,5,1,1\n3,1,2,-1\n5,5,5,1\n";
  expect_refused(table, "bad.csv, line 6: the weight is negative or not finite", "--weights w --missing drop");
  spit(file("bad.csv"), table);
  Outcome r = run("select bad.csv --response y --weights w --missing drop");
  EXPECT_EQ(r.code, 3) << r.err;
  EXPECT_NE(r.err.find("knotpath: bad.csv, line 6: the weight is negative or not finite"), std::string::npos)
      << r.err;
  r = run("trace bad.csv --response y --weights w --missing drop --precision 50");
  EXPECT_EQ(r.code, 3) << r.err;
  EXPECT_NE(r.err.find("knotpath: bad.csv, line 6: the weight is negative or not finite"), std::string::npos)
      << r.err;
}

TEST_F(BadInput, MoreColumnsThanTheLimitIsRefused) {
  std::string header, row, other;
  for (int j = 0; j < 50; ++j) {
    header += fmt::format("c{},", j);
    row += fmt::format("{},", j % 7);
    other += fmt::format("{},", j % 5);
  }
  expect_refused(header + "y\n" + row + "1\n" + other + "2\n",
                 "bad.csv, line 1: the header has 51 columns, more than the limit of 10 "
                 "(raise it with --max-columns)",
                 "--max-columns 10");
  // The same table passes the default limit (100000).
  spit(file("wide.csv"), header + "y\n" + row + "1\n" + other + "2\n");
  EXPECT_EQ(run("trace wide.csv --response y").code, 0);
  EXPECT_EQ(run("trace wide.csv --response y --max-columns 0").code, 2) << "limit must be positive";
  fs::remove(file("wide.csv"));
  // The default limit: 100001 columns.
  std::string wide;
  for (int j = 0; j <= 100000; ++j) wide += fmt::format("c{},", j);
  wide.back() = '\n';
  expect_refused(wide + "1\n", "bad.csv, line 1: the header has 100001 columns, more than the limit of 100000");
}

TEST_F(BadInput, ValuesAtTheEndsOfTheDoubleRangeAreRefusedByName) {
  // Squares of 1e308 overflow and squares of 1e-308 underflow (IEEE 754
  // binary64 normal range about 2.2e-308 .. 1.8e308); the library refuses
  // largest magnitudes outside [2^-256, 2^256] and the program names the column.
  expect_refused("a,b,y\n1e308,1,2\n-1e308,2,3\n5e307,3,1\n",
                 "bad.csv: predictor \"a\" holds values as large as 1e+308");
  expect_refused("a,b,y\n1,1,2e307\n2,2,-1e308\n3,7,1\n",
                 "bad.csv: the response holds values as large as 1e+308");
  expect_refused("a,b,y\n1,1e-308,2\n2,-3e-308,3\n3,2e-308,1\n",
                 "bad.csv: predictor \"b\" holds no value larger in magnitude than 3e-308");
  expect_refused("a,b,y,w\n1,1,2,1e300\n2,3,-1,1\n3,7,1,2\n",
                 "bad.csv: the weight vector holds values as large as 1e+300", "--weights w");
}

// Deterministic garbage: bytes from a fixed-seed generator (no file of the
// repository is involved). Whatever the bytes, the program ends with a
// documented code and a one-line message naming the file.
TEST_F(BadInput, BinaryGarbageIsRefusedWithALocatedMessage) {
  std::mt19937 gen(20240611);
  std::uniform_int_distribution<int> byte(0, 255);
  for (int trial = 0; trial < 12; ++trial) {
    SCOPED_TRACE(trial);
    std::string text(static_cast<std::size_t>(64 << (trial % 8)), '\0');
    for (char& c : text) c = static_cast<char>(byte(gen));
    if (trial % 3 == 1) text = "a,b,y\n1,2,3\n" + text;  // garbage after a good start
    expect_refused(text, "bad.csv");
  }
}

TEST_F(BadInput, TenMegabyteSingleLinesAreRefusedQuicklyWithShortMessages) {
  const auto started = std::chrono::steady_clock::now();
  const std::size_t ten_mb = 10u << 20;
  {
    SCOPED_TRACE("one line of distinct names, no line break");
    std::string line;
    for (std::size_t j = 0; line.size() < ten_mb; ++j) line += fmt::format("column{},", j);
    line.pop_back();
    expect_refused(line, "bad.csv, line 1: the header has ");
  }
  {
    SCOPED_TRACE("one 10 MB name");
    expect_refused(std::string(ten_mb, 'a') + "\n",
                   "bad.csv, line 1: unknown column \"y\" (the header has: aaaaaaaaaa");
  }
  {
    SCOPED_TRACE("one 10 MB number");
    expect_refused("a,y\n1," + std::string(ten_mb, '7') + "\n",
                   "bad.csv, line 2, column 2: cell \"7777777777");
  }
  {
    SCOPED_TRACE("one 10 MB row of many fields");
    std::string row;
    while (row.size() < ten_mb) row += "1,2,";
    row += "3\n";
    expect_refused("a,y\n" + row, "bad.csv, line 2, column 3: this row has ");
  }
  {
    SCOPED_TRACE("one 10 MB quoted cell that never closes");
    expect_refused("a,y\n1,\"" + std::string(ten_mb, 'q'),
                   "bad.csv, line 2, column 2: unterminated quoted field");
  }
  // Each case runs the program twice; linear-time reading keeps all ten runs
  // far below this bound even on a loaded machine (a quadratic header check
  // took hours on the first case alone).
  EXPECT_LT(std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count(), 50.0);
}

}  // namespace
