// The commands of the knotpath program that trace a table: trace and at.

#include <cmath>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <memory>

#include <fmt/format.h>

#include "cli.hpp"
#include "ranks.hpp"
#include "path_checks.hpp"
#include "point_answer.hpp"
#include "report_folder.hpp"
#include "saved_file.hpp"
#include "typed_trace.hpp"

namespace knotpath::cli {

namespace {

struct TraceArgs {
  std::vector<std::string> tables;  // one table, or the shards of one
  ModelArgs model;
  PrecisionArgs precision;
  std::string knots_file;
  std::string json_file;
  std::string report_dir;
  std::string save_file;
};

struct AtArgs {
  std::vector<std::string> tables;  // one table, or the shards of one (none with --path)
  ModelArgs model;
  PrecisionArgs precision;
  PointArgs point;     // --choice only with --path: a penalty saved with it
  bool csv = false;
  bool json = false;
  std::string saved;   // --path: a saved path instead of TABLE
};

// `at --path SAVED`: the table options describe a trace, which a saved path
// has had already; giving one is a usage error rather than silently ignored.
void refuse_trace_options(const CLI::App& command) {
  for (const CLI::Option* option : command.get_options()) {
    const std::string& group = option->get_group();
    if ((group == "Model" || group == "Stopping" || group == "Table" || group == "Arithmetic" ||
         group == "Performance") &&
        option->count() > 0)
      throw failure(exit_usage, option->get_name() +
                                    " describes how a table is traced; with --path the saved path is "
                                    "used as it was traced");
  }
}

int at_saved_path(const AtArgs& args, PointOutput output) {
  return with_saved_path(args.saved, [&](const auto& saved) {
    const auto& path = saved.path;
    const auto [solution, asked] = saved_point(saved, args.point, args.saved);
    const PointAnswer answer = describe_point(path, solution, asked);
    std::vector<std::string> names;
    for (Index j = 0; j < path.predictor_count(); ++j) names.push_back(path.predictor_name(j));
    print_point(path, solution, asked, answer, names, output);
    std::cout.flush();
    return exit_ok;
  });
}

// The point lies on the segment after the last knot at or above its
// penalty; that knot's estimate (carried forward along the path) is the
// point's. A suspect one is warned about on stderr.
void warn_if_suspect(const Path<double>& path, const Solution<double>& solution,
                     const io::RunContext& context) {
  if (!path.suspect()) return;
  const Knot<double>* upper = &path.knots().front();
  for (const auto& knot : path.knots()) {
    if (knot.penalty < solution.penalty) break;
    upper = &knot;
  }
  if (upper->suspect)
    std::cerr << fmt::format(
        "knotpath: WARNING: SUSPECT POINT: the double path here has an {} (threshold {:.2g}); {}\n",
        io::estimated_error_text(upper->estimated_error), path.options().suspect_threshold,
        io::suspect_advice_text(context));
}

// The one table of a trace in another arithmetic (read whole, by rank 0 of
// an MPI job; the other processes end quietly).
const std::string& single_table(const std::vector<std::string>& tables) {
  if (tables.size() != 1)
    throw failure(exit_usage, "several tables (shards) are traced in double precision: --precision reads one "
                              "table whole");
  if (Ranks::world().rank() != 0) throw quiet_exit{0};
  return tables.front();
}

// Tables are read in blocks in double only; another arithmetic reads the
// table whole (the automatic reading does so without a word).
void refuse_blocks_with_precision(const ModelArgs& model) {
  if (model.reading == "blocks")
    throw failure(exit_usage, "--read blocks traces in double precision: with --precision the table is "
                              "read whole (--read whole or auto)");
  if (model.pieces != 0)
    throw failure(exit_usage, "--pieces reads the pieces in blocks, in double precision: with --precision the "
                              "table is read whole");
  if (model.column_blocks)
    throw failure(exit_usage, "--column-blocks traces in double precision: with --precision one process reads "
                              "the table whole");
}

}  // namespace

CLI::App* add_trace_command(CLI::App& app, Global& global) {
  auto args = std::make_shared<TraceArgs>();
  CLI::App* command = app.add_subcommand(
      "trace", "Trace the whole path of a table and print its audit (one line per knot)");
  command
      ->add_option("TABLE", args->tables,
                   "Delimited text table with a header row; - reads stdin. Several tables are read as "
                   "the shards of one (the same columns; see --read)")
      ->required();
  add_model_options(*command, args->model);
  add_reading_options(*command, args->model);
  add_pieces_option(*command, args->model);
  add_column_blocks_option(*command, args->model);
  add_precision_options(*command, args->precision);
  command->add_option("--knots", args->knots_file, "Write the knot table (CSV) to this file")
      ->group("Output");
  command->add_option("--json", args->json_file, "Write the path as a JSON document to this file")
      ->group("Output");
  command
      ->add_option("--report", args->report_dir,
                   "Write an HTML report with charts (report.html and SVG files) into this folder")
      ->group("Output");
  command
      ->add_option("--save", args->save_file,
                   "Save the path, exactly, for knotpath predict and knotpath at --path")
      ->group("Output");
  command->footer(
      "Example:\n"
      "  knotpath trace patients.csv --response progression --knots knots.csv --json path.json\n"
      "  knotpath trace patients.csv --response progression --save model.kpath\n"
      "  mpirun -n 4 knotpath trace expression.csv --response outcome --column-blocks --json path.json\n");
  command->callback([args, &global] {
    if (args->precision.precision != "double" || args->precision.digits != 0) {
      refuse_blocks_with_precision(args->model);
      if (!args->report_dir.empty())
        throw failure(exit_usage,
                      "--report draws the double path: it cannot be combined with --precision");
      global.status = trace_with_precision(single_table(args->tables), args->model, args->precision,
                                           args->knots_file, args->json_file, args->save_file, global);
      return;
    }
    TracedTable traced = trace_tables(args->tables, args->model, global);
    require_finite_path(traced.path);
    std::cout << io::audit_text(traced.path, traced.context);
    std::vector<std::string> written;
    write_path_outputs(traced.path, traced.context, args->knots_file, args->json_file, written);
    if (!args->save_file.empty()) {
      write_saved(args->save_file, traced.path, traced.context);
      written.push_back(args->save_file);
    }
    if (!args->report_dir.empty())
      written.push_back(
          write_report_dir(args->report_dir, traced.path, traced.context, nullptr).front());
    for (const auto& file : written) std::cout << "wrote " << file << '\n';
    std::cout.flush();
    global.status = finished_status(traced.path);
  });
  return command;
}

CLI::App* add_at_command(CLI::App& app, Global& global) {
  auto args = std::make_shared<AtArgs>();
  CLI::App* command = app.add_subcommand(
      "at", "Coefficients (original scale, intercept first) at one point of the path");
  command->add_option("TABLE", args->tables,
                      "Delimited text table with a header row; - reads stdin (or give --path instead); "
                      "several tables are read as the shards of one");
  command
      ->add_option("--path", args->saved,
                   "A path saved by knotpath trace --save or select --save, asked instead of tracing a "
                   "TABLE (in the arithmetic it was saved in)")
      ->group("Saved path");
  add_model_options(*command, args->model);
  add_reading_options(*command, args->model);
  add_pieces_option(*command, args->model);
  add_column_blocks_option(*command, args->model);
  command->get_option("--response")->required(false);  // required with TABLE (checked below)
  add_precision_options(*command, args->precision);
  add_point_options(*command, args->point);
  auto* csv = command->add_flag("--csv", args->csv,
                                "Print a '# point: penalty L, mu M' line, then predictor,coefficient lines")
                  ->group("Output");
  command
      ->add_flag("--json", args->json,
                 "Print the point as a JSON document: what was asked, penalty, mu, L1 norm, "
                 "intercept and every coefficient by name")
      ->excludes(csv)
      ->group("Output");
  command->footer(
      "Example:\n"
      "  knotpath at patients.csv --response progression --relative-budget 0.5 --csv\n"
      "  knotpath at --path model.kpath --choice parsimonious --json\n");
  command->callback([args, command, &global] {
    const PointOutput output = args->json ? PointOutput::json : args->csv ? PointOutput::csv : PointOutput::table;
    if (!args->point.any())
      throw failure(exit_usage, "at: give one of --penalty, --mu, --budget, --relative-budget or (with --path) --choice");
    if (!args->saved.empty()) {
      if (!args->tables.empty())
        throw failure(exit_usage, "at: give a TABLE to trace or --path SAVED, not both");
      refuse_trace_options(*command);
      global.status = at_saved_path(*args, output);
      return;
    }
    if (args->tables.empty()) throw failure(exit_usage, "at: give a TABLE to trace (or --path SAVED)");
    if (args->model.response.empty()) throw failure(exit_usage, "at: --response is required with a TABLE");
    if (!args->point.choice.empty())
      throw failure(exit_usage,
                    "--choice names a penalty saved with a path: use it with --path SAVED (a file written "
                    "by knotpath select --save)");
    if (args->precision.precision != "double" || args->precision.digits != 0) {
      refuse_blocks_with_precision(args->model);
      global.status = at_with_precision(single_table(args->tables), args->model, args->precision, args->point, output, global);
      return;
    }
    TracedTable traced = trace_tables(args->tables, args->model, global);
    require_finite_path(traced.path);
    const Path<double>& path = traced.path;
    const auto [solution, asked] = answer_point(path, args->point);
    const PointAnswer answer = describe_point(path, solution, asked);
    warn_if_suspect(path, solution, traced.context);
    print_point(path, solution, asked, answer, traced.context.predictor_names, output);
    std::cout.flush();
    global.status = finished_status(path);
  });
  return command;
}

}  // namespace knotpath::cli
