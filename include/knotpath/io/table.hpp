#pragma once
/// \file io/table.hpp
/// \brief Streaming reader of delimited text tables (a header row of names,
/// then one row per observation) into numeric columns.
///
/// Format accepted (RFC 4180 with common extensions, "common practice"):
///  - fields separated by comma, semicolon or tab: detected from the header
///    row (the most frequent of the three outside quotes; comma on a tie) or
///    given; or by whitespace (runs of spaces and tabs; leading and trailing
///    blanks ignored), detected when the header row has none of the three
///    outside quotes but blanks between names, or given as ' ';
///  - input compressed with gzip is read directly when the library was built
///    with zlib (KNOTPATH_HAVE_ZLIB); gzip without zlib, zip, xz, bzip2 and
///    zstd data are refused with a message naming the format (detected by
///    their magic bytes, never quoted);
///  - fields may be quoted with '"'; a doubled quote inside a quoted field is
///    one quote; quoted fields may hold delimiters and line breaks;
///  - line ends LF, CRLF or CR; a UTF-8 byte order mark is skipped; blank
///    lines are ignored;
///  - numeric cells are decimal numbers (optional sign, exponent; spaces
///    around them are ignored), with a decimal point, or a decimal comma
///    when TableReadOptions::decimal says so (then a '.' makes a cell text).
///    Infinite values are rejected;
///  - missing cells (is_missing_cell): empty, and NA, N/A, NaN, "." in any
///    letter case, and the caller's TableReadOptions::missing_tokens matched
///    exactly (case-sensitive), in any row of any column read.
///
/// Column kinds: a column whose first non-missing data cell is not a number
/// is a text column; text columns are skipped (listed in Table::text_columns)
/// unless they are required, which is an error naming them, or expanded into
/// indicator columns (IndicatorOptions). A later non-numeric cell in a
/// numeric column is an error with file, line and column.
///
/// Memory: one pass; numeric values are stored in fixed-size blocks per
/// column (no reallocation copies), so the table needs its numeric size plus
/// a few blocks. Table::take_matrix moves the values into an Eigen matrix
/// block by block, so the peak stays near one copy.

#include <algorithm>
#include <cstddef>
#include <cstdint>
#include <functional>
#include <istream>
#include <memory>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "../detail/scalar.hpp"

#include "../errors.hpp"

