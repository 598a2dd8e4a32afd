// Streaming reader of delimited text tables; see include/knotpath/io/table.hpp.
// Also the roles of its columns (include/knotpath/io/roles.hpp): validation,
// read options and the rule that chooses the predictors.

#include "knotpath/io/table.hpp"
#include "knotpath/io/roles.hpp"

#include "table_records.hpp"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdlib>
#include <cstring>
#include <fstream>
#include <iostream>
#include <set>
#include <unordered_map>
#include <unordered_set>
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

enum class Parse { number, missing, text, not_finite, overflow };

// Parses a decimal number; the whole (trimmed) cell must be consumed.
Parse parse_number(std::string_view cell, double& value) {
  if (cell.empty() || cell == "NA") return Parse::missing;
  std::string_view body = cell;
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

enum class ColumnState { skipped, pending, numeric, text };

using Kind = table_error::Kind;
using detail::CharSource;
using detail::Field;
using detail::RecordReader;

// The delimiter: the one asked for, else detected from the header row
// (after skipping a UTF-8 byte order mark).
char choose_delimiter(CharSource& chars, const TableReadOptions& options) {
  if (options.delimiter != 0 && options.delimiter != ',' && options.delimiter != ';' &&
      options.delimiter != '\t')
    throw invalid_option("delimiter", "must be ',', ';' or a tab");
  {  // UTF-8 byte order mark
    auto [data, size] = chars.lookahead(3);
    if (size >= 3 && std::memcmp(data, "\xEF\xBB\xBF", 3) == 0) chars.skip(3);
  }
  if (options.delimiter != 0) return options.delimiter;
  auto [data, size] = chars.lookahead(1u << 16);
  return detect_delimiter(std::string_view(data, size));
}

// The header row: column names (trimmed, non-empty, distinct) and where each is.
struct Header {
  std::string source;
  std::size_t line = 1;  // physical line of the header row
  std::vector<std::string> names;
  std::unordered_map<std::string, std::size_t> position;  // name -> position

  std::size_t width() const { return names.size(); }

  // Position of a column the options name; an unknown name is an error
  // listing (the first 20 of) the header.
  std::size_t find(const std::string& name) const {
    if (const auto at = position.find(name); at != position.end()) return at->second;
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

// Which columns are read: state per header position, and whether the
// options asked for it (required or listed in `only`).
struct ColumnPlan {
  std::vector<ColumnState> state;
  std::vector<char> asked;
};

ColumnPlan select_columns(const Header& header, const TableReadOptions& options) {
  const std::size_t width = header.width();
  ColumnPlan plan;
  plan.state.assign(width, options.only.empty() ? ColumnState::pending : ColumnState::skipped);
  plan.asked.assign(width, 0);
  for (const auto& name : options.only) {
    const std::size_t j = header.find(name);
    plan.state[j] = ColumnState::pending;
    plan.asked[j] = 1;
  }
  for (const auto& name : options.required) {
    const std::size_t j = header.find(name);
    plan.state[j] = ColumnState::pending;
    plan.asked[j] = 1;
  }
  if (options.keep_row_keys && !options.key_column.empty()) header.find(options.key_column);  // must exist
  for (const auto& name : options.skip) {
    const std::size_t j = header.find(name);
    if (std::find(options.required.begin(), options.required.end(), name) == options.required.end())
      plan.state[j] = ColumnState::skipped;
  }
  return plan;
}

// Reads the data rows into a table: types each pending column by its first
// data cell, checks every cell read, drops or refuses rows with missing cells.
class RowReader {
 public:
  RowReader(const Header& header, ColumnPlan plan, const TableReadOptions& options, Table& table)
      : header_(header),
        plan_(std::move(plan)),
        options_(options),
        table_(table),
        slot_(header.width(), 0),
        row_value_(header.width(), 0.0),
        row_has_(header.width(), 0) {}

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
      ++table_.rows;
      if (options_.progress && (table_.rows & 0xFFFF) == 0)
        options_.progress(chars.consumed(), table_.rows);
    }
    return seen;
  }

  // Header position of each numeric column, in the order they were typed.
  const std::vector<std::size_t>& slot_position() const { return slot_position_; }

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

  // Cell j of a row; true when it is missing and rows with missing cells are dropped.
  bool parse_cell(std::string_view cell, std::size_t cell_line, std::size_t j) {
    const std::string& name = header_.names[j];
    auto refuse = [&](const std::string& message) {
      throw table_error(Kind::content, header_.source, cell_line, j + 1, message);
    };
    double value = 0;
    switch (parse_number(cell, value)) {
      case Parse::number:
        row_value_[j] = value;
        row_has_[j] = 1;
        return false;
      case Parse::missing:
        if (options_.missing == MissingCells::error)
          refuse(std::string(cell.empty() ? "empty cell" : "missing value \"NA\"") + " in column " +
                 quoted_name(name) + " (use --missing drop to drop incomplete rows)");
        return true;
      case Parse::not_finite:
        refuse("cell \"" + shown(cell) + "\" in column " + quoted_name(name) +
               " is not a finite number (NaN and infinite values are not accepted)");
        return false;
      case Parse::overflow:
        refuse("cell \"" + shown(cell) + "\" in column " + quoted_name(name) +
               " is too large for a double");
        return false;
      case Parse::text:
        if (plan_.state[j] != ColumnState::pending)
          refuse("cell \"" + shown(cell) + "\" in numeric column " + quoted_name(name) +
                 " is not a number");
        if (plan_.asked[j])
          refuse("column " + quoted_name(name) + " is a text column (its first data cell is \"" +
                 shown(cell) + "\") but it was asked for as a number");
        plan_.state[j] = ColumnState::text;
        table_.text_columns.push_back(name);
        return false;
    }
    return false;
  }

  // Appends the parsed values of a kept row; a pending column becomes numeric
  // at its first value.
  void keep_row(const std::vector<Field>& fields) {
    for (std::size_t j = 0; j < header_.width(); ++j) {
      if (!row_has_[j]) continue;
      if (plan_.state[j] == ColumnState::pending) {
        plan_.state[j] = ColumnState::numeric;
        slot_[j] = table_.columns.size();
        slot_position_.push_back(j);
        table_.columns.emplace_back();
        table_.names.push_back(header_.names[j]);
        if (options_.keep_decimal_text) table_.decimal_text.emplace_back();
      }
      table_.columns[slot_[j]].push_back(row_value_[j]);
      if (options_.keep_decimal_text)
        table_.decimal_text[slot_[j]].emplace_back(trim(fields[j].text));
    }
    if (options_.keep_row_keys) keep_key(fields);
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

  const Header& header_;
  ColumnPlan plan_;
  const TableReadOptions& options_;
  Table& table_;
  std::vector<std::size_t> slot_;           // numeric column index once typed
  std::vector<std::size_t> slot_position_;  // header position of each slot
  std::vector<double> row_value_;
  std::vector<char> row_has_;
  bool key_chosen_ = false;
  std::size_t key_position_ = static_cast<std::size_t>(-1);  // header position of the key column
};

// The table with its numeric columns in file order (discovery order can
// differ when rows were dropped before a column's first value).
Table in_file_order(Table& table, const std::vector<std::size_t>& slot_position,
                    bool keep_decimal_text) {
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
    if (keep_decimal_text) sorted.decimal_text.push_back(std::move(table.decimal_text[k]));
  }
  sorted.text_columns = std::move(table.text_columns);
  sorted.key_name = std::move(table.key_name);
  sorted.keys = std::move(table.keys);
  sorted.skipped_columns = std::move(table.skipped_columns);
  sorted.rows = table.rows;
  sorted.dropped_rows = table.dropped_rows;
  sorted.last_line = table.last_line;
  return sorted;
}

}  // namespace

