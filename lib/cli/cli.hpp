#pragma once
// Internals of the knotpath command-line program (not installed, not API).

#include <atomic>
#include <condition_variable>
#include <cstddef>
#include <exception>
#include <filesystem>
#include <functional>
#include <iosfwd>
#include <memory>
#include <mutex>
#include <optional>
#include <stdexcept>
#include <string>
#include <thread>
#include <vector>

#include <CLI/CLI.hpp>
#include <nlohmann/json_fwd.hpp>

#include <knotpath/io/report.hpp>
#include <knotpath/io/roles.hpp>
#include <knotpath/io/table.hpp>
#include <knotpath/knotpath.hpp>

namespace knotpath::cli {

/// Exit codes (documented in README.md).
enum ExitCode : int {
  exit_ok = 0,
  exit_internal = 1,   ///< unexpected failure (a bug, or out of memory)
  exit_usage = 2,      ///< bad command line or contradictory options
  exit_bad_input = 3,  ///< the table cannot be used (format, values, names)
  exit_numerical = 4,  ///< numerical trouble while tracing (path incomplete)
  exit_io = 5,         ///< a file cannot be read or written
  exit_degraded = 6,   ///< verify: same events, but the double path lost digits
  exit_wrong = 7,      ///< verify: the double path is wrong (events or coefficients)
  exit_outside_path = 8,  ///< at: the point lies outside the traced path, which cannot answer it
};

/// An error the program reports with a message and an exit code.
class failure : public std::runtime_error {
 public:
  failure(ExitCode code, const std::string& message) : std::runtime_error(message), code_(code) {}
  ExitCode code() const noexcept { return code_; }

