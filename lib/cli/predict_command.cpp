// knotpath predict: scores the rows of a new table with a saved path, at a
// penalty, a size-free penalty, an L1 budget or a saved choice, without
// tracing again. Columns are matched by name; the predictions are on the
// response's scale (the path's coefficients are on the original scale).

#include <algorithm>
#include <iostream>
#include <limits>
#include <memory>
#include <optional>
#include <sstream>
#include <string>
#include <vector>

#include <fmt/format.h>

#include "cli.hpp"
#include "point_answer.hpp"
#include "report_folder.hpp"
#include "saved_file.hpp"
#include "typed_trace.hpp"

namespace knotpath::cli {

namespace {

struct PredictArgs {
  std::string saved;
  std::string table;
  PointArgs point;  // no relative budget: predict offers none
  std::string out_file;
  std::string id_column;
  CellArgs cells;
  std::string reading = "auto";   // --read: auto (blocks unless indicators), whole or blocks
  std::size_t block_rows = 4096;  // --block-rows
};

bool listed(const std::vector<std::string>& list, const std::string& name) {
  return std::find(list.begin(), list.end(), name) != list.end();
}

// The new table's text columns that the saved path's were expanded from
// hold only levels the path knows (a level it never saw has no indicator
// predictor, so its rows would be scored as the reference level): another
// level is failure(exit_bad_input) naming it.
void check_levels(const io::Table& table, const std::vector<io::IndicatorColumn>& expanded, const std::string& shown) {
  for (const auto& saved : expanded)
    for (const auto& made : table.indicator_columns) {
      if (made.source != saved.source) continue;
      for (const auto& level : made.levels)
        if (!listed(saved.levels, level)) {
          throw failure(exit_bad_input,
                        fmt::format("{}: column \"{}\" holds \"{}\", a level the saved path was not traced with "
                                    "(it knows {}); rows with it cannot be scored",
                                    shown, saved.source, level, quoted_names(saved.levels)));
        }
    }
}

// Where the path's predictors are among the new table's columns, in the
// path's order (-1: an indicator of a level the new rows lack, a column of
// zeros). Any other missing predictor column is failure(exit_bad_input)
// naming it. The columns not used are noted on stderr. The table may be a
// block of read_table_blocks(): every block has the columns of the first.
template <class Scalar>
std::vector<Index> predictor_places(const io::Table& table, const Path<Scalar>& path,
                                    const std::vector<io::IndicatorColumn>& expanded, const std::string& shown) {
  std::vector<std::string> indicator_names, made_names;
  for (const auto& e : expanded) indicator_names.insert(indicator_names.end(), e.names.begin(), e.names.end());
  for (const auto& made : table.indicator_columns) made_names.insert(made_names.end(), made.names.begin(), made.names.end());
  std::vector<Index> where;
  std::vector<std::string> names;
  for (Index j = 0; j < path.predictor_count(); ++j) {
    const std::string name = path.predictor_name(j);
    const Index at = table.find(name);
    if (at < 0 && !listed(indicator_names, name)) {
      if (listed(table.text_columns, name))
        throw failure(exit_bad_input,
                      fmt::format("{}: column \"{}\", a predictor of the saved path, holds text, not numbers",
                                  shown, name));
      throw failure(exit_bad_input,
                    fmt::format("{}: no column \"{}\", a predictor of the saved path (columns are matched by name)",
                                shown, name));
    }
    where.push_back(at);
    names.push_back(name);
  }
  std::vector<std::string> ignored;
  for (const auto& name : table.names)
    if (!listed(names, name) && !listed(made_names, name) && name != table.key_name) ignored.push_back(name);
  for (const auto& name : table.text_columns)
    if (name != table.key_name) ignored.push_back(name);
  if (!ignored.empty()) {
    std::cerr << fmt::format("knotpath: note: {}: columns the saved path does not use, ignored: {}\n", shown,
                             quoted_names(ignored));
  }
  return where;
}

// The table's columns at `where` (predictor_places) as a matrix, taken out
// of the table (exactly parsed beyond double).
template <class Scalar>
Matrix<Scalar> predictor_rows(io::Table& table, const std::vector<Index>& where) {
  const bool all_present = std::find(where.begin(), where.end(), Index(-1)) == where.end();
  if constexpr (std::is_same_v<Scalar, double>)
    if (all_present) return table.take_matrix(where);  // block by block: the peak stays near one copy
  Matrix<Scalar> x = Matrix<Scalar>::Zero(static_cast<Index>(table.rows), static_cast<Index>(where.size()));
  for (std::size_t k = 0; k < where.size(); ++k) {
    if (where[k] < 0) continue;
    if constexpr (std::is_same_v<Scalar, double>)
      x.col(static_cast<Index>(k)) = table.take_vector(where[k]);
    else
      x.col(static_cast<Index>(k)) =
          parse_decimal_cells<Scalar>(table.decimal_text.at(table.checked_column(where[k], "predict")));
  }
  return x;
}

// The predictions' CSV header: a key column (the table's key column by its
// name, else "row": the data row's number) and "prediction".
void write_prediction_header(std::ostream& out, const io::Table& table) {
  out << (table.key_name.empty() ? std::string("row") : io::csv_text_field(table.key_name)) << ",prediction\n";
}

// The predictions of the table's rows (a block whose first row is data row
// `first_row` + 1), one CSV line each.
template <class Scalar>
void write_predictions(std::ostream& out, const io::Table& table, const Vector<Scalar>& values,
                       std::size_t first_row) {
  const bool keyed = !table.key_name.empty();
  for (Index i = 0; i < values.size(); ++i) {
    const auto u = static_cast<std::size_t>(i);
    out << (keyed ? io::csv_text_field(table.keys[u]) : std::to_string(first_row + u + 1)) << ','
        << io::number_text(values(i)) << '\n';
  }
}

// The predictions of a table's rows (or a block's) at a solution.
template <class Scalar>
Vector<Scalar> predictions(const Matrix<Scalar>& x, const Solution<Scalar>& solution) {
  Vector<Scalar> values = x * solution.coefficients;
  values.array() += solution.intercept;
  return values;
}

// Whether the new table is read a block at a time. Text columns the path's
// predictors were expanded from need every level of the column before its
// first row can be coded (and checked against the saved levels), so such a
// path reads the table whole; --read blocks is refused for it.
template <class Scalar>
bool scores_in_blocks(const io::SavedPath<Scalar>& saved, const PredictArgs& args) {
  if (args.reading == "whole") return false;
  if (saved.expanded.empty()) return true;
  if (args.reading == "blocks")
    throw failure(exit_usage,
                  "--read blocks cannot score a path traced with indicator columns: a text column's levels are "
                  "known only after its last row (use --read whole)");
  return false;
}

// Reads the new table whole, then writes the header and every prediction.
template <class Scalar>
void score_whole(std::ostream& out, const io::SavedPath<Scalar>& saved, const Solution<Scalar>& solution,
                 const PredictArgs& args, const io::TableReadOptions& read, const std::string& shown) {
  io::Table table = io::read_table(args.table, read);
  check_levels(table, saved.expanded, shown);
  const std::vector<Index> where = predictor_places(table, saved.path, saved.expanded, shown);
  const Vector<Scalar> values = predictions(predictor_rows<Scalar>(table, where), solution);
  write_prediction_header(out, table);
  write_predictions(out, table, values, 0);
}

// Reads the new table a block of rows at a time and writes each block's
// predictions once it is scored: memory independent of the row count. The
// predictions are those of score_whole(), byte for byte (each row's is the
// same product). A bad row ends the output after the blocks before it.
template <class Scalar>
void score_in_blocks(std::ostream& out, const io::SavedPath<Scalar>& saved, const Solution<Scalar>& solution,
                     const PredictArgs& args, const io::TableReadOptions& read, const std::string& shown) {
  std::optional<std::vector<Index>> where;
  io::read_table_blocks(args.table, read, args.block_rows, [&](io::Table& block) {
    if (!where) {
      where = predictor_places(block, saved.path, saved.expanded, shown);
      write_prediction_header(out, block);
    }
    write_predictions(out, block, predictions(predictor_rows<Scalar>(block, *where), solution), block.first_row);
  });
}

template <class Scalar>
int predict_with(const io::SavedPath<Scalar>& saved, const PredictArgs& args, const Global& global) {
  const Path<Scalar>& path = saved.path;
  const auto point = saved_point(saved, args.point, args.saved);
  const Solution<Scalar>& solution = point.first;
  const PointAnswer answer = describe_point(path, solution, point.second);  // refuses points outside the path
  // The cell rules of the commands that trace; a row with a missing
  // predictor cell is refused (no prediction can be made for it).
  io::TableReadOptions read = cell_read_options(args.cells);
  read.missing_advice = "predict scores every row it reads: fill the cell, or leave the row out of NEW_TABLE";
  // The text columns the path's were expanded from, expanded alike: every
  // level becomes a column (the reference's unused), checked against the
  // saved levels (check_levels).
  for (const auto& e : saved.expanded) read.indicators.columns.push_back(e.source);
  read.indicators.leave_out_reference = false;
  read.indicators.max_levels = std::numeric_limits<std::size_t>::max();
  read.keep_decimal_text = !std::is_same_v<Scalar, double>;
  read.keep_row_keys = true;
  read.key_column = args.id_column;
  const std::string shown = args.table == "-" ? "<stdin>" : args.table;
  const bool in_blocks = scores_in_blocks(saved, args);
  auto score = [&](std::ostream& out) {
    if (in_blocks)
      score_in_blocks(out, saved, solution, args, read, shown);
    else
      score_whole(out, saved, solution, args, read, shown);
  };
  auto heading = [&] {
    if (!global.quiet)
      std::cerr << "knotpath: predictions of "
                << (saved.response.empty() ? "the response" : "\"" + saved.response + "\"") << " at "
                << answer.heading;
    // Predictions score rows, often people: the cautions go with them, always.
    for (const auto& line : caution_lines(false)) std::cerr << "knotpath: caution: " << line << '\n';
  };
  if (args.out_file.empty()) {
    if (in_blocks) {
      score(std::cout);  // each block's lines as they are scored
      heading();
    } else {
      std::ostringstream text;
      score(text);
      heading();
      std::cout << text.str();
    }
    std::cout.flush();
  } else {
    write_output(args.out_file, score);  // atomic: a failure leaves no partial file
    heading();
    std::cout << "wrote " << args.out_file << '\n';
  }
  return exit_ok;
}

}  // namespace

CLI::App* add_predict_command(CLI::App& app, Global& global) {
  auto args = std::make_shared<PredictArgs>();
  CLI::App* command = app.add_subcommand(
      "predict", "Predict the response of new rows with a saved path (no new trace)");
  command->add_option("SAVED", args->saved, "A path saved by knotpath trace --save or knotpath select --save")
      ->required();
  command->add_option("NEW_TABLE", args->table, "Delimited text table of new rows with a header row; - reads stdin")
      ->required();
  add_point_options(*command, args->point);
  command
      ->add_option("--id", args->id_column,
                   "Column whose cells name the rows in the output (default: the table's first text column; "
                   "without one, rows are numbered from 1)")
      ->group("Table");
  add_cell_options(*command, args->cells, "a row missing a predictor's cell is refused");
  add_reading_options(*command, args->reading, args->block_rows,
                      "scored and written as it is read (a bad row ends the output after the blocks before it)",
                      "blocks, unless the saved path has indicator columns of a text column: their levels are "
                      "checked over the whole table first");
  command->add_option("--out", args->out_file, "Write the predictions (CSV) to this file instead of stdout")
      ->group("Output");
  command->footer(
      "Columns of NEW_TABLE are matched to the saved path's predictors by name; a missing one is an error,\n"
      "others are ignored with a note. Output: CSV with a row key (the key column, or \"row\") and the\n"
      "prediction on the response's scale.\n"
      "Example:\n"
      "  knotpath select patients.csv --response progression --save model.kpath\n"
      "  knotpath predict model.kpath new_patients.csv --choice parsimonious --out scores.csv\n");
  command->callback([args, &global] {
    if (!args->point.any())
      throw failure(exit_usage, "predict: give one of --penalty, --mu, --budget, --relative-budget or --choice");
    global.status = with_saved_path(args->saved, [&](const auto& saved) { return predict_with(saved, *args, global); });
  });
  return command;
}

}  // namespace knotpath::cli
