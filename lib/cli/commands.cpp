// The commands of the knotpath program: trace, at, demo.

#include <cmath>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <memory>

#include <fmt/format.h>

#include <knotpath/demo.hpp>

#include "cli.hpp"
#include "select_command.hpp"

namespace knotpath::cli {

namespace {

// Refuses paths whose numbers are not finite (a numerical failure the
// library should never produce; checked so that it can never be written).
void require_finite(const Path<double>& path) {
  for (const auto& knot : path.knots()) {
    bool finite = std::isfinite(knot.penalty) && std::isfinite(knot.l1_norm) &&
                  std::isfinite(knot.intercept) && std::isfinite(knot.rss);
    for (const auto& [j, value] : knot.coefficients) finite = finite && std::isfinite(value);
    if (!finite)
      throw failure(exit_numerical,
                    fmt::format("numerical trouble: knot {} holds a value that is not finite",
                                knot.step));
  }
}

void write_output(const std::filesystem::path& file,
                  const std::function<void(std::ostream&)>& write) {
  try {
    io::write_atomically(file, write);
  } catch (const io::output_error& e) {
    throw failure(exit_io, e.what());
  }
}

void write_reports(const TracedTable& traced, const std::string& knots_file,
                   const std::string& json_file, std::vector<std::string>& written) {
  if (!knots_file.empty()) {
    write_output(knots_file, [&](std::ostream& out) {
      io::write_knot_table(out, traced.path, traced.context.predictor_names);
    });
    written.push_back(knots_file);
  }
  if (!json_file.empty()) {
    write_output(json_file, [&](std::ostream& out) {
      out << io::path_document(traced.path, traced.context).dump(2) << '\n';
    });
    written.push_back(json_file);
  }
}

// Exit status of a finished trace: numerical trouble when the safety bound
// on steps stopped it.
int finish(const Path<double>& path) {
  if (path.stop_reason() == StopReason::step_limit) {
    std::cerr << "knotpath: numerical trouble: the homotopy hit its safety bound on steps; "
                 "the path is incomplete (outputs describe the part traced)\n";
    return exit_numerical;
  }
  return exit_ok;
}

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
  std::optional<double>& fraction = point.fraction;
  bool csv = false;
};

struct DemoArgs {
  std::string out = "knotpath-demo";
  std::string report_dir;  // empty: OUT/report
};

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
  command->add_option("--report", args->report_dir,
                      "Write an HTML report with charts (report.html and SVG files) into this folder")
      ->group("Output");
  command->footer(
      "Example:\n"
      "  knotpath trace patients.csv --response progression --knots knots.csv --json path.json\n");
  command->callback([args, &global] {
    if (args->precision.precision != "double" || args->precision.digits != 0) {
      if (!args->report_dir.empty())
        throw failure(exit_usage, "--report draws the double path: it cannot be combined with --precision");
      global.status = trace_with_precision(args->table, args->model, args->precision,
                                           args->knots_file, args->json_file, global);
      return;
    }
    TracedTable traced = trace_table(args->table, args->model, global);
    require_finite(traced.path);
    std::cout << io::audit_text(traced.path, traced.context);
    std::vector<std::string> written;
    write_reports(traced, args->knots_file, args->json_file, written);
    if (!args->report_dir.empty())
      written.push_back(write_report_dir(args->report_dir, traced.path, traced.context, nullptr).front());
    for (const auto& file : written) std::cout << "wrote " << file << '\n';
    std::cout.flush();
    global.status = finish(traced.path);
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
  auto* mu = command->add_option("--mu", args->mu,
                                 "Size-free penalty mu = lambda / sqrt(n) (n = sum of weights)")
                 ->each(keep(args->point.mu_text))
                 ->group("Point");
  auto* budget = command->add_option("--budget", args->budget,
                                     "L1 budget: sum of f_j s_j |b_j| (>= 0)")
                     ->each(keep(args->point.budget_text))
                     ->group("Point");
  auto* fraction = command->add_option("--fraction", args->fraction,
                                       "Fraction in [0, 1] of the final L1 norm")
                       ->each(keep(args->point.fraction_text))
                       ->group("Point");
  penalty->excludes(mu)->excludes(budget)->excludes(fraction);
  mu->excludes(budget)->excludes(fraction);
  budget->excludes(fraction);
  command->add_flag("--csv", args->csv, "Print predictor,coefficient lines instead of a table")
      ->group("Output");
  command->footer(
      "Example:\n"
      "  knotpath at patients.csv --response progression --fraction 0.5 --csv\n");
  command->callback([args, &global] {
    if (!args->penalty && !args->mu && !args->budget && !args->fraction)
      throw failure(exit_usage, "at: give one of --penalty, --mu, --budget or --fraction");
    if (args->precision.precision != "double" || args->precision.digits != 0) {
      global.status = at_with_precision(args->table, args->model, args->precision, args->point,
                                        args->csv, global);
      return;
    }
    TracedTable traced = trace_table(args->table, args->model, global);
    require_finite(traced.path);
    const Path<double>& path = traced.path;
    Solution<double> solution;
    std::string asked;
    try {
      if (args->penalty) {
        solution = path.at_penalty(*args->penalty);
        asked = fmt::format("penalty {:.17g}", *args->penalty);
      } else if (args->mu) {
        if (!(*args->mu >= 0)) throw invalid_query("mu must be >= 0");
        const double n = path.preparation().weight_sum;  // mu = lambda / sqrt(n), or lambda / n unstandardized
        const double lambda = *args->mu * (path.preparation().standardized ? std::sqrt(n) : n);
        solution = path.at_penalty(lambda);
        asked = fmt::format("mu {:.17g}", *args->mu);
      } else if (args->budget) {
        solution = path.at_budget(*args->budget);
        asked = fmt::format("L1 budget {:.17g}", *args->budget);
      } else {
        solution = path.at_fraction(*args->fraction);
        asked = fmt::format("fraction {:.17g} of the final L1 norm", *args->fraction);
      }
    } catch (const invalid_query& e) {
      throw failure(exit_usage, e.what());
    }
    if (solution.beyond_path)
      std::cerr << "knotpath: note: the point asked for lies beyond the traced path ("
                << to_string(path.stop_reason()) << "); showing the last knot\n";
    if (path.suspect()) {
      // The point lies on the segment after the last knot at or above its
      // penalty; that knot's estimate (carried forward along the path) is
      // the point's.
      const Knot<double>* upper = &path.knots().front();
      for (const auto& knot : path.knots()) {
        if (knot.penalty < solution.penalty) break;
        upper = &knot;
      }
      if (upper->suspect)
        std::cerr << fmt::format(
            "knotpath: WARNING: SUSPECT POINT: the estimated relative error of the double path here "
            "is {:.2g} (threshold {:.2g}); {}\n",
            upper->estimated_error, path.options().suspect_threshold, io::suspect_advice_text(traced.context));
    }
    if (!args->csv)
      std::cout << fmt::format("{}: penalty {:.10g} (mu {:.10g}), L1 norm {:.10g}\n", asked,
                               solution.penalty,
                               io::mu_as_double(path, solution.penalty), solution.l1_norm);
    std::cout << io::coefficient_table(solution, path, traced.context.predictor_names, args->csv);
    std::cout.flush();
    global.status = finish(path);
  });
  return command;
}

CLI::App* add_demo_command(CLI::App& app, Global& global) {
  auto args = std::make_shared<DemoArgs>();
  CLI::App* command = app.add_subcommand(
      "demo",
      "Run the whole job on built-in invented data (greenhouse yields with a known sparse truth)");
  command->add_option("--out", args->out, "Folder for the demo's outputs")
      ->default_str("knotpath-demo");
  command->add_option("--report", args->report_dir,
                      "Folder of the HTML report with charts (default: OUT/report)");
  command->footer("Example:\n  knotpath demo --out /tmp/knotpath-demo\n");
  command->callback([args, &global] {
    const demo::DemoData data = demo::greenhouse();
    const std::filesystem::path folder(args->out);
    std::error_code ec;
    std::filesystem::create_directories(folder, ec);
    if (ec) throw failure(exit_io, "cannot create " + folder.string() + ": " + ec.message());
    const std::filesystem::path table_file = folder / "greenhouse.csv";
    const std::filesystem::path knots_file = folder / "knots.csv";
    const std::filesystem::path json_file = folder / "path.json";

    // 1. The invented data as a table, 17 significant digits (round-trips).
    write_output(table_file, [&](std::ostream& out) {
      for (const auto& name : data.predictor_names) out << name << ',';
      out << data.response_name << '\n';
      for (Index i = 0; i < data.x.rows(); ++i) {
        for (Index j = 0; j < data.x.cols(); ++j) out << io::round_trip(data.x(i, j)) << ',';
        out << io::round_trip(data.y(i)) << '\n';
      }
    });
    // 2. Read it back and trace, exactly as `trace` does for a user's table.
    ModelArgs model;
    model.response = data.response_name;
    TracedTable traced = trace_table(table_file.string(), model, global);
    traced.context.source = "built-in demo, " + table_file.string();
    require_finite(traced.path);
    std::cout << "knotpath demo: invented greenhouse data (240 weeks, 14 recorded conditions)\n\n";
    std::cout << io::audit_text(traced.path, traced.context) << '\n';

    // 3. How the path compares with the truth the data were generated from.
    std::string truth, first;
    std::size_t true_count = 0;
    for (Index j = 0; j < data.true_coefficients.size(); ++j)
      if (data.true_coefficients(j) != 0) {
        truth += (true_count ? ", " : "") + data.predictor_names[static_cast<std::size_t>(j)];
        ++true_count;
      }
    std::size_t entered = 0;
    for (const auto& knot : traced.path.events()) {
      if (knot.event != EventKind::enter || entered == true_count) continue;
      first += (entered ? ", " : "") + data.predictor_names[static_cast<std::size_t>(knot.predictor)];
      ++entered;
    }
    std::cout << "generating model uses:     " << truth << '\n';
    std::cout << "first " << true_count << " to enter the path: " << first << "\n\n";
    const charts::SelectionCurve selection = demo_selection(data, table_file.string(), std::cout);

    std::vector<std::string> written{table_file.string()};
    write_reports(traced, knots_file.string(), json_file.string(), written);
    std::cout << "wrote " << written[0] << " (the invented data)\n";
    std::cout << "wrote " << written[1] << " (knot table)\n";
    std::cout << "wrote " << written[2] << " (JSON document)\n";
    const std::filesystem::path report_dir =
        args->report_dir.empty() ? folder / "report" : std::filesystem::path(args->report_dir);
    std::cout << "wrote " << write_report_dir(report_dir, traced.path, traced.context, &selection).front()
              << " (HTML report with charts; open it in a browser)\n";
    std::cout << "next: knotpath at " << table_file.string() << " --response "
              << data.response_name << " --fraction 0.5\n";
    std::cout.flush();
    global.status = finish(traced.path);
  });
  return command;
}

}  // namespace knotpath::cli
