// The program under MPI (Open MPI's mpirun from the Debian archive, run with
// 1, 2 and 4 processes on any machine: --oversubscribe): the shards of a
// table read by the processes of a job give the path of the program run
// without MPI on the same shards, bit for bit; NIST StRD Longley spread over
// processes reproduces its certified least-squares fit; a failure on any
// process stops them all with one message. With --column-blocks the
// processes hold blocks of the predictors' columns instead (issue 20, point
// 3): the same events as the table traced whole by one process, knots to
// rounding; Longley's certified fit again, its predictors spread over three
// processes. Skipped with a message when the
// build has no MPI. CI runs as root, which Open MPI refuses unless
// OMPI_ALLOW_RUN_AS_ROOT and OMPI_ALLOW_RUN_AS_ROOT_CONFIRM are set: the
// runs below set them.

#include <gtest/gtest.h>

#include <sys/wait.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include <fmt/format.h>

#include "cli_runner.hpp"
#include "lcg.hpp"
#include "test_support.hpp"

namespace {

using knotpath::testing::Outcome;
using knotpath::testing::slurp;

// `at ... --penalty 0 --csv`'s printout of NIST StRD Longley: the end of
// the path is the least-squares fit, NIST's certified values (15 digits)
// with at least 7 correct digits in double, as for the table read whole
// (test_external_reference.cpp).
void expect_certified_longley_fit(const std::string& printed, const std::filesystem::path& cert) {
  const auto certified = knotpath::testing::read_reference_values(cert);
  std::istringstream lines(printed);
  std::string line;
  std::getline(lines, line);  // "# point: ..."
  std::getline(lines, line);  // predictor,coefficient
  int checked = 0;
  while (std::getline(lines, line)) {
    const std::string name = line.substr(0, line.find(','));
    const double value = std::stod(line.substr(line.find(',') + 1));
    const std::string key = name == "(intercept)" ? "B0" : "B" + name.substr(1);
    const double reference = certified.at(key);
    EXPECT_LE(std::abs(value - reference), 1e-7 * std::abs(reference)) << name << " = " << value;
    ++checked;
  }
  EXPECT_EQ(checked, 7) << printed;
}

class Mpi : public knotpath::testing::ProgramTest {
 protected:
  Mpi() : ProgramTest("mpi", "--quiet") {}

  void SetUp() override {
    ProgramTest::SetUp();
#ifndef KNOTPATH_MPIEXEC
    GTEST_SKIP() << "this build has no MPI (install libopenmpi-dev and openmpi-bin, then configure again)";
#endif
  }

  // Runs the program under mpirun with `processes` processes.
  Outcome run_mpi(int processes, const std::string& args) const {
#ifdef KNOTPATH_MPIEXEC
    const std::filesystem::path out = dir_ / ".stdout", err = dir_ / ".stderr";
    const std::string command = fmt::format(
        "cd '{}' && OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1 '{}' -n {} --oversubscribe '{}' "
        "--quiet {} </dev/null >'{}' 2>'{}'",
        dir_.string(), KNOTPATH_MPIEXEC, processes, KNOTPATH_CLI_PATH, args, out.string(), err.string());
    const int status = std::system(command.c_str());
    Outcome r;
    r.code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
    r.out = slurp(out);
    r.err = slurp(err);
    return r;
#else
    (void)processes;
    (void)args;
    return {};
#endif
  }

  // Runs `command` (writing k.csv and p.json) alone and under 1, 2 and 4
  // processes: the printout (the audit, printed once, by rank 0) and both
  // files must be the same bytes every time.
  void expect_the_same_bits_on_any_process_count(const std::string& command) const {
    const Outcome alone = run(command);
    ASSERT_EQ(alone.code, 0) << alone.err;
    const std::string knots = slurp(file("k.csv")), json = slurp(file("p.json"));
    ASSERT_FALSE(knots.empty());
    for (int processes : {1, 2, 4}) {
      SCOPED_TRACE(fmt::format("{} processes", processes));
      std::filesystem::remove(file("k.csv"));
      std::filesystem::remove(file("p.json"));
      const Outcome r = run_mpi(processes, command);
      ASSERT_EQ(r.code, 0) << r.err;
      EXPECT_EQ(r.out, alone.out);
      EXPECT_EQ(slurp(file("k.csv")), knots);
      EXPECT_EQ(slurp(file("p.json")), json);
    }
  }

