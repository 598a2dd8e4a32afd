// Unit tests of the streaming table reader (include/knotpath/io/table.hpp).
// The quoting rules checked here are those of RFC 4180 (Shafranovich 2005,
// "Common Format and MIME Type for CSV Files"): fields in double quotes may
// hold delimiters and line breaks, and a doubled quote stands for one quote.
// Semicolon/tab delimiters, the UTF-8 byte order mark (Unicode Standard,
// section 23.8) and "NA" for a missing value are common practice; so are the
// other missing-value tokens (N/A, NaN, "."), the decimal comma of many
// locales and whitespace-separated columns. The gzip bytes below were written
// by Python's gzip module (Debian python3, gzip.compress(..., mtime=0)), an
// implementation of RFC 1952 outside the project; the magic bytes of the other
// compressed formats are those of their specifications (zip APPNOTE 4.3.7,
// xz file format 1.0 section 2.1.1.1, bzip2 "BZh" + level, zstd RFC 8878).

#include <gtest/gtest.h>

#include <algorithm>
#include <cstdint>
#include <fstream>

#include <optional>
#include <sstream>
#include <string>

#include <knotpath/io/roles.hpp>
#include <knotpath/io/table.hpp>
#include <knotpath/trace.hpp>

#include "lcg.hpp"

