// Reading a table for the program and tracing it: the model options
// checked and turned into the reader's options and the trace options, the
// columns' roles, and the two ways of reading (load_table and trace_table):
// the whole table in memory, or a block of rows at a time into the
// sufficient statistics (--read, issue of tables larger than memory).

#include <algorithm>
#include <functional>
#include <cmath>
#include <memory>
#include <optional>
#include <string>
#include <type_traits>
#include <unordered_set>
#include <utility>
#include <vector>

#include <fmt/format.h>

#include <nlohmann/json.hpp>

#include <knotpath/shards.hpp>
#include <knotpath/trace.hpp>

#include "cli.hpp"
#include "ranks.hpp"
#include "typed_trace.hpp"

namespace knotpath::cli {

namespace {

bool contains(const std::vector<std::string>& list, const std::string& name) {
  return std::find(list.begin(), list.end(), name) != list.end();
}


// The model arguments with every list option's values split into items
// (split_list, the one quoting rule).
ModelArgs with_lists_split(const ModelArgs& given) {
  ModelArgs args = given;
  args.penalty_scales = split_list(given.penalty_scales, "--penalty-scale");
  args.unpenalized = split_list(given.unpenalized, "--unpenalized");
  args.nonnegative = split_list(given.nonnegative, "--nonnegative", &args.nonnegative_all);
  args.nonpositive = split_list(given.nonpositive, "--nonpositive", &args.nonpositive_all);
  args.use = split_list(given.use, "--use");
  args.drop = split_list(given.drop, "--drop");
  args.indicators = split_list(given.indicators, "--indicators", &args.indicators_all);
  return args;
}

// Contradictions of --indicators with the other column options.
void check_indicator_list(const ModelArgs& args) {
  if (args.indicators_all && !args.indicators.empty())
    throw failure(exit_usage, "\"all\" in --indicators cannot be combined with names");
  for (const auto& name : args.indicators) {
    if (name == args.response)
      throw failure(exit_usage, "the response \"" + name + "\" cannot be expanded (--indicators)");
    if (!args.weights.empty() && name == args.weights)
      throw failure(exit_usage,
                    "the weights column \"" + name + "\" cannot be expanded (--indicators)");
    if (contains(args.drop, name))
      throw failure(exit_usage, "\"" + name + "\" is listed in both --drop and --indicators");
  }
}

// A --penalty-scale item: the predictor's name and its scale.
using ScaleItem = std::pair<std::string, double>;

ScaleItem parse_scale(const std::string& item) {
  const auto eq = item.rfind('=');
  if (eq == std::string::npos || eq == 0 || eq + 1 == item.size())
    throw failure(exit_usage, "--penalty-scale expects NAME=VALUE, got \"" + item + "\"");
  const std::string name = item.substr(0, eq), text = item.substr(eq + 1);
  double value = 0;
  try {
    std::size_t used = 0;
    value = std::stod(text, &used);
    if (used != text.size()) throw std::invalid_argument(text);
  } catch (const std::exception&) {
    throw failure(exit_usage, "--penalty-scale " + item + ": \"" + text + "\" is not a number");
  }
  if (!std::isfinite(value) || !(value > 0))
    throw failure(exit_usage, "--penalty-scale " + item +
                                  ": the scale must be finite and > 0 (--unpenalized fits a "
                                  "predictor without penalty, --drop leaves it out)");
  return {name, value};
}

// The roles of the table's columns the model options give: the names the
// penalty scales, unpenalized and sign lists refer to are the roles' `referenced`.
io::ColumnRoles column_roles(const ModelArgs& args, const std::vector<ScaleItem>& scales) {
  io::ColumnRoles roles;
  roles.response = args.response;
  roles.weights = args.weights;
  roles.use = args.use;
  roles.drop = args.drop;
  for (const auto& [name, value] : scales) roles.referenced.push_back(name);
  for (const auto& name : args.unpenalized) roles.referenced.push_back(name);
  for (const auto& name : args.nonnegative) roles.referenced.push_back(name);
  for (const auto& name : args.nonpositive) roles.referenced.push_back(name);
  return roles;
}

// The program's wording of a contradiction among the column roles.
std::string role_message(const io::role_conflict& e) {
  const std::string& name = e.column();
  switch (e.rule()) {
    case io::role_conflict::Rule::response_dropped:
      return "the response \"" + name + "\" is also listed in --drop";
    case io::role_conflict::Rule::weights_as_response:
      return "the weights column cannot be the response";
    case io::role_conflict::Rule::response_in_use:
      return "the response \"" + name + "\" is also listed in --use";
    case io::role_conflict::Rule::needed_but_dropped:
      break;
  }
  return "\"" + name + "\" is listed in --drop and used by another option";
}

// Contradictions among --nonnegative and --nonpositive.
void check_sign_lists(const ModelArgs& args) {
  for (const auto& name : args.nonnegative)
    if (contains(args.nonpositive, name))
      throw failure(exit_usage,
                    "\"" + name + "\" is listed in both --nonnegative and --nonpositive");
  const bool all_nonnegative = args.nonnegative_all, all_nonpositive = args.nonpositive_all;
  if ((all_nonnegative && (!args.nonnegative.empty() || all_nonpositive || !args.nonpositive.empty())) ||
      (all_nonpositive && (!args.nonpositive.empty() || !args.nonnegative.empty())))
    throw failure(exit_usage,
                  "\"all\" in --nonnegative/--nonpositive cannot be combined with names");
}

// Contradictions among the model options that need no table to see. The
// sign lists are checked after the roles' first three rules and before a
// needed column found in --drop, the order the program has always had, so
// that a command line with two faults keeps reporting the same one.
void check_model_options(const io::ColumnRoles& roles, const ModelArgs& args) {
  try {
    roles.validate();
  } catch (const io::role_conflict& e) {
    if (e.rule() == io::role_conflict::Rule::needed_but_dropped) check_sign_lists(args);
    throw failure(exit_usage, role_message(e));
  }
  check_sign_lists(args);
}

// How to read the table: the roles name the columns that must be numeric
// (checked by the reader) and choose, with --use and --drop, the ones read.
io::TableReadOptions read_options(const ModelArgs& args, const io::ColumnRoles& roles,
                                  bool keep_decimal_text) {
  io::TableReadOptions read = cell_read_options(args.cells);
  read.missing = args.missing == "drop" ? io::MissingCells::drop : io::MissingCells::error;
  if (args.indicators_all)
    read.indicators.all_text = true;
  else
    read.indicators.columns = args.indicators;
  read.indicators.max_levels = args.max_levels;
  read.indicators.leave_out_reference = !args.no_intercept;
  read.max_columns = args.max_columns;
  read.keep_decimal_text = keep_decimal_text;
  return roles.read_options(std::move(read));
}

// Starts the loaded table's progress line and names its source; returns
// the reader's options reporting on that line.
io::TableReadOptions start_reading(LoadedTable& out, const std::string& table_path,
                                   io::TableReadOptions read, const Global& global) {
  out.progress = std::make_shared<Progress>(!global.quiet);
  const std::string shown_name = table_path == "-" ? "<stdin>" : table_path;
  out.shown_name = shown_name;
  out.progress->status("reading " + shown_name);
  read.progress = [progress = out.progress, shown_name](std::size_t bytes, std::size_t rows) {
    progress->status(fmt::format("reading {}: {:.1f} MB, {} rows", shown_name,
                                 static_cast<double>(bytes) / 1e6, rows));
  };
  return read;
}

// What the reports say about the data, and the columns' roles: the
// predictors are chosen by the library's rule (io::assign_columns).
// The columns' roles in a table (or its first block), a refusal of the
// library becoming a bad-input failure.
io::ColumnAssignment assigned_columns(const io::Table& table, const io::ColumnRoles& roles) {
  try {
    return io::assign_columns(table, roles);
  } catch (const invalid_data& e) {
    throw failure(exit_bad_input, e.detail());
  }
}

void describe_columns(LoadedTable& out, const io::ColumnRoles& roles) {
  const io::Table& table = out.table;
  out.columns = assigned_columns(table, roles);
  io::RunContext& context = out.context;
  context.source = table.source;
  context.response = roles.response;
  context.rows_read = table.rows;
  context.rows_dropped = table.dropped_rows;
  context.text_columns = table.text_columns;
  context.unused_columns = table.skipped_columns;
  context.program_version = version();
  if (!roles.weights.empty()) context.weights = roles.weights;
  context.predictor_names = out.columns.names;
  for (const auto& made : table.indicator_columns)
    context.table_notes.push_back(io::indicator_note(made));
  context.indicator_columns = table.indicator_columns;
  if (!table.decimal_comma_columns.empty()) {
    std::string list;
    for (const auto& name : table.decimal_comma_columns) list += (list.empty() ? "" : ", ") + name;
    context.table_notes.push_back("text columns that read as numbers written with a decimal "
                                  "comma (use them with --decimal comma): " +
                                  list);
  }
}

// The trace options of the model arguments for these predictors, validated.
TraceOptions trace_options(const ModelArgs& args, const std::vector<ScaleItem>& scales,
                           const std::vector<std::string>& predictor_names) {
  const std::size_t p = predictor_names.size();
  auto predictor_index = [&](const std::string& name) {
    for (std::size_t j = 0; j < p; ++j)
      if (predictor_names[j] == name) return j;
    throw failure(exit_usage,
                  "\"" + name + "\" is not a predictor (it is the response or the weights)");
  };
  TraceOptions options;
  options.variant = args.variant == to_string(Variant::least_angle) ? Variant::least_angle : Variant::lasso;
  options.with_intercept = !args.no_intercept;
  options.standardize = !args.no_standardize;
  options.ridge = args.ridge;
  options.max_knots = args.max_knots;
  options.min_penalty = args.min_penalty;
  options.max_active = args.max_active;
  options.threads = args.threads;
  if (!scales.empty()) {
    options.penalty_scales.assign(p, 1.0);
    for (const auto& [name, value] : scales) options.penalty_scales[predictor_index(name)] = value;
  }
  for (const auto& name : args.unpenalized) {
    const std::size_t j = predictor_index(name);
    if (std::find(options.unpenalized.begin(), options.unpenalized.end(), j) ==
        options.unpenalized.end())
      options.unpenalized.push_back(j);
    if (!scales.empty() && options.penalty_scales[j] != 1.0)
      throw failure(exit_usage, "\"" + name + "\" is unpenalized; it cannot also have a penalty scale");
  }
  if (args.nonnegative_all) {
    options.sign_constraints = {SignConstraint::nonnegative};
  } else if (args.nonpositive_all) {
    options.sign_constraints = {SignConstraint::nonpositive};
  } else if (!args.nonnegative.empty() || !args.nonpositive.empty()) {
    options.sign_constraints.assign(p, SignConstraint::none);
    for (const auto& name : args.nonnegative)
      options.sign_constraints[predictor_index(name)] = SignConstraint::nonnegative;
    for (const auto& name : args.nonpositive)
      options.sign_constraints[predictor_index(name)] = SignConstraint::nonpositive;
  }
  try {
    options.validate(p);
  } catch (const invalid_option& e) {
    throw failure(exit_usage, e.what());
  }
  return options;
}

// The rows of positive weight and whether their responses are all equal:
// what refuse_nothing_to_trace reads, gathered a piece of the table at a time.
struct ResponseSpread {
  Index used = 0;
  double first = 0;
  bool constant = true;
  bool weighted = false;

