#pragma once
// Tracing a loaded table in any arithmetic (internals of the knotpath
// program): double takes the reader's doubles; every other arithmetic parses
// the cells' decimal text exactly (knotpath::parse_decimal), never through
// double.

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <functional>
#include <string>
#include <type_traits>
#include <utility>
#include <vector>

#include <fmt/format.h>

#include <knotpath/precision.hpp>

#include "cli.hpp"
#include "path_checks.hpp"

namespace knotpath::cli {

/// Arithmetics of --precision.
enum class Arithmetic { double_precision, long_double, fifty_digits, mpfr, exact };

/// The --precision word of an arithmetic.
inline Arithmetic arithmetic_of(const PrecisionArgs& args) {
  if (args.precision == "long-double") return Arithmetic::long_double;
  if (args.precision == "50") return Arithmetic::fifty_digits;
  if (args.precision == "mpfr") return Arithmetic::mpfr;
  if (args.precision == "exact") return Arithmetic::exact;
  return Arithmetic::double_precision;
}

/// Checks the combination of --precision and --digits and the model options
/// it needs, and sets the MPFR precision.
inline void check_precision(const PrecisionArgs& precision, const ModelArgs& model) {
  const Arithmetic arithmetic = arithmetic_of(precision);
  if (precision.digits != 0 && arithmetic != Arithmetic::mpfr)
    throw failure(exit_usage, "--digits applies to --precision mpfr only");
  if (arithmetic == Arithmetic::exact && !model.no_standardize)
    throw failure(exit_usage,
                  "--precision exact needs --no-standardize: scaling columns to unit length takes "
                  "square roots, which have no exact rational value (the penalty then applies "
                  "to the coefficients on the columns' own scale)");
#ifdef KNOTPATH_HAVE_MPFR
  if (arithmetic == Arithmetic::mpfr) set_mpfr_digits(precision.digits ? precision.digits : 50);
#endif
}

/// Calls f(Scalar{}) with the scalar type of the arithmetic.
template <class F>
auto with_arithmetic(Arithmetic arithmetic, F&& f) -> decltype(f(0.0)) {
  switch (arithmetic) {
    case Arithmetic::long_double:
      return f(static_cast<long double>(0));
    case Arithmetic::fifty_digits:
      return f(float50(0));
    case Arithmetic::exact:
      return f(rational(0));
    case Arithmetic::mpfr:
#ifdef KNOTPATH_HAVE_MPFR
      return f(mpfr_float(0));
#else
      break;
#endif
    case Arithmetic::double_precision:
      return f(0.0);
  }
  throw failure(exit_usage, "this build has no MPFR: --precision mpfr is unavailable");
}

/// One column of a table parsed exactly into Scalar from its decimal text
/// (knotpath::parse_decimal_cells, the library's home of this parsing); a
/// cell that is not such a number is named by its line (`table`'s
/// row_lines: a whole table, or a block of read_table_blocks) in `shown_name`.
template <class Scalar>
Vector<Scalar> exact_column(const io::Table& table, const std::string& shown_name, Index column) {
  const auto& text = table.decimal_text.at(static_cast<std::size_t>(column));
  try {
    return parse_decimal_cells<Scalar>(text);
  } catch (const invalid_data& e) {
    const std::size_t i = e.row().value_or(0);
    const std::size_t line = table.row_lines.line_of(i);
    throw failure(exit_bad_input,
                  fmt::format("{}, {} {}: cell \"{}\" in column \"{}\" is not a decimal "
                              "number that can be parsed exactly",
                              shown_name, line > 0 ? "line" : "data row", line > 0 ? line : table.first_row + i + 1,
                              text.at(i), table.names[static_cast<std::size_t>(column)]));
  }
}

/// The design, response and weights of a loaded table in Scalar.
template <class Scalar>
struct TableData {
  Matrix<Scalar> x;
  Vector<Scalar> y, w;  ///< w empty: unweighted
};

/// Takes the data out of a table (a whole one, or a block of
/// read_table_blocks) by the positions of its roles. For double the
/// reader's values are moved out of the table (io::split_table: the
/// response, weights and predictor columns are left empty); for every other
/// arithmetic the decimal text (read with keep_decimal_text) is parsed
/// exactly and the table is left as it was.
template <class Scalar>
TableData<Scalar> table_data(io::Table& table, const io::ColumnAssignment& columns, const std::string& shown_name) {
  TableData<Scalar> d;
  if constexpr (std::is_same_v<Scalar, double>) {
    io::TableSplit split = io::split_table(table, columns);
    d.x = std::move(split.x);
    d.y = std::move(split.y);
    d.w = std::move(split.weights);
  } else {
    d.y = exact_column<Scalar>(table, shown_name, columns.response);
    if (columns.weights >= 0) d.w = exact_column<Scalar>(table, shown_name, columns.weights);
    d.x.resize(static_cast<Index>(table.rows), static_cast<Index>(columns.predictors.size()));
    for (std::size_t k = 0; k < columns.predictors.size(); ++k)
      d.x.col(static_cast<Index>(k)) = exact_column<Scalar>(table, shown_name, columns.predictors[k]);
  }
  return d;
}

/// table_data() of a loaded table.
template <class Scalar>
TableData<Scalar> table_data(LoadedTable& loaded) {
  return table_data<Scalar>(loaded.table, loaded.columns, loaded.shown_name);
}

/// Runs f; the library's refusal of bad data becomes a bad-input
/// data_failure that names the row by its line in the file (data_message
/// over `lines` and the predictors' `names`).
template <class F>
auto with_data_messages(const std::string& shown_name, const std::vector<std::string>& names,
                        const io::RowLines& lines, F&& f) -> decltype(f()) {
  try {
    return f();
  } catch (const invalid_data& e) {
    throw data_failure(exit_bad_input, data_message(e, shown_name, names, lines));
  }
}

/// Runs `trace` (which returns a Path) with `status` on the loaded table's
/// progress line; the library's refusals become usage (bad option) and
/// bad-input (bad data, with_data_messages) failures.
template <class Trace>
auto trace_with_messages(const LoadedTable& loaded, const std::string& status, Trace&& trace)
    -> decltype(trace()) {
  if (loaded.progress) loaded.progress->status(status);
  try {
    return with_data_messages(loaded.shown_name, loaded.context.predictor_names, loaded.table.row_lines,
                              std::forward<Trace>(trace));
  } catch (const invalid_option& e) {
    throw failure(exit_usage, e.what());
  }
}

/// Traces the data of a loaded table with its options (trace_with_messages).
template <class Scalar>
Path<Scalar> trace_table_data(const LoadedTable& loaded, const TableData<Scalar>& d,
                              const std::string& status) {
  TraceOptions options = loaded.options;
  if constexpr (detail::is_exact_v<Scalar>) {
    // Exact weights other than 0/1 need the Gram form (no square roots of
    // weights); it is exact too.
    if (d.w.size() != 0) options.storage = Storage::gram;
  }
  return trace_with_messages(loaded, status, [&] { return trace<Scalar>(d.x, d.y, options, d.w); });
}

/// Traces a loaded table in Scalar (table_data, then trace_table_data with
/// a status that names the arithmetic).
template <class Scalar>
Path<Scalar> trace_loaded(LoadedTable& loaded) {
  const TableData<Scalar> d = table_data<Scalar>(loaded);
  return trace_table_data(loaded, d,
                          fmt::format("tracing the path in {} ({} rows, {} predictors)",
                                      io::arithmetic_name<Scalar>(), d.x.rows(), d.x.cols()));
}

/// Writes the knot table and the JSON document of a path when their files
/// are named, adding each file written to `written`.
template <class Scalar>
void write_path_outputs(const Path<Scalar>& path, const io::RunContext& context,
                        const std::string& knots_file, const std::string& json_file,
                        std::vector<std::string>& written) {
  if (!knots_file.empty()) {
    write_output(knots_file, [&](std::ostream& out) {
      io::write_knot_table(out, path, context.predictor_names);
    });
    written.push_back(knots_file);
  }
  if (!json_file.empty()) {
    write_output(json_file, [&](std::ostream& out) {
      out << io::path_document(path, context).dump(2) << '\n';
    });
    written.push_back(json_file);
  }
}

}  // namespace knotpath::cli