namespace {

using knotpath::io::ColumnAssignment;
using knotpath::io::ColumnRoles;
using knotpath::io::DecimalMark;
using knotpath::io::MissingCells;
using knotpath::io::read_table;
using knotpath::io::role_conflict;
using knotpath::io::Table;
using knotpath::io::table_error;
using knotpath::io::TableReadOptions;
using knotpath::io::TableSplit;

Table read_text(const std::string& text, const TableReadOptions& options = {}) {
  std::istringstream in(text);
  return read_table(in, "t.csv", options);
}

// Runs the reader and returns the error it must throw.
table_error error_of(const std::string& text, const TableReadOptions& options = {}) {
  try {
    read_text(text, options);
  } catch (const table_error& e) {
    return e;
  }
  ADD_FAILURE() << "no error for:\n" << text;
  return table_error(table_error::Kind::content, "", 0, 0, "none");
}

// Values parsed from short decimal text must equal the double the compiler
// makes of the same literal: both are correctly rounded (from_chars and the
// C++ standard's literal rules), so the comparisons below are exact.

TEST(TableReader, ReadsCommaSeparatedColumnsInFileOrder) {
  Table t = read_text("a,b,y\n1,2.5,-3\n4,5e-1,6\n");
  ASSERT_EQ(t.names, (std::vector<std::string>{"a", "b", "y"}));
  ASSERT_EQ(t.rows, 2u);
  EXPECT_EQ(t.delimiter, ',');
  EXPECT_EQ(t.columns[1][0], 2.5);
  EXPECT_EQ(t.columns[1][1], 0.5);
  EXPECT_EQ(t.columns[2][0], -3.0);
}

TEST(TableReader, DetectsSemicolonAndTab) {
  Table s = read_text("a;b\n1,5;2\n");  // decimal comma is text, so not numeric
  EXPECT_EQ(s.delimiter, ';');
  EXPECT_EQ(s.names, (std::vector<std::string>{"b"}));
  EXPECT_EQ(s.text_columns, (std::vector<std::string>{"a"}));
  Table t = read_text("a\tb\n1\t2\n");
  EXPECT_EQ(t.delimiter, '\t');
  EXPECT_EQ(t.columns[1][0], 2.0);
}

// Blank lines before the header are skipped by the reader, so detection
// passes over them too: it used to read the first physical line, so an empty
// first line made every table comma-separated and a line of blanks holding a
// tab made a whitespace table tab-separated.
TEST(TableReader, DetectionLooksAtTheHeaderRowNotTheBlankLinesBeforeIt) {
  Table s = read_text("\r\n\n a;b\n1;2\n");
  EXPECT_EQ(s.delimiter, ';');
  EXPECT_EQ(s.names, (std::vector<std::string>{"a", "b"}));
  Table w = read_text(" \t \nx  y\n1 2\n");
  EXPECT_EQ(w.delimiter, ' ');
  EXPECT_EQ(w.names, (std::vector<std::string>{"x", "y"}));
  EXPECT_EQ(w.columns[1][0], 2.0);
}

TEST(TableReader, GivenDelimiterOverridesDetection) {
  TableReadOptions options;
  options.delimiter = ';';
  // Detection would pick the comma (two commas against one semicolon).
  Table t = read_text("a,x;b,y\n1;2\n", options);
  EXPECT_EQ(t.names, (std::vector<std::string>{"a,x", "b,y"}));
  EXPECT_EQ(t.columns[1][0], 2.0);
}

TEST(TableReader, QuotedFieldsHoldDelimitersQuotesAndLineBreaks) {
  Table t = read_text("\"na,me\",\"say \"\"hi\"\"\",y\n\"1\",\"two\nlines\",3\n4,x,5\n");
  EXPECT_EQ(t.names, (std::vector<std::string>{"na,me", "y"}));
  EXPECT_EQ(t.text_columns, (std::vector<std::string>{"say \"hi\""}));
  EXPECT_EQ(t.rows, 2u);
  EXPECT_EQ(t.columns[0][1], 4.0);
  // A later error is reported on its physical line: the quoted line break
  // in the text column c moves the third data row to line 5.
  table_error e = error_of("a,b,c\n1,2,\"x\ny\"\n3,4,z\n5,oops,w\n");
  EXPECT_EQ(e.line(), 5u);
  EXPECT_EQ(e.column(), 2u);
}

TEST(TableReader, AcceptsCrlfAndByteOrderMark) {
  Table t = read_text("\xEF\xBB\xBFtemp,y\r\n1,2\r\n3,4\r\n");
  EXPECT_EQ(t.names, (std::vector<std::string>{"temp", "y"}));
  EXPECT_EQ(t.rows, 2u);
  EXPECT_EQ(t.columns[1][1], 4.0);
  table_error e = error_of("a,y\r\n1,2\r\n3,oops\r\n");
  EXPECT_EQ(e.line(), 3u);
  EXPECT_EQ(e.column(), 2u);
}

TEST(TableReader, SkipsBlankLinesAndTrimsSpaces) {
  Table t = read_text(" a , y \n\n 1 , +2 \n\n");
  EXPECT_EQ(t.names, (std::vector<std::string>{"a", "y"}));
  EXPECT_EQ(t.rows, 1u);
  EXPECT_EQ(t.columns[1][0], 2.0);
}

TEST(TableReader, ErrorsCarryLineAndColumn) {
  struct Case {
    std::string text, fragment;
    std::size_t line, column;
  };
  const Case cases[] = {
      {"", "empty", 1, 0},
      {"a,y\n", "no data rows", 2, 0},
      {"a,y\n1,2\n3,abc\n", "is not a number", 3, 2},
      {"a,y\n1,\n", "empty cell", 2, 2},
      {"a,y\n1,NaN\n", "missing value \"NaN\" in column \"y\"", 2, 2},
      {"a,y\n-inf,1\n", "not a finite number", 2, 1},
      {"a,y\n1e999,1\n", "too large", 2, 1},
      {"a,y\n1,2,3\n", "ragged", 2, 3},
      {"a,b,y\n1,2\n", "ragged", 2, 3},
      {"a,b,a\n1,2,3\n", "duplicate column name \"a\"", 1, 3},
      {"a,,y\n1,2,3\n", "empty column name", 1, 2},
      {"a,y\n1,\"2\n", "unterminated", 2, 2},
      {"a,y\n1,\"2\"x\n", "after the closing quote", 2, 2},
  };
  for (const Case& c : cases) {
    table_error e = error_of(c.text);
    EXPECT_NE(std::string(e.what()).find(c.fragment), std::string::npos)
        << e.what() << "\nfor: " << c.text;
    EXPECT_EQ(e.line(), c.line) << e.what();
    EXPECT_EQ(e.column(), c.column) << e.what();
    EXPECT_EQ(e.kind(), table_error::Kind::content);
    EXPECT_EQ(std::string(e.what()).rfind("t.csv", 0), 0u) << "message starts with the file";
  }
}

TEST(TableReader, UnknownRequiredColumnListsTheHeader) {
  TableReadOptions options;
  options.required = {"yield"};
  table_error e = error_of("a,b\n1,2\n", options);
  EXPECT_NE(std::string(e.what()).find("unknown column \"yield\" (the header has: a, b)"),
            std::string::npos)
      << e.what();
}

TEST(TableReader, TextColumnIsSkippedUnlessAskedFor) {
  Table t = read_text("city,a,y\nParis,1,2\n\"Lyon\",3,4\n");
  EXPECT_EQ(t.names, (std::vector<std::string>{"a", "y"}));
  EXPECT_EQ(t.text_columns, (std::vector<std::string>{"city"}));
  TableReadOptions options;
  options.required = {"city"};
  table_error e = error_of("city,a,y\nParis,1,2\n", options);
  EXPECT_NE(std::string(e.what()).find("\"city\" is a text column"), std::string::npos) << e.what();
  EXPECT_EQ(e.line(), 2u);
  EXPECT_EQ(e.column(), 1u);
  // A text cell after a numeric first cell is an error, not a text column.
  table_error later = error_of("a,y\n1,2\nParis,3\n");
  EXPECT_EQ(later.line(), 3u);
  EXPECT_EQ(later.column(), 1u);
}

TEST(TableReader, MissingDropCountsDroppedRows) {
  TableReadOptions options;
  options.missing = MissingCells::drop;
  Table t = read_text("a,y\n1,2\n,3\n4,NA\n5,6\n", options);
  EXPECT_EQ(t.rows, 2u);
  EXPECT_EQ(t.dropped_rows, 2u);
  EXPECT_EQ(t.columns[0][1], 5.0);
  // Only the columns read count: a missing cell in a skipped column is fine.
  options.skip = {"b"};
  Table s = read_text("a,b,y\n1,,2\n", options);
  EXPECT_EQ(s.rows, 1u);
  EXPECT_EQ(s.dropped_rows, 0u);
  TableReadOptions drop_only;
  drop_only.missing = MissingCells::drop;
  table_error all = error_of("a,y\n,1\n", drop_only);
  EXPECT_NE(std::string(all.what()).find("no rows remain"), std::string::npos);
}

// Kept rows map to the lines people see (RowLines): the header, blank lines,
// dropped rows and a quoted line break all move the lines of later rows.
TEST(TableReader, KeptRowsKnowTheLineTheyStartOn) {
  TableReadOptions keep;
  keep.missing = MissingCells::drop;
  keep.skip = {"note"};
  // Lines: 1 header, 2 row, 3 blank, 4 dropped (missing a), 5 row, 6-7 one
  // row with a quoted line break, 8 row.
  Table u = read_text("a,y,note\n1,2,x\n\n,3,x\n4,5,x\n6,7,\"two\nlines\"\n9,10,x\n", keep);
  ASSERT_EQ(u.rows, 4u);
  EXPECT_EQ(u.row_lines.line_of(0), 2u);
  EXPECT_EQ(u.row_lines.line_of(1), 5u);  // after a blank line and a dropped row
  EXPECT_EQ(u.row_lines.line_of(2), 6u);
  EXPECT_EQ(u.row_lines.line_of(3), 8u);  // after a quoted line break
  EXPECT_EQ(u.row_lines.marks.size(), 3u) << "one mark per jump";
  // A table not made by the reader knows no lines.
  EXPECT_EQ(Table().row_lines.line_of(0), 0u);
}

// read_table_blocks (issue 20): the same table a block of rows at a time.
// Reference: read_table() of the same text (the reader's own whole-table
// mode, itself checked above against hand-written tables).
TEST(TableBlocks, BlocksHoldTheRowsTheWholeTableHolds) {
  TableReadOptions options;
  options.missing = MissingCells::drop;
  options.keep_decimal_text = true;
  options.keep_row_keys = true;
  std::string text = "id,a,note,y\n";
  for (int i = 0; i < 23; ++i) {
    if (i % 7 == 3) text += "\n";                                       // a blank line
    if (i % 5 == 4) text += "gone" + std::to_string(i) + ",,x,1\n";      // a dropped row
    text += "r" + std::to_string(i) + "," + std::to_string(i) + ".25,\"n\n" + std::to_string(i) + "\"," +
            std::to_string(2 * i) + "e-1\n";                            // a quoted line break
  }
  const Table whole = read_text(text, options);
  for (const std::size_t height : {std::size_t(1), std::size_t(4), std::size_t(23), std::size_t(100)}) {
    std::vector<std::vector<double>> values(whole.names.size());
    std::vector<std::string> keys, text_a;
    std::size_t blocks = 0, next_row = 0;
    std::istringstream in(text);
    const Table summary = knotpath::io::read_table_blocks(in, "t.csv", options, height, [&](Table& block) {
      ++blocks;
      EXPECT_EQ(block.names, whole.names);
      EXPECT_EQ(block.first_row, next_row);
      EXPECT_LE(block.rows, height);
      for (std::size_t r = 0; r < block.rows; ++r)
        EXPECT_EQ(block.row_lines.line_of(r), whole.row_lines.line_of(block.first_row + r)) << "row " << r;
      for (std::size_t j = 0; j < block.columns.size(); ++j) {
        ASSERT_EQ(block.columns[j].size(), block.rows);
        for (std::size_t r = 0; r < block.rows; ++r) values[j].push_back(block.columns[j][r]);
      }
      keys.insert(keys.end(), block.keys.begin(), block.keys.end());
      text_a.insert(text_a.end(), block.decimal_text[0].begin(), block.decimal_text[0].end());
      next_row += block.rows;
    });
    EXPECT_EQ(blocks, (whole.rows + height - 1) / height) << "height " << height;
    EXPECT_EQ(summary.rows, whole.rows);
    EXPECT_EQ(summary.dropped_rows, whole.dropped_rows);
    EXPECT_EQ(summary.names, whole.names);
    EXPECT_EQ(summary.text_columns, whole.text_columns);
    EXPECT_EQ(summary.last_line, whole.last_line);
    for (std::size_t j = 0; j < whole.columns.size(); ++j) {
      ASSERT_EQ(values[j].size(), whole.rows);
      for (std::size_t r = 0; r < whole.rows; ++r) EXPECT_EQ(values[j][r], whole.columns[j][r]);
    }
    EXPECT_EQ(keys, whole.keys);
    EXPECT_EQ(text_a, whole.decimal_text[0]);
  }
}

// The streamed route end to end (issue 20, point 1): a table read in blocks,
// each block split by the roles and added to a StatisticsAccumulator,
// traces the path the in-memory Gram route traces from the whole table,
// bit for bit (fixed block boundaries of the statistics, fixed order).
TEST(TableBlocks, AStreamedTableTracesTheInMemoryGramPathBitForBit) {
  std::string text = "x1,x2,x3,w,y\n";
  knotpath::testing::Lcg lcg(7);
  auto next = [&] { return lcg.centred(); };
  for (int i = 0; i < 2500; ++i) {
    const double a = next(), b = next() + 0.5 * a, c = next();
    text += std::to_string(a) + "," + std::to_string(b) + "," + std::to_string(c) + "," +
            std::to_string(1 + i % 3) + "," + std::to_string(2 * a - b + 0.3 * next()) + "\n";
  }
  ColumnRoles roles;
  roles.response = "y";
  roles.weights = "w";
  knotpath::TraceOptions options;
  options.storage = knotpath::Storage::gram;
  Table whole = read_text(text, roles.read_options());
  const TableSplit all = knotpath::io::split_table(whole, roles);
  const knotpath::Path<double> memory = knotpath::trace<double>(all.x, all.y, options, all.weights);

  // The reader's blocks of 700 rows are gathered into the statistics' own
  // blocks, whose height depends on p only (one block here: 2500 rows
  // against a height of 349525 at p = 3; the StatisticsAccumulator tests of
  // test_designs.cpp cover several).
  knotpath::StatisticsAccumulator<double> acc(3, true);
  std::istringstream in(text);
  (void)knotpath::io::read_table_blocks(in, "t.csv", roles.read_options(), 700, [&](Table& block) {
    const TableSplit part = knotpath::io::split_table(block, roles);
    acc.add(part.x, part.y, part.weights);
  });
  const knotpath::Path<double> streamed = knotpath::trace_statistics(acc.finish(), options);
  ASSERT_EQ(streamed.knots().size(), memory.knots().size());
  for (std::size_t k = 0; k < memory.knots().size(); ++k) {
    EXPECT_EQ(streamed.knots()[k].penalty, memory.knots()[k].penalty) << k;
    EXPECT_TRUE(streamed.dense_coefficients(k) == memory.dense_coefficients(k)) << k;
    EXPECT_EQ(streamed.knots()[k].intercept, memory.knots()[k].intercept) << k;
  }
}

TEST(TableBlocks, ErrorsAndRefusals) {
  // A bad cell after a full block: the earlier block was handed over, then
  // the same error as read_table() names the cell's line.
  const std::string text = "a,y\n1,2\n3,4\n5,x\n";
  const table_error expected = error_of(text);
  std::istringstream in(text);
  std::size_t blocks = 0;
  try {
    (void)knotpath::io::read_table_blocks(in, "t.csv", {}, 2, [&](Table&) { ++blocks; });
    ADD_FAILURE() << "no error";
  } catch (const table_error& e) {
    EXPECT_EQ(std::string(e.what()), std::string(expected.what()));
    EXPECT_EQ(e.line(), 4u);
  }
  EXPECT_EQ(blocks, 1u);
  // Indicators need every level first; a block height of 0 is no height.
  TableReadOptions expand;
  expand.indicators.all_text = true;
  std::istringstream again(text);
  EXPECT_THROW((void)knotpath::io::read_table_blocks(again, "t.csv", expand, 2, [](Table&) {}),
               knotpath::invalid_option);
  std::istringstream third(text);
  EXPECT_THROW((void)knotpath::io::read_table_blocks(third, "t.csv", {}, 0, [](Table&) {}), knotpath::invalid_option);
}

TEST(TableReader, OnlyAndSkipChooseColumns) {
  TableReadOptions options;
  options.only = {"c", "a"};
  Table t = read_text("a,b,c\n1,text,3\n", options);
  EXPECT_EQ(t.names, (std::vector<std::string>{"a", "c"}));
  EXPECT_EQ(t.skipped_columns, (std::vector<std::string>{"b"}));
  TableReadOptions skip;
  skip.skip = {"a"};
  Table s = read_text("a,b\nx,2\n3,4\n", skip);  // "a" is never checked
  EXPECT_EQ(s.names, (std::vector<std::string>{"b"}));
}

TEST(TableReader, KeepsExactDecimalTextWhenAsked) {
  TableReadOptions options;
  options.keep_decimal_text = true;
  Table t = read_text("a,y\n 0.1 ,1e-3\n-2.50,7\n", options);
  ASSERT_EQ(t.decimal_text.size(), 2u);
  EXPECT_EQ(t.decimal_text[0], (std::vector<std::string>{"0.1", "-2.50"}));
  EXPECT_EQ(t.decimal_text[1], (std::vector<std::string>{"1e-3", "7"}));
  EXPECT_EQ(t.columns[0][0], 0.1);
}

TEST(TableReader, ValuesRoundTripAcrossBlocksIntoAMatrix) {
  // More rows than one storage block, to cross block boundaries.
  const std::size_t n = knotpath::io::NumericColumn::block_size + 123;
  std::string text = "i,half\n";
  for (std::size_t i = 0; i < n; ++i) text += std::to_string(i) + "," + std::to_string(i) + ".5\n";
  Table t = read_text(text);
  ASSERT_EQ(t.rows, n);
  knotpath::Matrix<double> m = t.take_matrix({1, 0});
  ASSERT_EQ(m.rows(), static_cast<knotpath::Index>(n));
  for (std::size_t i = 0; i < n; i += 997) {
    EXPECT_EQ(m(static_cast<knotpath::Index>(i), 1), static_cast<double>(i));
    EXPECT_EQ(m(static_cast<knotpath::Index>(i), 0), static_cast<double>(i) + 0.5);
  }
  EXPECT_EQ(m(static_cast<knotpath::Index>(n - 1), 0), static_cast<double>(n - 1) + 0.5);
}

// Everything the reader throws is one of knotpath's own exceptions
// (errors.hpp), so `catch (const knotpath::error&)` sees every failure.
TEST(TableReader, MisuseThrowsTheLibrarysOwnExceptions) {
  TableReadOptions bad_delimiter;
  bad_delimiter.delimiter = '|';
  EXPECT_THROW(read_text("a,b\n1,2\n", bad_delimiter), knotpath::invalid_option);
  Table t = read_text("a,b\n1,2\n3,4\n");
  // find() answers -1 for an unknown name; asking for that column is refused.
  ASSERT_EQ(t.find("c"), -1);
  EXPECT_THROW(t.column_vector(t.find("c")), knotpath::invalid_query);
  EXPECT_THROW(t.column_vector(2), knotpath::invalid_query);
  EXPECT_THROW(t.take_matrix({0, 2}), knotpath::invalid_query);
  Table u = read_text("a,b\n1,2\n3,4\n");
  const knotpath::Matrix<double> m = u.take_matrix({1});
  EXPECT_EQ(m(1, 0), 4.0);
  EXPECT_THROW(u.take_matrix({1}), knotpath::invalid_query);  // already taken
  EXPECT_EQ(u.column_vector(0)(1), 3.0);                      // the other column is intact
}

TEST(TableReader, UnreadableFileIsAnInputOutputError) {
  try {
    read_table("/nonexistent/folder/table.csv");
    FAIL() << "no error";
  } catch (const table_error& e) {
    EXPECT_EQ(e.kind(), table_error::Kind::input_output);
  }
}

// ---- Pieces of one file (table_piece, read_table_piece_blocks; issue 20) ----

// A file in the test's temporary folder.
std::string temp_file(const std::string& name, const std::string& text) {
  const std::string path = ::testing::TempDir() + "knotpath_piece_" + name;
  std::ofstream(path, std::ios::binary) << text;
  return path;
}

// The bytes of [begin, end) of `text`.
std::string bytes_of(const std::string& text, std::uint64_t begin, std::uint64_t end) {
  return text.substr(static_cast<std::size_t>(begin), static_cast<std::size_t>(end - begin));
}

// Reference: the text itself. The pieces of any count partition the data
// lines in order (their bytes, joined, are the text after the header line),
// each starts at a line start at or after its nominal byte, and a piece holds
// no more than its nominal share plus one line (derived here from the rule
// in TablePiece's comment).
TEST(TablePieces, PiecesCutTheDataLinesAtLineBreaksAndCoverEachOnce) {
  knotpath::testing::Lcg lcg(5);
  std::string text = "\n\r\nid,a,y\r\n";  // empty lines (LF, CRLF) before a CRLF header
  for (int i = 0; i < 60; ++i) {
    if (i % 11 == 4) text += "\n";  // blank lines among the rows
    text += "r" + std::to_string(i) + "," + std::to_string(lcg.centred()).substr(0, 3 + i % 9) + "," +
            std::to_string(i) + (i % 3 ? "\r\n" : "\n");
  }
  text += "r60,1,2";  // no line break at the end
  const std::string path = temp_file("cut.csv", text);
  const std::uint64_t header_end = text.find("id,a,y\r\n") + 8;
  std::size_t longest = 0;
  for (std::size_t at = header_end, end; at < text.size(); at = end + 1) {
    end = std::min(text.find('\n', at), text.size());
    longest = std::max(longest, end + 1 - at);
  }
  for (const std::size_t count : {1u, 2u, 3u, 7u, 16u}) {
    std::string joined;
    std::uint64_t previous_end = header_end;
    for (std::size_t i = 0; i < count; ++i) {
      const knotpath::io::TablePiece piece = knotpath::io::table_piece(path, i, count);
      EXPECT_EQ(piece.header_end, header_end);
      EXPECT_EQ(piece.begin, previous_end) << count << " pieces, piece " << i;
      EXPECT_TRUE(piece.begin == header_end || text[piece.begin - 1] == '\n');
      const double share = static_cast<double>(text.size() - header_end) / static_cast<double>(count);
      EXPECT_LE(static_cast<double>(piece.end - piece.begin), share + static_cast<double>(longest));
      joined += bytes_of(text, piece.begin, piece.end);
      previous_end = piece.end;
    }
    EXPECT_EQ(previous_end, text.size());
    EXPECT_EQ(joined, text.substr(header_end)) << count << " pieces";
  }
  EXPECT_THROW((void)knotpath::io::table_piece(path, 3, 3), knotpath::invalid_option);
  EXPECT_THROW((void)knotpath::io::table_piece(path, 0, 0), knotpath::invalid_option);
}

// Reference: read_table() of the whole file (the header it finds). The
// header ends where the reader's header record ends: lines of blanks before
// it are skipped only when the fields are separated by whitespace (in a
// comma table such a line is a record), and a quoted name may span lines.
// A header ending in a carriage return alone is refused (no line feeds to
// cut at).
TEST(TablePieces, TheHeaderEndsWhereTheReaderEndsTheHeaderRecord) {
  const std::string data = "1 2\n3 4\n5 6\n";
  knotpath::io::TableReadOptions spaces;
  spaces.delimiter = ' ';
  const std::string blank_first = temp_file("blank_first.txt", " \t \n  a  y\n" + data);
  EXPECT_EQ(knotpath::io::read_table(blank_first, spaces).names, (std::vector<std::string>{"a", "y"}));
  EXPECT_EQ(knotpath::io::table_piece(blank_first, 0, 2, spaces).header_end, 11u);

  const std::string quoted = "\"first\nname\",y\r\n1,2\r\n3,4\r\n";
  const std::string quoted_path = temp_file("quoted_header.csv", quoted);
  EXPECT_EQ(knotpath::io::read_table(quoted_path).names, (std::vector<std::string>{"first\nname", "y"}));
  const knotpath::io::TablePiece first = knotpath::io::table_piece(quoted_path, 0, 2);
  EXPECT_EQ(first.header_end, quoted.find("1,2"));
  const knotpath::io::TablePiece second = knotpath::io::table_piece(quoted_path, 1, 2);
  EXPECT_EQ(bytes_of(quoted, first.begin, second.end), "1,2\r\n3,4\r\n");

  const std::string carriage = temp_file("carriage.csv", "a,y\r1,2\r3,4\r");
  try {
    (void)knotpath::io::table_piece(carriage, 0, 2);
    FAIL() << "a table of lone carriage returns was cut";
  } catch (const table_error& e) {
    EXPECT_NE(std::string(e.what()).find("carriage return alone"), std::string::npos) << e.what();
  }
}

// Reference: read_table() of the whole text. The pieces, read one by one,
// hold the whole table's rows in order, and with lines_before_piece() their
// rows and errors are named by the file's lines.
TEST(TablePieces, PiecesReadTheWholeTablesRowsAndNameTheFilesLines) {
  std::string text = "id,a,y\n";
  for (int i = 0; i < 40; ++i) {
    if (i % 9 == 2) text += "\n";
    text += "r" + std::to_string(i) + "," + std::to_string(i) + ".5," + std::to_string(3 * i) + "\n";
  }
  const std::string path = temp_file("rows.csv", text);
  const Table whole = read_text(text);
  std::vector<double> a;
  std::vector<std::size_t> lines;
  for (std::size_t i = 0; i < 4; ++i) {
    const knotpath::io::TablePiece piece = knotpath::io::table_piece(path, i, 4);
    const std::size_t before = knotpath::io::lines_before_piece(path, piece);
    EXPECT_EQ(before, static_cast<std::size_t>(std::count(text.begin() + static_cast<std::ptrdiff_t>(piece.header_end),
                                                           text.begin() + static_cast<std::ptrdiff_t>(piece.begin), '\n')));
    const Table summary = knotpath::io::read_table_piece_blocks(path, piece, before, {}, 5, [&](Table& block) {
      const auto values = block.column_vector(block.find("a"));
      for (knotpath::Index r = 0; r < values.size(); ++r) a.push_back(values(r));
    });
    for (std::size_t r = 0; r < summary.rows; ++r) lines.push_back(summary.row_lines.line_of(r));
  }
  ASSERT_EQ(a.size(), whole.rows);
  const auto expected = whole.column_vector(whole.find("a"));
  for (std::size_t r = 0; r < whole.rows; ++r) {
    EXPECT_EQ(a[r], expected(static_cast<knotpath::Index>(r)));
    EXPECT_EQ(lines[r], whole.row_lines.line_of(r)) << "row " << r;
  }
  // A bad cell in the last piece: named by its line in the file.
  std::string bad = text + "r40,x,1\n";
  const std::string bad_path = temp_file("bad.csv", bad);
  const knotpath::io::TablePiece last = knotpath::io::table_piece(bad_path, 3, 4);
  try {
    (void)knotpath::io::read_table_piece_blocks(bad_path, last, knotpath::io::lines_before_piece(bad_path, last), {},
                                                5, [](Table&) {});
    FAIL() << "no error";
  } catch (const table_error& e) {
    EXPECT_EQ(e.line(), static_cast<std::size_t>(std::count(bad.begin(), bad.end(), '\n')));
    EXPECT_EQ(e.column(), 2u);
  }
  // Compressed input has no line breaks to cut at; standard input cannot be cut.
  const std::string gz = temp_file("packed.csv.gz", std::string("\x1f\x8b\x08\x00rest", 8));
  EXPECT_THROW((void)knotpath::io::table_piece(gz, 0, 2), table_error);
  EXPECT_THROW((void)knotpath::io::table_piece("-", 0, 2), table_error);
}

// ---- Column roles and the split (io/roles.hpp) ----

// A table with a text column, the response in the middle and a weights column.
const char* const kRolesTable =
    "a,city,b,y,c,w,d\n"
    "1,Oslo,10,5,100,1,1000\n"
    "2,Bergen,20,6,200,2,2000\n"
    "3,Tromso,30,8,300,0.5,3000\n";

ColumnRoles roles_of(std::string response, std::string weights = "") {
  ColumnRoles r;
  r.response = std::move(response);
  r.weights = std::move(weights);
  return r;
}

// The conflict validate() reports, or none.
std::optional<role_conflict> conflict_of(const ColumnRoles& roles) {
  try {
    roles.validate();
  } catch (const role_conflict& e) {
    return e;
  }
  return std::nullopt;
}

// The data error assign_columns reports (its detail()), or "" for none.
std::string data_error_of(const Table& table, const ColumnRoles& roles) {
  try {
    knotpath::io::assign_columns(table, roles);
  } catch (const knotpath::invalid_data& e) {
    return e.detail();
  }
  return "";
}

TEST(ColumnRoles, PredictorsAreTheOtherNumericColumnsInTableOrder) {
  Table t = read_text(kRolesTable);
  const ColumnAssignment a = knotpath::io::assign_columns(t, roles_of("y", "w"));
  EXPECT_EQ(a.names, (std::vector<std::string>{"a", "b", "c", "d"}));
  EXPECT_EQ(a.predictors, (std::vector<knotpath::Index>{0, 1, 3, 5}));
  EXPECT_EQ(a.response, 2);
  EXPECT_EQ(a.weights, 4);
  EXPECT_TRUE(a.left_out.empty());
  // Unweighted, w is a predictor like any other column.
  const ColumnAssignment u = knotpath::io::assign_columns(t, roles_of("y"));
  EXPECT_EQ(u.names, (std::vector<std::string>{"a", "b", "c", "w", "d"}));
  EXPECT_EQ(u.weights, -1);
}

TEST(ColumnRoles, UseAndDropChooseThePredictorsInTableOrder) {
  Table t = read_text(kRolesTable);
  ColumnRoles r = roles_of("y", "w");
  r.use = {"d", "a"};  // the table's order is kept, not this list's
  ColumnAssignment a = knotpath::io::assign_columns(t, r);
  EXPECT_EQ(a.names, (std::vector<std::string>{"a", "d"}));
  EXPECT_EQ(a.left_out, (std::vector<std::string>{"b", "c"}));
  // A referenced column joins `use`; the weights never become a predictor.
  r.referenced = {"c"};
  r.use.push_back("w");
  a = knotpath::io::assign_columns(t, r);
  EXPECT_EQ(a.names, (std::vector<std::string>{"a", "c", "d"}));
  // Without `use`, `drop` takes columns away and `referenced` adds nothing.
  ColumnRoles d = roles_of("y");
  d.drop = {"w", "b"};
  d.referenced = {"a"};
  a = knotpath::io::assign_columns(t, d);
  EXPECT_EQ(a.names, (std::vector<std::string>{"a", "c", "d"}));
  EXPECT_EQ(a.left_out, (std::vector<std::string>{"b", "w"}));
}

TEST(ColumnRoles, ReadOptionsReadWhatTheSplitUsesAndTheSplitIsTheSame) {
  ColumnRoles r = roles_of("y", "w");
  r.use = {"d", "b"};
  r.referenced = {"a"};
  r.drop = {"c"};
  TableReadOptions base;
  base.missing = MissingCells::drop;
  const TableReadOptions o = r.read_options(base);
  EXPECT_EQ(o.missing, MissingCells::drop);
  EXPECT_EQ(o.required, (std::vector<std::string>{"y", "w", "a", "d", "b"}));
  EXPECT_EQ(o.only, (std::vector<std::string>{"d", "b", "y", "w"}));
  EXPECT_EQ(o.skip, (std::vector<std::string>{"c"}));
  EXPECT_TRUE(roles_of("y").read_options().only.empty()) << "no `use`: every column is read";
  // Read with the roles' options or read whole, the split is the same.
  Table narrow = read_text(kRolesTable, o);
  Table whole = read_text(kRolesTable);
  EXPECT_EQ(narrow.skipped_columns, (std::vector<std::string>{"city", "c"}));
  const TableSplit s = knotpath::io::split_table(narrow, r);
  const TableSplit w = knotpath::io::split_table(whole, r);
  EXPECT_EQ(s.names, (std::vector<std::string>{"a", "b", "d"}));
  EXPECT_EQ(w.names, s.names);
  EXPECT_EQ(s.x, w.x);
  EXPECT_EQ(s.y, w.y);
  EXPECT_EQ(s.weights, w.weights);
  EXPECT_TRUE(s.left_out.empty());
  EXPECT_EQ(w.left_out, (std::vector<std::string>{"c"}));
}

TEST(ColumnRoles, SplitMovesTheValuesOutOfTheTable) {
  Table t = read_text(kRolesTable);
  ColumnRoles r = roles_of("y", "w");
  r.drop = {"c"};
  const TableSplit s = knotpath::io::split_table(t, r);
  knotpath::Matrix<double> x(3, 3);
  x << 1, 10, 1000, 2, 20, 2000, 3, 30, 3000;
  EXPECT_EQ(s.x, x);
  EXPECT_EQ(s.y, (knotpath::Vector<double>(3) << 5, 6, 8).finished());
  EXPECT_EQ(s.weights, (knotpath::Vector<double>(3) << 1, 2, 0.5).finished());
  EXPECT_EQ(s.names, (std::vector<std::string>{"a", "b", "d"}));
  EXPECT_EQ(s.left_out, (std::vector<std::string>{"c"}));
  // The used columns were moved (their blocks freed); the unused one stays.
  EXPECT_EQ(t.columns[0].size(), 0u);
  EXPECT_EQ(t.columns[2].size(), 0u);
  EXPECT_EQ(t.columns[4].size(), 0u);
  EXPECT_EQ(t.column_vector(3)(2), 300.0);
  // A second split finds its columns taken and moves nothing.
  EXPECT_THROW(knotpath::io::split_table(t, r), knotpath::invalid_query);
  EXPECT_EQ(t.columns[3].size(), 3u);
  // Unweighted: the weights are empty.
  Table u = read_text(kRolesTable);
  EXPECT_EQ(knotpath::io::split_table(u, roles_of("y")).weights.size(), 0);
}

TEST(ColumnRoles, ContradictionsAreReportedInTheirOrder) {
  using Rule = role_conflict::Rule;
  ColumnRoles r = roles_of("y", "w");
  EXPECT_FALSE(conflict_of(r).has_value());
  r.drop = {"y"};
  ASSERT_TRUE(conflict_of(r).has_value());
  EXPECT_EQ(conflict_of(r)->rule(), Rule::response_dropped);
  EXPECT_EQ(conflict_of(r)->column(), "y");
  EXPECT_EQ(conflict_of(r)->field(), "drop");
  r.weights = "y";  // still the drop rule first
  EXPECT_EQ(conflict_of(r)->rule(), Rule::response_dropped);
  r.drop.clear();
  EXPECT_EQ(conflict_of(r)->rule(), Rule::weights_as_response);
  EXPECT_EQ(conflict_of(r)->field(), "weights");
  r.weights = "w";
  r.use = {"a", "y"};
  EXPECT_EQ(conflict_of(r)->rule(), Rule::response_in_use);
  EXPECT_EQ(conflict_of(r)->field(), "use");
  r.use = {"a", "b"};
  r.referenced = {"c"};
  r.drop = {"b", "c", "w"};  // weights, then referenced, then use
  EXPECT_EQ(conflict_of(r)->rule(), Rule::needed_but_dropped);
  EXPECT_EQ(conflict_of(r)->column(), "w");
  r.drop = {"b", "c"};
  EXPECT_EQ(conflict_of(r)->column(), "c");
  r.drop = {"b"};
  EXPECT_EQ(conflict_of(r)->column(), "b");
  // Every step that takes roles checks them first, with the library's exception.
  Table t = read_text(kRolesTable);
  EXPECT_THROW(r.read_options(), knotpath::invalid_option);
  EXPECT_THROW(knotpath::io::assign_columns(t, r), role_conflict);
  EXPECT_THROW(knotpath::io::split_table(t, r), knotpath::invalid_option);
  EXPECT_EQ(t.columns[0].size(), 3u) << "nothing moved";
}

TEST(ColumnRoles, MissingTextOrUnreadColumnsAreDataErrors) {
  Table t = read_text(kRolesTable);
  EXPECT_EQ(data_error_of(t, roles_of("z")), "t.csv: no column named \"z\" (the response)");
  EXPECT_EQ(data_error_of(t, roles_of("city")), "t.csv: the response \"city\" is a text column");
  EXPECT_EQ(data_error_of(t, roles_of("y", "city")),
            "t.csv: the weights \"city\" is a text column");
  ColumnRoles r = roles_of("y");
  r.use = {"a", "q"};
  EXPECT_EQ(data_error_of(t, r), "t.csv: no column named \"q\" (the column to use)");
  r.use.clear();
  r.referenced = {"city"};
  EXPECT_EQ(data_error_of(t, r), "t.csv: the referenced column \"city\" is a text column");
  r.referenced.clear();
  r.drop = {"nothing"};
  EXPECT_EQ(data_error_of(t, r), "t.csv: no column named \"nothing\" (listed in drop)");
  r.drop = {"city"};  // a text column may be dropped
  EXPECT_EQ(data_error_of(t, r), "");
  // A column the read options skipped cannot take a role.
  TableReadOptions skip_b;
  skip_b.skip = {"b"};
  Table narrow = read_text(kRolesTable, skip_b);
  EXPECT_EQ(data_error_of(narrow, roles_of("b")),
            "t.csv: the response \"b\" was not read (the read options skipped it)");
  // No predictor left.
  Table two = read_text("y,w\n1,2\n3,4\n");
  EXPECT_EQ(data_error_of(two, roles_of("y", "w")),
            "t.csv: no numeric predictor columns besides the response");
  ColumnRoles only_w = roles_of("y", "w");
  only_w.use = {"w"};
  EXPECT_EQ(data_error_of(t, only_w), "t.csv: no numeric predictor columns besides the response");
}

TEST(ColumnRoles, AnAssignmentThatDoesNotFitIsRefusedBeforeAnythingMoves) {
  Table t = read_text(kRolesTable);
  ColumnAssignment a = knotpath::io::assign_columns(t, roles_of("y", "w"));
  ColumnAssignment twice = a;
  twice.predictors.back() = twice.response;  // the response as a predictor too
  EXPECT_THROW(knotpath::io::check_assignment(t, twice), knotpath::invalid_query);
  EXPECT_THROW(knotpath::io::split_table(t, twice), knotpath::invalid_query);
  ColumnAssignment outside = a;
  outside.predictors.push_back(42);
  outside.names.emplace_back("far");
  EXPECT_THROW(knotpath::io::split_table(t, outside), knotpath::invalid_query);
  ColumnAssignment unnamed = a;
  unnamed.names.pop_back();
  EXPECT_THROW(knotpath::io::split_table(t, unnamed), knotpath::invalid_query);
  for (const auto& c : t.columns) EXPECT_EQ(c.size(), 3u) << "a refused split moved a column";
  // The fitting assignment, less one predictor, splits.
  a.predictors.pop_back();
  a.names.pop_back();
  const TableSplit s = knotpath::io::split_table(t, a);
  EXPECT_EQ(s.names, (std::vector<std::string>{"a", "b", "c"}));
  EXPECT_EQ(t.column_vector(5)(0), 1000.0);
}

TEST(TableReader, TakeVectorMovesOneColumn) {
  Table t = read_text("a,b\n1,2\n3,4\n");
  EXPECT_EQ(t.take_vector(1), (knotpath::Vector<double>(2) << 2, 4).finished());
  EXPECT_THROW(t.take_vector(1), knotpath::invalid_query);  // already taken
  EXPECT_THROW(t.take_vector(2), knotpath::invalid_query);  // no such column
  EXPECT_EQ(t.column_vector(0)(1), 3.0);
}

}  // namespace