namespace knotpath::io {

/// What to do with a row that has a missing cell (is_missing_cell) in a column read.
enum class MissingCells {
  error,  ///< stop with an error naming the cell (default)
  drop,   ///< drop the row and count it (Table::dropped_rows)
};

/// The character that marks the fraction of a decimal number.
enum class DecimalMark {
  point,  ///< 2.5 (default)
  comma,  ///< 2,5 (then the field delimiter cannot be a comma)
};

/// Text columns expanded into indicator (0/1) columns, one per level. The
/// levels of a column are its distinct cell texts (trimmed, exact bytes:
/// "Yes" and "yes" are two levels; numbers are levels by their text). The
/// reference level is the first in byte order (so "no" before "yes", "false"
/// before "true"); when leave_out_reference is set it gets no column, because
/// with an intercept the indicators of all levels add up to the intercept's
/// column of ones and the intercept stands for the reference level.
struct IndicatorOptions {
  /// Columns to expand, whatever their cells (numbers are read as level texts).
  std::vector<std::string> columns;
  /// Also expand every column whose first non-missing data cell is text,
  /// unless it reads as a number written with a decimal comma.
  bool all_text = false;
  /// Largest number of levels of one expanded column; more is an error at
  /// the first cell beyond it (a guard against expanding an identifier).
  std::size_t max_levels = 20;
  /// Leave the reference level out (set it when the model has an intercept).
  bool leave_out_reference = true;
};

/// Options of read_table.
struct TableReadOptions {
  /// Field delimiter: ',', ';', TAB ('\\t') or ' ' (whitespace: runs of
  /// spaces and tabs); 0 detects it from the header row.
  char delimiter = 0;
  /// Handling of missing cells (is_missing_cell).
  MissingCells missing = MissingCells::error;
  /// What the error for a missing cell advises, in parentheses after it
  /// (with MissingCells::error; "" for none). A front end that offers no
  /// dropping says what its users can do instead.
  std::string missing_advice = "TableReadOptions::missing = MissingCells::drop drops incomplete rows";
  /// Further cell texts that mean "missing" (matched exactly, after trimming
  /// the cell's surrounding spaces), besides the built-in ones.
  std::vector<std::string> missing_tokens;
  /// Decimal point or decimal comma in numeric cells.
  DecimalMark decimal = DecimalMark::point;
  /// Text columns expanded into indicator columns.
  IndicatorOptions indicators;
  /// Columns that must exist and be numeric (response, weights, listed
  /// predictors). A missing one is an "unknown column" error; a text one is
  /// an error naming it.
  std::vector<std::string> required;
  /// When non-empty, only these columns (plus `required`) are read; every
  /// other column is skipped unchecked.
  std::vector<std::string> only;
  /// Columns skipped unchecked (takes precedence over `only`).
  std::vector<std::string> skip;
  /// Keep the exact decimal text of every numeric cell read (trimmed), for
  /// exact rational parsing later. Costs the text's memory.
  bool keep_decimal_text = false;
  /// Keep each kept row's key in Table::keys: the trimmed cell text of the
  /// column `key_column`, or, when that is empty, of the table's first text
  /// column (a column of names or identifiers), if it has one.
  bool keep_row_keys = false;
  /// The column of row keys (any kind) when keep_row_keys is set; empty: the
  /// first text column. A name the header lacks is an "unknown column" error.
  std::string key_column;
  /// Largest number of columns accepted; a header with more is an error (a
  /// guard against binary or run-together input: a 10 MB line without line
  /// breaks is read in O(its length) time and O(max_columns) memory). Data
  /// rows are never stored beyond the header's width.
  std::size_t max_columns = 100000;
  /// Called now and then with (bytes consumed, data rows read); may be empty.
  std::function<void(std::size_t, std::size_t)> progress;
};

/// A reading error with its location. line and column are 1-based; 0 when
/// they do not apply (e.g. an empty file has no column). what() reads
/// "SOURCE, line L, column C: message".
class table_error : public knotpath::error {
 public:
  /// content: the text is not a valid table; input_output: it cannot be read.
  enum class Kind { content, input_output };
  /// Records the location and builds what() as described above.
  table_error(Kind kind, std::string source, std::size_t line, std::size_t column,
              const std::string& message);
  /// Whether the content was bad or the input could not be read.
  Kind kind() const noexcept { return kind_; }
  /// File name, or "<stdin>".
  const std::string& source() const noexcept { return source_; }
  /// 1-based line of the error (0: not applicable).
  std::size_t line() const noexcept { return line_; }
  /// 1-based column (field) of the error (0: not applicable).
  std::size_t column() const noexcept { return column_; }
  /// The message without the location.
  const std::string& message() const noexcept { return message_; }

 private:
  Kind kind_;
  std::string source_;
  std::size_t line_;
  std::size_t column_;
  std::string message_;
};

/// Values of one numeric column, stored in fixed-size blocks.
class NumericColumn {
 public:
  static constexpr std::size_t block_size = 1u << 15;  ///< values per block
  /// Appends a value (allocates a new block every block_size values).
  void push_back(double value);
  /// Removes the last value (used when a row turns out to be dropped).
  void pop_back();
  /// Removes every value and frees the blocks.
  void clear() noexcept {
    blocks_.clear();
    size_ = 0;
  }
  /// Number of values stored.
  std::size_t size() const noexcept { return size_; }
  /// Value i (0-based, unchecked: i must be < size() and the blocks not yet moved out).
  double operator[](std::size_t i) const { return blocks_[i / block_size][i % block_size]; }
  /// Copies the values to out[0 .. size) and frees the blocks as it goes.
  void move_into(double* out);

 private:
  std::vector<std::unique_ptr<double[]>> blocks_;
  std::size_t size_ = 0;
};

/// The name of the indicator column of one level of a text column:
/// "COLUMN=LEVEL" (the one home of this naming).
std::string indicator_name(const std::string& column, const std::string& level);

/// Whether a (trimmed) cell is missing: empty, or NA, N/A, NaN or "." in any
/// letter case, or exactly one of `extra` (TableReadOptions::missing_tokens).
bool is_missing_cell(std::string_view cell, const std::vector<std::string>& extra = {});

/// A text column expanded into indicator columns.
struct IndicatorColumn {
  std::string source;               ///< the text column's name
  std::vector<std::string> levels;  ///< its levels, in byte order
  std::string reference;            ///< the level left out; empty when none was
  std::vector<std::string> names;   ///< the indicator columns made, in Table::names
};

/// One sentence about an expansion for the reports: its columns and which
/// level was left out and why.
std::string indicator_note(const IndicatorColumn& column);

/// Where the kept rows of a table start in its file, so that a row the
/// library names (invalid_data::row(), 0-based over the kept rows) can be
/// told as the line people see.
struct RowLines {
  /// A (row, line) pair for the first kept row and for every kept row that
  /// does not start on the line after the previous kept row's start (after
  /// blank lines, dropped rows or quoted line breaks); rows are 0-based,
  /// lines 1-based. Compact: one pair in the common case.
  std::vector<std::pair<std::size_t, std::size_t>> marks;

