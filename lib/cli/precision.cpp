// trace and at in arithmetics beyond double (--precision, --digits).

#include <iostream>
#include <limits>

#include <fmt/format.h>

#include "point_answer.hpp"
#include "saved_file.hpp"
#include "typed_trace.hpp"

namespace knotpath::cli {

void add_precision_options(CLI::App& command, PrecisionArgs& args) {
  std::vector<std::string> words{"double", "long-double", "50", "exact"};
#ifdef KNOTPATH_HAVE_MPFR
  words.insert(words.begin() + 3, "mpfr");
  const char* help =
      "Arithmetic of the trace: double (default), long-double, 50 (50 significant digits), "
      "mpfr (--digits N significant digits) or exact (rational numbers; needs "
      "--no-standardize). Table cells are parsed exactly from their decimal text";
#else
  const char* help =
      "Arithmetic of the trace: double (default), long-double, 50 (50 significant digits) or "
      "exact (rational numbers; needs --no-standardize). Table cells are parsed exactly from "
      "their decimal text (this build has no MPFR, so no --precision mpfr)";
#endif
  command.add_option("--precision", args.precision, help)
      ->check(CLI::IsMember(words))
      ->default_str("double")
      ->group("Arithmetic");
  command
      .add_option("--digits", args.digits,
                  "Significant decimal digits of --precision mpfr (default 50)")
      ->check(CLI::Range(10u, 100000u))
      ->group("Arithmetic");
}

namespace {

template <class Scalar>
int trace_in(LoadedTable& loaded, const std::string& knots_file, const std::string& json_file,
             const std::string& save_file) {
  const Path<Scalar> path = trace_loaded<Scalar>(loaded);
  loaded.progress.reset();  // the progress line ends before the audit is printed
  require_finite_path(path);
  std::cout << io::audit_text(path, loaded.context);
  std::vector<std::string> written;
  write_path_outputs(path, loaded.context, knots_file, json_file, written);
  if (!save_file.empty()) {
    write_saved(save_file, path, loaded.context);
    written.push_back(save_file);
  }
  for (const auto& file : written) std::cout << "wrote " << file << '\n';
  std::cout.flush();
  return finished_status(path);
}

template <class Scalar>
int at_in(LoadedTable& loaded, const PointArgs& point, PointOutput output) {
  const Path<Scalar> path = trace_loaded<Scalar>(loaded);
  loaded.progress.reset();
  require_finite_path(path);
  const auto [solution, asked] = answer_point(path, point);
  const PointAnswer answer = describe_point(path, solution, asked);
  print_point(path, solution, asked, answer, loaded.context.predictor_names, output);
  if (output == PointOutput::table && path.suspect())
    std::cout << fmt::format(
        "WARNING: the path is SUSPECT in this arithmetic ({}); trace it with more digits or "
        "--precision exact\n",
        io::estimated_error_text(path.worst_estimated_error()));
  std::cout.flush();
  return finished_status(path);
}

}  // namespace

int trace_with_precision(const std::string& table, const ModelArgs& model,
                         const PrecisionArgs& precision, const std::string& knots_file,
                         const std::string& json_file, const std::string& save_file,
                         const Global& global) {
  check_precision(precision, model);
  LoadedTable loaded = load_table(table, model, global, true);
  return with_arithmetic(arithmetic_of(precision), [&](auto zero) {
    using Scalar = decltype(zero);
    return trace_in<Scalar>(loaded, knots_file, json_file, save_file);
  });
}

int at_with_precision(const std::string& table, const ModelArgs& model,
                      const PrecisionArgs& precision, const PointArgs& point, PointOutput output,
                      const Global& global) {
  check_precision(precision, model);
  LoadedTable loaded = load_table(table, model, global, true);
  return with_arithmetic(arithmetic_of(precision), [&](auto zero) {
    using Scalar = decltype(zero);
    return at_in<Scalar>(loaded, point, output);
  });
}

}  // namespace knotpath::cli
