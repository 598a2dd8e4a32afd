// End-to-end tests of reading a table a block of rows at a time (--read):
// the program's outputs from a table streamed into its sufficient statistics
// are the outputs of reading it whole, byte for byte, apart from the one
// audit line and the JSON members that say how the table was read. The
// rows are invented in the test (a fixed-seed generator) or come from the
// diabetes data of Efron, Hastie, Johnstone & Tibshirani (2004), "Least
// angle regression", Ann. Statist. 32(2), whose published lasso sequence
// test_cli.cpp checks for the whole reading.

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include "cli_runner.hpp"
#include "lcg.hpp"
#include "test_support.hpp"

namespace {

using knotpath::testing::Outcome;
using knotpath::testing::slurp;

class Streaming : public knotpath::testing::ProgramTest {
 protected:
  Streaming() : ProgramTest("streaming", "--quiet") {}

  // Writes a table of `rows` invented rows: five predictors (two of them
  // correlated), a weight column of 1, 2 and 3, a text column, and a
  // response from three of the predictors plus noise. Every 97th row has a
  // missing cell (read with --missing drop) and a blank line follows every
  // 500th, so the kept rows and the file's lines part ways.
  void write_table(const std::string& name, int rows, std::uint64_t seed = 11) const {
    knotpath::testing::Lcg lcg(seed);
    auto next = [&] { return lcg.centred(); };
    std::ofstream out(file(name));
    out << "site,a,b,c,d,e,w,y\n";
    for (int i = 0; i < rows; ++i) {
      const double a = next(), b = 0.6 * a + next(), c = next(), d = next(), e = next();
      const double y = 3 * a - 2 * c + 0.5 * e + 0.4 * next();
      out << (i % 2 ? "north" : "south") << ',' << a << ',' << b << ',' << c << ',';
      if (i % 97 == 5)
        out << "NA";
      else
        out << d;
      out << ',' << e << ',' << 1 + i % 3 << ',' << y << '\n';
      if (i % 500 == 499) out << '\n';
    }
  }