namespace {

std::string message_of(const std::string& text, const TableReadOptions& options = {}) {
  return error_of(text, options).what();
}

bool contains(const std::string& text, const std::string& fragment) {
  return text.find(fragment) != std::string::npos;
}

TableReadOptions dropping() {
  TableReadOptions options;
  options.missing = MissingCells::drop;
  return options;
}

}  // namespace

TEST(TableMissing, EveryBuiltInTokenInAnyRowAndLetterCaseIsMissing) {
  // Column a's first cell is missing: it stays numeric (it was a text column
  // before); nan in a later row is dropped like NA (it stopped the run before).
  Table t = read_text("a,b,y\nn/a,1,2\n3,nan,4\n5,.,6\n7,N/A,8\n9,na,10\n11,NaN,12\n13,14,15\n",
                      dropping());
  EXPECT_EQ(t.names, (std::vector<std::string>{"a", "b", "y"}));
  EXPECT_TRUE(t.text_columns.empty());
  ASSERT_EQ(t.rows, 1u);
  EXPECT_EQ(t.dropped_rows, 6u);
  EXPECT_EQ(t.columns[0][0], 13.0);
}

TEST(TableMissing, AMissingFirstCellIsReportedWhereItIs) {
  table_error e = error_of("a,y\nn/a,1\n2,3\n");
  EXPECT_TRUE(contains(e.what(), "missing value \"n/a\" in column \"a\"")) << e.what();
  EXPECT_EQ(e.line(), 2u);
  EXPECT_EQ(e.column(), 1u);
  // The advice is the library's own by default, the caller's when given.
  EXPECT_TRUE(contains(e.what(), "(TableReadOptions::missing = MissingCells::drop drops incomplete rows)"))
      << e.what();
  TableReadOptions quiet;
  quiet.missing_advice = "";
  const std::string bare = error_of("a,y\nn/a,1\n2,3\n", quiet).what();
  EXPECT_EQ(bare.find('('), std::string::npos) << bare;
  quiet.missing_advice = "fill it in";
  EXPECT_TRUE(contains(error_of("a,y\nn/a,1\n2,3\n", quiet).what(), "in column \"a\" (fill it in)"));
}