  void add(const Vector<double>& y, const Vector<double>& w) {
    weighted = w.size() != 0;
    for (Index i = 0; i < y.size(); ++i) {
      if (weighted && !(w(i) > 0)) continue;
      if (used++ == 0)
        first = y(i);
      else if (y(i) != first)
        constant = false;
    }
  }

  // Adds the spread of rows that follow these (the next shard).
  void merge(const ResponseSpread& other) {
    weighted = weighted || other.weighted;
    if (other.used == 0) return;
    if (used == 0) {
      first = other.first;
      constant = other.constant;
    } else {
      constant = constant && other.constant && other.first == first;
    }
    used += other.used;
  }
};

// Data with nothing to trace are refused (the library returns a one-knot
// path for them; a user of the program almost surely gave the wrong table).
void refuse_nothing_to_trace(const ResponseSpread& spread, const TraceOptions& options,
                             const std::string& shown_name, const std::string& response) {
  if (!options.with_intercept) return;
  if (spread.used == 1)
    throw failure(exit_bad_input, shown_name + ": only one row" +
                                      (spread.weighted ? " has a positive weight" : " of data") +
                                      "; with an intercept every column is constant there, so "
                                      "there is no path to trace (at least 2 rows are needed)");
  if (spread.used > 1 && spread.constant)
    throw failure(exit_bad_input, fmt::format("{}: the response \"{}\" is constant (every row "
                                              "holds {:.17g}); there is no path to trace",
                                              shown_name, response, spread.first));
}

// A path no predictor can enter is refused, naming (up to ten of) the
// predictors left out and why.
void refuse_empty_path(const Path<double>& path, const io::RunContext& context,
                       const std::string& shown_name) {
  if (!path.preparation().columns.empty()) return;
  std::string list;
  const auto& excluded = path.excluded();
  for (std::size_t k = 0; k < excluded.size() && k < 10; ++k) {
    const auto& ex = excluded[k];
    list += fmt::format("{}\"{}\" ({})", list.empty() ? "" : ", ",
                        context.predictor_names[static_cast<std::size_t>(ex.predictor)], ex.reason);
  }
  if (excluded.size() > 10) list += fmt::format(" and {} more", excluded.size() - 10);
  throw failure(exit_bad_input,
                shown_name + ": no predictor can enter the path; every one was left out: " + list);
}

// The traced table of a loaded one: its path and the reports' context,
// with a path no predictor can enter refused.
TracedTable finish_trace(LoadedTable& loaded, Path<double> path) {
  TracedTable out;
  out.path = std::move(path);
  out.context = std::move(loaded.context);
  refuse_empty_path(out.path, out.context, loaded.shown_name);
  return out;
}

// The model arguments prepared for reading one table: the lists split, the
// penalty scales parsed, the columns' roles and the reader's options, with
// every contradiction that needs no table refused.
struct ReadPlan {
  ModelArgs args;
  std::vector<ScaleItem> scales;
  io::ColumnRoles roles;
  io::TableReadOptions read;
};

ReadPlan plan_reading(const ModelArgs& given, bool keep_decimal_text) {
  ReadPlan plan;
  plan.args = with_lists_split(given);
  check_indicator_list(plan.args);
  for (const auto& item : plan.args.penalty_scales) plan.scales.push_back(parse_scale(item));
  plan.roles = column_roles(plan.args, plan.scales);
  check_model_options(plan.roles, plan.args);
  plan.read = read_options(plan.args, plan.roles, keep_decimal_text);
  return plan;
}

// load_table() once the arguments are planned: the whole table in memory.
LoadedTable load_planned(const std::string& table_path, const ReadPlan& plan, const Global& global) {
  LoadedTable out;
  out.table = io::read_table(table_path, start_reading(out, table_path, plan.read, global));
  describe_columns(out, plan.roles);
  out.options = trace_options(plan.args, plan.scales, out.context.predictor_names);
  return out;
}

// Whether --read (with the options that rule blocks out) reads the table
// whole. Indicators need every level of a text column before the first row
// can be coded, so they are read whole; --read blocks with them is refused.
bool reads_whole(const ModelArgs& args) {
  const bool indicators = args.indicators_all || !args.indicators.empty();
  if (args.reading == "blocks" && indicators)
    throw failure(exit_usage,
                  "--read blocks cannot expand --indicators: a text column's levels are known only "
                  "after its last row (use --read whole)");
  return args.reading == "whole" || indicators;
}

// One block of the table split by the columns' roles, in an arithmetic,
// with the place of its rows in the file (data_message names a bad row by
// its line).
template <class Scalar>
struct Piece {
  TableData<Scalar> data;
  io::RowLines lines;  // counted from the table's first kept row
};

// A table read a block at a time (read_table_blocks) in one arithmetic.
// Each block is split by the roles (the assignment of the first block:
// every block has the same columns; double takes the reader's values, other
// arithmetics parse the block's decimal text exactly) and either added to
// the sufficient statistics (the stream) or kept. `--read blocks` streams
// from the first block; `--read auto` keeps the blocks until the rows read
// make the trace take the Gram route at this and every larger row count
// (gram_for_more_rows) and another block follows, then streams: so a table
// that streams gives the very path of reading it whole, and a table that
// ends sooner (one block, or rows too few to qualify) or never qualifies is
// traced from its kept rows in memory, as `--read whole` would trace it.
// Several readings may share one loaded table and take the same blocks
// (verify: its high precision first, as it parses the text, then double,
// which moves the values out).
template <class Scalar>
class BlockReading {
 public:
  BlockReading(const ReadPlan& plan, bool forced, LoadedTable& loaded)
      : plan_(plan), forced_(forced), loaded_(loaded) {}

