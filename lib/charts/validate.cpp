// Validation of the chart inputs (ChartPath, ChartOptions, SelectionCurve,
// ReportTable):
// each names the first bad field.
#include <cctype>
#include <cmath>

#include <knotpath/errors.hpp>
#include <knotpath/io/charts.hpp>

namespace knotpath::charts {

void ChartPath::validate() const {
  if (knots.empty()) throw invalid_option("path.knots", "the path has no knots");
  for (std::size_t k = 1; k < knots.size(); ++k)
    if (!(knots[k].penalty <= knots[k - 1].penalty))
      throw invalid_option("path.knots",
                           "penalties must be non-increasing (knot " + std::to_string(k) + ")");
  for (const auto& k : knots) {
    if (!std::isfinite(k.penalty) || k.penalty < 0)
      throw invalid_option("path.knots", "penalties must be finite and >= 0");
    for (const auto& [j, b] : k.coefficients) {
      if (j < 0 || static_cast<std::size_t>(j) >= names.size())
        throw invalid_option("path.names", "a coefficient refers to predictor " +
                                               std::to_string(j) + " but there are " +
                                               std::to_string(names.size()) + " names");
      if (!std::isfinite(b)) throw invalid_option("path.knots", "coefficients must be finite");
    }
  }
  if (!predictor_sd.empty() && predictor_sd.size() != names.size())
    throw invalid_option("path.predictor_sd", "needs one entry per name or none");
}

void ChartOptions::validate() const {
  if (!std::isfinite(width) || width < 320 || width > 10000)
    throw invalid_option("width", "must lie in [320, 10000]");
  if (max_predictors < 1) throw invalid_option("max_predictors", "must be >= 1");
  if (id_prefix.empty() || !std::isalpha(static_cast<unsigned char>(id_prefix[0])))
    throw invalid_option("id_prefix", "must start with a letter");
  for (char c : id_prefix)
    if (!std::isalnum(static_cast<unsigned char>(c)) && c != '-' && c != '_')
      throw invalid_option("id_prefix", "letters, digits, '-' and '_' only");
}

void SelectionCurve::validate() const {
  if (points.empty()) throw invalid_option("selection.points", "the curve has no points");
  for (const auto& p : points) {
    if (!std::isfinite(p.penalty) || p.penalty < 0)
      throw invalid_option("selection.points", "penalties must be finite and >= 0");
    if (!std::isfinite(p.mean_error) || !std::isfinite(p.standard_error) || p.standard_error < 0)
      throw invalid_option("selection.points", "errors must be finite, standard errors >= 0");
  }
  for (const auto& c : criteria)
    for (const auto& [x, v] : c.values)
      if (!std::isfinite(x) || x < 0 || !std::isfinite(v))
        throw invalid_option("selection.criteria",
                             "criterion '" + c.name + "' has a non-finite value");
}

void ReportTable::validate() const {
  if (id.empty() || !std::isalpha(static_cast<unsigned char>(id[0])))
    throw invalid_option("table.id", "must start with a letter");
  for (char c : id)
    if (!std::isalnum(static_cast<unsigned char>(c)) && c != '-' && c != '_')
      throw invalid_option("table.id", "letters, digits, '-' and '_' only");
  if (columns.empty() && !rows.empty())
    throw invalid_option("table.columns", "table '" + id + "' has rows but no columns");
  if (!text_columns.empty() && text_columns.size() != columns.size())
    throw invalid_option("table.text_columns", "needs one entry per column or none");
  for (std::size_t r = 0; r < rows.size(); ++r)
    if (rows[r].size() != columns.size())
      throw invalid_option("table.rows", "row " + std::to_string(r) + " of table '" + id +
                                             "' has " + std::to_string(rows[r].size()) +
                                             " cells for " + std::to_string(columns.size()) +
                                             " columns");
  for (std::size_t r : marked_rows)
    if (r >= rows.size())
      throw invalid_option("table.marked_rows",
                           "row " + std::to_string(r) + " of table '" + id + "' does not exist");
}

}  // namespace knotpath::charts
