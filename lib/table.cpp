// Streaming reader of delimited text tables; see include/knotpath/io/table.hpp.
// Also the roles of its columns (include/knotpath/io/roles.hpp): validation,
// read options and the rule that chooses the predictors.

#include "knotpath/io/table.hpp"
#include "knotpath/io/roles.hpp"

#include "table_records.hpp"

#include <algorithm>
#include <charconv>
#include <cctype>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <cstring>
#include <fstream>
#include <iostream>
#include <optional>
#include <initializer_list>
#include <set>
#include <streambuf>
#include <unordered_map>
#include <unordered_set>
#include <utility>

#ifdef KNOTPATH_HAVE_ZLIB
#include <zlib.h>
#endif

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

std::size_t Table::checked_column(Index j, const char* what) const {
  if (j < 0 || static_cast<std::size_t>(j) >= columns.size())
    throw invalid_query(std::string(what) + ": the table has no column " + std::to_string(j) +
                        " (it has " + std::to_string(columns.size()) + ")");
  return static_cast<std::size_t>(j);
}

namespace {

std::string_view trim(std::string_view s) {
  while (!s.empty() && (s.front() == ' ' || s.front() == '\t')) s.remove_prefix(1);
  while (!s.empty() && (s.back() == ' ' || s.back() == '\t')) s.remove_suffix(1);
  return s;
}

enum class Parse { number, text, not_finite, overflow };

// Parses a decimal number written with the given mark; the whole (trimmed)
// cell must be consumed. `normal` receives the text with a decimal point
// (the cell itself for DecimalMark::point), for exact parsing later.
Parse parse_number(std::string_view cell, DecimalMark mark, double& value, std::string& normal) {
  normal.assign(cell);
  if (mark == DecimalMark::comma) {
    if (normal.find('.') != std::string::npos) return Parse::text;
    std::replace(normal.begin(), normal.end(), ',', '.');
  }
  std::string_view body = normal;
  if (body.size() > 1 && body.front() == '+') body.remove_prefix(1);
  if (body.empty() || body.front() == '+') return Parse::text;
  const auto [end, ec] =
      std::from_chars(body.data(), body.data() + body.size(), value, std::chars_format::general);
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

// Whether a text cell is a number written with a decimal comma ("2,5"):
// one comma, no point, a number once the comma is a point.
bool reads_as_decimal_comma(std::string_view cell) {
  if (std::count(cell.begin(), cell.end(), ',') != 1) return false;
  double value = 0;
  std::string normal;
  return parse_number(cell, DecimalMark::comma, value, normal) == Parse::number;
}

bool blank(char c) {
  return c == ' ' || c == '\t';
}

// The delimiter of a header row: the most frequent of comma, semicolon and
// tab outside quotes (comma on a tie); whitespace when there is none of them
// but blanks separate two names. Lines of blanks before the header row are
// passed over: they hold no name to separate.
char detect_delimiter(std::string_view head) {
  for (std::size_t end; (end = head.find_first_of("\r\n")) != std::string_view::npos &&
                        head.substr(0, end).find_first_not_of(" \t") == std::string_view::npos;)
    head.remove_prefix(end + 1);
  std::size_t comma = 0, semicolon = 0, tab = 0;
  bool quoted = false, gap_between_names = false, seen_name = false, in_gap = false;
  for (char c : head) {
    if (c == '"') quoted = !quoted;
    if (quoted) continue;
    if (c == '\n' || c == '\r') break;
    if (c == ',') ++comma;
    if (c == ';') ++semicolon;
    if (c == '\t') ++tab;
    if (blank(c)) {
      in_gap = seen_name;
    } else {
      if (in_gap) gap_between_names = true;
      seen_name = true;
      in_gap = false;
    }
  }
  if (semicolon > comma && semicolon >= tab) return ';';
  if (tab > comma && tab > semicolon) return '\t';
  if (comma == 0 && semicolon == 0 && tab == 0 && gap_between_names) return ' ';
  return ',';
}

// Text of a cell or name as shown in a message: control bytes and bytes that
// are not well-formed UTF-8 escaped as \xNN, and cut to 60 bytes (a message never quotes
// megabytes).
std::string shown(std::string_view s) {
  constexpr std::size_t limit = 60;
  std::string out;
  for (std::size_t i = 0; i < s.size() && i < limit; ++i) {
    const auto c = static_cast<unsigned char>(s[i]);
    // A well-formed UTF-8 sequence is kept whole (names may be in any script).
    const std::size_t extra = c >= 0xC2 && c <= 0xDF   ? 1
                              : c >= 0xE0 && c <= 0xEF ? 2
                              : c >= 0xF0 && c <= 0xF4 ? 3
                                                       : 0;
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

std::string quoted_name(const std::string& s) {
  return "\"" + shown(s) + "\"";
}

enum class ColumnState { skipped, pending, numeric, text, indicator };

bool listed_in(const std::vector<std::string>& list, const std::string& name) {
  return std::find(list.begin(), list.end(), name) != list.end();
}

using Kind = table_error::Kind;
using detail::CharSource;
using detail::Field;
using detail::RecordReader;

// The delimiter: the one asked for, else detected from the header row
// (after skipping a UTF-8 byte order mark). A decimal comma rules out the
// comma as delimiter, asked for or detected.
char choose_delimiter(CharSource& chars, const TableReadOptions& options,
                      const std::string& source) {
  if (options.delimiter != 0 && options.delimiter != ',' && options.delimiter != ';' &&
      options.delimiter != '\t' && options.delimiter != ' ')
    throw invalid_option("delimiter", "must be ',', ';', a tab or ' ' (whitespace)");
  const bool decimal_comma = options.decimal == DecimalMark::comma;
  if (decimal_comma && options.delimiter == ',')
    throw invalid_option("delimiter", "cannot be a comma when the decimal mark is a comma");
  {  // UTF-8 byte order mark
    auto [data, size] = chars.lookahead(3);
    if (size >= 3 && std::memcmp(data, "\xEF\xBB\xBF", 3) == 0) chars.skip(3);
  }
  if (options.delimiter != 0) return options.delimiter;
  auto [data, size] = chars.lookahead(1u << 16);
  const char found = detect_delimiter(std::string_view(data, size));
  if (decimal_comma && found == ',')
    throw table_error(table_error::Kind::content, source, 1, 0,
                      "the header row is separated by commas, which cannot be read with a decimal "
                      "comma (give the delimiter: semicolon, tab or whitespace)");
  return found;
}

// Compressed formats recognised by their magic bytes (the formats' own
// specifications: gzip RFC 1952, zip APPNOTE 4.3.7, xz file format 1.0,
// bzip2 "BZh" + block size, zstd RFC 8878).
enum class Packing { none, gzip, zip, xz, bzip2, zstd };

Packing packing_of(CharSource& chars) {
  // Not a structured binding: the lambda below captures the size, which
  // Clang 14 (the sanitizer and fuzz builds) refuses for bindings.
  const std::pair<const char*, std::size_t> ahead = chars.lookahead(6);
  const std::size_t size = ahead.second;
  const auto* b = reinterpret_cast<const unsigned char*>(ahead.first);
  auto starts = [&](std::initializer_list<unsigned char> magic) {
    if (size < magic.size()) return false;
    std::size_t k = 0;
    for (unsigned char m : magic)
      if (b[k++] != m) return false;
    return true;
  };
  if (starts({0x1F, 0x8B})) return Packing::gzip;
  if (starts({'P', 'K', 3, 4}) || starts({'P', 'K', 5, 6})) return Packing::zip;
  if (starts({0xFD, '7', 'z', 'X', 'Z', 0})) return Packing::xz;
  if (size >= 5 && starts({'B', 'Z', 'h'}) && b[3] >= '1' && b[3] <= '9' &&
      (b[4] == 0x31 || b[4] == 0x17))
    return Packing::bzip2;
  if (starts({0x28, 0xB5, 0x2F, 0xFD})) return Packing::zstd;
  return Packing::none;
}

[[noreturn]] void refuse_packing(Packing packing, const std::string& source) {
  std::string what;
  switch (packing) {
    case Packing::gzip:
      throw table_error(table_error::Kind::content, source, 0, 0,
                        "the input is gzip-compressed and this build reads no gzip (it was built "
                        "without zlib); decompress it first, e.g. with gunzip");
    case Packing::zip:
      what = "a zip archive; extract the table from it (e.g. with unzip)";
      break;
    case Packing::xz:
      what = "xz-compressed; decompress it first (e.g. with unxz)";
      break;
    case Packing::bzip2:
      what = "bzip2-compressed; decompress it first (e.g. with bunzip2)";
      break;
    case Packing::zstd:
      what = "zstd-compressed; decompress it first (e.g. with unzstd)";
      break;
    case Packing::none:
      break;
  }
  throw table_error(table_error::Kind::content, source, 0, 0,
                    "the input is " + what + " and read the text table it holds");
}

#ifdef KNOTPATH_HAVE_ZLIB
// A stream buffer that inflates gzip data taken from a CharSource (RFC 1952;
// members written one after another are read one after another, as gunzip
// does). Corrupt or truncated data throw table_error (kind content); the
// istream reading it must have badbit in its exceptions() so that they
// reach the caller.
class GzipBuffer : public std::streambuf {
 public:
  GzipBuffer(CharSource& raw, std::string source)
      : raw_(raw), source_(std::move(source)), out_(1u << 16) {
    if (inflateInit2(&z_, 15 + 16) != Z_OK) throw std::bad_alloc();
  }
  ~GzipBuffer() override { inflateEnd(&z_); }
  GzipBuffer(const GzipBuffer&) = delete;
  GzipBuffer& operator=(const GzipBuffer&) = delete;

 protected:
  int_type underflow() override {
    if (gptr() < egptr()) return traits_type::to_int_type(*gptr());
    for (;;) {
      if (z_.avail_in == 0) {
        auto [data, size] = raw_.lookahead(1);
        if (size == 0) {
          if (in_member_) fail("the gzip data ends early (the file is truncated)");
          return traits_type::eof();
        }
        z_.next_in = reinterpret_cast<Bytef*>(const_cast<char*>(data));
        z_.avail_in = static_cast<uInt>(std::min<std::size_t>(size, 1u << 30));
      }
      const uInt offered = z_.avail_in;
      z_.next_out = reinterpret_cast<Bytef*>(out_.data());
      z_.avail_out = static_cast<uInt>(out_.size());
      in_member_ = true;
      const int rc = inflate(&z_, Z_NO_FLUSH);
      raw_.skip(offered - z_.avail_in);
      if (rc == Z_STREAM_END) {
        inflateReset(&z_);
        in_member_ = false;
      } else if (rc != Z_OK && rc != Z_BUF_ERROR) {
        fail(std::string("the gzip data is corrupt (") + (z_.msg ? z_.msg : "zlib error") + ")");
      }
      const std::size_t made = out_.size() - z_.avail_out;
      if (made > 0) {
        setg(out_.data(), out_.data(), out_.data() + made);
        return traits_type::to_int_type(*gptr());
      }
    }
  }

 private:
  [[noreturn]] void fail(const std::string& message) {
    throw table_error(table_error::Kind::content, source_, 0, 0, message);
  }

  CharSource& raw_;
  std::string source_;
  std::vector<char> out_;
  z_stream z_{};
  bool in_member_ = false;
};
#endif

// The header row: column names (trimmed, non-empty, distinct) and where each is.
struct Header {
  std::string source;
  std::size_t line = 1;  // physical line of the header row
  std::vector<std::string> names;
  std::unordered_map<std::string, std::size_t> position;  // name -> position

  std::size_t width() const { return names.size(); }

  // Position of a column, if the header has it.
  std::optional<std::size_t> lookup(const std::string& name) const {
    if (const auto at = position.find(name); at != position.end()) return at->second;
    return std::nullopt;
  }

  // Position of a column the options name; an unknown name is an error
  // listing (the first 20 of) the header.
  std::size_t find(const std::string& name) const {
    if (const auto at = lookup(name)) return *at;
    const std::size_t w = width();
    std::string list;
    for (std::size_t j = 0; j < w && j < 20; ++j) list += (j ? ", " : "") + shown(names[j]);
    if (w > 20) list += ", ... (" + std::to_string(w) + " columns)";
    throw table_error(Kind::content, source, line, 0,
                      "unknown column " + quoted_name(name) + " (the header has: " + list + ")");
  }
};

Header read_header(RecordReader& reader, std::vector<Field>& fields, const std::string& source,
                   const TableReadOptions& options) {
  std::size_t count = 0;
  if (!reader.next(fields, count))
    throw table_error(Kind::content, source, 1, 0, "the table is empty (no header row)");
  Header h;
  h.source = source;
  h.line = reader.record_line();
  if (count > options.max_columns)
    throw table_error(Kind::content, source, h.line, 0,
                      "the header has " + std::to_string(count) +
                          " columns, more than the limit of " +
                          std::to_string(options.max_columns) + " (raise it with --max-columns)");
  h.names.resize(count);
  for (std::size_t j = 0; j < count; ++j) {
    h.names[j] = std::string(trim(fields[j].text));
    if (h.names[j].empty())
      throw table_error(Kind::content, source, h.line, j + 1,
                        "the header has an empty column name");
    const auto [at, fresh] = h.position.emplace(h.names[j], j);
    if (!fresh)
      throw table_error(Kind::content, source, h.line, j + 1,
                        "duplicate column name " + quoted_name(h.names[j]) + " (also column " +
                            std::to_string(at->second + 1) + ")");
  }
  return h;
}

// Which columns are read: state per header position, whether the options
// asked for it (required or listed in `only`), and the indicator columns
// the options name ("COLUMN=LEVEL"), checked once the levels are known.
struct ColumnPlan {
  std::vector<ColumnState> state;
  std::vector<char> asked;
  std::vector<std::pair<std::string, std::size_t>> indicators_named;  // name, source position
};

// The source column of an indicator name "COLUMN=LEVEL" when COLUMN is a
// header column that may be expanded (listed, or any text column when all
// text columns are). Column names may hold '=': every split is tried.
std::optional<std::size_t> indicator_source(const Header& header, const std::string& name,
                                            const IndicatorOptions& indicators) {
  for (std::size_t eq = name.find('='); eq != std::string::npos; eq = name.find('=', eq + 1)) {
    const std::string column = name.substr(0, eq);
    const auto at = header.lookup(column);
    if (at && (indicators.all_text || listed_in(indicators.columns, column))) return at;
  }
  return std::nullopt;
}

ColumnPlan select_columns(const Header& header, const TableReadOptions& options) {
  const std::size_t width = header.width();
  const IndicatorOptions& indicators = options.indicators;
  ColumnPlan plan;
  plan.state.assign(width, options.only.empty() ? ColumnState::pending : ColumnState::skipped);
  plan.asked.assign(width, 0);
  auto ask = [&](const std::string& name) {
    if (!header.lookup(name)) {
      if (const auto source = indicator_source(header, name, indicators)) {
        if (plan.state[*source] == ColumnState::skipped) plan.state[*source] = ColumnState::pending;
        plan.indicators_named.emplace_back(name, *source);
        return;
      }
    }
    const std::size_t j = header.find(name);
    plan.state[j] = ColumnState::pending;
    plan.asked[j] = 1;
  };
  for (const auto& name : options.only) ask(name);
  for (const auto& name : options.required) ask(name);
  for (const auto& name : indicators.columns) {
    const std::size_t j = header.find(name);
    plan.state[j] = ColumnState::indicator;
  }
  if (options.keep_row_keys && !options.key_column.empty()) header.find(options.key_column);  // must exist
  for (const auto& name : options.skip) {
    if (!header.lookup(name) && indicator_source(header, name, indicators)) continue;
    const std::size_t j = header.find(name);
    if (std::find(options.required.begin(), options.required.end(), name) == options.required.end())
      plan.state[j] = ColumnState::skipped;
  }
  return plan;
}

// The levels of one text column being expanded: each distinct text gets a
// code in order of appearance; `codes` holds one per kept row.
struct LevelColumn {
  std::size_t position = 0;  // in the header
  std::vector<std::string> levels;
  std::unordered_map<std::string, std::uint32_t> code;
  std::vector<std::uint32_t> codes;
};

// The wording that suggests the decimal comma, appended to messages about a
// cell that reads as a number written with one.
const char* const decimal_comma_hint =
    " (it reads as a number written with a decimal comma: read the table with a decimal comma, "
    "--decimal comma)";

// Reads the data rows into a table: types each pending column by its first
// data cell, checks every cell read, drops or refuses rows with missing
// cells, and collects the levels of the columns expanded into indicators.
class RowReader {
 public:
  RowReader(const Header& header, ColumnPlan plan, const TableReadOptions& options, Table& table)
      : header_(header),
        plan_(std::move(plan)),
        options_(options),
        table_(table),
        slot_(header.width(), 0),
        row_value_(header.width(), 0.0),
        row_has_(header.width(), 0),
        row_text_(header.width()) {
    for (const auto& token : options.missing_tokens) missing_tokens_.emplace_back(trim(token));
    for (std::size_t j = 0; j < header.width(); ++j)
      if (plan_.state[j] == ColumnState::indicator) start_levels(j);
  }

  // Reads every row; returns the number of data rows seen (kept or dropped).
  std::size_t read(RecordReader& reader, std::vector<Field>& fields, const CharSource& chars) {
    const std::size_t width = header_.width();
    std::size_t count = 0, seen = 0;
    while (reader.next(fields, count)) {
      ++seen;
      if (count != width)
        throw table_error(Kind::content, header_.source, reader.record_line(),
                          std::min(count, width) + 1,
                          "this row has " + std::to_string(count) + " fields but the header has " +
                              std::to_string(width) + " (ragged row)");
      if (parse_row(fields)) {
        ++table_.dropped_rows;
        continue;
      }
      keep_row(fields);
      mark_line(reader.record_line());
      ++table_.rows;
      if (block_rows_ != 0 && table_.rows - emitted_ == block_rows_) emit_block();
      if (options_.progress && (table_.rows & 0xFFFF) == 0)
        options_.progress(chars.consumed(), table_.rows);
    }
    if (block_rows_ != 0 && table_.rows > emitted_) emit_block();
    return seen;
  }

  // Block mode (read_table_blocks): every `block_rows` kept rows go to
  // `on_block` as a table of their own, and the reader keeps none of them.
  void stream_blocks(std::size_t block_rows, const std::function<void(Table&)>& on_block) {
    block_rows_ = block_rows;
    on_block_ = &on_block;
  }

  // Header position of each numeric column, in the order they were typed.
  const std::vector<std::size_t>& slot_position() const { return slot_position_; }

  // Appends the indicator columns of every expanded column (at its header
  // position, levels in byte order) and checks the indicator names asked for.
  void make_indicators() {
    std::unordered_set<std::string> taken(table_.names.begin(), table_.names.end());
    for (const auto& name : header_.names) taken.insert(name);
    std::sort(levels_.begin(), levels_.end(),
              [](const LevelColumn& a, const LevelColumn& b) { return a.position < b.position; });
    for (LevelColumn& column : levels_) make_indicators_of(column, taken);
    for (const auto& [name, source] : plan_.indicators_named)
      if (table_.find(name) < 0) refuse_indicator_name(name, source);
  }

 private:
  // Parses the cells read into row_value_/row_has_; true when the row is dropped.
  bool parse_row(const std::vector<Field>& fields) {
    bool drop = false;
    for (std::size_t j = 0; j < header_.width(); ++j) {
      row_has_[j] = 0;
      const ColumnState state = plan_.state[j];
      if (state == ColumnState::skipped || state == ColumnState::text) continue;
      drop = parse_cell(trim(fields[j].text), fields[j].line, j) || drop;
    }
    return drop;
  }

  bool missing(std::string_view cell) const { return is_missing_cell(cell, missing_tokens_); }

  // Cell j of a row; true when it is missing and rows with missing cells are dropped.
  bool parse_cell(std::string_view cell, std::size_t cell_line, std::size_t j) {
    const std::string& name = header_.names[j];
    auto refuse = [&](const std::string& message) {
      throw table_error(Kind::content, header_.source, cell_line, j + 1, message);
    };
    if (missing(cell)) {
      if (options_.missing == MissingCells::error)
        refuse(std::string(cell.empty() ? "empty cell" : "missing value \"" + shown(cell) + "\"") +
               " in column " + quoted_name(name) +
               (options_.missing_advice.empty() ? std::string() : " (" + options_.missing_advice + ")"));
      return true;
    }
    if (plan_.state[j] == ColumnState::indicator) {
      row_text_[j].assign(cell);
      row_has_[j] = 1;
      return false;
    }
    double value = 0;
    switch (parse_number(cell, options_.decimal, value, row_text_[j])) {
      case Parse::number:
        row_value_[j] = value;
        row_has_[j] = 1;
        return false;
      case Parse::not_finite:
        refuse("cell \"" + shown(cell) + "\" in column " + quoted_name(name) +
               " is not a finite number (infinite values are not accepted)");
        return false;
      case Parse::overflow:
        refuse("cell \"" + shown(cell) + "\" in column " + quoted_name(name) +
               " is too large for a double");
        return false;
      case Parse::text:
        return type_as_text(cell, j, refuse);
    }
    return false;
  }

  // A cell that is no number: an error in a numeric column; otherwise the
  // column is text, or expanded into indicators when all text columns are.
  template <class Refuse>
  bool type_as_text(std::string_view cell, std::size_t j, const Refuse& refuse) {
    const std::string& name = header_.names[j];
    const bool comma_number =
        options_.decimal == DecimalMark::point && reads_as_decimal_comma(cell);
    if (plan_.state[j] != ColumnState::pending)
      refuse("cell \"" + shown(cell) + "\" in numeric column " + quoted_name(name) +
             " is not a number" + (comma_number ? decimal_comma_hint : ""));
    if (comma_number) table_.decimal_comma_columns.push_back(name);
    if (options_.indicators.all_text && !comma_number) {
      start_levels(j);
      row_text_[j].assign(cell);
      row_has_[j] = 1;
      return false;
    }
    if (plan_.asked[j])
      refuse("column " + quoted_name(name) + " is a text column (its first data cell is \"" +
             shown(cell) + "\") but it was asked for as a number" +
             (comma_number ? decimal_comma_hint : ""));
    plan_.state[j] = ColumnState::text;
    table_.text_columns.push_back(name);
    return false;
  }

  void start_levels(std::size_t j) {
    plan_.state[j] = ColumnState::indicator;
    slot_[j] = levels_.size();
    levels_.emplace_back();
    levels_.back().position = j;
  }

  // Appends the parsed values of a kept row; a pending column becomes numeric
  // at its first value.
  void keep_row(const std::vector<Field>& fields) {
    for (std::size_t j = 0; j < header_.width(); ++j) {
      if (!row_has_[j]) continue;
      if (plan_.state[j] == ColumnState::indicator) {
        keep_level(j, fields[j].line);
        continue;
      }
      if (plan_.state[j] == ColumnState::pending) {
        plan_.state[j] = ColumnState::numeric;
        slot_[j] = table_.columns.size();
        slot_position_.push_back(j);
        table_.columns.emplace_back();
        table_.names.push_back(header_.names[j]);
        if (options_.keep_decimal_text) table_.decimal_text.emplace_back();
      }
      table_.columns[slot_[j]].push_back(row_value_[j]);
      if (options_.keep_decimal_text) table_.decimal_text[slot_[j]].push_back(row_text_[j]);
    }
    if (options_.keep_row_keys) keep_key(fields);
  }

  // Records where the kept row about to be counted starts, when not on the
  // line after the previous kept row's start (RowLines::marks).
  void mark_line(std::size_t line) {
    if (table_.rows == 0 || line != previous_line_ + 1) table_.row_lines.marks.emplace_back(table_.rows, line);
    previous_line_ = line;
  }

  // The row's key (TableReadOptions::keep_row_keys). The key column is fixed
  // at the first kept row, when every column read has been typed.
  void keep_key(const std::vector<Field>& fields) {
    if (!key_chosen_) {
      key_chosen_ = true;
      for (std::size_t j = 0; j < header_.width(); ++j)
        if (options_.key_column.empty() ? plan_.state[j] == ColumnState::text
                                        : header_.names[j] == options_.key_column) {
          key_position_ = j;
          table_.key_name = header_.names[j];
          break;
        }
    }
    if (key_position_ < header_.width()) table_.keys.emplace_back(trim(fields[key_position_].text));
  }

  // Records the level of a kept row's cell j; a level beyond the limit is an error.
  void keep_level(std::size_t j, std::size_t cell_line) {
    LevelColumn& column = levels_[slot_[j]];
    const std::string& text = row_text_[j];
    auto at = column.code.find(text);
    if (at == column.code.end()) {
      const std::size_t limit = options_.indicators.max_levels;
      if (column.levels.size() >= limit)
        throw table_error(
            Kind::content, header_.source, cell_line, j + 1,
            "column " + quoted_name(header_.names[j]) + " has more than " +
                std::to_string(limit) + " distinct values (this one is \"" + shown(text) +
                "\"), too many to expand into indicator columns (the limit is --max-levels; a "
                "column of identifiers can be left out with --drop)");
      at = column.code.emplace(text, static_cast<std::uint32_t>(column.levels.size())).first;
      column.levels.push_back(text);
    }
    column.codes.push_back(at->second);
  }

  void make_indicators_of(LevelColumn& column, std::unordered_set<std::string>& taken) {
    const std::string& source = header_.names[column.position];
    std::vector<std::uint32_t> order(column.levels.size());
    for (std::uint32_t k = 0; k < order.size(); ++k) order[k] = k;
    std::sort(order.begin(), order.end(),
              [&](std::uint32_t a, std::uint32_t b) { return column.levels[a] < column.levels[b]; });
    IndicatorColumn made;
    made.source = source;
    const bool leave_out = options_.indicators.leave_out_reference && !order.empty();
    for (std::size_t r = 0; r < order.size(); ++r) {
      const std::string& level = column.levels[order[r]];
      made.levels.push_back(level);
      if (r == 0 && leave_out) {
        made.reference = level;
        continue;
      }
      std::string name = indicator_name(source, level);
      if (!taken.insert(name).second)
        throw table_error(Kind::content, header_.source, header_.line, column.position + 1,
                          "the indicator column " + quoted_name(name) + " of column " +
                              quoted_name(source) + " has the name of another column");
      NumericColumn values;
      for (std::uint32_t code : column.codes) values.push_back(code == order[r] ? 1.0 : 0.0);
      table_.columns.push_back(std::move(values));
      table_.names.push_back(name);
      made.names.push_back(std::move(name));
      slot_position_.push_back(column.position);
      if (options_.keep_decimal_text)
        table_.decimal_text.emplace_back(column.codes.size(), std::string("0"));
      if (options_.keep_decimal_text) {
        auto& text = table_.decimal_text.back();
        for (std::size_t i = 0; i < column.codes.size(); ++i)
          if (column.codes[i] == order[r]) text[i] = "1";
      }
    }
    column.codes.clear();
    column.codes.shrink_to_fit();
    table_.indicator_columns.push_back(std::move(made));
  }

  [[noreturn]] void refuse_indicator_name(const std::string& name, std::size_t source) {
    const std::string& column = header_.names[source];
    std::string why;
    if (plan_.state[source] != ColumnState::indicator) {
      why = "column " + quoted_name(column) + " was not expanded into indicator columns (" +
            (plan_.state[source] == ColumnState::numeric   ? "it is numeric"
             : plan_.state[source] == ColumnState::skipped ? "it was not read"
                                                           : "it was kept as text") +
            ")";
    } else {
      const IndicatorColumn* made = nullptr;
      for (const auto& m : table_.indicator_columns)
        if (m.source == column) made = &m;
      std::string list;
      for (const auto& level : made->levels) list += (list.empty() ? "" : ", ") + quoted_name(level);
      why = "the levels of column " + quoted_name(column) + " are " + list;
      if (!made->reference.empty())
        why += "; " + quoted_name(made->reference) + " is the reference level, left out";
    }
    throw table_error(Kind::content, header_.source, header_.line, source + 1,
                      "no indicator column " + quoted_name(name) + ": " + why);
  }

  // Hands the kept rows since the last block to on_block_ as a table of
  // their own, and empties the reader's columns. Every column is typed at
  // the first kept row (a kept row has a value in each), in header order,
  // so a block's columns are in file order and the same in every block.
  void emit_block() {
    Table block;
    block.source = table_.source;
    block.delimiter = table_.delimiter;
    block.names = table_.names;
    block.columns.swap(table_.columns);
    table_.columns.resize(block.columns.size());
    if (options_.keep_decimal_text) {
      block.decimal_text.swap(table_.decimal_text);
      table_.decimal_text.resize(block.decimal_text.size());
    }
    block.key_name = table_.key_name;
    block.keys.swap(table_.keys);
    block.text_columns = table_.text_columns;
    block.decimal_comma_columns = table_.decimal_comma_columns;
    block.skipped_columns = table_.skipped_columns;
    block.rows = table_.rows - emitted_;
    block.first_row = emitted_;
    block.row_lines = lines_from(emitted_);
    emitted_ = table_.rows;
    (*on_block_)(block);
  }

  // The reader's RowLines for the rows from `first` on, counted from it.
  RowLines lines_from(std::size_t first) const {
    RowLines out;
    const auto& marks = table_.row_lines.marks;
    out.marks.emplace_back(0, table_.row_lines.line_of(first));
    auto later = std::upper_bound(marks.begin(), marks.end(), first,
                                  [](std::size_t r, const std::pair<std::size_t, std::size_t>& mark) {
                                    return r < mark.first;
                                  });
    for (; later != marks.end(); ++later) out.marks.emplace_back(later->first - first, later->second);
    return out;
  }

  const Header& header_;
  ColumnPlan plan_;
  const TableReadOptions& options_;
  Table& table_;
  std::size_t block_rows_ = 0;                               // block mode: rows per block (0: off)
  const std::function<void(Table&)>* on_block_ = nullptr;   // block mode: the caller's callback
  std::size_t emitted_ = 0;                                  // kept rows already handed over
  std::vector<std::string> missing_tokens_;  // the caller's, trimmed
  std::vector<std::size_t> slot_;           // numeric column index once typed (levels_ index
                                            // for an indicator column)
  std::vector<std::size_t> slot_position_;  // header position of each slot
  std::vector<double> row_value_;
  std::vector<char> row_has_;
  std::vector<std::string> row_text_;  // decimal text (point) or level of each cell read
  std::vector<LevelColumn> levels_;
  bool key_chosen_ = false;
  std::size_t previous_line_ = 0;  // start line of the last kept row (mark_line)
  std::size_t key_position_ = static_cast<std::size_t>(-1);  // header position of the key column
};

// The table with its numeric columns in file order (discovery order can
// differ when rows were dropped before a column's first value); the
// indicator columns of one text column keep their level order.
Table in_file_order(Table& table, const std::vector<std::size_t>& slot_position,
                    bool keep_decimal_text) {
  std::vector<std::size_t> order(table.columns.size());
  for (std::size_t k = 0; k < order.size(); ++k) order[k] = k;
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) {
    return slot_position[a] < slot_position[b];
  });
  Table sorted;
  sorted.source = table.source;
  sorted.delimiter = table.delimiter;
  for (std::size_t k : order) {
    sorted.names.push_back(std::move(table.names[k]));
    sorted.columns.push_back(std::move(table.columns[k]));
    if (keep_decimal_text) sorted.decimal_text.push_back(std::move(table.decimal_text[k]));
  }
  sorted.text_columns = std::move(table.text_columns);
  sorted.key_name = std::move(table.key_name);
  sorted.keys = std::move(table.keys);
  sorted.skipped_columns = std::move(table.skipped_columns);
  sorted.decimal_comma_columns = std::move(table.decimal_comma_columns);
  sorted.indicator_columns = std::move(table.indicator_columns);
  sorted.compression = std::move(table.compression);
  sorted.rows = table.rows;
  sorted.dropped_rows = table.dropped_rows;
  sorted.last_line = table.last_line;
  sorted.row_lines = std::move(table.row_lines);
  return sorted;
}

// Reads a table from uncompressed text.
Table read_text_table(CharSource& chars, const std::string& source, const TableReadOptions& options,
                      std::size_t block_rows = 0, const std::function<void(Table&)>* on_block = nullptr,
                      std::size_t lines_before = 0) {
  Table table;
  table.source = source;
  table.delimiter = choose_delimiter(chars, options, source);
  RecordReader reader(chars, source, table.delimiter);
  reader.keep_at_most(options.max_columns);
  std::vector<Field> fields;
  const Header header = read_header(reader, fields, source, options);
  reader.keep_at_most(header.width());
  reader.skip_line_numbers(lines_before);
  ColumnPlan plan = select_columns(header, options);
  for (std::size_t j = 0; j < header.width(); ++j)
    if (plan.state[j] == ColumnState::skipped) table.skipped_columns.push_back(header.names[j]);

  RowReader rows(header, std::move(plan), options, table);
  if (on_block) rows.stream_blocks(block_rows, *on_block);
  const std::size_t data_rows_seen = rows.read(reader, fields, chars);
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
  rows.make_indicators();
  Table sorted = in_file_order(table, rows.slot_position(), options.keep_decimal_text);
  if (options.progress) options.progress(chars.consumed(), sorted.rows);
  return sorted;
}

// read_table() and read_table_blocks() (on_block non-null): the input's
// packing, then the text.
Table read_any(std::istream& in, const std::string& source, const TableReadOptions& options,
               std::size_t block_rows, const std::function<void(Table&)>* on_block, std::size_t lines_before = 0) {
  CharSource chars(in);
  const Packing packing = packing_of(chars);
  if (packing == Packing::none) return read_text_table(chars, source, options, block_rows, on_block, lines_before);
#ifdef KNOTPATH_HAVE_ZLIB
  if (packing == Packing::gzip) {
    GzipBuffer inflated(chars, source);
    std::istream text(&inflated);
    text.exceptions(std::ios::badbit);  // the buffer's errors reach the caller
    Table table = read_any(text, source, options, block_rows, on_block);
    table.compression = "gzip";
    return table;
  }
#endif
  refuse_packing(packing, source);
}

template <class Read>
Table read_file(const std::string& path, Read&& read) {
  if (path == "-") return read(std::cin, "<stdin>");
  std::ifstream file(path, std::ios::binary);
  if (!file)
    throw table_error(table_error::Kind::input_output, path, 0, 0,
                      std::string("cannot open the file: ") + std::strerror(errno));
  return read(file, path);
}

void check_block_options(const TableReadOptions& options, std::size_t block_rows) {
  if (block_rows == 0) throw invalid_option("block_rows", "must be at least 1");
  if (!options.indicators.columns.empty() || options.indicators.all_text)
    throw invalid_option("indicators",
                         "text columns cannot be expanded while the table is read in blocks (their "
                         "levels are known only after the last row): read the table whole");
}

// ---- Pieces of one file (table_piece) ----

std::ifstream open_piece_file(const std::string& path) {
  if (path == "-")
    throw table_error(Kind::input_output, "<stdin>", 0, 0, "standard input cannot be cut into pieces (give a file)");
  std::ifstream file(path, std::ios::binary);
  if (!file) throw table_error(Kind::input_output, path, 0, 0, std::string("cannot open the file: ") + std::strerror(errno));
  return file;
}

std::uint64_t file_size(std::ifstream& file, const std::string& path) {
  file.seekg(0, std::ios::end);
  const std::streamoff size = file.tellg();
  if (size < 0) throw table_error(Kind::input_output, path, 0, 0, "cannot tell the file's size (not a regular file?)");
  file.seekg(0);
  return static_cast<std::uint64_t>(size);
}

// The byte after the header record's line end, found by the reader itself:
// the delimiter chosen and the lines before the header skipped as
// read_text_table() does (so a piece's header range [0, H) reads as the
// whole file's header), and a quoted name may span lines. Refused:
// compressed files (their bytes have no line breaks to cut at) and a header
// ending in a carriage return alone (pieces are cut at line feeds, which
// such a file lacks).
std::uint64_t header_end(std::ifstream& file, const std::string& path, const TableReadOptions& options) {
  std::istream& in = file;
  CharSource chars(in);
  if (packing_of(chars) != Packing::none)
    throw table_error(Kind::content, path, 0, 0,
                      "a compressed table cannot be cut into pieces (its bytes are not lines): decompress it, "
                      "or give the pieces as separate tables");
  RecordReader reader(chars, path, choose_delimiter(chars, options, path));
  reader.keep_at_most(0);  // the fields are not needed, only where the record ends
  std::vector<Field> fields;
  std::size_t count = 0;
  (void)reader.next(fields, count);
  const auto end = static_cast<std::uint64_t>(chars.consumed());
  if (end > 0) {
    file.clear();
    file.seekg(static_cast<std::streamoff>(end - 1));
    if (file.get() == '\r')
      throw table_error(Kind::content, path, reader.record_line(), 0,
                        "the lines end in a carriage return alone, and pieces are cut at line feeds: convert "
                        "the line ends to cut this table into pieces");
  }
  return end;
}

// The first line start at or after byte `from` (a line starts at 0 and after
// every '\n'), or `size` when none does.
std::uint64_t line_start_at_or_after(std::ifstream& file, const std::string& path, std::uint64_t from,
                                     std::uint64_t size) {
  if (from == 0) return 0;
  file.clear();
  file.seekg(static_cast<std::streamoff>(from - 1));
  std::vector<char> buffer(1u << 12);
  for (std::uint64_t at = from - 1; at < size;) {
    file.read(buffer.data(), static_cast<std::streamsize>(buffer.size()));
    const std::streamsize got = file.gcount();
    if (got <= 0) throw table_error(Kind::input_output, path, 0, 0, "read error (the file shrank?)");
    const char* begin = buffer.data();
    const char* end = begin + got;
    if (const char* hit = std::find(begin, end, '\n'); hit != end)
      return at + static_cast<std::uint64_t>(hit - buffer.data()) + 1;
    at += static_cast<std::uint64_t>(got);
  }
  return size;
}

// A stream buffer over byte ranges of one file, one after another (the
// header line, then a piece's lines).
class PieceBuffer : public std::streambuf {
 public:
  PieceBuffer(const std::string& path, std::vector<std::pair<std::uint64_t, std::uint64_t>> ranges)
      : file_(open_piece_file(path)), path_(path), ranges_(std::move(ranges)), buffer_(1u << 16) {
    start_range();
  }

 protected:
  int_type underflow() override {
    while (range_ < ranges_.size() && at_ == ranges_[range_].second) {
      ++range_;
      start_range();
    }
    if (range_ == ranges_.size()) return traits_type::eof();
    const auto want = static_cast<std::streamsize>(std::min<std::uint64_t>(ranges_[range_].second - at_, buffer_.size()));
    file_.read(buffer_.data(), want);
    const std::streamsize got = file_.gcount();
    if (got <= 0) throw table_error(Kind::input_output, path_, 0, 0, "read error (the file shrank?)");
    at_ += static_cast<std::uint64_t>(got);
    setg(buffer_.data(), buffer_.data(), buffer_.data() + got);
    return traits_type::to_int_type(buffer_[0]);
  }

 private:
  void start_range() {
    if (range_ == ranges_.size()) return;
    at_ = ranges_[range_].first;
    file_.clear();
    file_.seekg(static_cast<std::streamoff>(at_));
  }

  std::ifstream file_;
  std::string path_;
  std::vector<std::pair<std::uint64_t, std::uint64_t>> ranges_;
  std::size_t range_ = 0;
  std::uint64_t at_ = 0;
  std::vector<char> buffer_;
};

}  // namespace

Table read_table(std::istream& in, const std::string& source, const TableReadOptions& options) {
  return read_any(in, source, options, 0, nullptr);
}

Table read_table(const std::string& path, const TableReadOptions& options) {
  return read_file(path, [&](std::istream& in, const std::string& source) { return read_table(in, source, options); });
}

namespace {

// The header's names from a stream, through its packing as read_any()
// reads it (the delimiter chosen, blank lines before the header skipped).
std::vector<std::string> header_names(std::istream& in, const std::string& source, const TableReadOptions& options) {
  CharSource chars(in);
  const Packing packing = packing_of(chars);
  if (packing == Packing::none) {
    RecordReader reader(chars, source, choose_delimiter(chars, options, source));
    reader.keep_at_most(options.max_columns);
    std::vector<Field> fields;
    return read_header(reader, fields, source, options).names;
  }
#ifdef KNOTPATH_HAVE_ZLIB
  if (packing == Packing::gzip) {
    GzipBuffer inflated(chars, source);
    std::istream text(&inflated);
    text.exceptions(std::ios::badbit);  // the buffer's errors reach the caller
    return header_names(text, source, options);
  }
#endif
  refuse_packing(packing, source);
}

}  // namespace

std::vector<std::string> read_table_header(const std::string& path, const TableReadOptions& options) {
  std::vector<std::string> names;
  read_file(path, [&](std::istream& in, const std::string& source) {
    names = header_names(in, source, options);
    return Table();
  });
  return names;
}

Table read_table_blocks(std::istream& in, const std::string& source, const TableReadOptions& options,
                        std::size_t block_rows, const std::function<void(Table&)>& on_block) {
  check_block_options(options, block_rows);
  return read_any(in, source, options, block_rows, &on_block);
}

Table read_table_blocks(const std::string& path, const TableReadOptions& options, std::size_t block_rows,
                        const std::function<void(Table&)>& on_block) {
  return read_file(path, [&](std::istream& in, const std::string& source) {
    return read_table_blocks(in, source, options, block_rows, on_block);
  });
}

TablePiece table_piece(const std::string& path, std::size_t index, std::size_t count,
                       const TableReadOptions& options) {
  if (count == 0) throw invalid_option("pieces", "must be at least 1");
  if (index >= count)
    throw invalid_option("pieces", "piece " + std::to_string(index) + " of " + std::to_string(count) + " does not exist");
  std::ifstream file = open_piece_file(path);
  TablePiece piece;
  piece.index = index;
  piece.count = count;
  const std::uint64_t size = file_size(file, path);
  piece.header_end = header_end(file, path, options);
  const std::uint64_t data = size - piece.header_end;
  // H + floor(data i / count) without overflow: data / count and data % count apart.
  auto nominal = [&](std::size_t i) {
    return piece.header_end + data / count * i + data % count * i / count;
  };
  auto line_start = [&](std::size_t i) {
    return i == 0 ? piece.header_end : line_start_at_or_after(file, path, nominal(i), size);
  };
  piece.begin = line_start(index);
  piece.end = index + 1 == count ? size : line_start(index + 1);
  return piece;
}

std::size_t lines_before_piece(const std::string& path, const TablePiece& piece) {
  std::ifstream file = open_piece_file(path);
  file.seekg(static_cast<std::streamoff>(piece.header_end));
  std::vector<char> buffer(1u << 16);
  std::size_t lines = 0;
  for (std::uint64_t left = piece.begin - piece.header_end; left > 0;) {
    const auto want = static_cast<std::streamsize>(std::min<std::uint64_t>(left, buffer.size()));
    file.read(buffer.data(), want);
    const std::streamsize got = file.gcount();
    if (got <= 0) throw table_error(Kind::input_output, path, 0, 0, "read error (the file shrank?)");
    lines += static_cast<std::size_t>(std::count(buffer.data(), buffer.data() + got, '\n'));
    left -= static_cast<std::uint64_t>(got);
  }
  return lines;
}

Table read_table_piece_blocks(const std::string& path, const TablePiece& piece, std::size_t lines_before,
                              const TableReadOptions& options, std::size_t block_rows,
                              const std::function<void(Table&)>& on_block) {
  check_block_options(options, block_rows);
  PieceBuffer buffer(path, {{0, piece.header_end}, {piece.begin, piece.end}});
  std::istream in(&buffer);
  in.exceptions(std::ios::badbit);  // the buffer's read errors reach the caller
  return read_any(in, path, options, block_rows, &on_block, lines_before);
}

std::string indicator_name(const std::string& column, const std::string& level) {
  return column + "=" + level;
}

bool is_missing_cell(std::string_view cell, const std::vector<std::string>& extra) {
  if (cell.empty()) return true;
  if (cell.size() <= 3) {  // NA, N/A, NaN and "." in any letter case
    std::string lower(cell);
    for (char& c : lower) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
    if (lower == "na" || lower == "n/a" || lower == "nan" || lower == ".") return true;
  }
  return std::find(extra.begin(), extra.end(), cell) != extra.end();
}

std::string indicator_note(const IndicatorColumn& column) {
  std::string list;
  for (const auto& name : column.names) list += (list.empty() ? "" : ", ") + name;
  std::string note = "text column " + column.source + " expanded into indicator columns: " +
                     (list.empty() ? "none" : list);
  if (!column.reference.empty())
    note += " (reference level \"" + column.reference +
            "\", the first in byte order, left out: the intercept stands for it)";
  else
    note += " (every level has a column: without an intercept none is left out)";
  return note;
}

// ---- Column roles (io/roles.hpp) ----

namespace {

bool listed(const std::vector<std::string>& list, const std::string& name) {
  return std::find(list.begin(), list.end(), name) != list.end();
}

void append(std::vector<std::string>& to, const std::vector<std::string>& from) {
  to.insert(to.end(), from.begin(), from.end());
}

std::string conflict_field(role_conflict::Rule rule) {
  switch (rule) {
    case role_conflict::Rule::weights_as_response:
      return "weights";
    case role_conflict::Rule::response_in_use:
      return "use";
    default:
      return "drop";
  }
}

std::string conflict_message(role_conflict::Rule rule, const std::string& column) {
  const std::string quoted = "\"" + column + "\"";
  switch (rule) {
    case role_conflict::Rule::response_dropped:
    case role_conflict::Rule::response_in_use:
      return "the response " + quoted + " is also listed here";
    case role_conflict::Rule::weights_as_response:
      return "the weights column cannot be the response (" + quoted + ")";
    case role_conflict::Rule::needed_but_dropped:
      break;
  }
  return quoted +
         " is listed here but is needed (as the weights, a referenced column or a column to use)";
}

// Position of a column the roles need as numbers; `role` names it in the
// message ("the response", ...). The reader's lists tell why it is absent.
Index numeric_column(const Table& table, const std::string& name, const std::string& role) {
  const Index j = table.find(name);
  if (j >= 0) return j;
  const std::string quoted = "\"" + name + "\"";
  if (listed(table.text_columns, name))
    throw invalid_data(table.source + ": " + role + " " + quoted + " is a text column" +
                       (listed(table.decimal_comma_columns, name)
                            ? " (its cells read as numbers written with a decimal comma: read the "
                              "table with --decimal comma)"
                            : ""));
  for (const auto& made : table.indicator_columns)
    if (made.source == name)
      throw invalid_data(table.source + ": " + role + " " + quoted +
                         " is a text column expanded into indicator columns");
  if (listed(table.skipped_columns, name))
    throw invalid_data(table.source + ": " + role + " " + quoted +
                       " was not read (the read options skipped it)");
  throw invalid_data(table.source + ": no column named " + quoted + " (" + role + ")");
}

}  // namespace

role_conflict::role_conflict(Rule rule, const std::string& column)
    : invalid_option(conflict_field(rule), conflict_message(rule, column)),
      rule_(rule),
      column_(column) {}

void ColumnRoles::validate() const {
  using Rule = role_conflict::Rule;
  if (listed(drop, response)) throw role_conflict(Rule::response_dropped, response);
  if (!weights.empty() && weights == response)
    throw role_conflict(Rule::weights_as_response, response);
  if (listed(use, response)) throw role_conflict(Rule::response_in_use, response);
  // The columns needed besides the response, in the order validate() documents.
  std::vector<std::string> needed;
  if (!weights.empty()) needed.push_back(weights);
  append(needed, referenced);
  append(needed, use);
  for (const auto& name : needed)
    if (listed(drop, name)) throw role_conflict(Rule::needed_but_dropped, name);
}

TableReadOptions ColumnRoles::read_options(TableReadOptions base) const {
  validate();
  // The order of each list is kept: the reader reports the first unknown
  // name of `only`, then of `required`.
  base.required.push_back(response);
  if (!weights.empty()) base.required.push_back(weights);
  append(base.required, referenced);
  append(base.required, use);
  if (!use.empty()) {
    append(base.only, use);
    base.only.push_back(response);
    if (!weights.empty()) base.only.push_back(weights);
  }
  append(base.skip, drop);
  return base;
}

ColumnAssignment assign_columns(const Table& table, const ColumnRoles& roles) {
  roles.validate();
  ColumnAssignment out;
  out.response = numeric_column(table, roles.response, "the response");
  if (!roles.weights.empty()) out.weights = numeric_column(table, roles.weights, "the weights");
  for (const auto& name : roles.referenced) numeric_column(table, name, "the referenced column");
  // A column to use may be a text column expanded into indicators: it
  // stands for all of its indicator columns.
  std::vector<std::string> use;
  for (const auto& name : roles.use) {
    const auto made = std::find_if(table.indicator_columns.begin(), table.indicator_columns.end(),
                                   [&](const IndicatorColumn& c) { return c.source == name; });
    if (made != table.indicator_columns.end()) {
      append(use, made->names);
      continue;
    }
    numeric_column(table, name, "the column to use");
    use.push_back(name);
  }
  for (const auto& name : roles.drop)
    if (table.find(name) < 0 && !listed(table.text_columns, name) &&
        !listed(table.skipped_columns, name) &&
        std::none_of(table.indicator_columns.begin(), table.indicator_columns.end(),
                     [&](const IndicatorColumn& c) { return c.source == name; }))
      throw invalid_data(table.source + ": no column named \"" + name + "\" (listed in drop)");
  // The rule: numeric columns in table order, less the response and the
  // weights; with `use`, only those listed there or referenced; never a
  // dropped one. Sets keep it linear in the width of wide tables.
  const std::unordered_set<std::string> chosen = [&] {
    std::unordered_set<std::string> s(use.begin(), use.end());
    s.insert(roles.referenced.begin(), roles.referenced.end());
    return s;
  }();
  const std::unordered_set<std::string> dropped(roles.drop.begin(), roles.drop.end());
  for (std::size_t j = 0; j < table.names.size(); ++j) {
    const std::string& name = table.names[j];
    if (name == roles.response || name == roles.weights) continue;
    if ((!roles.use.empty() && chosen.count(name) == 0) || dropped.count(name) != 0) {
      out.left_out.push_back(name);
      continue;
    }
    out.predictors.push_back(static_cast<Index>(j));
    out.names.push_back(name);
  }
  if (out.predictors.empty()) {
    std::string hint;
    for (const auto& name : table.decimal_comma_columns)
      hint += (hint.empty() ? "" : ", ") + ("\"" + name + "\"");
    if (!hint.empty())
      hint = " (the text columns " + hint +
             " hold numbers written with a decimal comma: read the table with --decimal comma)";
    throw invalid_data(table.source + ": no numeric predictor columns besides the response" + hint);
  }
  return out;
}

void check_assignment(const Table& table, const ColumnAssignment& columns) {
  if (columns.names.size() != columns.predictors.size())
    throw invalid_query("split_table: the assignment has " +
                        std::to_string(columns.predictors.size()) + " predictors but " +
                        std::to_string(columns.names.size()) + " names");
  std::vector<char> claimed(table.columns.size(), 0);
  auto claim = [&](Index j, const char* role) {
    const std::size_t k = table.checked_column(j, "split_table");
    const std::string which = "split_table: column \"" + table.names[k] + "\" (" + role + ")";
    if (table.columns[k].size() != table.rows) throw invalid_query(which + " was already taken");
    if (claimed[k]++ != 0) throw invalid_query(which + " plays two roles");
  };
  claim(columns.response, "the response");
  if (columns.weights >= 0) claim(columns.weights, "the weights");
  for (Index j : columns.predictors) claim(j, "a predictor");
}

}  // namespace knotpath::io
