#pragma once
// What `at` says about the point it answers (internals of the knotpath
// program), for every arithmetic: the heading line, a note in plain words
// when the answer lies outside the traced stretch but is exact there (above
// lambda_max, or an L1 budget that does not bind), and the refusal, with
// exit_outside_path, of a point the traced path cannot answer as asked (it
// then prints no coefficients: a script must not read the last knot's as
// the answer).

#include <iostream>
#include <string>
#include <type_traits>
#include <utility>
#include <vector>

#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include "cli.hpp"

namespace knotpath::cli {

/// How a point was asked for (--mu is a penalty: lambda_of(mu)).
enum class PointKind { penalty, budget, relative_budget };

/// A point asked of `at`: its words ("penalty 50", "mu 0.3", "L1 budget 4")
/// and its value: lambda for --penalty and --mu, the budget for --budget.
template <class Scalar>
struct AskedPoint {
  PointKind kind = PointKind::penalty;
  std::string words;
  Scalar value{0};
};

/// What an L1 budget returns on this path (Path::at_budget()), in words.
template <class Scalar>
std::string budget_meaning(const Path<Scalar>& path) {
  if (path.options().variant != Variant::lasso)
    return "the first point of the least-angle path whose L1 norm reaches it";
  if (path.ridge() != Scalar(0))
    return "the elastic-net point with that L1 norm: least RSS plus ridge term, not least RSS";
  return "least RSS with L1 norm at most the budget";
}

/// The heading of `at` and, when the answer is exact outside the traced
/// stretch, a sentence saying so ("" otherwise).
struct PointAnswer {
  std::string heading;  ///< "WORDS: penalty L (mu M), L1 norm S" and the note, one line each
  std::string note;     ///< the plain-words note alone (stderr with --csv), or ""
};

namespace point_detail {

template <class Scalar>
std::string shown(const Scalar& value) {
  if constexpr (std::is_same_v<Scalar, double>)
    return fmt::format("{:.10g}", value);
  else
    return io::number_text(value);
}

// A lasso path without ridge that reached penalty 0 ends at the fit no
// larger budget changes (the L1 norm is non-decreasing along it), so a
// budget above its final norm does not bind and the end is the exact answer.
template <class Scalar>
bool end_answers_larger_budgets(const Path<Scalar>& path) {
  return !path.stopped_early() && path.options().variant == Variant::lasso &&
         path.ridge() == Scalar(0);
}

// Why the path cannot answer `asked` (Solution::beyond_path was set).
template <class Scalar>
std::string outside_message(const Path<Scalar>& path, const AskedPoint<Scalar>& asked) {
  const Knot<Scalar>& last = path.knots().back();
  const std::string norm = shown(last.penalized_l1);
  if (asked.kind != PointKind::budget)
    return fmt::format(
        "{} lies below the end of the traced path: it stopped at penalty {} (mu {:.10g}) because "
        "{}, so it holds no answer there. Trace further (lower or drop that stopping rule), or "
        "ask for a penalty of at least {}",
        asked.words, shown(last.penalty), io::mu_as_double(path, last.penalty),
        io::stop_explanation(path.stop_reason()), shown(last.penalty));
  if (path.stopped_early())
    return fmt::format(
        "{} lies beyond the traced path: it stopped at penalty {} with L1 norm {} because {}, "
        "before its L1 norm reached the budget. Trace further (lower or drop that stopping "
        "rule), or ask for a budget of at most {}",
        asked.words, shown(last.penalty), norm, io::stop_explanation(path.stop_reason()), norm);
  if (path.options().variant != Variant::lasso)
    return fmt::format(
        "{} is never reached: the least-angle path ends at penalty 0 with L1 norm {}, and a "
        "budget on it is answered by the first point that reaches it. Ask for a budget of at "
        "most {}",
        asked.words, norm, norm);
  return fmt::format(
      "{} is more than the elastic-net path reaches: it ends at penalty 0 with L1 norm {}, and "
      "no point of it has the L1 norm asked for. Ask for a budget of at most {}",
      asked.words, norm, norm);
}

}  // namespace point_detail

/// The answer's heading, or failure(exit_outside_path) when the point lies
/// outside the traced path and the path cannot answer it as asked.
template <class Scalar>
PointAnswer describe_point(const Path<Scalar>& path, const Solution<Scalar>& solution,
                           const AskedPoint<Scalar>& asked) {
  using point_detail::shown;
  PointAnswer answer;
  std::string words = asked.words;
  if (asked.kind == PointKind::budget) words += " (" + budget_meaning(path) + ")";
  if (asked.kind == PointKind::relative_budget && path.stopped_early())
    words += fmt::format(" (the traced path stopped early: {})",
                         io::stop_explanation(path.stop_reason()));
  if (asked.kind == PointKind::penalty && asked.value > path.lambda_max())
    answer.note = fmt::format(
        "this is above lambda_max = {} (mu {:.10g}), where the path starts: at every penalty "
        "from lambda_max up each penalized coefficient is exactly 0, so this answer is exact",
        shown(path.lambda_max()), io::mu_as_double(path, path.lambda_max()));
  if (solution.beyond_path) {
    if (asked.kind != PointKind::budget || !point_detail::end_answers_larger_budgets(path))
      throw failure(exit_outside_path, point_detail::outside_message(path, asked));
    answer.note = fmt::format(
        "the path ends (penalty 0) with L1 norm {}, below the budget: the budget does not "
        "bind, so the end of the path is the exact answer",
        shown(path.knots().back().penalized_l1));
  }
  answer.heading = fmt::format("{}: penalty {} (mu {:.10g}), L1 norm {}\n", words,
                               shown(solution.penalty), io::mu_as_double(path, solution.penalty),
                               shown(solution.penalized_l1));
  if (!answer.note.empty()) answer.heading += answer.note + '\n';
  return answer;
}

namespace point_detail {

template <class Scalar>
Scalar parsed(const std::string& text, const char* option) {
  try {
    return parse_decimal<Scalar>(text);
  } catch (const invalid_data&) {
    throw failure(exit_usage, fmt::format("{} {}: not a decimal number", option, text));
  }
}

}  // namespace point_detail

/// The solution of `path` at the point asked by --penalty, --mu, --budget or
/// --relative-budget (the first given of `point`; its choice is not read
/// here), and the question: the one home of a point's reading for `at` on a
/// table in every arithmetic, `at --path` and `predict`. Each value is
/// parsed exactly from its text in the path's arithmetic (a relative budget
/// too: at_relative_budget takes a double). A value that is not a decimal
/// number, or lies outside its domain, is failure(exit_usage).
template <class Scalar>
std::pair<Solution<Scalar>, AskedPoint<Scalar>> answer_point(const Path<Scalar>& path, const PointArgs& point) {
  using point_detail::parsed;
  try {
    if (!point.penalty.empty()) {
      const Scalar lambda = parsed<Scalar>(point.penalty, "--penalty");
      return {path.at_penalty(lambda), {PointKind::penalty, "penalty " + point.penalty, lambda}};
    }
    if (!point.mu.empty()) {
      // Exact mode needs --no-standardize, so lambda = mu * n (scaling.hpp)
      // is rational: the query is exact too.
      const Scalar mu = parsed<Scalar>(point.mu, "--mu");
      if (!(mu >= Scalar(0))) throw invalid_query("mu must be >= 0");
      return {path.at_mu(mu), {PointKind::penalty, "mu " + point.mu, path.lambda_of(mu)}};
    }
    if (!point.budget.empty()) {
      const Scalar budget = parsed<Scalar>(point.budget, "--budget");
      return {path.at_budget(budget), {PointKind::budget, "L1 budget " + point.budget, budget}};
    }
    if (point.relative_budget.empty()) throw failure(exit_usage, "no point was asked");
    const Scalar relative = parsed<Scalar>(point.relative_budget, "--relative-budget");
    if (!(relative >= Scalar(0) && relative <= Scalar(1)))
      throw invalid_query("the relative budget must lie in [0, 1]");
    if (path.knots().empty()) throw invalid_query("the path is empty");
    const Solution<Scalar> solution =
        relative == Scalar(1) ? path.at_relative_budget(1.0)
                              : path.at_budget(Scalar(relative * path.knots().back().penalized_l1));
    return {solution,
            {PointKind::relative_budget,
             "relative budget " + point.relative_budget + " (share of the final L1 norm)", Scalar(0)}};
  } catch (const invalid_query& e) {
    throw failure(exit_usage, e.what());
  }
}

/// The word of a point's kind in the JSON document.
inline const char* point_kind_word(PointKind kind) {
  switch (kind) {
    case PointKind::budget: return "budget";
    case PointKind::relative_budget: return "relative_budget";
    case PointKind::penalty: break;
  }
  return "penalty";
}

/// The JSON document of `at --json` ("format" "knotpath-point", version 1):
/// what was asked (words and kind), the arithmetic, the penalty answered,
/// its mu, the penalized L1 norm, the intercept, every predictor's
/// coefficient by name (zeros included, in the path's order), and the note.
/// Numbers are JSON numbers for double, else exact text (io::number_text);
/// mu is always a number (square roots have no exact value).
template <class Scalar>
nlohmann::ordered_json point_document(const Path<Scalar>& path, const Solution<Scalar>& solution,
                                      const AskedPoint<Scalar>& asked, const PointAnswer& answer,
                                      const std::vector<std::string>& names) {
  using json = nlohmann::ordered_json;
  auto number = [](const Scalar& v) -> json {
    if constexpr (std::is_same_v<Scalar, double>)
      return v;
    else
      return io::number_text(v);
  };
  json doc;
  doc["format"] = "knotpath-point";
  doc["format_version"] = 1;
  doc["asked"] = asked.words;
  doc["asked_kind"] = point_kind_word(asked.kind);
  doc["arithmetic"] = io::arithmetic_name<Scalar>();
  doc["penalty"] = number(solution.penalty);
  doc["mu"] = io::mu_as_double(path, solution.penalty);
  doc["l1_norm"] = number(solution.penalized_l1);
  doc["intercept"] = number(solution.intercept);
  json coefficients = json::array();
  for (Index j = 0; j < solution.coefficients.size(); ++j)
    coefficients.push_back({{"name", names.at(static_cast<std::size_t>(j))},
                            {"value", number(solution.coefficients(j))}});
  doc["coefficients"] = coefficients;
  doc["note"] = answer.note.empty() ? json(nullptr) : json(answer.note);
  return doc;
}

/// Prints the answer of `at` to stdout in the chosen output (the note of a
/// CSV or JSON answer goes to stderr as well as into the JSON document).
template <class Scalar>
void print_point(const Path<Scalar>& path, const Solution<Scalar>& solution, const AskedPoint<Scalar>& asked,
                 const PointAnswer& answer, const std::vector<std::string>& names, PointOutput output) {
  if (output == PointOutput::table) {
    std::cout << answer.heading;
    if constexpr (!std::is_same_v<Scalar, double>) std::cout << "arithmetic: " << io::arithmetic_name<Scalar>() << '\n';
  } else if (!answer.note.empty()) {
    std::cerr << "knotpath: note: " << answer.note << '\n';
  }
  if (output == PointOutput::json) {
    std::cout << point_document(path, solution, asked, answer, names).dump(2) << '\n';
    return;
  }
  if (output == PointOutput::csv)
    std::cout << "# point: penalty " << io::number_text(solution.penalty) << ", mu "
              << io::round_trip(io::mu_as_double(path, solution.penalty)) << '\n';
  std::cout << io::coefficient_table(solution, path, names, output == PointOutput::csv);
}

}  // namespace knotpath::cli
