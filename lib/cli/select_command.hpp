#pragma once
// The select command, the --report DIR option of trace/select/demo and the
// demo's selection section (internals of the knotpath program; code in
// lib/cli/select_command.cpp).

#include <filesystem>
#include <iosfwd>
#include <string>
#include <vector>

#include <knotpath/demo.hpp>
#include <knotpath/io/charts.hpp>

#include "cli.hpp"

namespace knotpath::cli {

/// Registers `knotpath select`.
CLI::App* add_select_command(CLI::App& app, Global& global);

/// The cautions printed by select and shown in every HTML report.
/// `with_selection` adds the lines about cross-validation and p-values.
std::vector<std::string> caution_lines(bool with_selection);

/// Writes the HTML report (report.html and the SVG charts) of a double path
/// into `dir`. Every file is first written into a fresh temporary folder
/// beside `dir` and moved into `dir` only when all of them were written, so
/// a failure leaves no partial file and replaces nothing. Returns the files
/// written (report.html first). Throws failure(exit_io) when the file system
/// refuses.
std::vector<std::string> write_report_dir(const std::filesystem::path& dir, const Path<double>& path,
                                          const io::RunContext& context,
                                          const charts::SelectionCurve* selection);

/// The demo's selection section: exact 10-fold cross-validation of the
/// demo data (default seed), printed to `out` (chosen penalties and the
/// predictors kept). Returns the selection curve for the demo's report.
charts::SelectionCurve demo_selection(const demo::DemoData& data, const std::string& table_file,
                                      std::ostream& out);

}  // namespace knotpath::cli