  /// The 1-based line where kept row `row` starts; 0 when there is no
  /// record of it (a table not made by read_table). O(log marks).
  std::size_t line_of(std::size_t row) const {
    auto after = std::upper_bound(marks.begin(), marks.end(), row,
                                  [](std::size_t r, const std::pair<std::size_t, std::size_t>& mark) {
                                    return r < mark.first;
                                  });
    if (after == marks.begin()) return 0;
    --after;
    return after->second + (row - after->first);
  }
};

/// A table read from text: its numeric columns, in file order.
struct Table {
  std::string source;                                  ///< file name or "<stdin>"
  char delimiter = ',';                                ///< delimiter used
  std::vector<std::string> names;                      ///< numeric columns read, file order
  std::vector<NumericColumn> columns;                  ///< values, one per name
  std::vector<std::vector<std::string>> decimal_text;  ///< per column when keep_decimal_text
  std::string key_name;                                ///< column of `keys` ("" when none)
  std::vector<std::string> keys;                       ///< row keys when keep_row_keys, one per kept row
  std::vector<std::string> text_columns;               ///< text columns skipped
  /// Text columns whose first cell reads as a number written with a decimal
  /// comma ("2,5"): a hint that TableReadOptions::decimal should be comma.
  std::vector<std::string> decimal_comma_columns;
  /// Text columns expanded into indicator columns, in file order (their
  /// indicator columns are in `names`, at the text column's place).
  std::vector<IndicatorColumn> indicator_columns;
  std::string compression;  ///< "gzip" when the input was decompressed, else empty
  std::vector<std::string> skipped_columns;            ///< columns skipped by `only` / `skip`
  std::size_t rows = 0;                                ///< data rows kept
  std::size_t dropped_rows = 0;                        ///< rows dropped for missing cells
  std::size_t last_line = 0;                           ///< physical lines consumed
  RowLines row_lines;                                  ///< where each kept row starts
  /// In a block of read_table_blocks(): the index, among the table's kept
  /// rows, of the block's first row (0 otherwise). The block's row_lines
  /// count from the block's first row.
  std::size_t first_row = 0;