Table read_table(std::istream& in, const std::string& source, const TableReadOptions& options) {
  CharSource chars(in);
  Table table;
  table.source = source;
  table.delimiter = choose_delimiter(chars, options);
  RecordReader reader(chars, source, table.delimiter);
  reader.keep_at_most(options.max_columns);
  std::vector<Field> fields;
  const Header header = read_header(reader, fields, source, options);
  reader.keep_at_most(header.width());
  ColumnPlan plan = select_columns(header, options);
  for (std::size_t j = 0; j < header.width(); ++j)
    if (plan.state[j] == ColumnState::skipped) table.skipped_columns.push_back(header.names[j]);

  RowReader rows(header, std::move(plan), options, table);
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
  Table sorted = in_file_order(table, rows.slot_position(), options.keep_decimal_text);
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
    throw invalid_data(table.source + ": " + role + " " + quoted + " is a text column");
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
  for (const auto& name : roles.use) numeric_column(table, name, "the column to use");
  for (const auto& name : roles.drop)
    if (table.find(name) < 0 && !listed(table.text_columns, name) &&
        !listed(table.skipped_columns, name))
      throw invalid_data(table.source + ": no column named \"" + name + "\" (listed in drop)");
  // The rule: numeric columns in table order, less the response and the
  // weights; with `use`, only those listed there or referenced; never a
  // dropped one. Sets keep it linear in the width of wide tables.
  const std::unordered_set<std::string> chosen = [&] {
    std::unordered_set<std::string> s(roles.use.begin(), roles.use.end());
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
  if (out.predictors.empty())
    throw invalid_data(table.source + ": no numeric predictor columns besides the response");
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
