// The one-page HTML report: XHTML-compatible (it parses as XML), every chart
// inline as SVG, the caller's tables of numbers, the audit table of events,
// no scripts, fonts or links to anything outside the file.
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <fstream>
#include <sstream>
#include <stdexcept>

#include <knotpath/errors.hpp>
#include <knotpath/io/charts.hpp>
#include <knotpath/io/report.hpp>

namespace knotpath::charts {

namespace {

using detail::xml_escape;

std::string number(double v, int digits = 6) {
  char buf[40];
  std::snprintf(buf, sizeof buf, "%.*g", digits, v);
  return buf;
}

const char* const kStyle = R"(
body { font-family: "DejaVu Sans", Verdana, Helvetica, Arial, sans-serif; color: #1B1B1B;
       max-width: 960px; margin: 24px auto; padding: 0 16px; line-height: 1.4; }
h1 { font-size: 22px; margin-bottom: 4px; }
h2 { font-size: 17px; margin-top: 32px; border-bottom: 2px solid #0072B2; padding-bottom: 3px; }
p.lead { color: #5A5A5A; margin-top: 0; }
table { border-collapse: collapse; font-size: 13px; }
table.summary td { padding: 2px 14px 2px 0; }
table.summary td.label { color: #5A5A5A; }
table.audit th, table.audit td { padding: 3px 10px; text-align: right; border-bottom: 1px solid #E3E3E3; }
table.audit th { background: #F4F6F8; position: sticky; top: 0; }
table.audit td.text, table.audit th.text { text-align: left; }
table.audit tr.leave td { background: #FFF4E0; }
table.numbers th, table.numbers td { padding: 3px 10px; text-align: right;
       border-bottom: 1px solid #E3E3E3; font-variant-numeric: tabular-nums; }
table.numbers th { background: #F4F6F8; }
table.numbers td.text, table.numbers th.text { text-align: left; }
table.numbers tr.marked td { background: #E6F1F8; font-weight: bold; }
p.marked { color: #5A5A5A; font-size: 13px; margin-top: 4px; }
figure { margin: 12px 0; overflow-x: auto; }
figure svg { max-width: 100%; height: auto; }
figcaption { color: #5A5A5A; font-size: 13px; }
ul.notes { color: #5A5A5A; font-size: 13px; }
div.cautions { border-left: 4px solid #E69F00; padding: 2px 12px; margin: 12px 0; }
div.cautions h2 { font-size: 15px; margin: 6px 0; }
footer { margin-top: 32px; color: #5A5A5A; font-size: 12px; }
)";

void figure(std::ostringstream& out, const std::string& svg, const std::string& caption) {
  out << "<figure>\n"
      << svg << "<figcaption>" << xml_escape(caption) << "</figcaption>\n</figure>\n";
}

void write_head(std::ostringstream& out, const ChartPath& path, const ReportOptions& options) {
  out << "<!DOCTYPE html>\n<html xmlns=\"http://www.w3.org/1999/xhtml\" lang=\"en\">\n<head>\n"
      << "<meta charset=\"utf-8\"/>\n<meta name=\"viewport\" content=\"width=device-width, "
         "initial-scale=1\"/>\n"
      << "<title>" << xml_escape(options.title) << "</title>\n<style>" << kStyle
      << "</style>\n</head>\n<body>\n"
      << "<h1>" << xml_escape(options.title) << "</h1>\n"
      << "<p class=\"lead\">Exact " << xml_escape(path.variant) << " path of "
      << xml_escape(path.response_name)
      << ", traced by knotpath. This page is self-contained: it needs no network and no "
         "scripts.</p>\n";
}

// Summary: the caller's lines, then what the path itself says; then the cautions.
void write_summary(std::ostringstream& out, const ChartPath& path, const ReportOptions& options) {
  std::size_t enters = 0, leaves = 0;
  for (const auto& k : path.knots) {
    enters += k.event == EventKind::enter;
    leaves += k.event == EventKind::leave;
  }
  std::vector<std::pair<std::string, std::string>> summary = options.summary;
  summary.emplace_back("predictors", std::to_string(path.names.size()));
  summary.emplace_back("knots", std::to_string(path.knots.size()) + " (" + std::to_string(enters) +
                                    " entries, " + std::to_string(leaves) + " exits)");
  summary.emplace_back("largest penalty \xCE\xBB", number(path.knots.front().penalty));
  summary.emplace_back("end of path", path.end == "end" ? "complete, down to penalty 0" : path.end);
  summary.emplace_back("R\xC2\xB2 at the end", number(path.knots.back().r_squared, 4));
  out << "<table class=\"summary\">\n";
  for (const auto& [label, value] : summary)
    out << "<tr><td class=\"label\">" << xml_escape(label) << "</td><td>" << xml_escape(value)
        << "</td></tr>\n";
  out << "</table>\n";
  if (!options.cautions.empty()) {
    out << "<div class=\"cautions\">\n<h2>Cautions</h2>\n<ul>\n";
    for (const auto& c : options.cautions) out << "<li>" << xml_escape(c) << "</li>\n";
    out << "</ul>\n</div>\n";
  }
}

// The charts, each with its own id prefix so their ids stay unique on the page.
void write_charts(std::ostringstream& out, const ChartPath& path, const ReportOptions& options,
                  const SelectionCurve* selection) {
  ChartOptions co = options.charts;
  const std::string prefix = co.id_prefix;
  out << "<h2>Activity</h2>\n";
  co.id_prefix = prefix + "-activity";
  figure(out, activity_lanes_svg(path, co),
         "Each lane is one predictor; bars show where its coefficient is nonzero, tone and "
         "hatching its sign.");
  out << "<h2>Coefficients</h2>\n";
  co.id_prefix = prefix + "-traces";
  figure(out, coefficient_traces_svg(path, co), "Coefficients along the penalty; dots are knots.");
  if (options.include_budget_traces) {
    co.id_prefix = prefix + "-budget";
    co.axis = HorizontalAxis::l1_budget;
    co.title = "Coefficients against the L1 budget";
    figure(out, coefficient_traces_svg(path, co),
           "The same path indexed by the L1 budget of the solution instead of the penalty.");
    co.title = options.charts.title;
    co.axis = options.charts.axis;
  }
  if (selection) {
    out << "<h2>Selection</h2>\n";
    co.id_prefix = prefix + "-selection";
    figure(out, selection_curve_svg(*selection, co),
           "Cross-validated error with its standard-error band; the least error and the "
           "one-standard-error "
           "choice are marked.");
  }
  if (!options.adjusted_intervals.panels.empty()) {
    out << "<h2>Selection-adjusted intervals</h2>\n";
    co.id_prefix = prefix + "-intervals";
    figure(out, adjusted_intervals_svg(options.adjusted_intervals, co),
           "Per selected predictor: the interval adjusted for the selection (blue) above the naive one "
           "(grey), in standard errors of the estimate; the numbers on the original scale beside.");
  }
  if (!options.stability.rows.empty()) {
    out << "<h2>Stability across folds</h2>\n";
    co.id_prefix = prefix + "-stability";
    figure(out, stability_bars_svg(options.stability, co),
           "Per predictor: the share of fold paths in which it is active at the least CV error (upper bar) "
           "and at the parsimonious choice (lower bar); a filled square where the path of all rows has it.");
  }
}

// One of the caller's tables: heading, lead sentences, header, rows (the
// marked ones highlighted, with their meaning below), notes.
void write_table(std::ostringstream& out, const ReportTable& table, const std::string& prefix) {
  auto is_text = [&](std::size_t c) {
    return table.text_columns.empty() ? c == 0 : static_cast<bool>(table.text_columns[c]);
  };
  auto cell = [&](const char* tag, std::size_t c, const std::string& text) {
    out << '<' << tag << (is_text(c) ? " class=\"text\"" : "") << '>' << xml_escape(text) << "</"
        << tag << '>';
  };
  out << "<h2>" << xml_escape(table.heading) << "</h2>\n";
  for (const auto& line : table.lead) out << "<p>" << xml_escape(line) << "</p>\n";
  if (table.columns.empty()) return;
  out << "<table class=\"numbers\" id=\"" << prefix << '-' << table.id << "\">\n<thead><tr>";
  for (std::size_t c = 0; c < table.columns.size(); ++c) cell("th", c, table.columns[c]);
  out << "</tr></thead>\n<tbody>\n";
  for (std::size_t r = 0; r < table.rows.size(); ++r) {
    const bool marked =
        std::find(table.marked_rows.begin(), table.marked_rows.end(), r) != table.marked_rows.end();
    out << (marked ? "<tr class=\"marked\">" : "<tr>");
    for (std::size_t c = 0; c < table.columns.size(); ++c) cell("td", c, table.rows[r][c]);
    out << "</tr>\n";
  }
  out << "</tbody>\n</table>\n";
  if (!table.marked_rows.empty() && !table.marked_meaning.empty())
    out << "<p class=\"marked\">" << xml_escape(table.marked_meaning) << "</p>\n";
  if (!table.notes.empty()) {
    out << "<ul class=\"notes\">\n";
    for (const auto& n : table.notes) out << "<li>" << xml_escape(n) << "</li>\n";
    out << "</ul>\n";
  }
}

// One row of the audit table: knot i.
void write_audit_row(std::ostringstream& out, const ChartPath& path, std::size_t i) {
  const ChartKnot& k = path.knots[i];
  const bool last = i + 1 == path.knots.size();
  std::string event = to_string(k.event);
  if (last && (k.event == EventKind::end || k.event == EventKind::stop)) event = path.end;
  const std::string name =
      k.predictor >= 0 && static_cast<std::size_t>(k.predictor) < path.names.size()
          ? path.names[static_cast<std::size_t>(k.predictor)]
          : "";
  out << "<tr" << (k.event == EventKind::leave ? " class=\"leave\"" : "") << "><td>" << i
      << "</td><td>" << number(k.penalty);
  if (path.weight_sum > 0)
    out << "</td><td>"
        << number(k.penalty / knotpath::penalty_scale<double>(path.standardized, path.weight_sum));
  out << "</td><td class=\"text\">" << xml_escape(event) << "</td><td class=\"text\">"
      << xml_escape(name) << "</td><td>"
      << (k.sign > 0   ? "+"
          : k.sign < 0 ? "\xE2\x88\x92"
                       : "")
      << "</td><td>" << k.active << "</td><td>" << number(k.penalized_l1) << "</td><td>"
      << number(k.r_squared, 4) << "</td></tr>\n";
}

// The audit of events: one row per knot, with mu beside lambda when n is known.
void write_audit(std::ostringstream& out, const ChartPath& path) {
  out << "<h2>Audit of events</h2>\n<table class=\"audit\">\n<thead><tr><th>step</th><th>penalty "
         "\xCE\xBB</th>";
  if (path.weight_sum > 0)
    out << "<th>\xCE\xBC = \xCE\xBB/" << (path.standardized ? "\xE2\x88\x9An" : "n") << "</th>";
  out << "<th class=\"text\">event</th><th "
         "class=\"text\">predictor</th><th>sign</th><th>active</th>"
         "<th>L1 norm</th><th>R\xC2\xB2</th></tr></thead>\n<tbody>\n";
  for (std::size_t i = 0; i < path.knots.size(); ++i) write_audit_row(out, path, i);
  out << "</tbody>\n</table>\n";
}

void write_notes_and_footer(std::ostringstream& out, const ChartPath& path) {
  if (!path.notes.empty()) {
    out << "<h2>Notes</h2>\n<ul class=\"notes\">\n";
    for (const auto& n : path.notes) out << "<li>" << xml_escape(n) << "</li>\n";
    out << "</ul>\n";
  }
  out << "<footer>Penalty \xCE\xBB is that of the objective \xC2\xBD\xC2\xB7RSS + "
         "\xCE\xBB\xC2\xB7\xCE\xA3 "
         "f\xE2\x82\x97 s\xE2\x82\x97 |b\xE2\x82\x97|; coefficients are on the original scale of "
         "the data. "
         "A path describes associations in these data, not causes.</footer>\n</body>\n</html>\n";
}

}  // namespace

std::string report_html(const ChartPath& path, const ReportOptions& options,
                        const SelectionCurve* selection) {
  path.validate();
  options.charts.validate();
  for (std::size_t i = 0; i < options.tables.size(); ++i) {
    options.tables[i].validate();
    for (std::size_t k = 0; k < i; ++k)
      if (options.tables[k].id == options.tables[i].id)
        throw invalid_option("tables", "two tables have the id '" + options.tables[i].id + "'");
  }
  std::ostringstream out;
  write_head(out, path, options);
  write_summary(out, path, options);
  write_charts(out, path, options, selection);
  for (const auto& table : options.tables) write_table(out, table, options.charts.id_prefix);
  write_audit(out, path);
  write_notes_and_footer(out, path);
  return out.str();
}

std::vector<std::filesystem::path> write_report(const std::filesystem::path& dir,
                                                const ChartPath& path, const ReportOptions& options,
                                                const SelectionCurve* selection) {
  std::filesystem::create_directories(dir);
  std::vector<std::filesystem::path> written;
  auto save = [&](const std::string& name, const std::string& text) {
    const std::filesystem::path file = dir / name;
    std::ofstream out(file, std::ios::binary);
    out << text;
    out.close();
    if (!out) throw io::output_error("knotpath: cannot write " + file.string());
    written.push_back(file);
  };
  // Build everything first so a bad input writes nothing.
  const std::string html = report_html(path, options, selection);
  ChartOptions co = options.charts;
  const std::string activity = activity_lanes_svg(path, co);
  const std::string traces = coefficient_traces_svg(path, co);
  std::string budget, chosen;
  if (options.include_budget_traces) {
    co.axis = HorizontalAxis::l1_budget;
    co.title = "Coefficients against the L1 budget";
    budget = coefficient_traces_svg(path, co);
    co = options.charts;
  }
  if (selection) chosen = selection_curve_svg(*selection, co);
  const std::string intervals =
      options.adjusted_intervals.panels.empty() ? std::string() : adjusted_intervals_svg(options.adjusted_intervals, co);
  const std::string stable = options.stability.rows.empty() ? std::string() : stability_bars_svg(options.stability, co);
  save("report.html", html);
  save("activity.svg", activity);
  save("traces.svg", traces);
  if (!budget.empty()) save("budget.svg", budget);
  if (!chosen.empty()) save("selection.svg", chosen);
  if (!intervals.empty()) save("intervals.svg", intervals);
  if (!stable.empty()) save("stability.svg", stable);
  return written;
}

}  // namespace knotpath::charts
