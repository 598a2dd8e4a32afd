// Unit tests of the streaming table reader (include/knotpath/io/table.hpp).
// The quoting rules checked here are those of RFC 4180 (Shafranovich 2005,
// "Common Format and MIME Type for CSV Files"): fields in double quotes may
// hold delimiters and line breaks, and a doubled quote stands for one quote.
// Semicolon/tab delimiters, the UTF-8 byte order mark (Unicode Standard,
// section 23.8) and "NA" for a missing value are common practice.

#include <gtest/gtest.h>

#include <optional>
#include <sstream>
#include <string>

#include <knotpath/io/roles.hpp>
#include <knotpath/io/table.hpp>

namespace {

using knotpath::io::ColumnAssignment;
using knotpath::io::ColumnRoles;
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