  // The reader's callback: one block of rows.
  void take(io::Table& block) {
    if (!columns_) begin(block);
    Piece<Scalar> piece;
    piece.data = table_data<Scalar>(block, *columns_, loaded_.shown_name);
    piece.lines = block.row_lines;
    for (auto& mark : piece.lines.marks) mark.first += block.first_row;
    if constexpr (std::is_same_v<Scalar, double>) spread_.add(piece.data.y, piece.data.w);
    // The rows before this block qualify and more follow: stream from here.
    if (!stream_ && (forced_ || (rows_ > 0 && gram_for_more_rows<Scalar>(static_cast<Index>(rows_), predictors(),
                                                                          loaded_.options)))) {
      stream_.emplace(predictors(), columns_->weights >= 0);
    }
    rows_ += block.rows;
    kept_.push_back(std::move(piece));
    if (stream_) {
      for (Piece<Scalar>& kept : kept_) add_to_stream(kept);
      kept_.clear();
    }
  }

  // After the last block: the path, from the statistics when the table
  // streamed, else from the kept rows in memory. `loaded.table` holds the
  // reader's table without values (names, counts, every row's line).
  Path<Scalar> trace() {
    const std::string in = std::is_same_v<Scalar, double> ? "" : " in " + io::arithmetic_name<Scalar>();
    if (!stream_) return trace_kept(in);
    loaded_.context.block_rows = plan_.args.block_rows;
    const SufficientStatistics<Scalar> statistics = finish_stream();
    return trace_with_messages(
        loaded_,
        fmt::format("tracing the path{} from the statistics ({} rows, {} predictors)", in, rows_, predictors()),
        [&] { return detail::trace_rows_statistics(statistics, static_cast<Index>(rows_), loaded_.options); });
  }