  // Writes `count` shards of `rows` invented rows (a fixed-seed generator;
  // four predictors, weights) and returns their names, space separated.
  std::string write_shards(std::size_t count, int rows) const {
    knotpath::testing::Lcg lcg(5);
    auto next = [&] { return lcg.centred(); };
    std::vector<std::ofstream> files;
    std::string names;
    for (std::size_t s = 0; s < count; ++s) {
      const std::string name = fmt::format("shard{}.csv", s);
      files.emplace_back(file(name)) << "a,b,c,d,w,y\n";
      names += " " + name;
    }
    for (int i = 0; i < rows; ++i) {
      const double a = next(), b = 0.5 * a + next(), c = next(), d = next();
      files[static_cast<std::size_t>(i) * count / static_cast<std::size_t>(rows)]
          << a << ',' << b << ',' << c << ',' << d << ',' << 1 + i % 4 << ',' << 2 * a - c + 0.3 * next() << '\n';
    }
    return names;
  }
};

TEST_F(Mpi, TheShardsGiveTheSamePathBitForBitOnOneTwoAndFourProcesses) {
  const std::string shards = write_shards(7, 1500);
  const std::string options = " --response y --weights w --block-rows 64 --knots k.csv --json p.json";
  expect_the_same_bits_on_any_process_count("trace" + shards + options);
  // `at` too.
  const std::string ask = "at" + shards + " --response y --weights w --relative-budget 0.5 --csv";
  const Outcome at_alone = run(ask);
  const Outcome at_mpi = run_mpi(2, ask);
  ASSERT_EQ(at_mpi.code, 0) << at_mpi.err;
  EXPECT_EQ(at_mpi.out, at_alone.out);
}

TEST_F(Mpi, LongleySpreadOverProcessesReproducesTheCertifiedFit) {
  KNOTPATH_REQUIRE_REFERENCE(data, "strd/longley.csv");
  KNOTPATH_REQUIRE_REFERENCE(cert, "strd/longley.certified");
  // NIST StRD Longley (16 rows) cut into four shards of four rows.
  std::ifstream in(data);
  std::string header, line;
  std::getline(in, header);
  std::vector<std::string> rows;
  while (std::getline(in, line))
    if (!line.empty()) rows.push_back(line);
  ASSERT_EQ(rows.size(), 16u);
  std::string shards;
  for (std::size_t s = 0; s < 4; ++s) {
    std::ofstream out(file(fmt::format("longley{}.csv", s)));
    out << header << '\n';
    for (std::size_t i = 4 * s; i < 4 * s + 4; ++i) out << rows[i] << '\n';
    shards += fmt::format(" longley{}.csv", s);
  }
  const Outcome r = run_mpi(3, "at" + shards + " --response y --penalty 0 --csv");
  ASSERT_EQ(r.code, 0) << r.err;
  expect_certified_longley_fit(r.out, cert);
}

TEST_F(Mpi, AFailureOnAnyProcessStopsEveryProcessWithOneMessage) {
  const std::string shards = write_shards(4, 400);
  // A bad cell in the last shard, read by the last of two processes.
  std::ofstream(file("shard3.csv"), std::ios::app) << "1,2,oops,4,1,5\n";
  const Outcome bad = run_mpi(2, "trace" + shards + " --response y --weights w");
  EXPECT_EQ(bad.code, 3) << bad.err;  // exit_bad_input, the status of every process
  EXPECT_NE(bad.err.find("knotpath: shard3.csv, line 102, column 3: cell \"oops\""), std::string::npos) << bad.err;
  std::size_t messages = 0;
  for (std::size_t at = bad.err.find("knotpath: "); at != std::string::npos; at = bad.err.find("knotpath: ", at + 1))
    ++messages;
  EXPECT_EQ(messages, 1u) << bad.err;
  // A missing file: an input/output error naming it.
  const Outcome missing = run_mpi(4, "trace shard0.csv shard1.csv nowhere.csv --response y");
  EXPECT_EQ(missing.code, 5) << missing.err;
  EXPECT_NE(missing.err.find("nowhere.csv"), std::string::npos) << missing.err;
  // Commands that run in one process say so.
  const Outcome verify = run_mpi(2, "verify shard0.csv --response y");
  EXPECT_EQ(verify.code, 2) << verify.err;
  EXPECT_NE(verify.err.find("verify runs in one process"), std::string::npos) << verify.err;
}

// trace and select share one rule for failures (gather_shard_steps and
// decide_for_all, lib/cli/ranks.hpp): with bad cells in two shards, read by
// different processes (both report a failure) or by the one process of the
// program alone (it stops at the first), the run stops with the message of
// the first in shard order.
TEST_F(Mpi, TraceAndSelectReportTheFirstFailureInShardOrderOnAnyProcessCount) {
  const std::string shards = write_shards(4, 400);
  std::ofstream(file("shard1.csv"), std::ios::app) << "1,2,first,4,1,5\n";
  std::ofstream(file("shard3.csv"), std::ios::app) << "1,2,later,4,1,5\n";
  for (const std::string& command :
       {"trace" + shards + " --response y --weights w", "select" + shards + " --response y --weights w --folds 3"}) {
    SCOPED_TRACE(command);
    const std::string expected = "knotpath: shard1.csv, line 102, column 3: cell \"first\"";
    const Outcome alone = run(command);
    EXPECT_EQ(alone.code, 3) << alone.err;
    EXPECT_NE(alone.err.find(expected), std::string::npos) << alone.err;
    for (int processes : {2, 4}) {  // shards 1 and 3 read by ranks 0 and 1, or 1 and 3
      SCOPED_TRACE(fmt::format("{} processes", processes));
      const Outcome r = run_mpi(processes, command);
      EXPECT_EQ(r.code, 3) << r.err;  // exit_bad_input
      EXPECT_NE(r.err.find(expected), std::string::npos) << r.err;
      EXPECT_EQ(r.err.find("later"), std::string::npos) << r.err;
    }
  }
}

TEST_F(Mpi, PiecesOfOneFileGiveTheSamePathBitForBitOnOneTwoAndFourProcesses) {
  // One file, cut into 5 pieces at line breaks: the pieces, not the
  // processes, fix the merge tree, so every process count gives the bits of
  // the program alone.
  const std::string shards = write_shards(1, 1500);
  const std::string options = " --response y --weights w --pieces 5 --block-rows 64 --knots k.csv --json p.json";
  expect_the_same_bits_on_any_process_count("trace" + shards + options);
  // A bad cell in the last piece (read by the second process of two)
  // stops every process with one message naming the file's line.
  std::ofstream(file("shard0.csv"), std::ios::app) << "1,2,x,4,1,5\n";
  const Outcome bad = run_mpi(2, "trace shard0.csv --response y --weights w --pieces 5");
  EXPECT_EQ(bad.code, 3) << bad.err;
  EXPECT_NE(bad.err.find("shard0.csv, line 1502, column 3"), std::string::npos) << bad.err;
}

// select over shards: each process reads its own shards into their folds'
// statistics, the parts are merged over the shard tree, and rank 0 selects:
// the same printout and JSON, bit for bit, alone and on 1, 2 and 4
// processes, with seeded folds (drawn over all the rows in shard order) and
// with the shards' fold labels; --pieces too.
TEST_F(Mpi, SelectOverShardsGivesTheSameSelectionBitForBitOnOneTwoAndFourProcesses) {
  const std::string shards = write_shards(5, 1500);
  {  // a fold column: each shard's rows carry labels 1..4 in its own order
    for (std::size_t s = 0; s < 5; ++s) {
      const std::string text = slurp(file(fmt::format("shard{}.csv", s)));
      std::istringstream lines(text);
      std::ofstream out(file(fmt::format("labelled{}.csv", s)));
      std::string line;
      std::getline(lines, line);
      out << line << ",part\n";
      for (int i = 0; std::getline(lines, line); ++i) out << line << ',' << 1 + (i * 3 + static_cast<int>(s)) % 4 << '\n';
    }
  }
  const std::string labelled = " labelled0.csv labelled1.csv labelled2.csv labelled3.csv labelled4.csv";
  for (const std::string& command :
       {"select" + shards + " --response y --weights w --folds 4 --seed 9 --no-tests --block-rows 64 --json p.json",
        "select" + labelled + " --response y --drop w --fold-column part --block-rows 64 --json p.json"}) {
    SCOPED_TRACE(command);
    const Outcome alone = run(command);
    ASSERT_EQ(alone.code, 0) << alone.err;
    const std::string json = slurp(file("p.json"));
    for (int processes : {1, 2, 4}) {
      SCOPED_TRACE(fmt::format("{} processes", processes));
      std::filesystem::remove(file("p.json"));
      const Outcome r = run_mpi(processes, command);
      ASSERT_EQ(r.code, 0) << r.err;
      EXPECT_EQ(r.out, alone.out);
      EXPECT_EQ(slurp(file("p.json")), json);
    }
  }
  // One file cut into pieces, spread over two processes.
  const std::string pieces = "select shard0.csv --pieces 3 --response y --weights w --folds 3 --no-tests --json p.json";
  const Outcome alone = run(pieces);
  ASSERT_EQ(alone.code, 0) << alone.err;
  const std::string json = slurp(file("p.json"));
  std::filesystem::remove(file("p.json"));
  const Outcome two = run_mpi(2, pieces);
  ASSERT_EQ(two.code, 0) << two.err;
  EXPECT_EQ(slurp(file("p.json")), json);
}

// A bad cell in a shard read by rank 1 stops both processes with one
// message naming the file and line (seeded folds: found in the counting
// pass; a fold column: in the one pass).
TEST_F(Mpi, SelectOverShardsStopsEveryProcessOnAnError) {
  const std::string shards = write_shards(4, 400);
  std::ofstream(file("shard3.csv"), std::ios::app) << "1,2,oops,4,1,5\n";
  const Outcome bad = run_mpi(2, "select" + shards + " --response y --weights w --folds 3");
  EXPECT_EQ(bad.code, 3) << bad.err;
  EXPECT_NE(bad.err.find("knotpath: shard3.csv, line 102, column 3: cell \"oops\""), std::string::npos) << bad.err;
  std::size_t messages = 0;
  for (std::size_t at = bad.err.find("knotpath: "); at != std::string::npos; at = bad.err.find("knotpath: ", at + 1))
    ++messages;
  EXPECT_EQ(messages, 1u) << bad.err;
}

// ---- Columns over processes (--column-blocks) ----

// A wide invented table (fixed seed): a text identifier first, then 90
// predictors with the response among them, a text column "tag" among the
// predictors, a copy of g4 (held out as collinear) and weights last. Row
// `bad_row` (0-based; -1: none) holds `bad_cell` in g89.
void write_wide_table(const std::filesystem::path& path, int bad_row = -1, const char* bad_cell = "oops") {
  knotpath::testing::Lcg lcg(11);
  std::ofstream out(path);
  out << "id";
  for (int j = 0; j < 90; ++j) out << (j == 45 ? ",y" : "") << (j == 60 ? ",tag" : "") << ",g" << j;
  out << ",g4copy,w\n";
  for (int i = 0; i < 40; ++i) {
    std::vector<double> x(90);
    for (double& v : x) v = lcg.centred();
    const double y = 2 * x[3] - 1.5 * x[70] + x[88] + 0.4 * lcg.centred();
    out << "row" << i;
    for (int j = 0; j < 90; ++j) {
      if (j == 45) out << ',' << y;
      if (j == 60) out << ",t" << i % 3;
      if (i == bad_row && j == 89)
        out << ',' << bad_cell;
      else
        out << ',' << x[static_cast<std::size_t>(j)];
    }
    out << ',' << x[4] << ',' << 1 + i % 3 << '\n';
  }
}

// The rows of a knot table (--knots): text fields and numbers apart.
struct KnotRows {
  std::vector<std::vector<std::string>> text;  // step, event, predictor, active
  std::vector<std::vector<double>> numbers;    // every other field
};

KnotRows read_knot_rows(const std::string& csv) {
  KnotRows rows;
  std::istringstream lines(csv);
  std::string line;
  std::getline(lines, line);  // header
  while (std::getline(lines, line)) {
    std::vector<std::string> fields;
    std::istringstream cells(line);
    for (std::string cell; std::getline(cells, cell, ',');) fields.push_back(cell);
    rows.text.push_back({fields.at(0), fields.at(3), fields.at(4), fields.at(5)});
    std::vector<double> numbers;
    for (std::size_t k = 1; k < fields.size(); ++k)
      if (k < 3 || k > 5) numbers.push_back(std::stod(fields[k]));
    rows.numbers.push_back(numbers);
  }
  return rows;
}

// The printout without the line that names the blocks.
std::string without_block_note(const std::string& text) {
  std::istringstream lines(text);
  std::string out, line;
  while (std::getline(lines, line))
    if (line.find("(--column-blocks)") == std::string::npos) out += line + '\n';
  return out;
}

// Reference: the program alone on the table read whole (no option). The
// same events (kind, predictor, active count) and, to rounding, the same
// knots, coefficients and fits on 1, 2 and 4 processes, with every
// per-predictor option given by name (a penalty scale, an unpenalized
// predictor, a sign constraint, a dropped column) spread over the blocks;
// the columns left out (the identifier, the text column, the copy held out)
// are reported as for the table read whole. The lasso's events on this
// design include leaves (p > n: the path saturates).
TEST_F(Mpi, ColumnBlocksGiveTheEventsAndKnotsOfTheTableReadWhole) {
  write_wide_table(file("wide.csv"));
  const std::string command =
      "trace wide.csv --response y --weights w --penalty-scale g80=2 --unpenalized g12 --nonnegative g3 --drop g50 "
      "--knots k.csv";
  const Outcome alone = run(command);
  ASSERT_EQ(alone.code, 0) << alone.err;
  const KnotRows whole = read_knot_rows(slurp(file("k.csv")));
  ASSERT_GT(whole.text.size(), 20u);
  EXPECT_TRUE(std::any_of(whole.text.begin(), whole.text.end(), [](const auto& row) { return row[1] == "leave"; }));
  for (int processes : {1, 2, 4}) {
    SCOPED_TRACE(fmt::format("{} processes", processes));
    std::filesystem::remove(file("k.csv"));
    const Outcome r = run_mpi(processes, command + " --column-blocks");
    ASSERT_EQ(r.code, 0) << r.err;
    EXPECT_NE(r.out.find(fmt::format("read in {} block{}, one per process", processes, processes == 1 ? "" : "s")),
              std::string::npos)
        << r.out;
    const KnotRows blocks = read_knot_rows(slurp(file("k.csv")));
    ASSERT_EQ(blocks.text, whole.text);
    // The documented tolerance (README "Many columns"): knots (penalty and
    // mu, the first two numbers) within 1e-12 of the first knot's, the
    // other numbers within 1e-10 of max(1, |value|).
    for (std::size_t k = 0; k < whole.numbers.size(); ++k)
      for (std::size_t c = 0; c < whole.numbers[k].size(); ++c) {
        const double x = whole.numbers[k][c];
        const double tolerance = c < 2 ? 1e-12 * whole.numbers.front()[c] : 1e-10 * std::max(1.0, std::abs(x));
        EXPECT_NEAR(blocks.numbers[k][c], x, tolerance) << "knot " << k << ", field " << c;
      }
    // The audit's other lines (the columns left out, the stop) are the same.
    const std::string printed = without_block_note(r.out);
    for (const char* line : {"text columns skipped: id, tag", "stop: end"})
      EXPECT_EQ(printed.find(line) == std::string::npos, alone.out.find(line) == std::string::npos) << line;
    EXPECT_EQ(printed.substr(0, printed.find('\n')), alone.out.substr(0, alone.out.find('\n')));
  }
  // `at`, and --use naming a few predictors.
  for (const std::string& ask : {std::string("at wide.csv --response y --relative-budget 0.5 --csv"),
                                 std::string("at wide.csv --response y --use g3,g70,g88,g89,g2 --penalty 0 --csv")}) {
    SCOPED_TRACE(ask);
    const Outcome one = run(ask);
    const Outcome two = run_mpi(2, ask + " --column-blocks");
    ASSERT_EQ(one.code, 0) << one.err;
    ASSERT_EQ(two.code, 0) << two.err;
    std::istringstream a(one.out), b(two.out);
    std::string line_a, line_b;
    int compared = 0;
    std::getline(a, line_a);  // "# point: ..."
    std::getline(b, line_b);
    while (std::getline(a, line_a) && std::getline(b, line_b)) {
      const auto comma = line_a.find(',');
      ASSERT_EQ(line_a.substr(0, comma), line_b.substr(0, line_b.find(',')));
      if (compared++ == 0) continue;  // predictor,coefficient
      const double x = std::stod(line_a.substr(comma + 1)), y = std::stod(line_b.substr(line_b.find(',') + 1));
      EXPECT_NEAR(y, x, 1e-10 * std::max(1.0, std::abs(x))) << line_a;
    }
    EXPECT_GT(compared, 5);
  }
}

TEST_F(Mpi, LongleyWithItsPredictorsOverThreeOrEightProcessesReproducesTheCertifiedFit) {
  KNOTPATH_REQUIRE_REFERENCE(data, "strd/longley.csv");
  KNOTPATH_REQUIRE_REFERENCE(cert, "strd/longley.certified");
  // NIST StRD Longley: six predictors, two a process on three, and on eight
  // processes one on six of them and none on two.
  for (int processes : {3, 8}) {
    SCOPED_TRACE(fmt::format("{} processes", processes));
    const Outcome r = run_mpi(processes, "at '" + data.string() + "' --response y --penalty 0 --csv --column-blocks");
    ASSERT_EQ(r.code, 0) << r.err;
    expect_certified_longley_fit(r.out, cert);
  }
}

// A bad cell in a column of the last process's block stops every process
// with the message of the table read whole (file, line, column), once; an
// unknown column, a constant response and what the layout cannot do are
// refused alike on any process count.
TEST_F(Mpi, ColumnBlocksStopEveryProcessWithTheMessageOfTheTableReadWhole) {
  write_wide_table(file("wide.csv"));
  write_wide_table(file("bad.csv"), 6);
  // A value whose square overflows is found by the library's preparation on
  // the process holding it; every process stops with the same error, named
  // by rank 0 as the predictor of the whole table.
  write_wide_table(file("huge.csv"), 6, "1e308");
  for (const auto& [table, fragment] : {std::pair<std::string, std::string>{"bad.csv", "cell \"oops\""},
                                        std::pair<std::string, std::string>{"huge.csv", "predictor \"g89\""}}) {
    const std::string bad = "trace " + table + " --response y --weights w";
    const Outcome alone = run(bad);
    ASSERT_EQ(alone.code, 3) << alone.err;
    ASSERT_NE(alone.err.find(fragment), std::string::npos) << alone.err;
    for (int processes : {2, 4}) {
      SCOPED_TRACE(fmt::format("{}, {} processes", table, processes));
      const Outcome r = run_mpi(processes, bad + " --column-blocks");
      EXPECT_EQ(r.code, 3) << r.err;
      EXPECT_NE(r.err.find(alone.err.substr(0, alone.err.find('\n'))), std::string::npos) << r.err;
      std::size_t messages = 0;
      for (std::size_t at = r.err.find("knotpath: "); at != std::string::npos; at = r.err.find("knotpath: ", at + 1))
        ++messages;
      EXPECT_EQ(messages, 1u) << r.err;
    }
  }
  // Refusals that need no reading are made by every process alike before
  // any collective step: one process shows them (the option works without
  // mpirun too: one process holds the one block).
  const auto refused = [&](const std::string& args, int code, const std::string& fragment, int processes = 0) {
    SCOPED_TRACE(args);
    const std::string command = args + " --column-blocks";
    const Outcome r = processes == 0 ? run(command) : run_mpi(processes, command);
    EXPECT_EQ(r.code, code) << r.err;
    EXPECT_NE(r.err.find(fragment), std::string::npos) << r.err;
  };
  // The reader's own message, from rank 0, whose block does not hold the name.
  refused("trace wide.csv --response y --use g1,nowhere", 3,
          "wide.csv, line 1: unknown column \"nowhere\" (the header has: id, g0,", 2);
  refused("trace wide.csv wide.csv --response y", 2, "cuts the columns of one table");
  refused("trace wide.csv --response y --pieces 2", 2, "--pieces");
  refused("trace wide.csv --response y --missing drop", 2, "--missing drop");
  refused("trace wide.csv --response y --read blocks", 2, "--read blocks");
  refused("trace wide.csv --response y --indicators tag", 2, "--indicators");
  refused("trace wide.csv --response y --precision 50", 2, "--column-blocks traces in double precision");
  {
    std::ofstream out(file("flat.csv"));
    out << "a,b,y\n1,2,5\n3,1,5\n2,2,5\n";
  }
  refused("trace flat.csv --response y", 3, "the response \"y\" is constant", 2);
}

}  // namespace