 private:
  ExitCode code_;
};

/// A bad row of the data met by the statistics, not by the reader
/// (with_data_messages: e.g. a negative weight), named by its line in what
/// was read. A piece of a file (--pieces) read with its lines counted from
/// its own start is read again to name the file's line (read_in_blocks).
class data_failure : public failure {
 public:
  using failure::failure;
};

/// Settings shared by every command.
struct Global {
  bool quiet = false;
  int status = 0;  ///< exit status set by the command that ran
};

/// How the cells of a table are written (--delimiter, --na, --decimal).
struct CellArgs {
  std::string delimiter = "auto";      ///< auto, comma, semicolon, tab, whitespace
  std::vector<std::string> na_tokens;  ///< --na: further cell texts that mean missing, as given
  std::string decimal = "point";       ///< --decimal point|comma
};

/// Options that shape the model and how the table is read.
struct ModelArgs {
  std::string response;
  std::string variant = "lasso";
  bool no_intercept = false;
  bool no_standardize = false;
  std::string weights;
  std::vector<std::string> penalty_scales;  // NAME=VALUE
  std::vector<std::string> unpenalized;     // names
  std::vector<std::string> nonnegative;      // names, or "all"
  std::vector<std::string> nonpositive;
  double ridge = 0.0;
  std::vector<std::string> use;
  std::vector<std::string> drop;
  std::size_t max_knots = 0;
  double min_penalty = 0.0;
  std::size_t max_active = 0;
  CellArgs cells;                       // --delimiter, --na, --decimal
  std::string missing = "error";
  std::vector<std::string> indicators;  // --indicators: text columns to expand, or "all"
  bool indicators_all = false;           // unquoted "all" in --indicators (split_list)
  bool nonnegative_all = false;          // unquoted "all" in --nonnegative
  bool nonpositive_all = false;          // unquoted "all" in --nonpositive
  std::size_t max_levels = 20;          // --max-levels of one expanded column
  std::size_t max_columns = 100000;  // reader's limit on header width
  std::size_t threads = 1;           // TraceOptions::threads (select: also the folds)
  std::string reading = "auto";      // --read: auto, whole or blocks (commands that stream)
  std::size_t block_rows = 4096;     // --block-rows: rows per block read
  std::size_t pieces = 0;            // --pieces: the one table cut into this many shards (0: not cut)
  bool column_blocks = false;        // --column-blocks: the processes hold blocks of the predictors
};

/// The exit status and message of a run stopped by an exception.
struct ErrorOutcome {
  int code = 0;         ///< exit status
  std::string message;  ///< for print_error
};

/// The one mapping of exceptions to exit statuses and messages (main() and
/// the processes of a sharded reading): failure keeps its code; a table
/// error is exit_io when the input could not be read, else exit_bad_input;
/// out of memory and anything else are internal errors.
ErrorOutcome error_outcome(std::exception_ptr error);

/// Adds --read and --block-rows (how the table is read: whole, or a block of
/// rows at a time) to a command, binding them to `reading` and
/// `block_rows`; `blocks` and `automatic` say what the command does with a
/// block and when auto reads in blocks.
void add_reading_options(CLI::App& command, std::string& reading, std::size_t& block_rows, const std::string& blocks,
                         const std::string& automatic);

/// add_reading_options() for a command whose tracing goes through
/// trace_table(): blocks go into the sufficient statistics.
void add_reading_options(CLI::App& command, ModelArgs& args);

/// Adds --pieces (one table cut at line breaks into shards, trace_tables())
/// to trace and at.
void add_pieces_option(CLI::App& command, ModelArgs& args);

/// Adds --column-blocks (the processes of an MPI job each read and hold a
/// block of the predictors' columns, trace_tables()) to trace and at.
void add_column_blocks_option(CLI::App& command, ModelArgs& args);

/// The items of a list option's values (--use, --drop, --na, --indicators,
/// --nonnegative, --nonpositive, --penalty-scale, --unpenalized, ...), the one home of the
/// quoting rule: items are separated by commas; a comma inside double quotes
/// belongs to the item, the quotes are removed, and "" inside quotes is one
/// quote character. So --drop '"height, cm",age' names two columns. Each
/// value of a repeated option is split the same way. An empty item or an
/// unclosed quote is failure(exit_usage) naming `option`. With `every` (the
/// lists that accept it), an unquoted item `all` means every column: it sets
/// *every and is not an item, while a quoted "all" names a column so called
/// (--indicators '"all"').
std::vector<std::string> split_list(const std::vector<std::string>& values,
                                    const std::string& option, bool* every = nullptr);

/// `name` as one item of a list option (split_list's rule): in double
/// quotes, a quote inside doubled.
inline std::string quoted_list_item(const std::string& name) {
  std::string out = "\"";
  for (char c : name) out += c == '"' ? std::string("\"\"") : std::string(1, c);
  return out + "\"";
}

/// Names as a message lists them: each in double quotes, separated by
/// ", " ("a", "b, c").
inline std::string quoted_names(const std::vector<std::string>& names) {
  std::string list;
  for (const auto& name : names) list += (list.empty() ? "\"" : ", \"") + name + "\"";
  return list;
}

/// The word that stands for every column in --indicators, --nonnegative and
/// --nonpositive (split_list).
inline constexpr const char* every_column_word = "all";

/// Adds --delimiter, --na and --decimal to a command (group "Table");
/// `na_note`, when not empty, ends the help of --na (what a missing cell does).
void add_cell_options(CLI::App& command, CellArgs& args, const std::string& na_note);

/// The reader's cell rules of the options (delimiter, the --na tokens split
/// by split_list, decimal mark), the one home of their reading for every
/// command that reads a table; --decimal comma with --delimiter comma is
/// failure(exit_usage).
io::TableReadOptions cell_read_options(const CellArgs& args);

/// Adds the table-reading and model options to a command.
void add_model_options(CLI::App& command, ModelArgs& args);

/// A traced table: the path and what the reports need to describe it.
struct TracedTable {
  Path<double> path;
  io::RunContext context;
};

/// Writes `file` by io::write_atomically's rules (atomic for files, in
/// place for devices and pipes); "-" is standard output. What the program
/// printed before is flushed first, so that an output sharing its
/// descriptor (/dev/fd/1) follows it. A refusal becomes failure(exit_io).
void write_output(const std::filesystem::path& file,
                  const std::function<void(std::ostream&)>& write);

/// Hands standard output to the machine-readable output `option` names
/// ("--knots -", "--json -"): from then on the printed text (audit, notes,
/// "wrote" lines) goes to standard error, and write_output("-") writes to
/// the real standard output. A second claim is a usage error naming both.
void give_standard_output_to(const std::string& option);

/// Flushes standard output (the printed text and any output given to it)
/// and returns the reason when any write to it failed (empty: all written).
std::string finish_standard_output();

/// Descriptors 0, 1 and 2 closed at start are reopened on /dev/null in the
/// direction that fails (stdin write-only, stdout and stderr read-only): a
/// file the program opens never takes their number, and a write to a
/// closed standard output is an error, not a write into that file.
void reserve_standard_descriptors();

/// The one home of the wording of a message for the user: the library's
/// "knotpath: " prefix removed (main() adds exactly one), and the library's
/// names of options (`option 'sign_constraints'`, InferenceOptions::
/// noise_variance, ...) replaced by the program's options.
std::string user_text(std::string message);

/// Prints "knotpath: " + user_text(message) on standard error.
void print_error(const std::string& message);

/// "must be a number >= 0" (and "> 0") checks for numeric options, with the
/// text given quoted in the message.
CLI::Validator non_negative_number();
/// \copydoc non_negative_number
CLI::Validator positive_number();

/// The message of the library's data refusal for the user, with the place
/// in the table's terms (the library counts kept rows and predictor columns
/// from 0): "SOURCE, line L[, column \"NAME\"]: WHAT" for a row's problem
/// (`lines` maps kept rows to the file's lines), "SOURCE: predictor
/// \"NAME\"DETAIL" for a whole predictor column, else "SOURCE: MESSAGE"
/// (the library's, without its "knotpath: " prefix). `names` are the
/// predictors' table names in the design's order.
std::string data_message(const invalid_data& e, const std::string& source, const std::vector<std::string>& names,
                         const io::RowLines& lines);

/// Reads the table and traces its path (progress on stderr when enabled).
TracedTable trace_table(const std::string& table, const ModelArgs& args, const Global& global);

/// trace_table() for the tables of trace and at: one table as trace_table()
/// reads it (on rank 0 of an MPI job; the other processes end quietly), or
/// several as the shards of one table (or one table cut into
/// ModelArgs::pieces pieces at line breaks, io::table_piece), each read in blocks into its
/// statistics by the process that owns it (shards.hpp), the statistics
/// merged in the shard tree and traced on rank 0: the same path for any
/// number of processes. With ModelArgs::column_blocks, one table whose
/// predictors' columns are cut into one block per process, each read and
/// held by its process, the path traced by all of them together (the same
/// events for any number of processes, knots to rounding). Processes other
/// than rank 0 end with quiet_exit.
TracedTable trace_tables(const std::vector<std::string>& tables, const ModelArgs& args, const Global& global);

class Progress;

/// A table read and checked against the model options, not yet traced: the
/// arithmetic is chosen afterwards (trace_loaded in typed_trace.hpp).
struct LoadedTable {
  io::Table table;                       ///< numeric columns (with decimal text when kept)
  TraceOptions options;                  ///< validated for the predictors below
  io::ColumnAssignment columns;          ///< positions of the roles (predictors in order)
  io::RunContext context;                ///< what the reports say about the data
  std::string shown_name;                ///< file name or "<stdin>"
  std::shared_ptr<Progress> progress;    ///< the progress line, kept for the trace
};

/// Reads the table and builds the trace options; keep_decimal_text keeps
/// each cell's decimal text for exact parsing into other arithmetics.
LoadedTable load_table(const std::string& table, const ModelArgs& args, const Global& global,
                       bool keep_decimal_text);

/// Whether --read (with the options that rule blocks out: --indicators,
/// refused with --read blocks) lets a command read the table a block at a
/// time; select decides further (select_command.cpp).
bool streams_rows(const ModelArgs& args);

/// Reads the table a block at a time for a command that keeps its own
/// statistics of the rows (select: one set per fold): `take(block, loaded)`
/// sees each block of --block-rows rows with `loaded.columns` and
/// `loaded.options` set from the first block (the roles and options
/// trace_table gives the table). Returns the table without values (names,
/// counts, every row's line) with its context, as trace_table reads it.
LoadedTable read_in_blocks(const std::string& table, const ModelArgs& args, const Global& global,
                           const std::function<void(io::Table& block, const LoadedTable& loaded)>& take);

/// One shard of a table: a whole table file, or piece `piece` (0-based) of
/// `pieces` of one, cut at line breaks (io::table_piece).
struct ShardSource {
  std::string path;         ///< the file
  std::size_t piece = 0;    ///< which piece (pieces > 0)
  std::size_t pieces = 0;   ///< 0: the whole file
  /// How the audit and the messages name it.
  std::string name() const;
};

/// The shards of a command's TABLE arguments: each table, or the one table
/// cut into `pieces` (--pieces; refused with several tables).
std::vector<ShardSource> shard_sources(const std::vector<std::string>& tables, std::size_t pieces);

/// The shards' sources as the reports name the table they make.
std::string shards_source(const std::vector<ShardSource>& sources);

/// Refuses (exit 3) a shard whose list `what` ("names", "predictors") in its
/// record differs from the first shard's: the shards of a table must have
/// the same columns. The records name their shard in "source".
[[noreturn]] void refuse_unlike_shard(const nlohmann::json& first, const nlohmann::json& shard, const char* what);

/// read_in_blocks() over one shard, then `finish(loaded)` (when given) on
/// the table read. A piece after the first whose reading or `finish` fails
/// with an error of the reader or a data_failure is read again with its
/// lines counted from the file's start, so that the error names the file's
/// line: `restart()` is called before each reading (the caller forgets what
/// `take` saw). A check of the rows that names their lines belongs in
/// `take` or `finish`, not after the call (its lines would be the piece's).
LoadedTable read_in_blocks(const ShardSource& source, const ModelArgs& args, const Global& global,
                           const std::function<void()>& restart,
                           const std::function<void(io::Table& block, const LoadedTable& loaded)>& take,
                           const std::function<void(LoadedTable& loaded)>& finish = {});

/// A table traced in double and in a higher precision (verify).
template <class High>
struct TracedTwice {
  LoadedTable loaded;  ///< the table's context and options (values taken)
  Path<High> high;     ///< traced in High from the cells' decimal text parsed exactly
  Path<double> low;    ///< traced in double from the reader's values
};

/// Reads the table and traces it in High and in double (verify), the
/// table read whole or a block at a time by --read (trace_table's rules:
/// blocks go into one stream of statistics per arithmetic, so that a tall
/// table is never held in high precision). Compiled for float50 and, with
/// MPFR, mpfr_float.
template <class High>
TracedTwice<High> trace_twice(const std::string& table, const ModelArgs& args, const Global& global);

/// --precision and --digits of trace and at.
struct PrecisionArgs {
  std::string precision = "double";  ///< double, long-double, 50, mpfr (with MPFR), exact
  unsigned digits = 0;               ///< decimal digits of mpfr (0: 50)
};

/// Adds --precision and --digits to a command.
void add_precision_options(CLI::App& command, PrecisionArgs& args);

/// Where a path is asked (`at`, `predict`): each value as typed, "" when not
/// given, parsed exactly in the path's arithmetic by answer_point()
/// (point_answer.hpp). `choice` names a penalty saved with a path.
struct PointArgs {
  std::string penalty, mu, budget, relative_budget, choice;
  /// True when one of the values was given.
  bool any() const {
    return !penalty.empty() || !mu.empty() || !budget.empty() || !relative_budget.empty() || !choice.empty();
  }
};

/// How `at` prints its answer (print_point in point_answer.hpp).
enum class PointOutput {
  table,  ///< the heading, then the aligned coefficient table
  csv,    ///< "# point: penalty L, mu M", then predictor,coefficient lines
  json,   ///< the JSON document of the point (point_document)
};

/// trace and at in an arithmetic other than double (lib/cli/precision.cpp);
/// each returns the exit status.
int trace_with_precision(const std::string& table, const ModelArgs& model,
                         const PrecisionArgs& precision, const std::string& knots_file,
                         const std::string& json_file, const std::string& save_file,
                         const Global& global);
int at_with_precision(const std::string& table, const ModelArgs& model,
                      const PrecisionArgs& precision, const PointArgs& point, PointOutput output,
                      const Global& global);

/// A progress line on stderr: shown only when stderr is a terminal, the
/// program is not quiet, and the work has lasted more than about a second.
class Progress {
 public:
  explicit Progress(bool enabled);
  ~Progress();
  Progress(const Progress&) = delete;
  Progress& operator=(const Progress&) = delete;
  /// Sets the text of the line (thread-safe).
  void status(std::string text);

 private:
  void run();
  bool enabled_;
  std::mutex mutex_;
  std::condition_variable wake_;
  std::string text_;
  bool done_ = false;
  bool shown_ = false;
  std::thread worker_;
};

/// The program version (PROJECT_VERSION).
std::string version();

/// Command registration; each returns the CLI11 subcommand.
CLI::App* add_trace_command(CLI::App& app, Global& global);
CLI::App* add_at_command(CLI::App& app, Global& global);
CLI::App* add_demo_command(CLI::App& app, Global& global);
CLI::App* add_verify_command(CLI::App& app, Global& global);
CLI::App* add_predict_command(CLI::App& app, Global& global);

}  // namespace knotpath::cli