  /// Index of a numeric column by name, or -1.
  Index find(const std::string& name) const;
  /// Position of column j in `columns`; throws invalid_query, naming `what`
  /// (the caller), when there is no column j (e.g. j = -1 from find()).
  std::size_t checked_column(Index j, const char* what) const;
  /// The values of one column as an Eigen vector (copy). Throws
  /// invalid_query when there is no column j.
  Vector<double> column_vector(Index j) const;
  /// Moves the listed columns into an n x k matrix, freeing their blocks.
  /// Throws invalid_query for a column that does not exist or was taken.
  Matrix<double> take_matrix(const std::vector<Index>& which);
  /// Moves one column into a vector, freeing its blocks. Throws
  /// invalid_query for a column that does not exist or was taken.
  Vector<double> take_vector(Index j);
};

// The Eigen-returning members are defined here, in the header, so that the
// compiled reader (knotpath_io) hands only plain buffers across its boundary
// (NumericColumn::move_into) and the caller's Eigen builds the matrices.

inline Vector<double> Table::column_vector(Index j) const {
  const NumericColumn& c = columns[checked_column(j, "column_vector")];
  Vector<double> v(static_cast<Index>(c.size()));
  for (std::size_t i = 0; i < c.size(); ++i) v(static_cast<Index>(i)) = c[i];
  return v;
}

inline Matrix<double> Table::take_matrix(const std::vector<Index>& which) {
  Matrix<double> m(static_cast<Index>(rows), static_cast<Index>(which.size()));
  for (std::size_t k = 0; k < which.size(); ++k) {
    NumericColumn& c = columns[checked_column(which[k], "take_matrix")];
    if (c.size() != rows)
      throw invalid_query("take_matrix: column " + std::to_string(which[k]) + " was already taken");
    c.move_into(m.col(static_cast<Index>(k)).data());
  }
  return m;
}

inline Vector<double> Table::take_vector(Index j) {
  NumericColumn& c = columns[checked_column(j, "take_vector")];
  if (c.size() != rows)
    throw invalid_query("take_vector: column " + std::to_string(j) + " was already taken");
  Vector<double> v(static_cast<Index>(rows));
  c.move_into(v.data());
  return v;
}

/// Reads a table from a file; "-" reads standard input. Throws table_error
/// (kind content for a bad table, input_output for an unreadable file), and
/// invalid_option when options.delimiter is not 0, ',', ';', a tab or ' ',
/// or is ',' with a decimal comma.
Table read_table(const std::string& path, const TableReadOptions& options = {});
/// The column names of a table's header row, read without its data rows:
/// the same names, delimiter rule and header checks (an empty or duplicate
/// name, more than TableReadOptions::max_columns) as read_table(), which a
/// front end uses to plan what to read before reading it (e.g. a block of
/// the columns per process). A gzip file is read through its header only.
/// Throws as read_table() (table_error, invalid_option).
std::vector<std::string> read_table_header(const std::string& path, const TableReadOptions& options = {});
/// Reads a table a block of rows at a time, for tables larger than memory:
/// `on_block(block)` receives each run of `block_rows` kept rows (the last
/// run may be shorter) as a Table of those rows alone (every column read,
/// in file order; keys and decimal text when asked; Table::first_row and
/// row_lines placing the rows in the file), and may take its columns. The
/// same cells, rules and errors as read_table(), except that text columns
/// cannot be expanded into indicators (their levels are known only after
/// the last row: invalid_option). Returns the table without values: names,
/// text and skipped columns, rows kept and dropped, lines read, where every
/// kept row starts. Memory: one block of rows. Throws as read_table(), and
/// invalid_option for block_rows = 0 or indicator options.
Table read_table_blocks(const std::string& path, const TableReadOptions& options, std::size_t block_rows,
                        const std::function<void(Table&)>& on_block);
/// read_table_blocks() from a stream; `source` names it in error messages.
Table read_table_blocks(std::istream& in, const std::string& source, const TableReadOptions& options,
                        std::size_t block_rows, const std::function<void(Table&)>& on_block);

/// Where piece `index` of `count` of a table file lies: the data lines of
/// the file (those after the header record) cut into `count` runs of
/// consecutive lines at line feeds, by bytes. With H the offset just past
/// the header record's line end (as read_table() finds the header: blank
/// lines before it skipped by the reader's rule) and S the file's size,
/// piece i starts at the first line that starts at or after
/// H + floor((S - H) i / count) (a line starts after every '\n') and ends
/// where piece i + 1 starts (the last at S). Every data line falls in
/// exactly one piece, in file order; a piece may hold no line when lines
/// are long or few.
struct TablePiece {
  std::size_t index = 0;        ///< 0-based, < count
  std::size_t count = 1;        ///< pieces of the file, >= 1
  std::uint64_t header_end = 0; ///< H: the byte after the header record's line end
  std::uint64_t begin = 0;      ///< first byte of the piece's lines
  std::uint64_t end = 0;        ///< one past the last byte
};

/// The bytes of piece `index` of `count` of the table file at `path` (see
/// TablePiece), the header found with `options` (its delimiter) as the
/// reader finds it: reads the header and two short stretches of the file,
/// not the piece. Throws table_error (input_output: the file cannot be read;
/// content: it is compressed, which has no line breaks to cut at, or its
/// header ends in a carriage return alone, which has no line feeds to cut
/// at), and invalid_option for count = 0 or index >= count or a bad
/// delimiter option.
TablePiece table_piece(const std::string& path, std::size_t index, std::size_t count,
                       const TableReadOptions& options = {});
/// Physical lines of the file between the header line and the piece's first
/// line (a pass over those bytes: a reader of one piece counts them only to
/// name the line of an error).
std::size_t lines_before_piece(const std::string& path, const TablePiece& piece);
/// read_table_blocks() over one piece of a table file: the header line, then
/// the piece's lines, as if they were the whole table (its rows, errors and
/// Table::row_lines). `lines_before` (lines_before_piece(), or 0 when not
/// counted) is added to the line number of every line after the header, so
/// that with it every line is named as in the file. A quoted cell that
/// holds a line break may be cut between two pieces: the earlier piece then
/// ends in an unterminated quoted field (an error, never a silent cut).
/// Throws as read_table_blocks(), and table_error for a piece with no data
/// row.
Table read_table_piece_blocks(const std::string& path, const TablePiece& piece, std::size_t lines_before,
                              const TableReadOptions& options, std::size_t block_rows,
                              const std::function<void(Table&)>& on_block);
/// Reads a table from a stream; `source` names it in error messages.
Table read_table(std::istream& in, const std::string& source, const TableReadOptions& options = {});

}  // namespace knotpath::io
