// Streaming reader of delimited text tables; see include/knotpath/io/table.hpp.

#include "knotpath/io/table.hpp"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdlib>
#include <cstring>
#include <fstream>
#include <iostream>
#include <set>
#include <unordered_map>
#include <utility>

namespace knotpath::io {

table_error::table_error(Kind kind, std::string source, std::size_t line, std::size_t column,
                         const std::string& message)
    : knotpath::error([&] {
        std::string where = source;
        if (line > 0) where += ", line " + std::to_string(line);
        if (column > 0) where += ", column " + std::to_string(column);
        return where + ": " + message;
      }()),
      kind_(kind),
      source_(std::move(source)),
      line_(line),
      column_(column),
      message_(message) {}

void NumericColumn::push_back(double value) {
  if (size_ % block_size == 0 && size_ / block_size == blocks_.size())
    blocks_.emplace_back(new double[block_size]);
  blocks_[size_ / block_size][size_ % block_size] = value;
  ++size_;
}

void NumericColumn::pop_back() {
  if (size_ > 0) --size_;
}

void NumericColumn::move_into(double* out) {
  std::size_t done = 0;
  for (auto& block : blocks_) {
    const std::size_t count = std::min(block_size, size_ - done);
    std::copy(block.get(), block.get() + count, out + done);
    done += count;
    block.reset();
    if (done == size_) break;
  }
  blocks_.clear();
  size_ = 0;
}

Index Table::find(const std::string& name) const {
  for (std::size_t j = 0; j < names.size(); ++j)
    if (names[j] == name) return static_cast<Index>(j);
  return -1;
}

Vector<double> Table::column_vector(Index j) const {
  const NumericColumn& c = columns.at(static_cast<std::size_t>(j));
  Vector<double> v(static_cast<Index>(c.size()));
  for (std::size_t i = 0; i < c.size(); ++i) v(static_cast<Index>(i)) = c[i];
  return v;
}

Matrix<double> Table::take_matrix(const std::vector<Index>& which) {
  Matrix<double> m(static_cast<Index>(rows), static_cast<Index>(which.size()));
  for (std::size_t k = 0; k < which.size(); ++k) {
    NumericColumn& c = columns.at(static_cast<std::size_t>(which[k]));
    if (c.size() != rows) throw std::logic_error("take_matrix: column already taken");
    c.move_into(m.col(static_cast<Index>(k)).data());
  }
  return m;
}

namespace {

constexpr int end_of_input = -1;

// Buffered character source that counts bytes consumed.
class CharSource {
 public:
  explicit CharSource(std::istream& in) : in_(in), buffer_(1u << 16) {}

  int peek() {
    if (pos_ == end_ && !fill()) return end_of_input;
    return static_cast<unsigned char>(buffer_[pos_]);
  }
  int get() {
    if (pos_ == end_ && !fill()) return end_of_input;
    ++consumed_;
    return static_cast<unsigned char>(buffer_[pos_++]);
  }
  std::size_t consumed() const noexcept { return consumed_; }
  bool failed() const { return in_.bad(); }

  // Makes at least `count` bytes available when the input has them; returns
  // the view of what is buffered (for the BOM check and delimiter detection).
  std::pair<const char*, std::size_t> lookahead(std::size_t count) {
    if (end_ - pos_ < count) {
      std::memmove(buffer_.data(), buffer_.data() + pos_, end_ - pos_);
      end_ -= pos_;
      pos_ = 0;
      while (end_ < count && end_ < buffer_.size()) {
        in_.read(buffer_.data() + end_, static_cast<std::streamsize>(buffer_.size() - end_));
        const auto got = static_cast<std::size_t>(in_.gcount());
        if (got == 0) break;
        end_ += got;
      }
    }
    return {buffer_.data() + pos_, end_ - pos_};
  }
  void skip(std::size_t count) {
    pos_ += count;
    consumed_ += count;
  }

