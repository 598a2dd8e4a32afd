// Unit tests of the streaming table reader (include/knotpath/io/table.hpp).
// The quoting rules checked here are those of RFC 4180 (Shafranovich 2005,
// "Common Format and MIME Type for CSV Files"): fields in double quotes may
// hold delimiters and line breaks, and a doubled quote stands for one quote.
// Semicolon/tab delimiters, the UTF-8 byte order mark (Unicode Standard,
// section 23.8) and "NA" for a missing value are common practice.

#include <gtest/gtest.h>

#include <sstream>
#include <string>

#include <knotpath/io/table.hpp>

namespace {

using knotpath::io::MissingCells;
using knotpath::io::read_table;
using knotpath::io::Table;
using knotpath::io::table_error;
using knotpath::io::TableReadOptions;

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
      {"a,y\n1,NaN\n", "not a finite number", 2, 2},
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

}  // namespace
