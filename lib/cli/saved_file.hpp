#pragma once
// Saved paths in the knotpath program (internals): writing one (--save of
// trace and select), reading one back in its own arithmetic (at --path,
// predict), the names of select's choices, and the point a saved path is
// asked at (--penalty, --mu, --budget or --choice), the one home of each.

#include <fstream>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include <fmt/format.h>

#include <knotpath/io/saved.hpp>

#include "cli.hpp"
#include "point_answer.hpp"
#include "typed_trace.hpp"

namespace knotpath::cli {

/// The name under which select saves the penalty of least CV error.
inline constexpr const char* least_error_choice = "least-error";
/// The name under which select saves the parsimonious penalty (within 1 SE).
inline constexpr const char* parsimonious_choice = "parsimonious";

/// Writes a saved path (io::save_path) to `file` atomically, its predictors
/// named by the table's column names (`context`), which a path traced
/// without TraceOptions::predictor_names (select's) does not carry itself:
/// predict matches new tables' columns by these names, and expands the
/// text columns the context says were expanded by their saved levels.
template <class Scalar>
void write_saved(const std::string& file, const Path<Scalar>& path, const io::RunContext& context,
                 std::vector<io::NamedPenalty<Scalar>> choices = {}) {
  TraceOptions options = path.options();
  options.predictor_names = context.predictor_names;
  const Path<Scalar> named(path.preparation(), std::move(options), path.knots(), path.held_out(),
                           path.stop_reason(), path.ridge());
  write_output(file, [&](std::ostream& out) {
    io::save_path(out, io::SavedPath<Scalar>{named, context.response, std::move(choices), context.indicator_columns});
  });
}

namespace saved_file_detail {

inline std::ifstream open_saved(const std::string& file) {
  std::ifstream in(file, std::ios::binary);
  if (!in) throw failure(exit_io, "cannot open the saved path " + file);
  return in;
}

}  // namespace saved_file_detail

/// Reads the saved path in `file` in the arithmetic it was saved in and
/// calls f(const io::SavedPath<Scalar>&), returning its result. A file that
/// cannot be opened is failure(exit_io); one that is not a saved path, is
/// newer or damaged is failure(exit_bad_input) with the library's reason.
template <class F>
int with_saved_path(const std::string& file, F&& f) {
  using saved_file_detail::open_saved;
  try {
    std::ifstream head = open_saved(file);
    const io::SavedHeader header = io::read_saved_header(head, file);
    Arithmetic arithmetic = Arithmetic::double_precision;
    if (header.arithmetic == "long-double") arithmetic = Arithmetic::long_double;
    if (header.arithmetic == "50-digits") arithmetic = Arithmetic::fifty_digits;
    if (header.arithmetic == "mpfr") arithmetic = Arithmetic::mpfr;
    if (header.arithmetic == "exact") arithmetic = Arithmetic::exact;
    return with_arithmetic(arithmetic, [&](auto zero) {
      using Scalar = decltype(zero);
      std::ifstream in = open_saved(file);
      const io::SavedPath<Scalar> saved = io::load_path<Scalar>(in, file);
      return f(saved);
    });
  } catch (const io::saved_path_error& e) {
    throw failure(exit_bad_input, e.what());  // user_text() drops the library's prefix
  }
}

/// Adds the point options, one of which names the point asked:
/// --penalty, --mu, --budget, --relative-budget and --choice (a penalty
/// saved with the path). The one registration for `at` and `predict`;
/// answer_point() and saved_point() read them.
inline void add_point_options(CLI::App& command, PointArgs& args) {
  auto* penalty = command.add_option("--penalty", args.penalty, "Penalty lambda (>= 0)")->type_name("NUMBER")->group("Point");
  auto* mu = command
                 .add_option("--mu", args.mu,
                             "Size-free penalty: " + std::string(size_free_penalty_rule) +
                                 " (--no-standardize keeps the columns' own scale)")
                 ->type_name("NUMBER")->group("Point");
  auto* budget = command
                     .add_option("--budget", args.budget,
                                 "L1 budget S >= 0 on sum of f_j s_j |b_j|: the lasso point of least RSS "
                                 "with L1 norm <= S; with --ridge the elastic-net point of L1 norm S "
                                 "(least RSS plus ridge term); with --variant least-angle the first "
                                 "point whose L1 norm reaches S")
                     ->type_name("NUMBER")->group("Point");
  auto* relative = command
                       .add_option("--relative-budget", args.relative_budget,
                                   "Relative budget R in [0, 1]: the L1 budget R times the final L1 norm")
                       ->type_name("NUMBER")->group("Point");
  auto* choice = command
                     .add_option("--choice", args.choice,
                                 std::string("Of a saved path: a penalty saved by knotpath select --save (") +
                                     least_error_choice + " or " + parsimonious_choice + ")")
                     ->group("Point");
  penalty->excludes(mu)->excludes(budget)->excludes(relative)->excludes(choice);
  mu->excludes(budget)->excludes(relative)->excludes(choice);
  budget->excludes(relative)->excludes(choice);
  relative->excludes(choice);
}

/// The solution a saved path gives at the point asked, and the question;
/// bad values and unknown choices are failure(exit_usage).
template <class Scalar>
std::pair<Solution<Scalar>, AskedPoint<Scalar>> saved_point(const io::SavedPath<Scalar>& saved,
                                                            const PointArgs& args, const std::string& file) {
  if (args.choice.empty()) return answer_point(saved.path, args);
  if (saved.choices.empty())
    throw failure(exit_usage, fmt::format("--choice {}: {} holds no choices (knotpath select ... --save FILE "
                                          "saves a path with its choices; knotpath trace --save saves none)",
                                          args.choice, file));
  const io::NamedPenalty<Scalar>* chosen = saved.choice(args.choice);
  if (!chosen) {
    std::string names;
    for (const auto& c : saved.choices) names += (names.empty() ? "" : ", ") + c.name;
    throw failure(exit_usage, fmt::format("--choice {}: {} has no choice of that name (it has: {})", args.choice,
                                          file, names));
  }
  return {saved.path.at_penalty(chosen->penalty),
          {PointKind::penalty, "choice " + chosen->name + " (penalty " + io::number_text(chosen->penalty) + ")",
           chosen->penalty}};
}

}  // namespace knotpath::cli