 private:
  bool fill() {
    if (!in_) return false;
    in_.read(buffer_.data(), static_cast<std::streamsize>(buffer_.size()));
    end_ = static_cast<std::size_t>(in_.gcount());
    pos_ = 0;
    return end_ > 0;
  }

  std::istream& in_;
  std::vector<char> buffer_;
  std::size_t pos_ = 0, end_ = 0;
  std::size_t consumed_ = 0;
};

struct Field {
  std::string text;
  bool quoted = false;
  std::size_t line = 0;
};

// Splits the input into records. Line numbers are physical lines, 1-based.
class RecordReader {
 public:
  RecordReader(CharSource& source, std::string name, char delimiter)
      : in_(source), name_(std::move(name)), delimiter_(delimiter) {}

  // Fields past this many are parsed and counted but not kept (their text
  // goes to one scratch field), so a huge row costs no memory per field.
  void keep_at_most(std::size_t fields) { keep_ = fields; }

  // Reads the next non-blank record into fields[0 .. min(count, keep)); false
  // at the end. count is the record's full number of fields.
  bool next(std::vector<Field>& fields, std::size_t& count) {
    count = 0;
    for (;;) {  // skip blank lines
      const int c = in_.peek();
      if (c == '\n' || c == '\r') {
        consume_line_end();
        continue;
      }
      if (c == end_of_input) {
        check_failure();
        return false;
      }
      break;
    }
    record_line_ = line_;
    for (;;) {
      if (count < keep_ && count == fields.size()) fields.emplace_back();
      Field& f = count < keep_ ? fields[count] : scratch_;
      f.text.clear();
      f.quoted = false;
      f.line = line_;
      int c = in_.peek();
      if (c == '"') {
        in_.get();
        f.quoted = true;
        const std::size_t open_line = line_;
        for (;;) {
          c = in_.get();
          if (c == end_of_input) {
            check_failure();
            throw table_error(table_error::Kind::content, name_, open_line, count + 1,
                              "unterminated quoted field (the quote opened here is never closed)");
          }
          if (c == '"') {
            if (in_.peek() == '"') {
              in_.get();
              f.text.push_back('"');
              continue;
            }
            break;
          }
          if (c == '\n' || (c == '\r' && in_.peek() != '\n')) ++line_;
          f.text.push_back(static_cast<char>(c));
        }
        while (in_.peek() == ' ' && delimiter_ != ' ') in_.get();
        c = in_.peek();
        ++count;
        if (c == delimiter_) {
          in_.get();
          continue;
        }
        if (c == '\n' || c == '\r' || c == end_of_input) break;
        throw table_error(table_error::Kind::content, name_, line_, count,
                          "unexpected text after the closing quote of a quoted field");
      }
      for (;;) {
        c = in_.peek();
        if (c == end_of_input || c == '\n' || c == '\r' || c == delimiter_) break;
        f.text.push_back(static_cast<char>(in_.get()));
      }
      ++count;
      if (c == delimiter_) {
        in_.get();
        continue;
      }
      break;
    }
    consume_line_end();
    return true;
  }

  std::size_t record_line() const noexcept { return record_line_; }
  std::size_t line() const noexcept { return line_; }

 private:
  void consume_line_end() {
    const int c = in_.peek();
    if (c == '\r') {
      in_.get();
      if (in_.peek() == '\n') in_.get();
      ++line_;
    } else if (c == '\n') {
      in_.get();
      ++line_;
    } else {
      check_failure();
    }
  }
  void check_failure() {
    if (in_.failed())
      throw table_error(table_error::Kind::input_output, name_, line_, 0, "read error");
  }