TEST(TableMissing, TheCallersTokensMatchExactly) {
  TableReadOptions options = dropping();
  options.missing_tokens = {"-999", "unknown"};
  Table t = read_text("a,y\n-999,1\n2, unknown \n3,4\n5,6\n", options);
  EXPECT_EQ(t.rows, 2u);
  EXPECT_EQ(t.dropped_rows, 2u);
  // Case-sensitive: "Unknown" is not one of them, so it is a text cell.
  EXPECT_TRUE(contains(message_of("a,y\n1,2\n2,Unknown\n", options), "is not a number"));
  // "-999.0" is a number, not the token "-999".
  Table u = read_text("a,y\n-999.0,1\n", options);
  EXPECT_EQ(u.columns[0][0], -999.0);
  EXPECT_TRUE(knotpath::io::is_missing_cell("N/a"));
  EXPECT_FALSE(knotpath::io::is_missing_cell("none"));
}

TEST(TableDecimalComma, IsReadWhenAskedAndKeptAsPointText) {
  TableReadOptions options;
  options.decimal = DecimalMark::comma;
  options.keep_decimal_text = true;
  Table t = read_text("a;b;y\n1,5;2;-3,25\n0,125;1e3;7\n", options);
  EXPECT_EQ(t.delimiter, ';');
  ASSERT_EQ(t.names, (std::vector<std::string>{"a", "b", "y"}));
  EXPECT_EQ(t.columns[0][0], 1.5);
  EXPECT_EQ(t.columns[0][1], 0.125);
  EXPECT_EQ(t.columns[2][0], -3.25);
  EXPECT_EQ(t.columns[1][1], 1000.0);
  EXPECT_EQ(t.decimal_text[0], (std::vector<std::string>{"1.5", "0.125"}));
  // With a decimal comma a point is no decimal mark.
  EXPECT_TRUE(contains(message_of("a;y\n1,5;2\n2.5;3\n", options), "is not a number"));
  options.delimiter = ',';
  EXPECT_THROW(read_text("a;y\n1,5;2\n", options), knotpath::invalid_option);
  options.delimiter = 0;  // detected as comma: refused with the reason
  EXPECT_TRUE(contains(message_of("a,y\n1,2\n", options), "separated by commas"));
}

