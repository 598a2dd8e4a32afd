// Shared pieces of the command-line program: model options, reading and
// tracing a table, writing outputs, the exit status of a finished run, the
// progress line.

#include <fcntl.h>
#include <unistd.h>

#include <algorithm>
#include <cctype>
#include <chrono>
#include <cerrno>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <sstream>
#include <iostream>

#include <fmt/format.h>

#include "cli.hpp"
#include "typed_trace.hpp"

#ifndef KNOTPATH_VERSION
#error "KNOTPATH_VERSION must be defined by the build (PROJECT_VERSION)"
#endif

namespace knotpath::cli {

std::string version() {
  return KNOTPATH_VERSION;
}

void add_model_options(CLI::App& command, ModelArgs& args) {
  command.add_option("--response", args.response, "Name of the response column")
      ->required()
      ->group("Model");
  command
      .add_option("--variant", args.variant,
                  "lasso (predictors may leave) or least-angle (they only enter)")
      ->check(CLI::IsMember({to_string(Variant::lasso), to_string(Variant::least_angle)}))
      ->default_str("lasso")
      ->group("Model");
  command
      .add_flag("--no-intercept", args.no_intercept,
                "Fit no intercept (columns and response are not centred)")
      ->group("Model");
  command
      .add_flag("--no-standardize", args.no_standardize,
                "Penalize coefficients on the columns' own scale instead of unit-length columns")
      ->group("Model");
  command.add_option("--weights", args.weights, "Column of observation weights (>= 0)")
      ->group("Model");
  command
      .add_option("--penalty-scale", args.penalty_scales,
                  "NAME=VALUE: scale of a predictor's penalty (finite, > 0; default 1: 2 makes "
                  "it twice as costly to enter); repeat or separate with commas")
      ->group("Model");
  command
      .add_option("--unpenalized", args.unpenalized,
                  "Predictors fitted without penalty, in the model at every penalty (names); "
                  "--drop keeps a column out")
      ->group("Model");
  command
      .add_option("--nonnegative", args.nonnegative,
                  "Predictors whose coefficient must be >= 0 (names, or all)")
      ->group("Model");
  command
      .add_option("--nonpositive", args.nonpositive,
                  "Predictors whose coefficient must be <= 0 (names, or all)")
      ->group("Model");
  command.add_option("--ridge", args.ridge, "Ridge weight (elastic net); 0 = plain lasso")
      ->check(non_negative_number())
      ->group("Model");
  command.add_option("--use", args.use, "Use only these predictors (names, comma separated)")
      ->group("Model");
  command.add_option("--drop", args.drop, "Do not use these columns (names, comma separated)")
      ->group("Model");
  command.add_option("--max-knots", args.max_knots, "Stop after this many knots (0 = no limit)")
      ->group("Stopping");
  command
      .add_option("--min-penalty", args.min_penalty,
                  "Stop when the penalty would fall below this value")
      ->check(non_negative_number())
      ->group("Stopping");
  command
      .add_option("--max-active", args.max_active,
                  "Stop before more than this many predictors are active (0 = no limit)")
      ->group("Stopping");
  command
      .add_option("--missing", args.missing,
                  "Missing cells (empty, NA, N/A, NaN, '.', and --na): error (stop) or drop (drop "
                  "the row and count it)")
      ->check(CLI::IsMember({"error", "drop"}))
      ->default_str("error")
      ->group("Table");
  add_cell_options(command, args.cells, "");
  command
      .add_option("--indicators", args.indicators,
                  "Text columns to expand into 0/1 indicator predictors, one per level named "
                  "COLUMN=LEVEL (names, or all for every text column; quote \"all\" for a column so "
                  "named); the first level in byte "
                  "order is left out when there is an intercept")
      ->group("Table");
  command
      .add_option("--max-levels", args.max_levels,
                  "Refuse to expand a column with more distinct values than this")
      ->check(CLI::PositiveNumber)
      ->default_str("20")
      ->group("Table");
  command
      .add_option("--max-columns", args.max_columns,
                  "Refuse a table whose header has more columns than this")
      ->check(positive_number())
      ->default_str("100000")
      ->group("Table");
  command
      .add_option("--threads", args.threads,
                  "Threads for the products of large designs (0: all cores); the results are "
                  "the same for any count")
      ->check(CLI::Range(std::size_t{0}, std::size_t{1024}))
      ->default_str("1")
      ->group("Performance");
}

Progress::Progress(bool enabled) : enabled_(enabled && ::isatty(STDERR_FILENO) == 1) {
  if (enabled_) worker_ = std::thread([this] { run(); });
}

Progress::~Progress() {
  if (!enabled_) return;
  {
    std::lock_guard<std::mutex> lock(mutex_);
    done_ = true;
  }
  wake_.notify_all();
  worker_.join();
}

void Progress::status(std::string text) {
  if (!enabled_) return;
  std::lock_guard<std::mutex> lock(mutex_);
  text_ = std::move(text);
}

void Progress::run() {
  using clock = std::chrono::steady_clock;
  const auto start = clock::now();
  std::unique_lock<std::mutex> lock(mutex_);
  // Nothing for the first second: quick runs print no progress at all.
  if (wake_.wait_until(lock, start + std::chrono::seconds(1), [this] { return done_; })) return;
  while (!done_) {
    const double seconds = std::chrono::duration<double>(clock::now() - start).count();
    std::fprintf(stderr, "\r\033[K%s (%.0f s)", text_.c_str(), seconds);
    std::fflush(stderr);
    shown_ = true;
    wake_.wait_for(lock, std::chrono::milliseconds(250), [this] { return done_; });
  }
  if (shown_) {
    std::fprintf(stderr, "\r\033[K");
    std::fflush(stderr);
  }
}

namespace {

bool contains(const std::vector<std::string>& list, const std::string& name) {
  return std::find(list.begin(), list.end(), name) != list.end();
}

char delimiter_char(const std::string& name) {
  if (name == "comma") return ',';
  if (name == "semicolon") return ';';
  if (name == "tab") return '\t';
  if (name == "whitespace") return ' ';
  return 0;
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

// Reads the table, reporting progress on the loaded table's progress line.
void read_with_progress(LoadedTable& out, const std::string& table_path, io::TableReadOptions read,
                        const Global& global) {
  out.progress = std::make_shared<Progress>(!global.quiet);
  Progress& progress = *out.progress;
  const std::string shown_name = table_path == "-" ? "<stdin>" : table_path;
  out.shown_name = shown_name;
  progress.status("reading " + shown_name);
  read.progress = [&](std::size_t bytes, std::size_t rows) {
    progress.status(fmt::format("reading {}: {:.1f} MB, {} rows", shown_name,
                                static_cast<double>(bytes) / 1e6, rows));
  };
  out.table = io::read_table(table_path, read);
}

// What the reports say about the data, and the columns' roles: the
// predictors are chosen by the library's rule (io::assign_columns).
void describe_columns(LoadedTable& out, const io::ColumnRoles& roles) {
  const io::Table& table = out.table;
  try {
    out.columns = io::assign_columns(table, roles);
  } catch (const invalid_data& e) {
    throw failure(exit_bad_input, e.detail());
  }
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

// Data with nothing to trace are refused (the library returns a one-knot
// path for them; a user of the program almost surely gave the wrong table).
void refuse_nothing_to_trace(const TableData<double>& d, const TraceOptions& options,
                             const std::string& shown_name, const std::string& response) {
  if (!options.with_intercept) return;
  Index used = 0;
  double first = 0;
  bool constant = true;
  for (Index i = 0; i < d.y.size(); ++i) {
    if (d.w.size() != 0 && !(d.w(i) > 0)) continue;
    if (used++ == 0)
      first = d.y(i);
    else if (d.y(i) != first)
      constant = false;
  }
  if (used == 1)
    throw failure(exit_bad_input, shown_name + ": only one row" +
                                      (d.w.size() ? " has a positive weight" : " of data") +
                                      "; with an intercept every column is constant there, so "
                                      "there is no path to trace (at least 2 rows are needed)");
  if (used > 1 && constant)
    throw failure(exit_bad_input, fmt::format("{}: the response \"{}\" is constant (every row "
                                              "holds {:.17g}); there is no path to trace",
                                              shown_name, response, first));
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

}  // namespace

LoadedTable load_table(const std::string& table_path, const ModelArgs& given,
                       const Global& global, bool keep_decimal_text) {
  const ModelArgs args = with_lists_split(given);
  check_indicator_list(args);
  std::vector<ScaleItem> scales;
  for (const auto& item : args.penalty_scales) scales.push_back(parse_scale(item));
  const io::ColumnRoles roles = column_roles(args, scales);
  check_model_options(roles, args);
  const io::TableReadOptions read = read_options(args, roles, keep_decimal_text);
  LoadedTable out;
  read_with_progress(out, table_path, read, global);
  describe_columns(out, roles);
  out.options = trace_options(args, scales, out.context.predictor_names);
  return out;
}

TracedTable trace_table(const std::string& table_path, const ModelArgs& args,
                        const Global& global) {
  LoadedTable loaded = load_table(table_path, args, global, false);
  const TableData<double> d = table_data<double>(loaded);
  io::RowLines lines = std::move(loaded.table.row_lines);
  loaded.table = io::Table();  // free what is left before the trace copies the design
  loaded.table.row_lines = std::move(lines);  // data_message names rows by their lines
  refuse_nothing_to_trace(d, loaded.options, loaded.shown_name, args.response);
  TracedTable out;
  out.path = trace_table_data(
      loaded, d, fmt::format("tracing the path ({} rows, {} predictors)", d.x.rows(), d.x.cols()));
  out.context = std::move(loaded.context);
  refuse_empty_path(out.path, out.context, loaded.shown_name);
  return out;
}

namespace {
// The real standard output's buffer while a machine-readable output holds
// standard output (std::cout then prints to standard error); null otherwise.
std::streambuf* given_stdout = nullptr;
std::string given_to;  // the option holding it
}  // namespace

void give_standard_output_to(const std::string& option) {
  if (given_stdout)
    throw failure(exit_usage, fmt::format("{} - and {} - would both write to standard output; "
                                          "give one of them a file name",
                                          given_to, option));
  std::cout.flush();
  given_to = option;
  given_stdout = std::cout.rdbuf(std::cerr.rdbuf());
}

void write_output(const std::filesystem::path& file,
                  const std::function<void(std::ostream&)>& write) {
  std::cout.flush();
  std::fflush(stdout);
  if (file == "-") {
    std::ostringstream buffer;
    write(buffer);
    std::ostream out(given_stdout ? given_stdout : std::cout.rdbuf());
    out << buffer.str();
    out.flush();
    errno = 0;
    if (!out || std::fflush(stdout) != 0)
      throw failure(exit_io, "cannot write standard output" +
                                 (errno ? std::string(": ") + std::strerror(errno) : ""));
    return;
  }
  try {
    io::write_atomically(file, write);
  } catch (const io::output_error& e) {
    throw failure(exit_io, e.what());
  }
}

std::string finish_standard_output() {
  std::cout.flush();
  if (given_stdout) {
    std::cout.rdbuf(given_stdout);  // the state of the text sent to stderr is not stdout's
    std::cout.clear();
    given_stdout = nullptr;
  }
  errno = 0;
  bool failed = !std::cout.flush();
  if (std::fflush(stdout) != 0) failed = true;
  if (std::ferror(stdout)) failed = true;
  if (!failed) return {};
  const int error = errno;
  return error ? fmt::format("cannot write standard output: {}", std::strerror(error))
               : "cannot write standard output";
}

void reserve_standard_descriptors() {
  for (const int fd : {STDIN_FILENO, STDOUT_FILENO, STDERR_FILENO}) {
    if (::fcntl(fd, F_GETFD) != -1 || errno != EBADF) continue;
    const int spare = ::open("/dev/null", fd == STDIN_FILENO ? O_WRONLY : O_RDONLY);
    if (spare >= 0 && spare != fd) {
      ::dup2(spare, fd);
      ::close(spare);
    }
  }
}

std::string user_text(std::string message) {
  static const std::string prefix = "knotpath: ";
  while (message.rfind(prefix, 0) == 0) message.erase(0, prefix.size());
  // The library's option fields as the program's users know them.
  struct Name {
    const char* library;
    const char* program;
  };
  static const Name names[] = {
      {"TableReadOptions::missing = MissingCells::drop drops incomplete rows",
       "use --missing drop to drop incomplete rows"},
      {"option 'sign_constraints'", "--nonnegative/--nonpositive"},
      {"option 'penalty_scales'", "--penalty-scale"},
      {"option 'unpenalized'", "--unpenalized"},
      {"option 'left_out'", "--drop"},
      {"option 'ridge'", "--ridge"},
      {"option 'min_penalty'", "--min-penalty"},
      {"option 'max_knots'", "--max-knots"},
      {"option 'max_active'", "--max-active"},
      {"option 'standardize'", "--no-standardize"},
      {"option 'with_intercept'", "--no-intercept"},
      {"option 'variant'", "--variant"},
      {"option 'threads'", "--threads"},
      {"option 'delimiter'", "--delimiter"},
      {"option 'noise_variance'", "--noise-variance"},
      {"option 'folds'", "--folds"},
      {"option 'fold_of'", "--fold-column"},
      {"option 'predictor_names'", "the predictor names"},
      {"CriteriaOptions::noise_variance", "--noise-variance"},
      {"InferenceOptions::noise_variance", "--noise-variance"},
  };
  for (const Name& name : names) {
    const std::string library = name.library;
    for (auto at = message.find(library); at != std::string::npos; at = message.find(library))
      message.replace(at, library.size(), name.program);
  }
  return message;
}

void print_error(const std::string& message) {
  std::cerr << "knotpath: " << user_text(message) << '\n';
  std::cerr.flush();
}

namespace {
CLI::Validator number_check(bool zero_allowed) {
  return CLI::Validator(
      [zero_allowed](std::string& text) -> std::string {
        double value = 0;
        std::istringstream in(text);
        in >> value;
        const bool number = in && (in >> std::ws).eof() && std::isfinite(value);
        if (number && (zero_allowed ? value >= 0 : value > 0)) return {};
        return fmt::format("\"{}\" is not a finite number {} 0", text, zero_allowed ? ">=" : ">");
      },
      zero_allowed ? "NUMBER >= 0" : "NUMBER > 0");
}
}  // namespace

CLI::Validator non_negative_number() {
  return number_check(true);
}

CLI::Validator positive_number() {
  return number_check(false);
}

int step_limit_status(bool hit, const std::string& which) {
  if (!hit) return exit_ok;
  std::cerr << "knotpath: numerical trouble: the homotopy hit its safety bound on steps; " << which
            << " is incomplete (outputs describe the part traced)\n";
  return exit_numerical;
}

std::vector<std::string> split_list(const std::vector<std::string>& values,
                                    const std::string& option, bool* every) {
  std::vector<std::string> items;
  for (const std::string& text : values) {
    std::string item;
    bool quoted = false, was_quoted = false;
    auto close_item = [&] {
      if (item.empty() && !was_quoted)
        throw failure(exit_usage, option + ": an empty name in \"" + text + "\"");
      if (every && !was_quoted && item == every_column_word)
        *every = true;
      else
        items.push_back(std::move(item));
      item.clear();
      was_quoted = false;
    };
    for (std::size_t i = 0; i < text.size(); ++i) {
      const char c = text[i];
      if (c == '"') {
        if (quoted && i + 1 < text.size() && text[i + 1] == '"') {
          item += '"';
          ++i;
        } else {
          quoted = !quoted;
          was_quoted = true;
        }
      } else if (c == ',' && !quoted) {
        close_item();
      } else {
        item += c;
      }
    }
    if (quoted)
      throw failure(exit_usage, option + ": a double quote in \"" + text + "\" is never closed");
    close_item();
  }
  return items;
}

std::string data_message(const invalid_data& e, const std::string& source, const std::vector<std::string>& names,
                         const io::RowLines& lines) {
  const bool named_column = e.column() && *e.column() < names.size();
  if (e.whole_column() && named_column) return source + ": predictor \"" + names[*e.column()] + "\"" + e.detail();
  if (!e.row()) return source + ": " + user_text(e.what());
  const std::size_t line = lines.line_of(*e.row());
  std::string place = line > 0 ? fmt::format("{}, line {}", source, line)
                               : fmt::format("{}, data row {}", source, *e.row() + 1);
  if (named_column) place += ", column \"" + names[*e.column()] + "\"";
  return place + ": " + user_text(e.detail());  // a row's detail() is what is wrong (at_row)
}

void add_cell_options(CLI::App& command, CellArgs& args, const std::string& na_note) {
  command
      .add_option("--delimiter", args.delimiter,
                  "Field delimiter: auto, comma, semicolon, tab, or whitespace (runs of spaces "
                  "and tabs)")
      ->check(CLI::IsMember({"auto", "comma", "semicolon", "tab", "whitespace"}))
      ->default_str("auto")
      ->group("Table");
  command
      .add_option("--na", args.na_tokens,
                  "Further cell texts that mean missing, matched exactly (comma separated; "
                  "quote one holding a comma)" + (na_note.empty() ? "" : "; " + na_note))
      ->group("Table");
  command
      .add_option("--decimal", args.decimal,
                  "Decimal mark of the numbers: point (2.5) or comma (2,5; the delimiter is then "
                  "not a comma)")
      ->check(CLI::IsMember({"point", "comma"}))
      ->default_str("point")
      ->group("Table");
}

io::TableReadOptions cell_read_options(const CellArgs& args) {
  io::TableReadOptions read;
  read.delimiter = delimiter_char(args.delimiter);
  read.missing_tokens = split_list(args.na_tokens, "--na");
  read.decimal = args.decimal == "comma" ? io::DecimalMark::comma : io::DecimalMark::point;
  if (read.decimal == io::DecimalMark::comma && read.delimiter == ',')
    throw failure(exit_usage, "--decimal comma cannot be read with --delimiter comma");
  return read;
}

}  // namespace knotpath::cli
