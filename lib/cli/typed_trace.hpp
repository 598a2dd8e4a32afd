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

#include <fmt/format.h>

#include <knotpath/precision.hpp>

#include "cli.hpp"

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

/// Writes a report file atomically, mapping file-system refusals to exit_io.
inline void write_report_file(const std::filesystem::path& file,
                              const std::function<void(std::ostream&)>& write) {
  try {
    io::write_atomically(file, write);
  } catch (const io::output_error& e) {
    throw failure(exit_io, e.what());
  }
}

/// Refuses a path with a value that is not finite (exact paths always are).
template <class Scalar>
void require_finite_path(const Path<Scalar>& path) {
  if constexpr (!detail::is_exact_v<Scalar>) {
    auto finite = [](const Scalar& v) { return std::isfinite(detail::to_double(v)); };
    for (const auto& knot : path.knots()) {
      bool ok = finite(knot.penalty) && finite(knot.l1_norm) && finite(knot.intercept) &&
                finite(knot.rss);
      for (const auto& [j, value] : knot.coefficients) ok = ok && finite(value);
      if (!ok)
        throw failure(exit_numerical,
                      fmt::format("numerical trouble: knot {} holds a value that is not finite",
                                  knot.step));
    }
  }
}

/// Exit status of a finished trace: numerical trouble when the safety bound
/// on steps stopped it.
template <class Scalar>
int finished_status(const Path<Scalar>& path) {
  if (path.stop_reason() == StopReason::step_limit) {
    std::fputs("knotpath: numerical trouble: the homotopy hit its safety bound on steps; "
               "the path is incomplete (outputs describe the part traced)\n",
               stderr);
    return exit_numerical;
  }
  return exit_ok;
}

/// One column of a table parsed exactly into Scalar from its decimal text.
template <class Scalar>
Vector<Scalar> exact_column(const LoadedTable& loaded, Index column) {
  const auto& text = loaded.table.decimal_text.at(static_cast<std::size_t>(column));
  Vector<Scalar> v(static_cast<Index>(text.size()));
  for (std::size_t i = 0; i < text.size(); ++i) {
    try {
      v(static_cast<Index>(i)) = parse_decimal<Scalar>(text[i]);
    } catch (const invalid_data&) {
      throw failure(exit_bad_input,
                    fmt::format("{}: data row {}: cell \"{}\" in column \"{}\" is not a decimal "
                                "number that can be parsed exactly",
                                loaded.shown_name, i + 1, text[i],
                                loaded.table.names[static_cast<std::size_t>(column)]));
    }
  }
  return v;
}

/// Traces a loaded table in Scalar. For double the reader's values are moved
/// out of the table (as `trace` always did); for every other arithmetic the
/// decimal text (LoadedTable read with keep_decimal_text) is parsed exactly
/// and the table is left as it was.
template <class Scalar>
Path<Scalar> trace_loaded(LoadedTable& loaded, const ModelArgs& args) {
  io::Table& table = loaded.table;
  TraceOptions options = loaded.options;
  Vector<Scalar> y, w;
  Matrix<Scalar> x;
  if constexpr (std::is_same_v<Scalar, double>) {
    y = table.column_vector(table.find(args.response));
    if (!args.weights.empty()) w = table.column_vector(table.find(args.weights));
    x = table.take_matrix(loaded.predictor_columns);
  } else {
    y = exact_column<Scalar>(loaded, table.find(args.response));
    if (!args.weights.empty()) w = exact_column<Scalar>(loaded, table.find(args.weights));
    x.resize(static_cast<Index>(table.rows), static_cast<Index>(loaded.predictor_columns.size()));
    for (std::size_t k = 0; k < loaded.predictor_columns.size(); ++k)
      x.col(static_cast<Index>(k)) = exact_column<Scalar>(loaded, loaded.predictor_columns[k]);
  }
  if constexpr (detail::is_exact_v<Scalar>) {
    // Exact weights other than 0/1 need the Gram form (no square roots of
    // weights); it is exact too.
    if (w.size() != 0) options.storage = Storage::gram;
  }
  if (loaded.progress)
    loaded.progress->status(fmt::format("tracing the path in {} ({} rows, {} predictors)",
                                        io::arithmetic_name<Scalar>(), x.rows(), x.cols()));
  try {
    return trace<Scalar>(x, y, options, w);
  } catch (const invalid_option& e) {
    throw failure(exit_usage, e.what());
  } catch (const invalid_data& e) {
    std::string why = e.what();
    if (why.rfind("knotpath: ", 0) == 0) why.erase(0, 10);
    throw failure(exit_bad_input, loaded.shown_name + ": " + why);
  }
}

}  // namespace knotpath::cli