TEST(TableDecimalComma, IsDetectedAndNamedWhenNotAsked) {
  Table t = read_text("a;b;y\n1,5;2,0;3,25\n");
  EXPECT_EQ(t.decimal_comma_columns, (std::vector<std::string>{"a", "b", "y"}));
  TableReadOptions options;
  options.required = {"y"};
  const std::string asked = message_of("a;b;y\n1,5;2,0;3,25\n", options);
  EXPECT_TRUE(contains(asked, "decimal comma")) << asked;
  // The predictors' rule says why none is left (it said only "no numeric
  // predictor columns" before).
  Table u = read_text("a;b;y\n1,5;2,0;3\n");
  ColumnRoles roles;
  roles.response = "y";
  try {
    knotpath::io::assign_columns(u, roles);
    ADD_FAILURE() << "no error";
  } catch (const knotpath::invalid_data& e) {
    EXPECT_TRUE(contains(e.what(), "no numeric predictor columns")) << e.what();
    EXPECT_TRUE(contains(e.what(), "--decimal comma")) << e.what();
  }
  // A later cell with a decimal comma in a numeric column says so too.
  EXPECT_TRUE(contains(message_of("a;y\n1;2\n2,5;3\n"), "decimal comma"));
}

TEST(TableWhitespace, RunsOfBlanksSeparateFieldsWhenDetectedOrGiven) {
  // Tabs in the header would make it tab-separated; in the rows they are blanks.
  Table t = read_text("  a   \"b c\"  y  \n 1  2\t3 \n   \n4 \"5\" 6\n");
  EXPECT_EQ(t.delimiter, ' ');
  ASSERT_EQ(t.names, (std::vector<std::string>{"a", "b c", "y"}));
  ASSERT_EQ(t.rows, 2u);
  EXPECT_EQ(t.columns[1][1], 5.0);
  EXPECT_EQ(t.columns[2][0], 3.0);
  TableReadOptions given = dropping();
  given.delimiter = ' ';
  Table g = read_text("a y\n1 NA\n2 3\n", given);
  EXPECT_EQ(g.names, (std::vector<std::string>{"a", "y"}));
  EXPECT_EQ(g.dropped_rows, 1u);
  EXPECT_TRUE(contains(message_of("a y\n1 2 3\n", given), "ragged"));
  // A single name is no whitespace table; commas still win over blanks.
  EXPECT_EQ(read_text("a b,y\n1,2\n").delimiter, ',');
}

