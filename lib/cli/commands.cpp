// The commands of the knotpath program that trace a table: trace and at.

#include <cmath>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <memory>

#include <fmt/format.h>

#include "cli.hpp"
#include "path_checks.hpp"
#include "point_answer.hpp"
#include "report_folder.hpp"
#include "typed_trace.hpp"

namespace knotpath::cli {

namespace {

struct TraceArgs {
  std::string table;
  ModelArgs model;
  PrecisionArgs precision;
  std::string knots_file;
  std::string json_file;
  std::string report_dir;
};

struct AtArgs {
  std::string table;
  ModelArgs model;
  PrecisionArgs precision;
  PointArgs point;  // the point's values with their command-line text
  std::optional<double>& penalty = point.penalty;
  std::optional<double>& mu = point.mu;
  std::optional<double>& budget = point.budget;
  std::optional<double>& relative_budget = point.relative_budget;
  bool csv = false;
};

// The solution at the point `at` asks for, and the question.
struct Point {
  Solution<double> solution;
  AskedPoint<double> asked;
};

Point point_of(const Path<double>& path, const AtArgs& args) {
  Point p;
  try {
    if (args.penalty) {
      p.solution = path.at_penalty(*args.penalty);
      p.asked = {PointKind::penalty, fmt::format("penalty {:.17g}", *args.penalty), *args.penalty};
    } else if (args.mu) {
      if (!(*args.mu >= 0)) throw invalid_query("mu must be >= 0");
      p.solution = path.at_mu(*args.mu);
      p.asked = {PointKind::penalty, fmt::format("mu {:.17g}", *args.mu), path.lambda_of(*args.mu)};
    } else if (args.budget) {
      p.solution = path.at_budget(*args.budget);
      p.asked = {PointKind::budget, fmt::format("L1 budget {:.17g}", *args.budget), *args.budget};
    } else {
      p.solution = path.at_relative_budget(*args.relative_budget);
      p.asked = {PointKind::relative_budget,
                 fmt::format("relative budget {:.17g} (share of the final L1 norm)", *args.relative_budget), 0.0};
    }
  } catch (const invalid_query& e) {
    throw failure(exit_usage, e.what());
  }
  return p;
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

}  // namespace

CLI::App* add_trace_command(CLI::App& app, Global& global) {
  auto args = std::make_shared<TraceArgs>();
  CLI::App* command = app.add_subcommand(
      "trace", "Trace the whole path of a table and print its audit (one line per knot)");
  command->add_option("TABLE", args->table, "Delimited text table with a header row; - reads stdin")
      ->required();
  add_model_options(*command, args->model);
  add_precision_options(*command, args->precision);
  command->add_option("--knots", args->knots_file, "Write the knot table (CSV) to this file")
      ->group("Output");
  command->add_option("--json", args->json_file, "Write the path as a JSON document to this file")
      ->group("Output");
  command
      ->add_option("--report", args->report_dir,
                   "Write an HTML report with charts (report.html and SVG files) into this folder")
      ->group("Output");
  command->footer(
      "Example:\n"
      "  knotpath trace patients.csv --response progression --knots knots.csv --json path.json\n");
  command->callback([args, &global] {
    if (args->precision.precision != "double" || args->precision.digits != 0) {
      if (!args->report_dir.empty())
        throw failure(exit_usage,
                      "--report draws the double path: it cannot be combined with --precision");
      global.status = trace_with_precision(args->table, args->model, args->precision,
                                           args->knots_file, args->json_file, global);
      return;
    }
    TracedTable traced = trace_table(args->table, args->model, global);
    require_finite_path(traced.path);
    std::cout << io::audit_text(traced.path, traced.context);
    std::vector<std::string> written;
    write_path_outputs(traced.path, traced.context, args->knots_file, args->json_file, written);
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
  command->add_option("TABLE", args->table, "Delimited text table with a header row; - reads stdin")
      ->required();
  add_model_options(*command, args->model);
  add_precision_options(*command, args->precision);
  auto keep = [](std::string& text) { return [&text](const std::string& s) { text = s; }; };
  auto* penalty = command->add_option("--penalty", args->penalty, "Penalty lambda (>= 0)")
                      ->each(keep(args->point.penalty_text))
                      ->group("Point");
  auto* mu = command
                 ->add_option("--mu", args->mu,
                              "Size-free penalty: " + std::string(size_free_penalty_rule) +
                                  " (--no-standardize keeps the columns' own scale)")
                 ->each(keep(args->point.mu_text))
                 ->group("Point");
  auto* budget =
      command
          ->add_option("--budget", args->budget,
                       "L1 budget S >= 0 on sum of f_j s_j |b_j|: the lasso point of least RSS "
                       "with L1 norm <= S; with --ridge the elastic-net point of L1 norm S "
                       "(least RSS plus ridge term); with --variant least-angle the first "
                       "point whose L1 norm reaches S")
          ->each(keep(args->point.budget_text))
          ->group("Point");
  auto* relative =
      command
          ->add_option("--relative-budget", args->relative_budget,
                       "Relative budget R in [0, 1]: the L1 budget R times the final L1 norm")
          ->each(keep(args->point.relative_budget_text))
          ->group("Point");
  penalty->excludes(mu)->excludes(budget)->excludes(relative);
  mu->excludes(budget)->excludes(relative);
  budget->excludes(relative);
  command->add_flag("--csv", args->csv, "Print predictor,coefficient lines instead of a table")
      ->group("Output");
  command->footer(
      "Example:\n"
      "  knotpath at patients.csv --response progression --relative-budget 0.5 --csv\n");
  command->callback([args, &global] {
    if (!args->penalty && !args->mu && !args->budget && !args->relative_budget)
      throw failure(exit_usage, "at: give one of --penalty, --mu, --budget or --relative-budget");
    if (args->precision.precision != "double" || args->precision.digits != 0) {
      global.status = at_with_precision(args->table, args->model, args->precision, args->point,
                                        args->csv, global);
      return;
    }
    TracedTable traced = trace_table(args->table, args->model, global);
    require_finite_path(traced.path);
    const Path<double>& path = traced.path;
    const Point point = point_of(path, *args);
    const Solution<double>& solution = point.solution;
    const PointAnswer answer = describe_point(path, solution, point.asked);
    warn_if_suspect(path, solution, traced.context);
    if (!args->csv)
      std::cout << answer.heading;
    else if (!answer.note.empty())
      std::cerr << "knotpath: note: " << answer.note << '\n';
    std::cout << io::coefficient_table(solution, path, traced.context.predictor_names, args->csv);
    std::cout.flush();
    global.status = finished_status(path);
  });
  return command;
}

}  // namespace knotpath::cli
