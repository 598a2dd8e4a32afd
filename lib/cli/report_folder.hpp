#pragma once
// The --report DIR option of trace, select and demo: the HTML report and its
// charts written into a folder (internals of the knotpath program).

#include <filesystem>
#include <string>
#include <vector>

#include <knotpath/io/charts.hpp>

#include "cli.hpp"

namespace knotpath::cli {

/// The cautions printed by select and shown in every HTML report.
/// `with_selection` adds the lines about cross-validation and p-values.
std::vector<std::string> caution_lines(bool with_selection);

/// Writes the HTML report (report.html and the SVG charts) of a double path
/// into `dir`. Every file is first written into a fresh temporary folder
/// beside `dir` and moved into `dir` only when all of them were written, so
/// a failure leaves no partial file and replaces nothing. Returns the files
/// written (report.html first). `tables` are shown in report.html after the
/// charts (select's choices, criteria and entry tests); `intervals`, when it
/// has panels, is drawn after the selection curve (select's adjusted
/// inference, intervals.svg); `stability`, when it has rows, after them
/// (select --repeats, stability.svg). Throws
/// failure(exit_io) when the file system refuses.
std::vector<std::string> write_report_dir(const std::filesystem::path& dir,
                                          const Path<double>& path, const io::RunContext& context,
                                          const charts::SelectionCurve* selection,
                                          std::vector<charts::ReportTable> tables = {},
                                          charts::AdjustedIntervals intervals = {},
                                          charts::StabilityBars stability = {});

}  // namespace knotpath::cli