TEST(TableCompressed, OtherFormatsAreNamedWithoutQuotingTheirBytes) {
  struct Case {
    std::string bytes, format;
  };
  const Case cases[] = {
      {std::string("PK\x03\x04\x14\x00\x00\x00", 8), "zip archive"},
      {std::string("\xFD" "7zXZ\x00\x00\x04", 8), "xz-compressed"},
      {std::string("BZh91AY&SY\x01\x02", 12), "bzip2-compressed"},
      {std::string("\x28\xB5\x2F\xFD\x00\x58", 6), "zstd-compressed"},
  };
  for (const Case& c : cases) {
    const std::string m = message_of(c.bytes);
    EXPECT_TRUE(contains(m, c.format)) << m;
    EXPECT_TRUE(std::all_of(m.begin(), m.end(), [](char ch) { return ch >= 0x20 && ch < 0x7F; }))
        << m;
    EXPECT_FALSE(contains(m, "\\x")) << m;
  }
  // A header that merely starts like a magic number is a table.
  EXPECT_EQ(read_text("BZh,y\n1,2\n").names, (std::vector<std::string>{"BZh", "y"}));
}

namespace {

// "a,y\n1,2\n3,4.5\n" as written by Python's gzip module (see the file's head).
const unsigned char gzip_table[] = {
    0x1F, 0x8B, 0x08, 0x00, 0x00, 0x00, 0x00, 0x00, 0x02, 0x03, 0x4B, 0xD4,
    0xA9, 0xE4, 0x32, 0xD4, 0x31, 0xE2, 0x32, 0xD6, 0x31, 0xD1, 0x33, 0xE5,
    0x02, 0x00, 0x3A, 0x0D, 0x2C, 0xBB, 0x0E, 0x00, 0x00, 0x00};

std::string gzip_bytes() {
  return std::string(reinterpret_cast<const char*>(gzip_table), sizeof gzip_table);
}

}  // namespace

