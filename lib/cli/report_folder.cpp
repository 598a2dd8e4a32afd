// The --report DIR option of trace, select and demo (report_folder.hpp).

#include "report_folder.hpp"

#include <unistd.h>

#include <sstream>
#include <stdexcept>
#include <system_error>

#include <fmt/format.h>

namespace knotpath::cli {

namespace fs = std::filesystem;

std::vector<std::string> caution_lines(bool with_selection) {
  std::vector<std::string> lines{
      "a path and a penalty chosen on it describe associations in these data, not causes."};
  if (with_selection) {
    lines.push_back(
        "\"exact\" cross-validation means the exact, grid-free minimizer of this K-fold curve "
        "(these folds), not an exact answer to which penalty is best: cross-validated errors are "
        "estimates (the standard error at the minimum is shown), and other folds give other "
        "curves and other choices, the more so with few rows per fold.");
    lines.push_back(
        "the p-values are valid only under the model's assumptions (linear model, independent "
        "Gaussian noise "
        "of constant variance, fixed design) and only for the question each test asks; choosing "
        "predictors "
        "from the same data makes ordinary p-values and intervals of the chosen model too "
        "optimistic "
        "(selection effects).");
  }
  lines.push_back(
      "do not use these results as the sole basis for decisions with consequences for people.");
  return lines;
}

namespace {

// The report's options: title, the summary of the data, the cautions.
charts::ReportOptions report_options(const Path<double>& path, const io::RunContext& context,
                                     bool with_selection) {
  charts::ReportOptions options;
  options.title = "knotpath: " + context.response;
  options.summary = {{"data", context.source},
                     {"response", context.response},
                     {"rows used", std::to_string(path.preparation().used_observations)}};
  if (context.weights) options.summary.emplace_back("weights", *context.weights);
  if (context.rows_dropped)
    options.summary.emplace_back("rows dropped (missing cells)",
                                 std::to_string(context.rows_dropped));
  options.summary.emplace_back("program", "knotpath " + context.program_version);
  // A suspect path's warning comes first (io::suspect_warning: the same
  // lines trace and select print).
  std::istringstream warning(io::suspect_warning(path, context));
  for (std::string line; std::getline(warning, line);) options.cautions.push_back(line);
  for (auto& line : caution_lines(with_selection)) options.cautions.push_back(std::move(line));
  return options;
}

// A fresh folder beside `target` (in its parent, created if needed).
fs::path staging_folder(const fs::path& target) {
  fs::path parent = target.parent_path();
  if (parent.empty()) parent = ".";
  std::error_code ec;
  fs::create_directories(parent, ec);
  if (ec) throw failure(exit_io, "cannot create " + parent.string() + ": " + ec.message());
  fs::path staging;
  for (int attempt = 0;; ++attempt) {
    staging = parent / fmt::format(".{}.knotpath-tmp-{}-{}", target.filename().string(), ::getpid(),
                                   attempt);
    if (fs::create_directory(staging, ec)) break;
    if (ec || attempt > 100)
      throw failure(exit_io, "cannot create a temporary folder in " + parent.string());
  }
  return staging;
}

// Moves the files written into `target`, creating it if needed.
std::vector<std::string> move_into(const std::vector<fs::path>& files, const fs::path& target) {
  std::error_code ec;
  fs::create_directories(target, ec);
  if (ec) throw std::runtime_error("cannot create " + target.string() + ": " + ec.message());
  if (!fs::is_directory(target)) throw std::runtime_error(target.string() + " is not a folder");
  std::vector<std::string> written;
  for (const auto& f : files) {
    const fs::path to = target / f.filename();
    fs::rename(f, to, ec);
    if (ec) throw std::runtime_error("cannot write " + to.string() + ": " + ec.message());
    written.push_back(to.string());
  }
  return written;
}

}  // namespace

std::vector<std::string> write_report_dir(const fs::path& dir, const Path<double>& path,
                                          const io::RunContext& context,
                                          const charts::SelectionCurve* selection,
                                          std::vector<charts::ReportTable> tables,
                                          charts::AdjustedIntervals intervals,
                                          charts::StabilityBars stability) {
  charts::ChartPath chart = charts::chart_path(path, context.predictor_names, context.response);
  charts::ReportOptions options = report_options(path, context, selection != nullptr);
  options.tables = std::move(tables);
  options.adjusted_intervals = std::move(intervals);
  options.stability = std::move(stability);
  // Everything is written into a fresh folder beside `dir`, then moved in.
  const fs::path target = dir.empty() ? fs::path(".") : dir;
  const fs::path staging = staging_folder(target);
  std::error_code ec;
  std::vector<std::string> written;
  try {
    written = move_into(charts::write_report(staging, chart, options, selection), target);
  } catch (const failure&) {
    fs::remove_all(staging, ec);
    throw;
  } catch (const invalid_option& e) {
    fs::remove_all(staging, ec);
    throw failure(exit_internal, std::string("report: ") + e.what());
  } catch (const std::exception& e) {
    fs::remove_all(staging, ec);
    std::string why = e.what();
    if (why.rfind("knotpath: ", 0) == 0) why.erase(0, 10);
    throw failure(exit_io, "report: " + why);
  }
  fs::remove_all(staging, ec);
  return written;
}

}  // namespace knotpath::cli
