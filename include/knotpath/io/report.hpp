#pragma once
/// \file io/report.hpp
/// \brief Reports of a traced path: the knot table (CSV, the contract fixed
/// in DESIGN.md), the JSON document, the aligned audit text, the coefficient
/// table of one point, and atomic file writing.

#include <filesystem>
#include <functional>
#include <optional>
#include <ostream>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "../path.hpp"
#include "table.hpp"

namespace knotpath::io {

/// What the reports say about where the data came from and how it was read.
struct RunContext {
  std::string source;                        ///< table file, "<stdin>" or "built-in demo"
  std::string response;                      ///< response column name
  std::vector<std::string> predictor_names;  ///< names of the path's predictors, in order
  std::optional<std::string> weights;        ///< weights column, if any
  std::size_t rows_read = 0;                 ///< data rows kept by the reader
  std::size_t rows_dropped = 0;              ///< rows dropped for missing cells
  std::vector<std::string> text_columns;     ///< text columns skipped by the reader
  std::vector<std::string> unused_columns;   ///< numeric columns not used as predictors
  std::vector<std::string> table_notes;      ///< sentences about how the table was read (indicators, ...)
  std::vector<IndicatorColumn> indicator_columns;  ///< text columns expanded into indicator predictors
  std::string program_version;               ///< knotpath version
  /// Rows per block when the table was read a block at a time into the
  /// sufficient statistics (its rows never all in memory); 0: read whole.
  std::size_t block_rows = 0;
  /// The tables read as the shards of one, in order (empty: one table).
  std::vector<std::string> shards;
};

/// What to do about a suspect double path: names the `knotpath verify`
/// command for this table and the higher-precision options.
std::string suspect_advice_text(const RunContext& context);

/// The one wording of a health estimate (Knot::estimated_error): what it
/// bounds, on the scale the report prints, or, above first_order_limit,
/// that it bounds nothing. Used by every output that quotes an estimate.
std::string estimated_error_text(double estimate);

/// Why the path ended, in a sentence for the reports ("the penalty floor
/// (--min-penalty) was reached", ...).
std::string stop_explanation(StopReason reason);

/// A CSV field as every CSV output of knotpath writes it: quoted (quotes
/// doubled) when it holds a comma, a quote or a line break, else as is.
std::string csv_text_field(const std::string& text);

/// Formats a double with 17 significant digits (round-trips exactly);
/// "nan"/"inf" never occur in a valid path.
std::string round_trip(double value);

// The reports below are templates on the path's scalar type, compiled in
// lib/report.cpp for double, long double, knotpath::float50,
// knotpath::rational and (with MPFR) knotpath::mpfr_float (precision.hpp).
// Numbers are written with every digit their type holds (number_text):
//  - double: 17 significant digits; long double: 21; float50: 53; MPFR:
//    its decimal precision + 2 (each reads back to the same value);
//  - rational: the exact fraction "p/q" in lowest terms, q >= 1 (integers
//    too: "3/1"), beside a decimal approximation (nearest double).
// For double the outputs are those of format_version 1 unchanged. For the
// other types: the knot table appends "decimal:<column>" columns (exact
// mode only) and the JSON document writes scalar numbers as strings, with a
// "decimal" member in the same object holding them as JSON numbers.

/// A number as text with every digit of its type (see above).
template <class Scalar>
std::string number_text(const Scalar& value);

/// The nearest double (for approximations and display).
template <class Scalar>
double nearest_double(const Scalar& value);

/// The arithmetic of a path type, for reports: "double", "long double",
/// "50 significant digits", "MPFR, N significant digits", "exact rational".
template <class Scalar>
std::string arithmetic_name();

/// The size-free penalty of DESIGN.md ("Comparing penalties"), as a double:
/// mu = lambda / sqrt(n) for standardized paths and lambda / n for paths
/// traced on the columns' own scale (n = sum of weights), the same
/// convention as Path::mu_of() (scaling.hpp). 0 when n = 0.
/// (Square roots are irrational, so exact mode shows mu as a decimal only.)
template <class Scalar>
double mu_as_double(const Path<Scalar>& path, const Scalar& lambda);

/// R^2 = 1 - RSS / TSS of a knot; nullopt when TSS = 0.
template <class Scalar>
std::optional<Scalar> r_squared(const Path<Scalar>& path, const Scalar& rss);

/// The word of a knot's event in every output (the knot table's `event`
/// column, the JSON document, the audit, the Python module): to_string of
/// its EventKind, except the last row, which says why the path ended
/// (to_string(StopReason): "end", "stop-max-knots", ...).
template <class Scalar>
std::string event_word(const Path<Scalar>& path, const Knot<Scalar>& knot);

/// Writes the knot table: header
/// `step,penalty,mu,event,predictor,active,l1_norm,r_squared,intercept,NAMES...`
/// then one row per knot (see DESIGN.md). `mu` is Path::mu_of(penalty), the
/// size-free penalty the audit shows. The last row's event is
/// to_string(path.stop_reason()) ("end" or "stop-..."). An undefined R^2
/// (constant response) is an empty cell. Exact mode appends the columns
/// decimal:penalty, decimal:mu, decimal:l1_norm, decimal:r_squared, decimal:intercept,
/// `decimal:NAME`... (nearest doubles, 17 significant digits).
template <class Scalar>
void write_knot_table(std::ostream& out, const Path<Scalar>& path,
                      const std::vector<std::string>& names);

/// The JSON document of a path (schema in README.md, "format" =
/// "knotpath-path", "format_version" = 1). Beyond double it also holds
/// "precision" {arithmetic, digits, exact, numbers}; a "health" member
/// appears whenever the path is suspect (and always beyond double).
template <class Scalar>
nlohmann::ordered_json path_document(const Path<Scalar>& path, const RunContext& context);

/// The aligned audit: a short heading, one line per knot (step, penalty, mu,
/// event, predictor, active count, L1 norm, R^2), then notes on the stop
/// reason, excluded and held-out predictors. A suspect path gets a "health"
/// column marking its suspect knots and a warning paragraph that points to
/// `knotpath verify`; it is never presented as clean.
template <class Scalar>
std::string audit_text(const Path<Scalar>& path, const RunContext& context);

/// The numerical health of a path, the "health" member of path_document():
/// {suspect, worst_estimated_error, suspect_threshold, suspect_steps,
/// advice} (advice null on a clean path). Every document that reports on a
/// path (the path JSON, knotpath select's JSON) takes it from here.
template <class Scalar>
nlohmann::ordered_json health_document(const Path<Scalar>& path, const RunContext& context);

/// The warning paragraph of a suspect path (two lines starting "WARNING:",
/// ending with a line break: the estimate, the count of suspect knots, and
/// the advice of suspect_advice_text for this arithmetic); empty on a clean
/// path. audit_text() ends with it; every command that reports on a path
/// prints it.
template <class Scalar>
std::string suspect_warning(const Path<Scalar>& path, const RunContext& context);

/// The notes of the audit, one line each without line breaks: rows dropped
/// for missing cells, predictors excluded up front (with the reason),
/// predictors held out along the path, text columns skipped. audit_text()
/// prints them after its stop line; knotpath select prints them and writes
/// them to its JSON ("audit_notes").
template <class Scalar>
std::vector<std::string> audit_notes(const Path<Scalar>& path, const RunContext& context);

/// The coefficients of one solution on the original scale, intercept first:
/// an aligned table, or with `csv` a "predictor,coefficient" header and one
/// line per term (number_text digits; exact mode adds a third column,
/// decimal:coefficient, and a decimal column in the aligned table).
template <class Scalar>
std::string coefficient_table(const Solution<Scalar>& solution, const Path<Scalar>& path,
                              const std::vector<std::string>& names, bool csv);

/// Writes an output file: `write` fills a buffer first, so an exception from
/// it leaves nothing on disk. Then, by what `target` is:
/// - a regular file or a new path: a temporary file in the same directory is
///   written, flushed and renamed over it only when every byte was written;
///   on any failure the temporary file is removed and the file is untouched;
/// - a symbolic link: followed link by link; the rule above applies next to
///   the file it finally names (the link stays a link);
/// - anything else (a device, a named pipe, a socket, an open descriptor
///   such as /dev/stdout): opened as it is, without creating or replacing it,
///   and written once (appending);
/// - a directory: refused.
/// Every failure, a write to a full device included, throws output_error
/// with the file name and the system's reason.
void write_atomically(const std::filesystem::path& target,
                      const std::function<void(std::ostream&)>& write);

/// Thrown by write_atomically when the file system refuses.
class output_error : public knotpath::error {
 public:
  using knotpath::error::error;
};

}  // namespace knotpath::io