TEST(TableCompressed, GzipIsReadDirectlyOrRefusedByName) {
  const std::string gz = gzip_bytes();
#ifdef KNOTPATH_HAVE_ZLIB
  Table t = read_text(gz);
  EXPECT_EQ(t.compression, "gzip");
  ASSERT_EQ(t.names, (std::vector<std::string>{"a", "y"}));
  ASSERT_EQ(t.rows, 2u);
  EXPECT_EQ(t.columns[1][1], 4.5);
  // Two members one after the other read as one text (as gunzip does): the
  // second repeats the data rows... and its header, a text cell in "a".
  EXPECT_TRUE(contains(message_of(gz + gz), "line 4, column 1"));
  // Truncated and corrupt data are content errors.
  EXPECT_TRUE(contains(message_of(gz.substr(0, gz.size() - 6)), "truncated"));
  std::string corrupt = gz;
  corrupt[12] = static_cast<char>(corrupt[12] ^ 0x55);
  EXPECT_EQ(error_of(corrupt).kind(), table_error::Kind::content);
#else
  EXPECT_TRUE(contains(message_of(gz), "gzip-compressed")) << message_of(gz);
#endif
}

// read_table_header (issue 20, columns over processes): reference:
// read_table() of the same file, whose names are the header's when every
// column is numeric; the header rules (RFC 4180 quoting, a name spanning
// lines, blank lines before a whitespace header, the byte order mark) are
// those the reader's tests above check. The names come without reading the
// rows: a file whose rows are broken still yields its header.
TEST(TableHeader, TheHeaderIsReadAsReadTableReadsItWithoutTheRows) {
  knotpath::io::TableReadOptions spaces;
  spaces.delimiter = ' ';
  const std::string blank_first = temp_file("header_blank_first.txt", " \t \n  a  y\n1 2\n3 4\n");
  EXPECT_EQ(knotpath::io::read_table_header(blank_first, spaces), read_table(blank_first, spaces).names);
  const std::string quoted = temp_file("header_quoted.csv", "\xEF\xBB\xBF\"first\nname\",\"b,c\",y\r\n1,2,3\r\n");
  EXPECT_EQ(knotpath::io::read_table_header(quoted), (std::vector<std::string>{"first\nname", "b,c", "y"}));
  EXPECT_EQ(knotpath::io::read_table_header(quoted), read_table(quoted).names);
  const std::string semicolons = temp_file("header_semicolons.csv", "u;v;w\n1;2;3\n");
  EXPECT_EQ(knotpath::io::read_table_header(semicolons), (std::vector<std::string>{"u", "v", "w"}));
  // A text column is a header name like any other (read_table lists it apart).
  const std::string broken_rows = temp_file("header_broken_rows.csv", "id,a,y\nr1,1\n");
  EXPECT_EQ(knotpath::io::read_table_header(broken_rows), (std::vector<std::string>{"id", "a", "y"}));
  EXPECT_THROW((void)read_table(broken_rows), table_error);
  // The header's own faults are the reader's errors.
  const auto header_error = [](const std::string& path, const TableReadOptions& options = {}) {
    try {
      (void)knotpath::io::read_table_header(path, options);
    } catch (const table_error& e) {
      return std::string(e.what());
    }
    return std::string("no error");
  };
  EXPECT_TRUE(contains(header_error(temp_file("header_twice.csv", "a,b,a\n1,2,3\n")), "duplicate column name"));
  EXPECT_TRUE(contains(header_error(temp_file("header_empty.csv", "")), "no header row"));
  TableReadOptions narrow;
  narrow.max_columns = 2;
  EXPECT_TRUE(contains(header_error(semicolons, narrow), "more than the limit of 2"));
  EXPECT_TRUE(contains(header_error("/nonexistent/folder/table.csv"), "cannot open"));
#ifdef KNOTPATH_HAVE_ZLIB
  const std::string gz = temp_file("header_packed.csv.gz", gzip_bytes());
  EXPECT_EQ(knotpath::io::read_table_header(gz), (std::vector<std::string>{"a", "y"}));
#endif
}

