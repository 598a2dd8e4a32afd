// knotpath demo: the whole job on built-in invented data (greenhouse
// yields with a known sparse truth): the table, its path, how the path
// compares with the truth, the choice of a penalty, and the report.

#include <filesystem>
#include <iostream>
#include <memory>

#include <fmt/format.h>

#include <knotpath/demo.hpp>
#include <knotpath/io/charts.hpp>
#include <knotpath/cross_validation.hpp>

#include "cli.hpp"
#include "path_checks.hpp"
#include "report_folder.hpp"
#include "typed_trace.hpp"

namespace knotpath::cli {

namespace {

namespace fs = std::filesystem;

struct DemoArgs {
  std::string out = "knotpath-demo";
  std::string report_dir;  // empty: OUT/report
};

// The invented data as a table, 17 significant digits (round-trips).
void write_demo_table(const demo::DemoData& data, const fs::path& file) {
  write_output(file, [&](std::ostream& out) {
    for (const auto& name : data.predictor_names) out << name << ',';
    out << data.response_name << '\n';
    for (Index i = 0; i < data.x.rows(); ++i) {
      for (Index j = 0; j < data.x.cols(); ++j) out << io::round_trip(data.x(i, j)) << ',';
      out << io::round_trip(data.y(i)) << '\n';
    }
  });
}

// How the path compares with the truth the data were generated from: the
// predictors of the generating model, and as many first entrants.
void print_truth(const demo::DemoData& data, const Path<double>& path, std::ostream& out) {
  std::string truth, first;
  std::size_t true_count = 0;
  for (Index j = 0; j < data.true_coefficients.size(); ++j)
    if (data.true_coefficients(j) != 0) {
      truth += (true_count ? ", " : "") + data.predictor_names[static_cast<std::size_t>(j)];
      ++true_count;
    }
  std::size_t entered = 0;
  for (const auto& event : path.events()) {
    if (event.kind != EventKind::enter || entered == true_count) continue;
    first += (entered ? ", " : "") + data.predictor_names[static_cast<std::size_t>(event.predictor)];
    ++entered;
  }
  out << "generating model uses:     " << truth << '\n';
  out << "first " << true_count << " to enter the path: " << first << "\n\n";
}

// The demo's selection section: exact 10-fold cross-validation of the demo
// data (default seed), printed to `out` (chosen penalties and the predictors
// kept). Returns the selection curve for the demo's report.
charts::SelectionCurve demo_selection(const demo::DemoData& data, const std::string& table_file,
                                      std::ostream& out) {
  CrossValidationOptions cv_options;  // 10 folds, default seed
  const auto cv = cross_validate<double>(data.x, data.y, TraceOptions{}, cv_options);
  CriteriaOptions criteria_options;
  criteria_options.cross_validated_penalty = cv.minimum.lambda;  // as select (criteria.hpp)
  const auto criteria = information_criteria<double>(data.x, data.y, cv.full_path, criteria_options);
  require_finite_path(cv.full_path);
  auto kept = [&](double lambda) {
    std::string list;
    for (Index j : cv.full_path.active_at(lambda))
      list += (list.empty() ? "" : ", ") + data.predictor_names[static_cast<std::size_t>(j)];
    return list;
  };
  out << fmt::format("choosing the penalty (exact {}-fold cross-validation, seed {}):\n",
                     cv.folds.size(), cv_options.seed);
  auto line = [&](const char* label, const CurvePoint<double>& c) {
    out << fmt::format(
        "  {:<27} lambda {:.6g} (mu {:.6g}), CV error {:.5g} +/- {:.3g}, {} predictors\n", label,
        c.lambda, c.mu, c.error, c.standard_error, cv.full_path.active_at(c.lambda).size());
  };
  line("least CV error:", cv.minimum);
  line("parsimonious (within 1 SE):", cv.parsimonious);
  out << "  kept by the parsimonious choice: " << kept(cv.parsimonious.lambda) << '\n';
  out << "  more (criteria, p-values): knotpath select " << table_file << " --response "
      << data.response_name << "\n\n";
  charts::SelectionCurve curve = charts::selection_curve(cv, &criteria);
  curve.error_unit = "(kg/m\xC2\xB2)\xC2\xB2";
  return curve;
}

}  // namespace

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
    const fs::path folder(args->out);
    std::error_code ec;
    fs::create_directories(folder, ec);
    if (ec) throw failure(exit_io, "cannot create " + folder.string() + ": " + ec.message());
    const fs::path table_file = folder / "greenhouse.csv";
    const fs::path knots_file = folder / "knots.csv";
    const fs::path json_file = folder / "path.json";

    write_demo_table(data, table_file);
    // Read it back and trace, exactly as `trace` does for a user's table.
    ModelArgs model;
    model.response = data.response_name;
    TracedTable traced = trace_table(table_file.string(), model, global);
    traced.context.source = "built-in demo, " + table_file.string();
    require_finite_path(traced.path);
    std::cout << "knotpath demo: invented greenhouse data (240 weeks, 14 recorded conditions)\n\n";
    std::cout << io::audit_text(traced.path, traced.context) << '\n';
    print_truth(data, traced.path, std::cout);
    const charts::SelectionCurve selection = demo_selection(data, table_file.string(), std::cout);

    std::vector<std::string> written{table_file.string()};
    write_path_outputs(traced.path, traced.context, knots_file.string(), json_file.string(),
                       written);
    std::cout << "wrote " << written[0] << " (the invented data)\n";
    std::cout << "wrote " << written[1] << " (knot table)\n";
    std::cout << "wrote " << written[2] << " (JSON document)\n";
    const fs::path report_dir =
        args->report_dir.empty() ? folder / "report" : fs::path(args->report_dir);
    std::cout << "wrote "
              << write_report_dir(report_dir, traced.path, traced.context, &selection).front()
              << " (HTML report with charts; open it in a browser)\n";
    std::cout << "next: knotpath at " << table_file.string() << " --response " << data.response_name
              << " --relative-budget 0.5\n";
    std::cout.flush();
    global.status = finished_status(traced.path);
  });
  return command;
}

}  // namespace knotpath::cli