  // Runs trace with the given reading options and returns {audit, knot
  // table, JSON document}; the run must succeed.
  struct Traced {
    std::string audit, knots;
    nlohmann::json json;
  };
  Traced trace(const std::string& table, const std::string& options) const {
    const Outcome r = run(fmt::format("trace {} --response y --weights w --missing drop {} --knots k.csv "
                                      "--json p.json",
                                      table, options));
    EXPECT_EQ(r.code, 0) << options << "\n" << r.err;
    Traced t{r.out, slurp(file("k.csv")), nlohmann::json::parse(slurp(file("p.json")), nullptr, false)};
    std::filesystem::remove(file("k.csv"));
    std::filesystem::remove(file("p.json"));
    return t;
  }
};

// The audit without the line that says the table was read in blocks.
std::string without_block_note(const std::string& audit) {
  std::string out;
  std::size_t at = 0;
  while (at < audit.size()) {
    std::size_t end = audit.find('\n', at);
    if (end == std::string::npos) end = audit.size() - 1;
    const std::string line = audit.substr(at, end + 1 - at);
    if (line.find("table read in blocks of") == std::string::npos) out += line;
    at = end + 1;
  }
  return out;
}

// The JSON document without the members that say how the table was read.
nlohmann::json without_reading(nlohmann::json doc) {
  doc["data"].erase("reading");
  doc["data"].erase("block_rows");
  return doc;
}

TEST_F(Streaming, BlocksOfAnyHeightGiveTheWholeReadingsOutputsByteForByte) {
  write_table("t.csv", 3000);
  const Traced whole = trace("t.csv", "--read whole");
  ASSERT_FALSE(whole.knots.empty());
  EXPECT_EQ(whole.json["data"]["reading"], "whole");
  EXPECT_TRUE(whole.json["data"]["block_rows"].is_null());
  EXPECT_EQ(whole.audit.find("table read in blocks"), std::string::npos);
  // Block heights that divide nothing, one row, and more rows than the table.
  for (const std::string height : {"1", "97", "1000", "5000"}) {
    SCOPED_TRACE("block rows " + height);
    const Traced blocks = trace("t.csv", "--read blocks --block-rows " + height);
    EXPECT_EQ(blocks.knots, whole.knots);
    EXPECT_EQ(without_block_note(blocks.audit), whole.audit);
    EXPECT_NE(blocks.audit.find("table read in blocks of " + height + " rows"), std::string::npos)
        << blocks.audit;
    EXPECT_EQ(blocks.json["data"]["reading"], "blocks");
    EXPECT_EQ(blocks.json["data"]["block_rows"], std::stoul(height));
    EXPECT_EQ(without_reading(blocks.json), without_reading(whole.json));
  }
  // Standard input reads in blocks too.
  const Outcome piped = run("trace - --response y --weights w --missing drop --read blocks --block-rows 64 "
                            "--knots k.csv",
                            file("t.csv").string());
  ASSERT_EQ(piped.code, 0) << piped.err;
  EXPECT_EQ(slurp(file("k.csv")), whole.knots);
}

TEST_F(Streaming, AtAnswersFromTheStreamAsFromTheWholeTable) {
  write_table("t.csv", 2000);
  const std::string ask = "at t.csv --response y --weights w --missing drop --relative-budget 0.4 --csv";
  const Outcome whole = run(ask + " --read whole");
  ASSERT_EQ(whole.code, 0) << whole.err;
  const Outcome blocks = run(ask + " --read blocks --block-rows 333");
  ASSERT_EQ(blocks.code, 0) << blocks.err;
  EXPECT_EQ(blocks.out, whole.out);
}

TEST_F(Streaming, AutomaticReadingStreamsOnlyWhereTheWholeReadingTakesTheStatistics) {
  write_table("t.csv", 3000);
  // More rows than a block, and a full path: the whole reading takes the
  // Gram route (n >= 2p, TraceOptions::storage automatic), so the automatic
  // reading streams and changes nothing but the note.
  const Traced whole = trace("t.csv", "--read whole");
  const Traced automatic = trace("t.csv", "--block-rows 200");
  EXPECT_EQ(automatic.json["data"]["reading"], "blocks");
  EXPECT_EQ(automatic.knots, whole.knots);
  // A table shorter than one block is read whole.
  const Traced short_table = trace("t.csv", "--block-rows 4000");
  EXPECT_EQ(short_table.json["data"]["reading"], "whole");
  EXPECT_EQ(short_table.audit, whole.audit);
  // Stopped after one predictor, a long table's path is cheaper from the
  // centred copy of the rows than from the statistics (choose_storage:
  // p > 4 K); only the small-design clause keeps this table on the Gram
  // route, and no larger one would be: the automatic reading keeps the rows
  // and traces them as the whole reading does.
  const Traced one_whole = trace("t.csv", "--read whole --max-active 1");
  const Traced one_auto = trace("t.csv", "--max-active 1 --block-rows 200");
  EXPECT_EQ(one_auto.json["data"]["reading"], "whole");
  EXPECT_EQ(one_auto.knots, one_whole.knots);
  EXPECT_EQ(one_auto.audit, one_whole.audit);
}

TEST_F(Streaming, ThePublishedDiabetesPathStreamsUnchanged) {
  KNOTPATH_REQUIRE_REFERENCE(diabetes, "open/diabetes.csv");
  const std::string table = "'" + diabetes.string() + "' --response progression --knots k.csv";
  ASSERT_EQ(run("trace " + table + " --read whole").code, 0);
  const std::string whole = slurp(file("k.csv"));
  const Outcome r = run("trace " + table + " --read blocks --block-rows 50");
  ASSERT_EQ(r.code, 0) << r.err;
  EXPECT_EQ(slurp(file("k.csv")), whole);
  // The whole reading's knot table holds the published sequence (test_cli.cpp,
  // DiabetesKnotTableHasThePublishedLassoSequence); its first entry is bmi.
  EXPECT_NE(whole.find(",enter,bmi,"), std::string::npos) << whole;
}

TEST_F(Streaming, BadRowsAndRefusalsNameTheFilesLine) {
  // A negative weight on line 1503 (a header, 1500 rows, and a blank line
  // after row 500 and row 1000 of write_table's rows): found by the stream
  // in the third block, named by its line.
  write_table("t.csv", 1600);
  std::string text = slurp(file("t.csv"));
  std::size_t at = 0;
  for (int line = 1; line < 1503; ++line) at = text.find('\n', at) + 1;
  const std::size_t end = text.find('\n', at);
  std::vector<std::string> cells;
  for (std::size_t from = at, comma; from <= end; from = comma + 1) {
    comma = std::min(text.find(',', from), end);
    cells.push_back(text.substr(from, comma - from));
  }
  ASSERT_EQ(cells.size(), 8u);
  cells[6] = "-" + cells[6];  // the weight (1, 2 or 3) made negative
  std::string row;
  for (const auto& cell : cells) row += (row.empty() ? "" : ",") + cell;
  text.replace(at, end - at, row);
  std::ofstream(file("bad.csv")) << text;
  const Outcome r = run("trace bad.csv --response y --weights w --missing drop --read blocks --block-rows 600");
  EXPECT_EQ(r.code, 3) << r.err;  // exit_bad_input
  EXPECT_NE(r.err.find("bad.csv, line 1503"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("weight"), std::string::npos) << r.err;

  // A constant response is refused as the whole reading refuses it.
  std::ofstream(file("flat.csv")) << "a,y\n1,5\n2,5\n3,5\n4,5\n";
  const Outcome flat_whole = run("trace flat.csv --response y --read whole");
  const Outcome flat_blocks = run("trace flat.csv --response y --read blocks --block-rows 3");
  EXPECT_EQ(flat_blocks.code, flat_whole.code);
  EXPECT_NE(flat_whole.code, 0);
  EXPECT_EQ(flat_blocks.err, flat_whole.err);

  // Indicators need every level first; another arithmetic reads whole.
  const Outcome levels = run("trace t.csv --response y --indicators site --missing drop --read blocks");
  EXPECT_EQ(levels.code, 2) << levels.err;  // exit_usage
  EXPECT_NE(levels.err.find("--read blocks cannot expand --indicators"), std::string::npos) << levels.err;
  const Outcome precise = run("trace t.csv --response y --missing drop --precision 50 --read blocks");
  EXPECT_EQ(precise.code, 2) << precise.err;
  EXPECT_NE(precise.err.find("--read blocks traces in double precision"), std::string::npos) << precise.err;
}

// Every member named `name` removed from a JSON document, at any depth.
nlohmann::json without_member(nlohmann::json doc, const std::string& name) {
  if (doc.is_object()) {
    doc.erase(name);
    for (auto& [key, value] : doc.items()) value = without_member(value, name);
  } else if (doc.is_array()) {
    for (auto& value : doc) value = without_member(value, name);
  }
  return doc;
}

TEST_F(Streaming, VerifyReadsATallTableInBlocksWithTheSameVerdictAndNumbers) {
  // verify traces in double and in 50 digits; read in blocks, each
  // arithmetic has its own stream of statistics (the 50-digit one parsed
  // exactly from the cells' text), so the table is never held in high
  // precision, and the two paths are those of reading it whole.
  write_table("t.csv", 2500);
  const std::string ask = "verify t.csv --response y --weights w --missing drop";
  const Outcome whole = run(ask + " --read whole --json a.json");
  const Outcome blocks = run(ask + " --read blocks --block-rows 250 --json b.json");
  EXPECT_EQ(whole.code, 0) << whole.err;
  EXPECT_EQ(blocks.code, whole.code) << blocks.err;
  std::string blocks_out = without_block_note(blocks.out);
  blocks_out.replace(blocks_out.find("wrote b.json"), 12, "wrote a.json");
  EXPECT_EQ(blocks_out, whole.out);
  const auto a = nlohmann::json::parse(slurp(file("a.json"))), b = nlohmann::json::parse(slurp(file("b.json")));
  EXPECT_EQ(without_member(without_member(b, "reading"), "block_rows"),
            without_member(without_member(a, "reading"), "block_rows"));
}

// The lines of a table split into `count` tables of consecutive rows, each
// with the header: the shards of one table.
std::vector<std::string> shards_of(const std::string& text, std::size_t count) {
  const std::size_t header_end = text.find('\n') + 1;
  const std::string header = text.substr(0, header_end);
  std::vector<std::string> rows;
  for (std::size_t at = header_end; at < text.size();) {
    const std::size_t end = text.find('\n', at);
    rows.push_back(text.substr(at, end - at + 1));
    at = end + 1;
  }
  std::vector<std::string> out(count, header);
  for (std::size_t i = 0; i < rows.size(); ++i) out[i * count / rows.size()] += rows[i];
  return out;
}

// Numbers of a knot table (step, penalty, mu, event, predictor, active,
// L1 norm, R^2), by row.
std::vector<std::vector<std::string>> cells_of(const std::string& csv) {
  std::vector<std::vector<std::string>> out;
  std::istringstream in(csv);
  std::string line;
  while (std::getline(in, line)) {
    std::vector<std::string> cells;
    std::istringstream fields(line);
    std::string cell;
    while (std::getline(fields, cell, ',')) cells.push_back(cell);
    out.push_back(cells);
  }
  return out;
}

TEST_F(Streaming, SeveralTablesAreTracedAsTheShardsOfOne) {
  write_table("t.csv", 2400);
  const std::vector<std::string> parts = shards_of(slurp(file("t.csv")), 5);
  std::string names;
  for (std::size_t s = 0; s < parts.size(); ++s) {
    std::ofstream(file(fmt::format("part{}.csv", s))) << parts[s];
    names += fmt::format(" part{}.csv", s);
  }
  const Traced whole = trace("t.csv", "--read whole");
  const Traced sharded = trace(names, "--block-rows 100");
  EXPECT_EQ(sharded.json["data"]["shards"].size(), 5u);
  EXPECT_EQ(sharded.json["data"]["rows_read"], whole.json["data"]["rows_read"]);
  EXPECT_EQ(sharded.json["data"]["rows_dropped_missing"], whole.json["data"]["rows_dropped_missing"]);
  EXPECT_NE(sharded.audit.find("table read from 5 shards"), std::string::npos) << sharded.audit;
  // Merged in the shard tree, the statistics differ from one stream's in the
  // last bits only: the same events, and numbers equal to 1e-10 relative
  // (the Gram route's agreement with itself under a reordered sum, common
  // practice for well-conditioned data like these).
  const auto a = cells_of(whole.knots), b = cells_of(sharded.knots);
  ASSERT_EQ(a.size(), b.size());
  for (std::size_t k = 1; k < a.size(); ++k) {
    ASSERT_EQ(a[k].size(), b[k].size());
    for (std::size_t c : {3u, 4u, 5u}) EXPECT_EQ(a[k][c], b[k][c]) << "knot " << k;
    for (std::size_t c : {1u, 2u, 6u, 7u}) {
      const double x = std::stod(a[k][c]), y = std::stod(b[k][c]);
      EXPECT_LE(std::abs(x - y), 1e-10 * std::max(1.0, std::abs(x))) << "knot " << k << " column " << c;
    }
  }
  // Refusals: standard input among shards, --read whole, unlike columns.
  EXPECT_EQ(run("trace - part1.csv --response y").code, 2);
  const Outcome read_whole = run("trace part0.csv part1.csv --response y --weights w --missing drop --read whole");
  EXPECT_EQ(read_whole.code, 2) << read_whole.err;
  std::ofstream(file("other.csv")) << "site,a,b,c,d,z,w,y\nnorth,1,2,3,4,5,1,6\nsouth,2,1,3,5,4,2,7\n";
  const Outcome unlike = run("trace part0.csv other.csv --response y --weights w --missing drop");
  EXPECT_EQ(unlike.code, 3) << unlike.err;
  EXPECT_NE(unlike.err.find("other.csv: its names"), std::string::npos) << unlike.err;
  EXPECT_NE(unlike.err.find("the shards of a table must have the same columns"), std::string::npos) << unlike.err;
  // A bad cell in the third shard is named by that file and its line.
  std::ofstream(file("bad.csv")) << "site,a,b,c,d,e,w,y\nnorth,1,2,3,4,5,1,6\nsouth,2,x,3,5,4,2,7\n";
  const Outcome bad = run("trace part0.csv part1.csv bad.csv --response y --weights w --missing drop");
  EXPECT_EQ(bad.code, 3) << bad.err;
  EXPECT_NE(bad.err.find("bad.csv, line 3"), std::string::npos) << bad.err;
}

// The rule of io::TablePiece, written again here from its comment: piece i
// of `count` starts at the first line start at or after
// H + floor((S - H) i / count) and ends where piece i + 1 starts.
std::vector<std::string> pieces_by_the_rule(const std::string& text, std::size_t count) {
  const std::size_t header_end = text.find('\n') + 1, data = text.size() - header_end;
  std::vector<std::size_t> starts;
  for (std::size_t i = 0; i < count; ++i) {
    const std::size_t nominal = header_end + data * i / count;
    starts.push_back(i == 0 ? header_end : std::min(text.find('\n', nominal - 1), text.size() - 1) + 1);
  }
  starts.push_back(text.size());
  std::vector<std::string> out;
  for (std::size_t i = 0; i < count; ++i)
    out.push_back(text.substr(0, header_end) + text.substr(starts[i], starts[i + 1] - starts[i]));
  return out;
}

TEST_F(Streaming, OneTableCutIntoPiecesIsTracedAsTheShardsTheCutMakes) {
  write_table("t.csv", 2400);
  const std::string text = slurp(file("t.csv"));
  const std::vector<std::string> parts = pieces_by_the_rule(text, 3);
  std::string names;
  for (std::size_t s = 0; s < parts.size(); ++s) {
    std::ofstream(file(fmt::format("piece{}.csv", s))) << parts[s];
    names += fmt::format(" piece{}.csv", s);
  }
  // The same rows in the same shards, blocks and merge tree: the same bits.
  const Traced files = trace(names, "--block-rows 100");
  const Traced pieces = trace("t.csv", "--pieces 3 --block-rows 100");
  EXPECT_EQ(pieces.knots, files.knots);
  EXPECT_EQ(pieces.json["knots"], files.json["knots"]);
  EXPECT_EQ(pieces.json["events"], files.json["events"]);
  EXPECT_EQ(pieces.json["data"]["rows_read"], files.json["data"]["rows_read"]);
  EXPECT_EQ(pieces.json["data"]["shards"][1], "t.csv (piece 2 of 3)");
  EXPECT_NE(pieces.audit.find("table read from 3 shards"), std::string::npos) << pieces.audit;
  EXPECT_NE(pieces.audit.find("t.csv (3 pieces)"), std::string::npos) << pieces.audit;
  // One piece is the table read in blocks as one shard: the rows' statistics unmerged.
  const Traced one = trace("t.csv", "--pieces 1 --block-rows 100");
  const Traced blocks = trace("t.csv", "--read blocks --block-rows 100");
  EXPECT_EQ(one.knots, blocks.knots);
  // A bad cell in the last piece is named by the file's own line, on every
  // route (the pieces count the earlier lines only when one fails).
  std::ofstream(file("t.csv"), std::ios::app) << "north,1,2,3,oops,5,1,6\n";
  const std::size_t bad_line = static_cast<std::size_t>(std::count(text.begin(), text.end(), '\n')) + 1;
  for (const char* how : {"--pieces 4", "--read whole"}) {
    const Outcome bad = run(fmt::format("trace t.csv --response y --weights w --missing drop {}", how));
    EXPECT_EQ(bad.code, 3) << how << "\n" << bad.err;
    EXPECT_NE(bad.err.find(fmt::format("t.csv, line {}, column 5", bad_line)), std::string::npos) << how << "\n"
                                                                                                  << bad.err;
  }
  // Refusals (usage, status 2): several tables, standard input, --read whole,
  // another arithmetic, more pieces than lines.
  EXPECT_EQ(run("trace piece0.csv piece1.csv --response y --pieces 2").code, 2);
  EXPECT_EQ(run("trace - --response y --pieces 2").code, 2);
  EXPECT_EQ(run("trace t.csv --response y --pieces 2 --read whole").code, 2);
  EXPECT_EQ(run("trace t.csv --response y --pieces 2 --precision 50").code, 2);
  std::ofstream(file("small.csv")) << "a,b,y\n1,2,3\n2,1,5\n3,3,4\n";
  const Outcome many = run("trace small.csv --response y --pieces 5");
  EXPECT_EQ(many.code, 2) << many.err;
  EXPECT_NE(many.err.find("piece 3 of 5 holds no line"), std::string::npos) << many.err;
}

}  // namespace

// ---- select: exact cross-validation from one set of statistics per fold ----

namespace {

// A tall table of invented rows for select: five predictors, a fold column
// "part" whose labels (9, 2, 7, 4; -1 for rows never held out) are not in
// row order, a weight column and a response from three predictors plus
// noise.
void write_fold_table(const std::filesystem::path& path, int rows) {
  knotpath::testing::Lcg lcg(29);
  auto next = [&] { return lcg.centred(); };
  std::ofstream out(path);
  out << "a,b,c,d,e,part,w,y\n";
  const int labels[] = {9, 2, 7, 4};
  for (int i = 0; i < rows; ++i) {
    const double a = next(), b = 0.6 * a + next(), c = next(), d = next(), e = next();
    const double y = 3 * a - 2 * c + 0.5 * e + 0.8 * next();
    out << a << ',' << b << ',' << c << ',' << d << ',' << e << ',' << (i % 11 == 3 ? -1 : labels[(i * 7) % 4])
        << ',' << 1 + i % 3 << ',' << y << '\n';
  }
}

}  // namespace

// The statistics of each fold, accumulated a block at a time, are those the
// whole reading forms from its rows (FoldStatisticsAccumulator), so select
// prints the very same selection, byte for byte, apart from the audit line
// that says the table was read in blocks: with a fold column (one pass),
// with seeded folds (two passes drawing make_folds()'s assignment), and
// with weights (the tests are then refused by both readings alike).
TEST_F(Streaming, SelectFromFoldStatisticsPrintsTheWholeReadingsSelection) {
  write_fold_table(file("f.csv"), 3000);
  for (const std::string model : {"--fold-column part --drop w", "--drop part,w --folds 5 --seed 3",
                                  "--fold-column part --weights w"}) {
    SCOPED_TRACE(model);
    const std::string ask = "select f.csv --response y " + model;
    const Outcome whole = run(ask + " --read whole --json s.json");
    ASSERT_EQ(whole.code, 0) << whole.err;
    const nlohmann::json whole_doc = nlohmann::json::parse(slurp(file("s.json")));
    EXPECT_EQ(whole_doc["path"]["data"]["reading"], "whole");
    for (const std::string height : {"97", "1000"}) {
      const Outcome blocks = run(ask + " --read blocks --block-rows " + height + " --json s.json");
      ASSERT_EQ(blocks.code, 0) << blocks.err;
      EXPECT_NE(blocks.out.find("table read in blocks of " + height + " rows"), std::string::npos) << blocks.out;
      EXPECT_EQ(without_block_note(blocks.out), whole.out);
      nlohmann::json doc = nlohmann::json::parse(slurp(file("s.json")));
      EXPECT_EQ(doc["path"]["data"]["reading"], "blocks");
      doc["path"] = without_reading(doc["path"]);
      nlohmann::json notes = nlohmann::json::array();  // the audit's notes without the block note
      for (const auto& note : doc["audit_notes"])
        if (note.get<std::string>().find("table read in blocks of") == std::string::npos) notes.push_back(note);
      EXPECT_EQ(notes.size() + 1, doc["audit_notes"].size());
      doc["audit_notes"] = notes;
      nlohmann::json expected = whole_doc;
      expected["path"] = without_reading(expected["path"]);
      EXPECT_TRUE(doc == expected) << "the JSON documents differ";
    }
  }
}

// --read auto streams a tall table as trace would (more rows than a block,
// on the Gram route) and reads whole what select cannot stream; --read
// blocks refuses those with the reason: leave-one-out (a set of statistics
// per row), --repeats (R K sets), seeded folds from standard input (read
// twice).
TEST_F(Streaming, SelectReadsAutomaticallyInBlocksOnlyWhatItCanStream) {
  write_fold_table(file("f.csv"), 3000);
  const std::string ask = "select f.csv --response y --drop part,w --folds 4 --json s.json";
  auto reading = [&](const std::string& options) {
    const Outcome r = run(ask + " " + options);
    EXPECT_EQ(r.code, 0) << options << "\n" << r.err;
    return nlohmann::json::parse(slurp(file("s.json")))["path"]["data"]["reading"];
  };
  EXPECT_EQ(reading("--block-rows 200"), "blocks");
  EXPECT_EQ(reading("--block-rows 4000"), "whole");  // one block: read whole
  EXPECT_EQ(reading("--block-rows 200 --repeats 2"), "whole");
  EXPECT_EQ(reading("--block-rows 200 --precision 50 --no-tests"), "whole");
  for (const auto& [options, reason] :
       std::vector<std::pair<std::string, std::string>>{{"--repeats 2", "--repeats needs"},
                                                         {"--leave-one-out", "leave-one-out needs"}}) {
    const Outcome refused = run("select f.csv --response y --drop part,w --read blocks " + options);
    EXPECT_EQ(refused.code, 2) << options;
    EXPECT_NE(refused.err.find(reason), std::string::npos) << refused.err;
  }
  const Outcome piped = run("select - --response y --drop part,w --read blocks", file("f.csv").string());
  EXPECT_EQ(piped.code, 2);
  EXPECT_NE(piped.err.find("standard input can be read only once"), std::string::npos) << piped.err;
  const Outcome piped_column = run("select - --response y --fold-column part --drop w --read blocks",
                                   file("f.csv").string());
  EXPECT_EQ(piped_column.code, 0) << piped_column.err;
}

// Where the whole reading builds a fold's held-out error from its rows (a
// near-exact fit: residuals of 1e-9 against a response of size 1e3, whose
// statistics cancel; CrossValidationFromParts.RefusesWhereItWouldNeedTheRows)
// the reading in blocks has none and refuses with status 3, naming the fold
// and the way out; the whole reading cross-validates.
TEST_F(Streaming, SelectInBlocksRefusesAFoldWhoseErrorNeedsItsRows) {
  knotpath::testing::Lcg lcg(31);
  {
    std::ofstream out(file("exact.csv"));
    out.precision(17);
    out << "a,b,c,y\n";
    for (int i = 0; i < 3000; ++i) {
      const double a = lcg.centred(), b = lcg.centred(), c = lcg.centred();
      out << a << ',' << b << ',' << c << ',' << 1000 * (a + 2 * b + 3 * c) + 1e-9 * lcg.centred() << '\n';
    }
  }
  const Outcome blocks = run("select exact.csv --response y --read blocks");
  EXPECT_EQ(blocks.code, 3) << blocks.err;
  EXPECT_NE(blocks.err.find("fold 0: its held-out error cannot be formed from its statistics"), std::string::npos)
      << blocks.err;
  EXPECT_NE(blocks.err.find("--read whole"), std::string::npos) << blocks.err;
  const Outcome whole = run("select exact.csv --response y --read whole");
  EXPECT_EQ(whole.code, 0) << whole.err;
}

// ---- select over shards: several tables, --pieces ----

namespace {

// The selection of a select --json document: the choices and the curve
// (what must be the same bits whoever reads the shards), without the data
// part that names the files.
nlohmann::json selection_of(const nlohmann::json& doc) {
  nlohmann::json out = doc;
  out.erase("path");
  out.erase("audit_notes");
  return out;
}

// Numbers of two JSON values equal to `tolerance` relative (strings, bools
// and the shape exactly).
void expect_close(const nlohmann::json& a, const nlohmann::json& b, double tolerance, const std::string& where) {
  ASSERT_EQ(a.type(), b.type()) << where;
  if (a.is_object()) {
    ASSERT_EQ(a.size(), b.size()) << where;
    for (auto it = a.begin(); it != a.end(); ++it) {
      ASSERT_TRUE(b.contains(it.key())) << where << "/" << it.key();
      expect_close(it.value(), b[it.key()], tolerance, where + "/" + it.key());
    }
  } else if (a.is_array()) {
    ASSERT_EQ(a.size(), b.size()) << where;
    for (std::size_t i = 0; i < a.size(); ++i) expect_close(a[i], b[i], tolerance, where + "/" + std::to_string(i));
  } else if (a.is_number_float()) {
    const double x = a.get<double>(), y = b.get<double>();
    EXPECT_LE(std::abs(x - y), tolerance * std::max(1.0, std::abs(x))) << where;
  } else {
    EXPECT_EQ(a, b) << where;
  }
}

}  // namespace

// select over three shard files is select over the three pieces of the one
// file cut at the same lines, byte for byte (the same rows, blocks and
// merge tree), with a fold column (labels united over the shards) and with
// seeded folds (drawn over all the rows in shard order, as for the one
// table, and handed to each shard in the fewest bytes that hold K); and it agrees with the one table read whole to 1e-9 relative (the
// parts merged in the shard tree round differently: common practice for a
// reordered sum of well-conditioned data).
TEST_F(Streaming, SelectOverShardsIsSelectOverThePiecesOfTheOneTable) {
  write_fold_table(file("f.csv"), 3000);
  const std::vector<std::string> parts = pieces_by_the_rule(slurp(file("f.csv")), 3);
  for (std::size_t s = 0; s < parts.size(); ++s) std::ofstream(file(fmt::format("s{}.csv", s))) << parts[s];
  // --folds 300: fold numbers beyond one byte, sent to the shards in two.
  for (const std::string model : {"--fold-column part --drop w", "--drop part,w --folds 5 --seed 3",
                                  "--fold-column part --weights w --no-tests",
                                  "--drop part --weights w --folds 300 --seed 4 --no-tests"}) {
    SCOPED_TRACE(model);
    const std::string ask = " --response y " + model + " --block-rows 200 --json s.json";
    const Outcome files = run("select s0.csv s1.csv s2.csv" + ask);
    ASSERT_EQ(files.code, 0) << files.err;
    const nlohmann::json files_doc = nlohmann::json::parse(slurp(file("s.json")));
    const Outcome pieces = run("select f.csv --pieces 3" + ask);
    ASSERT_EQ(pieces.code, 0) << pieces.err;
    const nlohmann::json pieces_doc = nlohmann::json::parse(slurp(file("s.json")));
    EXPECT_EQ(selection_of(pieces_doc).dump(), selection_of(files_doc).dump());
    EXPECT_EQ(pieces_doc["path"]["data"]["rows_read"], 3000);
    EXPECT_EQ(pieces_doc["path"]["data"]["shards"][2], "f.csv (piece 3 of 3)");
    const Outcome whole = run("select f.csv --read whole" + ask);
    ASSERT_EQ(whole.code, 0) << whole.err;
    expect_close(selection_of(files_doc), selection_of(nlohmann::json::parse(slurp(file("s.json")))), 1e-9, "");
  }
}

// A fold label found in one shard only is the same fold as in the one
// table (the shards' labels are united before the parts are merged).
TEST_F(Streaming, SelectOverShardsUnitesTheFoldLabelsOfTheShards) {
  write_fold_table(file("f.csv"), 2000);
  const std::string text = slurp(file("f.csv"));
  const std::size_t header_end = text.find('\n') + 1;
  // Rows by label: shard 0 takes labels 2 and 9 (and the rows never held
  // out), shard 1 labels 4 and 7: no shard holds every fold.
  std::ofstream first(file("low.csv")), second(file("high.csv")), joined(file("joined.csv"));
  for (auto* out : {&first, &second, &joined}) *out << text.substr(0, header_end);
  std::string later;
  for (std::size_t at = header_end; at < text.size();) {
    const std::size_t end = text.find('\n', at);
    const std::string line = text.substr(at, end - at + 1);
    at = end + 1;
    std::size_t field = 0;  // the sixth cell, "part"
    for (int k = 0; k < 5; ++k) field = line.find(',', field) + 1;
    const std::string label = line.substr(field, line.find(',', field) - field);
    if (label == "4" || label == "7") {
      second << line;
      later += line;
    } else {
      first << line;
      joined << line;
    }
  }
  joined << later;
  for (auto* out : {&first, &second, &joined}) out->close();
  const std::string ask = " --response y --fold-column part --drop w --block-rows 150 --json s.json";
  const Outcome shards = run("select low.csv high.csv" + ask);
  ASSERT_EQ(shards.code, 0) << shards.err;
  const nlohmann::json shards_doc = nlohmann::json::parse(slurp(file("s.json")));
  const Outcome whole = run("select joined.csv --read whole" + ask);
  ASSERT_EQ(whole.code, 0) << whole.err;
  expect_close(selection_of(shards_doc), selection_of(nlohmann::json::parse(slurp(file("s.json")))), 1e-9, "");
}

// What select cannot do over shards is refused with the reason (usage,
// status 2); a bad cell in the second shard is named by its file and line.
TEST_F(Streaming, SelectOverShardsRefusesWhatItCannotDoAndNamesABadLine) {
  write_fold_table(file("f.csv"), 600);
  const std::vector<std::string> parts = pieces_by_the_rule(slurp(file("f.csv")), 2);
  for (std::size_t s = 0; s < parts.size(); ++s) std::ofstream(file(fmt::format("s{}.csv", s))) << parts[s];
  for (const auto& [options, reason] : std::vector<std::pair<std::string, std::string>>{
           {"--leave-one-out", "leave-one-out needs"},
           {"--repeats 2", "--repeats needs"},
           {"--precision 50", "--precision parses"},
           {"--read whole", "--read whole reads one table"}}) {
    const Outcome refused = run("select s0.csv s1.csv --response y --drop part,w " + options);
    EXPECT_EQ(refused.code, 2) << options << "\n" << refused.err;
    EXPECT_NE(refused.err.find(reason), std::string::npos) << refused.err;
  }
  const Outcome piped = run("select - s1.csv --response y --drop part,w", file("s0.csv").string());
  EXPECT_EQ(piped.code, 2) << piped.err;
  EXPECT_NE(piped.err.find("standard input"), std::string::npos) << piped.err;
  const Outcome cut_many = run("select s0.csv s1.csv --response y --drop part,w --pieces 2");
  EXPECT_EQ(cut_many.code, 2) << cut_many.err;
  std::ofstream(file("s1.csv"), std::ios::app) << "1,2,3,oops,5,2,1,6\n";
  const std::size_t bad_line = static_cast<std::size_t>(std::count(parts[1].begin(), parts[1].end(), '\n')) + 1;
  for (const std::string folds : {"--fold-column part --drop w", "--drop part,w --folds 3"}) {
    const Outcome bad = run("select s0.csv s1.csv --response y " + folds);
    EXPECT_EQ(bad.code, 3) << bad.err;
    EXPECT_NE(bad.err.find(fmt::format("s1.csv, line {}, column 4", bad_line)), std::string::npos) << bad.err;
  }
}

// A bad value met by the statistics, not by the reader, while a piece's
// rows are added (a negative weight: the reader reads the number, the
// statistics refuse it) is named by the file's line, not by its line inside
// the piece, in trace and at and in select over --pieces (seeded folds:
// found in the counting pass; a fold column: in the one pass). Regression:
// the piece's own line was named (RELIABILITY.md, "Found in review").
TEST_F(Streaming, ABadValueInAPieceIsNamedByTheFilesLine) {
  write_fold_table(file("f.csv"), 900);
  std::string text = slurp(file("f.csv"));
  const std::size_t bad_line = 452;  // the header, then row 450 (no blank line)
  std::size_t at = 0;
  for (std::size_t line = 1; line < bad_line; ++line) at = text.find('\n', at) + 1;
  const std::size_t end = text.find('\n', at);
  std::vector<std::string> cells;
  std::istringstream fields(text.substr(at, end - at));
  for (std::string cell; std::getline(fields, cell, ',');) cells.push_back(cell);
  ASSERT_EQ(cells.size(), 8u);
  cells[6] = "-2";  // the weight w
  std::string row;
  for (const auto& cell : cells) row += (row.empty() ? "" : ",") + cell;
  text.replace(at, end - at, row);
  std::ofstream(file("f.csv")) << text;
  // The bad row lies in piece 2 of 3 (the cut of io::table_piece).
  const std::vector<std::string> parts = pieces_by_the_rule(text, 3);
  const auto rows_of = [](const std::string& piece) {
    return static_cast<std::size_t>(std::count(piece.begin(), piece.end(), '\n')) - 1;
  };
  ASSERT_GT(bad_line - 1, rows_of(parts[0]));
  ASSERT_LE(bad_line - 1, rows_of(parts[0]) + rows_of(parts[1]));
  const std::string expected = fmt::format("knotpath: f.csv, line {}: the weight is negative", bad_line);
  for (const std::string command :
       {"trace f.csv --response y --weights w --drop part", "at f.csv --response y --weights w --drop part --relative-budget 0.5",
        "select f.csv --response y --weights w --drop part --folds 3",
        "select f.csv --response y --weights w --fold-column part"}) {
    SCOPED_TRACE(command);
    const Outcome bad = run(command + " --pieces 3 --block-rows 64");
    EXPECT_EQ(bad.code, 3) << bad.err;  // exit_bad_input
    EXPECT_NE(bad.err.find(expected), std::string::npos) << bad.err;
  }
}