TEST(TableIndicators, AListedColumnGetsOneColumnPerLevelButTheReference) {
  TableReadOptions options;
  options.indicators.columns = {"smoker", "region"};
  options.keep_decimal_text = true;
  Table t = read_text(
      "age,smoker,region,y\n30,yes,north,1\n40,no,south,2\n50,yes,east,3\n60,no,north,4\n",
      options);
  ASSERT_EQ(t.names, (std::vector<std::string>{"age", "smoker=yes", "region=north",
                                               "region=south", "y"}));
  ASSERT_EQ(t.rows, 4u);
  const double yes[] = {1, 0, 1, 0}, south[] = {0, 1, 0, 0};
  for (std::size_t i = 0; i < 4; ++i) {
    EXPECT_EQ(t.columns[1][i], yes[i]);
    EXPECT_EQ(t.columns[3][i], south[i]);
  }
  EXPECT_EQ(t.decimal_text[1], (std::vector<std::string>{"1", "0", "1", "0"}));
  ASSERT_EQ(t.indicator_columns.size(), 2u);
  EXPECT_EQ(t.indicator_columns[0].source, "smoker");
  EXPECT_EQ(t.indicator_columns[0].reference, "no");
  EXPECT_EQ(t.indicator_columns[1].reference, "east");  // first in byte order
  EXPECT_TRUE(contains(knotpath::io::indicator_note(t.indicator_columns[0]), "\"no\""));
  // Without a reference left out every level has a column.
  TableReadOptions every_level;
  every_level.indicators.columns = {"smoker"};
  every_level.indicators.leave_out_reference = false;
  Table all = read_text("smoker,y\nyes,1\nno,2\n", every_level);
  EXPECT_EQ(all.names, (std::vector<std::string>{"smoker=no", "smoker=yes", "y"}));
  EXPECT_TRUE(all.indicator_columns[0].reference.empty());
}

TEST(TableIndicators, AllTextColumnsMissingCellsAndTheLevelLimit) {
  TableReadOptions options = dropping();
  options.indicators.all_text = true;
  Table t = read_text("flag,a,y\nNA,1,2\nTRUE,2,3\nFALSE,3,4\nTRUE,4,5\n", options);
  EXPECT_EQ(t.names, (std::vector<std::string>{"flag=TRUE", "a", "y"}));
  EXPECT_EQ(t.dropped_rows, 1u);
  EXPECT_EQ(t.indicator_columns.at(0).reference, "FALSE");
  // A decimal-comma column is not mistaken for levels.
  Table c = read_text("a;y\n1,5;2\n2,5;3\n", options);
  EXPECT_TRUE(c.indicator_columns.empty());
  EXPECT_EQ(c.decimal_comma_columns, (std::vector<std::string>{"a"}));
  options.indicators.max_levels = 2;
  table_error e = error_of("id,y\nu1,1\nu2,2\nu3,3\n", options);
  EXPECT_TRUE(contains(e.what(), "more than 2 distinct values")) << e.what();
  EXPECT_EQ(e.line(), 4u);
  EXPECT_EQ(e.column(), 1u);
}

TEST(TableIndicators, IndicatorNamesCanBeRequiredAndUnknownLevelsAreNamed) {
  TableReadOptions options;
  options.indicators.columns = {"smoker"};
  options.required = {"smoker=yes", "y"};
  Table t = read_text("smoker,y\nyes,1\nno,2\n", options);
  EXPECT_GE(t.find("smoker=yes"), 0);
  options.required = {"smoker=maybe"};
  const std::string m = message_of("smoker,y\nyes,1\nno,2\n", options);
  EXPECT_TRUE(contains(m, "no indicator column \"smoker=maybe\"")) << m;
  options.required = {"smoker=no"};
  EXPECT_TRUE(contains(message_of("smoker,y\nyes,1\nno,2\n", options), "reference level"));
  // Using the text column's name uses all of its indicator columns.
  TableReadOptions plain;
  plain.indicators.columns = {"smoker"};
  Table u = read_text("a,smoker,y\n1,yes,1\n2,no,2\n3,yes,5\n", plain);
  ColumnRoles roles;
  roles.response = "y";
  roles.use = {"smoker"};
  const ColumnAssignment chosen = knotpath::io::assign_columns(u, roles);
  EXPECT_EQ(chosen.names, (std::vector<std::string>{"smoker=yes"}));
}