  // The statistics of the rows streamed (--read blocks: every row); a bad
  // value found at the end is named as the whole reading names it.
  SufficientStatistics<Scalar> finish_stream() {
    SufficientStatistics<Scalar> statistics =
        with_data_messages(loaded_.table.row_lines, [&] { return stream_->finish(); });
    stream_.reset();
    return statistics;
  }

  // The predictors' names (after the first block).
  const std::vector<std::string>& predictor_names() const { return columns_->names; }
  // Kept rows read, and (double) their responses' spread.
  std::size_t rows() const { return rows_; }
  const ResponseSpread& spread() const { return spread_; }

 private:
  Index predictors() const { return static_cast<Index>(columns_->predictors.size()); }

  // The first block names the columns: their roles and the trace options.
  void begin(const io::Table& block) {
    columns_ = assigned_columns(block, plan_.roles);
    loaded_.options = trace_options(plan_.args, plan_.scales, columns_->names);
    loaded_.context.predictor_names = columns_->names;
  }

  // Runs f, naming a bad row of the data by its line in the file.
  template <class F>
  auto with_data_messages(const io::RowLines& lines, F&& f) -> decltype(f()) {
    return cli::with_data_messages(loaded_.shown_name, columns_->names, lines, std::forward<F>(f));
  }

  void add_to_stream(Piece<Scalar>& piece) {
    with_data_messages(piece.lines, [&] {
      stream_->add(piece.data.x, piece.data.y, piece.data.w);
      return 0;
    });
  }

  // The kept rows joined into one design, each piece freed once copied.
  Path<Scalar> trace_kept(const std::string& in) {
    TableData<Scalar> d;
    const bool weighted = columns_->weights >= 0;
    d.x.resize(static_cast<Index>(rows_), predictors());
    d.y.resize(static_cast<Index>(rows_));
    if (weighted) d.w.resize(static_cast<Index>(rows_));
    Index at = 0;
    for (Piece<Scalar>& piece : kept_) {
      const Index m = piece.data.y.size();
      d.x.middleRows(at, m) = piece.data.x;
      d.y.segment(at, m) = piece.data.y;
      if (weighted) d.w.segment(at, m) = piece.data.w;
      at += m;
      piece = Piece<Scalar>();
    }
    kept_.clear();
    return trace_table_data(loaded_, d,
                            fmt::format("tracing the path{} ({} rows, {} predictors)", in, d.x.rows(), d.x.cols()));
  }