  CharSource& in_;
  std::string name_;
  char delimiter_;
  std::size_t line_ = 1;
  std::size_t record_line_ = 1;
  std::size_t keep_ = static_cast<std::size_t>(-1);
  Field scratch_;
};

std::string_view trim(std::string_view s) {
  while (!s.empty() && (s.front() == ' ' || s.front() == '\t')) s.remove_prefix(1);
  while (!s.empty() && (s.back() == ' ' || s.back() == '\t')) s.remove_suffix(1);
  return s;
}

enum class Parse { number, missing, text, not_finite, overflow };

// Parses a decimal number; the whole (trimmed) cell must be consumed.
Parse parse_number(std::string_view cell, double& value) {
  if (cell.empty() || cell == "NA") return Parse::missing;
  std::string_view body = cell;
  if (body.size() > 1 && body.front() == '+') body.remove_prefix(1);
  if (body.empty() || body.front() == '+') return Parse::text;
  const auto [end, ec] = std::from_chars(body.data(), body.data() + body.size(), value,
                                         std::chars_format::general);
  if (end != body.data() + body.size() || ec == std::errc::invalid_argument) return Parse::text;
  if (ec == std::errc::result_out_of_range) {
    // Overflow is an error; underflow rounds toward zero as strtod does.
    const std::string copy(body);
    value = std::strtod(copy.c_str(), nullptr);
    if (std::isinf(value)) return Parse::overflow;
    return Parse::number;
  }
  if (!std::isfinite(value)) return Parse::not_finite;
  return Parse::number;
}

char detect_delimiter(std::string_view head) {
  std::size_t comma = 0, semicolon = 0, tab = 0;
  bool quoted = false;
  for (char c : head) {
    if (c == '"') quoted = !quoted;
    if (quoted) continue;
    if (c == '\n' || c == '\r') break;
    if (c == ',') ++comma;
    if (c == ';') ++semicolon;
    if (c == '\t') ++tab;
  }
  if (semicolon > comma && semicolon >= tab) return ';';
  if (tab > comma && tab > semicolon) return '\t';
  return ',';
}

// Text of a cell or name as shown in a message: control bytes and bytes that
// are not well-formed UTF-8 escaped as \xNN, and cut to 60 bytes (a message never quotes megabytes).
std::string shown(std::string_view s) {
  constexpr std::size_t limit = 60;
  std::string out;
  for (std::size_t i = 0; i < s.size() && i < limit; ++i) {
    const auto c = static_cast<unsigned char>(s[i]);
    // A well-formed UTF-8 sequence is kept whole (names may be in any script).
    const std::size_t extra = c >= 0xC2 && c <= 0xDF ? 1 : c >= 0xE0 && c <= 0xEF ? 2
                              : c >= 0xF0 && c <= 0xF4 ? 3 : 0;
    if (extra > 0 && i + extra < s.size()) {
      bool well_formed = true;
      for (std::size_t k = 1; k <= extra; ++k)
        well_formed = well_formed && (static_cast<unsigned char>(s[i + k]) & 0xC0) == 0x80;
      if (well_formed) {
        out.append(s.substr(i, extra + 1));
        i += extra;
        continue;
      }
    }
    if (c < 0x20 || c >= 0x7F) {
      static const char hex[] = "0123456789ABCDEF";
      out += "\\x";
      out += hex[c >> 4];
      out += hex[c & 15];
    } else {
      out += static_cast<char>(c);
    }
  }
  if (s.size() > limit) out += "... (" + std::to_string(s.size()) + " bytes)";
  return out;
}

std::string quoted_name(const std::string& s) { return "\"" + shown(s) + "\""; }

enum class ColumnState { skipped, pending, numeric, text };

}  // namespace

Table read_table(std::istream& in, const std::string& source, const TableReadOptions& options) {
  using Kind = table_error::Kind;
  if (options.delimiter != 0 && options.delimiter != ',' && options.delimiter != ';' &&
      options.delimiter != '\t')
    throw std::invalid_argument("read_table: the delimiter must be ',', ';' or a tab");
  Table table;
  table.source = source;
  CharSource chars(in);
  {  // UTF-8 byte order mark
    auto [data, size] = chars.lookahead(3);
    if (size >= 3 && std::memcmp(data, "\xEF\xBB\xBF", 3) == 0) chars.skip(3);
  }
  if (options.delimiter != 0) {
    table.delimiter = options.delimiter;
  } else {
    auto [data, size] = chars.lookahead(1u << 16);
    table.delimiter = detect_delimiter(std::string_view(data, size));
  }
  RecordReader reader(chars, source, table.delimiter);
  reader.keep_at_most(options.max_columns);
  std::vector<Field> fields;
  std::size_t count = 0;
  if (!reader.next(fields, count))
    throw table_error(Kind::content, source, 1, 0, "the table is empty (no header row)");

  // Header.
  const std::size_t width = count;
  if (width > options.max_columns)
    throw table_error(Kind::content, source, reader.record_line(), 0,
                      "the header has " + std::to_string(width) + " columns, more than the limit of " +
                          std::to_string(options.max_columns) + " (raise it with --max-columns)");
  std::vector<std::string> header(width);
  std::unordered_map<std::string, std::size_t> header_position;  // name -> first position
  for (std::size_t j = 0; j < width; ++j) {
    header[j] = std::string(trim(fields[j].text));
    if (header[j].empty())
      throw table_error(Kind::content, source, reader.record_line(), j + 1,
                        "the header has an empty column name");
    const auto [at, fresh] = header_position.emplace(header[j], j);
    if (!fresh)
      throw table_error(Kind::content, source, reader.record_line(), j + 1,
                        "duplicate column name " + quoted_name(header[j]) + " (also column " +
                            std::to_string(at->second + 1) + ")");
  }
  reader.keep_at_most(width);
  auto position = [&](const std::string& name) -> std::size_t {
    if (const auto at = header_position.find(name); at != header_position.end()) return at->second;
    std::string list;
    for (std::size_t j = 0; j < width && j < 20; ++j) list += (j ? ", " : "") + shown(header[j]);
    if (width > 20) list += ", ... (" + std::to_string(width) + " columns)";
    throw table_error(Kind::content, source, reader.record_line(), 0,
                      "unknown column " + quoted_name(name) + " (the header has: " + list + ")");
  };
  std::vector<ColumnState> state(width, options.only.empty() ? ColumnState::pending
                                                             : ColumnState::skipped);
  std::vector<char> asked(width, 0);  // required or listed in `only`
  for (const auto& name : options.only) {
    const std::size_t j = position(name);
    state[j] = ColumnState::pending;
    asked[j] = 1;
  }
  for (const auto& name : options.required) {
    const std::size_t j = position(name);
    state[j] = ColumnState::pending;
    asked[j] = 1;
  }
  for (const auto& name : options.skip) {
    const std::size_t j = position(name);
    if (std::find(options.required.begin(), options.required.end(), name) == options.required.end())
      state[j] = ColumnState::skipped;
  }
  for (std::size_t j = 0; j < width; ++j)
    if (state[j] == ColumnState::skipped) table.skipped_columns.push_back(header[j]);

  // Data rows.
  std::vector<std::size_t> slot(width, 0);  // numeric column index once typed
  std::vector<std::size_t> slot_position;   // header position of each slot
  std::vector<double> row_value(width, 0.0);
  std::vector<char> row_has(width, 0);
  std::size_t data_rows_seen = 0;
  while (reader.next(fields, count)) {
    ++data_rows_seen;
    const std::size_t line = reader.record_line();
    if (count != width)
      throw table_error(Kind::content, source, line, std::min(count, width) + 1,
                        "this row has " + std::to_string(count) + " fields but the header has " +
                            std::to_string(width) + " (ragged row)");
    bool drop = false;
    for (std::size_t j = 0; j < width; ++j) {
      row_has[j] = 0;
      if (state[j] == ColumnState::skipped || state[j] == ColumnState::text) continue;
      const std::string_view cell = trim(fields[j].text);
      const std::size_t cell_line = fields[j].line;
      double value = 0;
      switch (parse_number(cell, value)) {
        case Parse::number:
          row_value[j] = value;
          row_has[j] = 1;
          break;
        case Parse::missing:
          if (options.missing == MissingCells::error)
            throw table_error(Kind::content, source, cell_line, j + 1,
                              std::string(cell.empty() ? "empty cell" : "missing value \"NA\"") +
                                  " in column " + quoted_name(header[j]) +
                                  " (use --missing drop to drop incomplete rows)");
          drop = true;
          break;
        case Parse::not_finite:
          throw table_error(Kind::content, source, cell_line, j + 1,
                            "cell \"" + shown(cell) + "\" in column " +
                                quoted_name(header[j]) + " is not a finite number (NaN and infinite "
                                "values are not accepted)");
        case Parse::overflow:
          throw table_error(Kind::content, source, cell_line, j + 1,
                            "cell \"" + shown(cell) + "\" in column " +
                                quoted_name(header[j]) + " is too large for a double");
        case Parse::text:
          if (state[j] == ColumnState::pending) {
            if (asked[j])
              throw table_error(Kind::content, source, cell_line, j + 1,
                                "column " + quoted_name(header[j]) +
                                    " is a text column (its first data cell is \"" +
                                    shown(cell) + "\") but it was asked for as a number");
            state[j] = ColumnState::text;
            table.text_columns.push_back(header[j]);
            break;
          }
          throw table_error(Kind::content, source, cell_line, j + 1,
                            "cell \"" + shown(cell) + "\" in numeric column " +
                                quoted_name(header[j]) + " is not a number");
      }
    }
    if (drop) {
      ++table.dropped_rows;
      continue;
    }
    for (std::size_t j = 0; j < width; ++j) {
      if (!row_has[j]) continue;
      if (state[j] == ColumnState::pending) {
        state[j] = ColumnState::numeric;
        slot[j] = table.columns.size();
        slot_position.push_back(j);
        table.columns.emplace_back();
        table.names.push_back(header[j]);
        if (options.keep_decimal_text) table.decimal_text.emplace_back();
      }
      table.columns[slot[j]].push_back(row_value[j]);
      if (options.keep_decimal_text)
        table.decimal_text[slot[j]].emplace_back(trim(fields[j].text));
    }
    ++table.rows;
    if (options.progress && (table.rows & 0xFFFF) == 0) options.progress(chars.consumed(), table.rows);
  }
  table.last_line = reader.line();
  if (data_rows_seen == 0)
    throw table_error(Kind::content, source, reader.line(), 0,
                      "the table has a header but no data rows");
  if (table.rows == 0)
    throw table_error(Kind::content, source, reader.line(), 0,
                      "no rows remain after dropping " + std::to_string(table.dropped_rows) +
                          " rows with missing cells");
  // Columns still untyped had only missing cells in dropped rows: impossible
  // once a row was kept, so every pending column is now numeric or text.

  // File order for the numeric columns (discovery order can differ when
  // rows were dropped before a column's first value).
  std::vector<std::size_t> order(table.columns.size());
  for (std::size_t k = 0; k < order.size(); ++k) order[k] = k;
  std::sort(order.begin(), order.end(),
            [&](std::size_t a, std::size_t b) { return slot_position[a] < slot_position[b]; });
  Table sorted;
  sorted.source = table.source;
  sorted.delimiter = table.delimiter;
  for (std::size_t k : order) {
    sorted.names.push_back(std::move(table.names[k]));
    sorted.columns.push_back(std::move(table.columns[k]));
    if (options.keep_decimal_text) sorted.decimal_text.push_back(std::move(table.decimal_text[k]));
  }
  sorted.text_columns = std::move(table.text_columns);
  sorted.skipped_columns = std::move(table.skipped_columns);
  sorted.rows = table.rows;
  sorted.dropped_rows = table.dropped_rows;
  sorted.last_line = table.last_line;
  if (options.progress) options.progress(chars.consumed(), sorted.rows);
  return sorted;
}

Table read_table(const std::string& path, const TableReadOptions& options) {
  if (path == "-") return read_table(std::cin, "<stdin>", options);
  std::ifstream file(path, std::ios::binary);
  if (!file)
    throw table_error(table_error::Kind::input_output, path, 0, 0,
                      std::string("cannot open the file: ") + std::strerror(errno));
  return read_table(file, path, options);
}

}  // namespace knotpath::io
