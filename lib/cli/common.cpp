// Shared pieces of the command-line program: model options, writing
// outputs, the exit status of a finished run, the progress line (reading and
// tracing a table: table_loading.cpp).

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
#include <new>

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

char delimiter_char(const std::string& name) {
  if (name == "comma") return ',';
  if (name == "semicolon") return ';';
  if (name == "tab") return '\t';
  if (name == "whitespace") return ' ';
  return 0;
}

}  // namespace

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

ErrorOutcome error_outcome(std::exception_ptr error) {
  try {
    std::rethrow_exception(error);
  } catch (const failure& e) {
    return {e.code(), e.what()};
  } catch (const io::table_error& e) {
    return {e.kind() == io::table_error::Kind::input_output ? exit_io : exit_bad_input, e.what()};
  } catch (const std::bad_alloc&) {
    return {exit_internal, "out of memory"};
  } catch (const std::exception& e) {
    const std::string why = user_text(e.what());
    return {exit_internal, why.rfind("internal error: ", 0) == 0 ? why : "internal error: " + why};
  }
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