  const ReadPlan& plan_;
  const bool forced_;
  LoadedTable& loaded_;
  std::optional<io::ColumnAssignment> columns_;
  std::vector<Piece<Scalar>> kept_;
  std::optional<StatisticsAccumulator<Scalar>> stream_;
  ResponseSpread spread_;
  std::size_t rows_ = 0;
};

// trace_table() reading the table a block at a time (BlockReading).
TracedTable trace_in_blocks(const std::string& table_path, const ReadPlan& plan, const Global& global) {
  LoadedTable loaded;
  const io::TableReadOptions read = start_reading(loaded, table_path, plan.read, global);
  BlockReading<double> reading(plan, plan.args.reading == "blocks", loaded);
  loaded.table = io::read_table_blocks(table_path, read, plan.args.block_rows,
                                       [&](io::Table& block) { reading.take(block); });
  describe_columns(loaded, plan.roles);  // the context of the reader's whole table
  refuse_nothing_to_trace(reading.spread(), loaded.options, loaded.shown_name, plan.args.response);
  return finish_trace(loaded, reading.trace());
}

// ---- Shards: several tables, pieces of one, or the processes of an MPI job ----

// The bytes of a piece of a table (io::table_piece), refused when it holds
// no line.
io::TablePiece find_piece(const ShardSource& source, const io::TableReadOptions& read) {
  io::TablePiece piece = io::table_piece(source.path, source.piece, source.pieces, read);
  if (piece.begin == piece.end)
    throw failure(exit_usage, fmt::format("{}: piece {} of {} holds no line (the table has too few data lines "
                                          "for {} pieces): ask for fewer --pieces",
                                          source.path, source.piece + 1, source.pieces, source.pieces));
  return piece;
}

// `read(piece, lines_before)` reads a shard; for a piece after the first
// that fails (an error of the reader, or a bad row met by the statistics:
// data_failure), the same piece is read again with its lines counted from
// the file's start: the reading stops at the same place with the same
// error, now naming the file's line (counting costs a pass over the earlier
// pieces' bytes, so only a failure pays it). `piece` holds the piece's
// bytes once found, so that the second reading does not cut again.
template <class Read>
auto read_naming_lines(const ShardSource& source, Read read) {
  std::optional<io::TablePiece> piece;
  try {
    return read(piece, std::size_t{0});
  } catch (const data_failure&) {
    // a bad row met by the statistics names the piece's line: renumber below
    if (source.pieces == 0 || source.piece == 0 || !piece) throw;
  } catch (const failure&) {
    throw;  // the CLI's own refusals name no line
  } catch (...) {
    // A whole file, the first piece (its lines are the file's) or a failure
    // before the piece was found (no line of it was read) has nothing to renumber.
    if (source.pieces == 0 || source.piece == 0 || !piece) throw;
  }
  return read(piece, io::lines_before_piece(source.path, *piece));
}

// One table read by this process as a shard: its statistics (every row
// streamed, block by block) and the record rank 0 needs besides them.
struct ShardRead {
  SufficientStatistics<double> statistics;
  nlohmann::json record;
};

// Reads one shard; a piece's lines are numbered from `lines_before` (see
// read_shard_named). `piece` holds the piece's bytes once found
// (io::table_piece), so that a second reading of it does not cut again.
ShardRead read_shard(const ShardSource& source, const ReadPlan& plan, const Global& global,
                     std::optional<io::TablePiece>& piece, std::size_t lines_before = 0) {
  LoadedTable loaded;
  const std::string& path = source.path;
  const io::TableReadOptions read = start_reading(loaded, path, plan.read, global);
  BlockReading<double> reading(plan, true, loaded);
  const auto take = [&](io::Table& block) { reading.take(block); };
  if (source.pieces == 0) {
    loaded.table = io::read_table_blocks(path, read, plan.args.block_rows, take);
  } else {
    if (!piece) piece = find_piece(source, read);
    loaded.table = io::read_table_piece_blocks(path, *piece, lines_before, read, plan.args.block_rows, take);
    loaded.table.source = source.name();
  }
  ShardRead out;
  out.statistics = reading.finish_stream();
  const io::Table& table = loaded.table;
  const ResponseSpread& spread = reading.spread();
  out.record = {{"source", table.source},
                {"rows", table.rows},
                {"dropped", table.dropped_rows},
                {"names", table.names},
                {"predictors", reading.predictor_names()},
                {"text_columns", table.text_columns},
                {"skipped_columns", table.skipped_columns},
                {"decimal_comma_columns", table.decimal_comma_columns},
                {"spread", {{"used", spread.used}, {"first", spread.first}, {"constant", spread.constant},
                            {"weighted", spread.weighted}}}};
  return out;
}

// What rank 0 knows of every shard once their records are gathered: the
// table they make together (names, counts; no values) and the responses'
// spread, in shard order.
struct ShardSummary {
  io::Table table;
  ResponseSpread spread;
  long long predictors = 0;
};

// Rank 0's reading of the shards' records (gather_shard_steps, none
// failed: decide_for_all checked): shards whose columns differ are
// refused, else the summary.
ShardSummary summarise_shards(const std::vector<nlohmann::json>& records, const std::vector<ShardSource>& sources) {
  ShardSummary out;
  const nlohmann::json& first = records.front();
  io::Table& table = out.table;
  table.source = shards_source(sources);
  table.names = first["names"].get<std::vector<std::string>>();
  table.text_columns = first["text_columns"].get<std::vector<std::string>>();
  table.skipped_columns = first["skipped_columns"].get<std::vector<std::string>>();
  table.decimal_comma_columns = first["decimal_comma_columns"].get<std::vector<std::string>>();
  for (const auto& record : records) {
    for (const char* what : {"names", "predictors"})
      if (record[what] != first[what]) refuse_unlike_shard(first, record, what);
    table.rows += record["rows"].get<std::size_t>();
    table.dropped_rows += record["dropped"].get<std::size_t>();
    const nlohmann::json& spread = record["spread"];
    ResponseSpread part;
    part.used = spread["used"].get<Index>();
    part.first = spread["first"].get<double>();
    part.constant = spread["constant"].get<bool>();
    part.weighted = spread["weighted"].get<bool>();
    out.spread.merge(part);
  }
  out.predictors = static_cast<long long>(first["predictors"].size());
  return out;
}

// read_shard(), a failed piece's lines named as in the file (read_naming_lines).
ShardRead read_shard_named(const ShardSource& source, const ReadPlan& plan, const Global& global) {
  return read_naming_lines(source, [&](std::optional<io::TablePiece>& piece, std::size_t lines_before) {
    return read_shard(source, plan, global, piece, lines_before);
  });
}

// Several tables read as the shards of one (or any table under an MPI job
// of several processes, trace_tables()): shard s is read by process
// shard_owner(s), each into its own statistics in blocks; rank 0 gathers
// the shards' records and decides for all (gather_shard_steps and
// decide_for_all, ranks.hpp: the first failure in shard order stops every
// process with its message and status), the statistics are merged in the
// shard tree (the same bits for any number of processes), and rank 0
// traces; the other processes end quietly (quiet_exit).
TracedTable trace_shards(const std::vector<ShardSource>& sources, const ReadPlan& plan, const Global& global) {
  const bool cut = sources.front().pieces != 0;
  const char* what = cut ? "the pieces of one table" : "several tables (shards)";
  if (plan.args.reading == "whole")
    throw failure(exit_usage, fmt::format("{} are read in blocks into their statistics: --read whole reads one "
                                          "table as one",
                                          what));
  if (plan.args.indicators_all || !plan.args.indicators.empty())
    throw failure(exit_usage, fmt::format("{} cannot expand --indicators: a text column's levels would have to agree "
                                          "across them (read one table with --read whole)",
                                          what));
  for (const auto& source : sources)
    if (source.path == "-")
      throw failure(exit_usage, cut ? "standard input (-) cannot be cut into pieces (give a file)"
                                    : "standard input (-) cannot be one of several tables");
  const Ranks& ranks = Ranks::world();
  const std::size_t count = sources.size();
  std::vector<std::pair<std::size_t, SufficientStatistics<double>>> mine;
  const std::vector<nlohmann::json> records = gather_shard_steps(ranks, count, [&](std::size_t s) {
    ShardRead shard = read_shard_named(sources[s], plan, global);
    mine.emplace_back(s, std::move(shard.statistics));
    return std::move(shard.record);
  });
  ShardSummary summary;
  const std::vector<long long> predictors = decide_for_all(ranks, records, [&] {
    summary = summarise_shards(records, sources);
    return std::vector<long long>{summary.predictors};
  });
  std::optional<SufficientStatistics<double>> statistics =
      ranks.reduce(std::move(mine), count, static_cast<Index>(predictors.at(0)));
  if (ranks.rank() != 0) throw quiet_exit{0};

  LoadedTable loaded;
  loaded.progress = std::make_shared<Progress>(!global.quiet);
  loaded.shown_name = summary.table.source;
  const std::size_t rows = summary.table.rows;
  loaded.table = std::move(summary.table);
  describe_columns(loaded, plan.roles);
  loaded.options = trace_options(plan.args, plan.scales, loaded.context.predictor_names);
  loaded.context.block_rows = plan.args.block_rows;
  for (const auto& source : sources) loaded.context.shards.push_back(source.name());
  refuse_nothing_to_trace(summary.spread, loaded.options, loaded.shown_name, plan.args.response);
  return finish_trace(
      loaded,
      trace_with_messages(
          loaded,
          fmt::format("tracing the path from the statistics ({} rows in {} shards, {} predictors)", rows, count,
                      loaded.context.predictor_names.size()),
          [&] { return detail::trace_rows_statistics(*statistics, static_cast<Index>(rows), loaded.options); }));
}

// ---- Columns over processes (--column-blocks) ----
//
// One table whose candidate predictors (the header's columns the roles may
// use) are cut into contiguous blocks, one per process, by the shard cut of
// shards.hpp (shard_owner: process r holds candidates [ceil(r C / R),
// ceil((r + 1) C / R))). Every process reads the header, then the file with
// only its block, the response and the weights (TableReadOptions::only);
// rank 0 gathers what each found (its numeric predictors, its text columns)
// and decides for all (gather_shard_steps, decide_for_all: the first
// failure in process order stops every process with its message); the
// predictors' names reach every process, which builds the same trace
// options by name; the processes trace together (Ranks::trace_columns) and
// rank 0 writes. The predictors are those of reading the table whole, in
// the same order (rank 0 checks it).

// The header's candidate predictors, in header order: every column but the
// response, the weights and the dropped ones; with --use, only the listed
// and referenced ones (the rule of io::assign_columns, which then keeps
// the numeric ones).
std::vector<std::string> candidate_columns(const std::vector<std::string>& header, const io::ColumnRoles& roles) {
  std::unordered_set<std::string> chosen(roles.use.begin(), roles.use.end());
  chosen.insert(roles.referenced.begin(), roles.referenced.end());
  const std::unordered_set<std::string> dropped(roles.drop.begin(), roles.drop.end());
  std::vector<std::string> out;
  for (const auto& name : header) {
    if (name == roles.response || name == roles.weights || dropped.count(name) != 0) continue;
    if (!roles.use.empty() && chosen.count(name) == 0) continue;
    out.push_back(name);
  }
  return out;
}

// How a process reads its block: the reader's options and the roles
// within the block. The reader skips every column of the header outside
// the block but the response and the weights (TableReadOptions::skip: a
// text column of the block is then found as reading the whole table finds
// it, which TableReadOptions::only, asking for numbers, would refuse); the
// block's listed columns are required numeric. Names the roles need that
// the header lacks are kept by rank 0, whose reader then names them as
// reading the whole table would ("unknown column").
struct BlockPlan {
  io::TableReadOptions read;
  io::ColumnRoles roles;
};

BlockPlan block_plan(const ReadPlan& plan, const std::vector<std::string>& header,
                     const std::vector<std::string>& block, int rank) {
  const io::ColumnRoles& roles = plan.roles;
  const std::unordered_set<std::string> mine(block.begin(), block.end()), known(header.begin(), header.end());
  const auto keep = [&](const std::vector<std::string>& names, std::vector<std::string>& into) {
    for (const auto& name : names)
      if (mine.count(name) != 0 || name == roles.response || name == roles.weights ||
          (rank == 0 && known.count(name) == 0))
        into.push_back(name);
  };
  BlockPlan out;
  out.roles.response = roles.response;
  out.roles.weights = roles.weights;
  out.roles.drop = roles.drop;
  keep(roles.use, out.roles.use);
  keep(roles.referenced, out.roles.referenced);
  out.read = plan.read;
  out.read.required.clear();
  out.read.only.clear();
  keep(plan.read.required, out.read.required);
  keep(plan.read.only, out.read.only);
  for (const auto& name : header)
    if (mine.count(name) == 0 && name != roles.response && name != roles.weights) out.read.skip.push_back(name);
  return out;
}

// The predictors of a block read (io::assign_columns), or none when the
// block holds no numeric column besides the response and the weights (a
// block of text columns, or more processes than candidates).
io::ColumnAssignment block_columns(const io::Table& table, const io::ColumnRoles& roles) {
  const bool any = std::any_of(table.names.begin(), table.names.end(), [&](const std::string& name) {
    return name != roles.response && name != roles.weights;
  });
  if (any) return assigned_columns(table, roles);
  io::ColumnAssignment none;
  none.response = table.find(roles.response);
  if (!roles.weights.empty()) none.weights = table.find(roles.weights);
  return none;
}

// This process's share of the table: its block read and split, and what
// rank 0 needs of it.
struct ColumnBlock {
  LoadedTable loaded;
  TableData<double> data;
  nlohmann::json record;
};

ColumnBlock read_column_block(const std::string& path, const ReadPlan& plan, const Ranks& ranks,
                              const Global& global) {
  ColumnBlock out;
  const std::vector<std::string> header = io::read_table_header(path, plan.read);
  const std::vector<std::string> candidates = candidate_columns(header, plan.roles);
  std::vector<std::string> block;
  for (std::size_t c = 0; c < candidates.size(); ++c)
    if (shard_owner(c, candidates.size(), ranks.size()) == ranks.rank()) block.push_back(candidates[c]);
  const BlockPlan reading = block_plan(plan, header, block, ranks.rank());
  LoadedTable& loaded = out.loaded;
  loaded.table = io::read_table(path, start_reading(loaded, path, reading.read, global));
  io::Table& table = loaded.table;
  loaded.columns = block_columns(table, reading.roles);
  out.record = {{"header", ranks.rank() == 0 ? header : std::vector<std::string>()},
                {"predictors", loaded.columns.names},
                {"read", table.names},
                {"text_columns", table.text_columns},
                {"decimal_comma_columns", table.decimal_comma_columns},
                {"rows", table.rows}};
  out.data = table_data<double>(table, loaded.columns, loaded.shown_name);
  return out;
}

// Rank 0's table of the blocks' records (names, counts; no values), as
// reading it whole would describe it: the columns read, text and skipped
// in header order.
io::Table table_of_blocks(const std::vector<nlohmann::json>& records, const std::string& source) {
  std::unordered_set<std::string> read, text, comma;
  const auto rows = records.front()["rows"].get<std::size_t>();
  for (const auto& record : records) {
    for (const auto& name : record["read"]) read.insert(name.get<std::string>());
    for (const auto& name : record["text_columns"]) text.insert(name.get<std::string>());
    for (const auto& name : record["decimal_comma_columns"]) comma.insert(name.get<std::string>());
    if (record["rows"].get<std::size_t>() != rows)
      throw failure(exit_internal, "internal error: the processes read different rows of one table");
  }
  io::Table table;
  table.source = source;
  table.rows = rows;
  for (const auto& item : records.front()["header"]) {
    const std::string name = item.get<std::string>();
    if (read.count(name) != 0)
      table.names.push_back(name);
    else if (text.count(name) != 0)
      table.text_columns.push_back(name);
    else
      table.skipped_columns.push_back(name);
    if (comma.count(name) != 0) table.decimal_comma_columns.push_back(name);
  }
  return table;
}

// What --column-blocks cannot do (exit 2, with the reason), refused by every
// process alike before any reading.
void refuse_what_column_blocks_cannot_do(const std::vector<std::string>& tables, const ModelArgs& args) {
  const auto refuse = [](const std::string& why) { throw failure(exit_usage, "--column-blocks " + why); };
  if (tables.size() != 1) refuse("cuts the columns of one table (several tables are the shards of one by rows)");
  if (args.pieces != 0) refuse("cuts the table by columns and --pieces by rows: give one of them");
  if (tables.front() == "-") refuse("needs a file every process can read: standard input (-) cannot be");
  if (args.indicators_all || !args.indicators.empty())
    refuse("cannot expand --indicators (the levels of a text column would be known only to its block)");
  if (args.missing == "drop")
    refuse("needs every process to keep the same rows: --missing drop would drop a row only in the block "
           "whose cell is missing");
  if (args.reading == "blocks")
    refuse("reads each block of columns over all rows: --read blocks reads blocks of rows");
}

// Rank 0's decision once every block was read: the whole table's
// description and trace options (the predictors must be those of reading
// the table whole, in the same order), the refusal of a response with
// nothing to trace; returns the predictors per process.
std::vector<long long> decide_column_blocks(const std::vector<nlohmann::json>& records, const ReadPlan& plan,
                                            const TableData<double>& own, LoadedTable& whole) {
  io::RowLines lines = std::move(whole.table.row_lines);  // the same rows on every process
  whole.table = table_of_blocks(records, whole.shown_name);
  whole.table.row_lines = std::move(lines);  // data_message names rows by their lines
  describe_columns(whole, plan.roles);
  std::vector<std::string> names;
  std::vector<long long> counts;
  for (const auto& record : records) {
    for (const auto& name : record["predictors"]) names.push_back(name.get<std::string>());
    counts.push_back(static_cast<long long>(record["predictors"].size()));
  }
  if (names != whole.context.predictor_names)
    throw failure(exit_internal, "internal error: the blocks' predictors are not the table's");
  whole.options = trace_options(plan.args, plan.scales, names);
  ResponseSpread spread;
  spread.add(own.y, own.w);
  refuse_nothing_to_trace(spread, whole.options, whole.shown_name, plan.args.response);
  return counts;
}

// trace_tables() with --column-blocks (see above).
TracedTable trace_column_blocks(const std::vector<std::string>& tables, const ReadPlan& plan, const Global& global) {
  refuse_what_column_blocks_cannot_do(tables, plan.args);
  const Ranks& ranks = Ranks::world();
  const std::string& path = tables.front();
  std::optional<ColumnBlock> mine;
  const std::vector<nlohmann::json> records =
      gather_shard_steps(ranks, static_cast<std::size_t>(ranks.size()), [&](std::size_t) {
        mine.emplace(read_column_block(path, plan, ranks, global));
        return mine->record;
      });
  // decide_for_all stops every process when a block failed (its process
  // holds no block), so the block is read on every process past it.
  const std::vector<long long> counts =
      decide_for_all(ranks, records, [&] { return decide_column_blocks(records, plan, mine->data, mine->loaded); });
  ColumnBlock& block = *mine;
  LoadedTable& loaded = block.loaded;
  // Every process builds the trace options from the predictors' names.
  std::string names_text = ranks.rank() == 0 ? nlohmann::json(loaded.context.predictor_names).dump() : "";
  const auto names = nlohmann::json::parse(ranks.broadcast_text(std::move(names_text))).get<std::vector<std::string>>();
  loaded.context.predictor_names = names;
  loaded.options = trace_options(plan.args, plan.scales, names);
  Index first = 0;
  for (int r = 0; r < ranks.rank(); ++r) first += static_cast<Index>(counts.at(static_cast<std::size_t>(r)));
  const auto p = static_cast<Index>(names.size());
  if (ranks.rank() == 0)
    loaded.context.table_notes.push_back(fmt::format(
        "the predictors' columns were read in {} block{}, one per process (--column-blocks)", ranks.size(),
        ranks.size() == 1 ? "" : "s"));
  const TableData<double>& d = block.data;
  Path<double> path_traced = trace_with_messages(
      loaded,
      fmt::format("tracing the path over {} block{} of columns ({} rows, {} predictors)", ranks.size(),
                  ranks.size() == 1 ? "" : "s", d.y.size(), p),
      [&] { return ranks.trace_columns(d.x, first, p, d.y, loaded.options, d.w); });
  if (ranks.rank() != 0) throw quiet_exit{0};
  return finish_trace(loaded, std::move(path_traced));
}

}  // namespace

void add_reading_options(CLI::App& command, std::string& reading, std::size_t& block_rows, const std::string& blocks,
                         const std::string& automatic) {
  command
      .add_option("--read", reading,
                  "How the table is read: whole (every row in memory), blocks (a block of rows at a "
                  "time " + blocks + ", memory independent of the row count), or auto (" + automatic + ")")
      ->check(CLI::IsMember({"auto", "whole", "blocks"}))
      ->default_str("auto")
      ->group("Table");
  command.add_option("--block-rows", block_rows, "Rows per block read (--read blocks and auto)")
      ->check(CLI::PositiveNumber)
      ->default_str("4096")
      ->group("Table");
}

void add_reading_options(CLI::App& command, ModelArgs& args) {
  add_reading_options(command, args.reading, args.block_rows, "into the sufficient statistics",
                      "blocks once the rows far outnumber the predictors, when that gives the same path as "
                      "reading whole");
}

bool streams_rows(const ModelArgs& args) { return !reads_whole(with_lists_split(args)); }

void refuse_unlike_shard(const nlohmann::json& first, const nlohmann::json& shard, const char* what) {
  const auto list = [](const nlohmann::json& names) {
    std::vector<std::string> items = names.get<std::vector<std::string>>();
    return quoted_names(items);
  };
  throw failure(exit_bad_input,
                fmt::format("{}: its {} ({}) differ from those of {}, the first table ({}): the shards of a "
                            "table must have the same columns",
                            shard["source"].get<std::string>(), what, list(shard[what]),
                            first["source"].get<std::string>(), list(first[what])));
}

std::string ShardSource::name() const {
  return pieces == 0 ? path : fmt::format("{} (piece {} of {})", path, piece + 1, pieces);
}

std::string shards_source(const std::vector<ShardSource>& sources) {
  if (sources.front().pieces != 0) return fmt::format("{} ({} pieces)", sources.front().path, sources.size());
  std::string list;
  for (std::size_t s = 0; s < sources.size(); ++s) {
    if (sources.size() > 4 && s == 2) {
      list += ", ...";
      s = sources.size() - 1;
    }
    list += (list.empty() ? "" : ", ") + sources[s].path;
  }
  return fmt::format("{} ({} shards)", list, sources.size());
}

std::vector<ShardSource> shard_sources(const std::vector<std::string>& tables, std::size_t pieces) {
  std::vector<ShardSource> sources;
  if (pieces != 0) {
    if (tables.size() != 1)
      throw failure(exit_usage, "--pieces cuts one table; several tables are already the shards of one");
    for (std::size_t i = 0; i < pieces; ++i) sources.push_back({tables.front(), i, pieces});
  } else {
    for (const auto& table : tables) sources.push_back({table});
  }
  return sources;
}

LoadedTable read_in_blocks(const ShardSource& source, const ModelArgs& args, const Global& global,
                           const std::function<void()>& restart,
                           const std::function<void(io::Table& block, const LoadedTable& loaded)>& take,
                           const std::function<void(LoadedTable& loaded)>& finish) {
  const ReadPlan plan = plan_reading(args, false);
  return read_naming_lines(source, [&](std::optional<io::TablePiece>& piece, std::size_t lines_before) {
    restart();
    LoadedTable loaded;
    const io::TableReadOptions read = start_reading(loaded, source.path, plan.read, global);
    bool begun = false;
    const auto on_block = [&](io::Table& block) {
      if (!begun) {  // the first block names the columns, as BlockReading::begin
        loaded.columns = assigned_columns(block, plan.roles);
        loaded.options = trace_options(plan.args, plan.scales, loaded.columns.names);
        loaded.context.predictor_names = loaded.columns.names;
        begun = true;
      }
      take(block, loaded);
    };
    if (source.pieces == 0) {
      loaded.table = io::read_table_blocks(source.path, read, plan.args.block_rows, on_block);
    } else {
      if (!piece) piece = find_piece(source, read);
      loaded.table = io::read_table_piece_blocks(source.path, *piece, lines_before, read, plan.args.block_rows,
                                                 on_block);
      loaded.table.source = source.name();
    }
    describe_columns(loaded, plan.roles);  // the context of the reader's whole table
    if (finish) finish(loaded);            // within the renumbering: its bad rows name the file's lines
    return loaded;
  });
}

LoadedTable read_in_blocks(const std::string& table_path, const ModelArgs& args, const Global& global,
                           const std::function<void(io::Table& block, const LoadedTable& loaded)>& take) {
  return read_in_blocks(ShardSource{table_path}, args, global, [] {}, take);
}

LoadedTable load_table(const std::string& table_path, const ModelArgs& given,
                       const Global& global, bool keep_decimal_text) {
  return load_planned(table_path, plan_reading(given, keep_decimal_text), global);
}

TracedTable trace_table(const std::string& table_path, const ModelArgs& args,
                        const Global& global) {
  const ReadPlan plan = plan_reading(args, false);
  if (!reads_whole(plan.args)) return trace_in_blocks(table_path, plan, global);
  LoadedTable loaded = load_planned(table_path, plan, global);
  const TableData<double> d = table_data<double>(loaded);
  io::RowLines lines = std::move(loaded.table.row_lines);
  loaded.table = io::Table();  // free what is left before the trace copies the design
  loaded.table.row_lines = std::move(lines);  // data_message names rows by their lines
  ResponseSpread spread;
  spread.add(d.y, d.w);
  refuse_nothing_to_trace(spread, loaded.options, loaded.shown_name, args.response);
  return finish_trace(loaded, trace_table_data(loaded, d,
                                               fmt::format("tracing the path ({} rows, {} predictors)",
                                                           d.x.rows(), d.x.cols())));
}

template <class High>
TracedTwice<High> trace_twice(const std::string& table_path, const ModelArgs& args, const Global& global) {
  const ReadPlan plan = plan_reading(args, true);
  if (!reads_whole(plan.args)) {
    LoadedTable loaded;
    const io::TableReadOptions read = start_reading(loaded, table_path, plan.read, global);
    // The high precision takes each block first: it parses the decimal
    // text; double then moves the reader's values out of the block.
    BlockReading<High> high(plan, plan.args.reading == "blocks", loaded);
    BlockReading<double> low(plan, plan.args.reading == "blocks", loaded);
    loaded.table = io::read_table_blocks(table_path, read, plan.args.block_rows, [&](io::Table& block) {
      high.take(block);
      low.take(block);
    });
    describe_columns(loaded, plan.roles);
    Path<High> high_path = high.trace();
    Path<double> low_path = low.trace();
    return {std::move(loaded), std::move(high_path), std::move(low_path)};
  }
  LoadedTable loaded = load_planned(table_path, plan, global);
  // The high-precision path first: it reads the decimal text; the double
  // trace then moves the reader's doubles out of the table.
  Path<High> high_path = trace_loaded<High>(loaded);
  Path<double> low_path = trace_loaded<double>(loaded);
  return {std::move(loaded), std::move(high_path), std::move(low_path)};
}

template TracedTwice<float50> trace_twice<float50>(const std::string&, const ModelArgs&, const Global&);
#ifdef KNOTPATH_HAVE_MPFR
template TracedTwice<mpfr_float> trace_twice<mpfr_float>(const std::string&, const ModelArgs&, const Global&);
#endif

void add_column_blocks_option(CLI::App& command, ModelArgs& args) {
  command
      .add_flag("--column-blocks", args.column_blocks,
                "Under mpirun, cut the predictors' columns into one block per process: each process reads and "
                "holds its block (over all rows) and the processes trace the path together, for tables with far "
                "more columns than rows (the same events for any number of processes, knots to rounding)")
      ->group("Table");
}

void add_pieces_option(CLI::App& command, ModelArgs& args) {
  command
      .add_option("--pieces", args.pieces,
                  "Cut the one TABLE at line breaks into this many pieces of about equal bytes, read as its "
                  "shards (under mpirun, spread over the processes: the same path for any number of them)")
      ->check(CLI::Range(std::size_t{1}, std::size_t{1} << 20))
      ->group("Table");
}

TracedTable trace_tables(const std::vector<std::string>& tables, const ModelArgs& args, const Global& global) {
  if (args.column_blocks) return trace_column_blocks(tables, plan_reading(args, false), global);
  if (args.pieces == 0 && tables.size() == 1) {
    if (Ranks::world().rank() != 0) throw quiet_exit{0};  // one table: rank 0 reads it
    return trace_table(tables.front(), args, global);
  }
  return trace_shards(shard_sources(tables, args.pieces), plan_reading(args, false), global);
}

}  // namespace knotpath::cli
