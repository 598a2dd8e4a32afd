// knotpath verify: traces a table in double and in a high precision (50
// significant digits by default), compares the two paths with
// knotpath::compare_paths (precision.hpp) and reports the verdict; the exit
// status is the verdict (0 trustworthy, 6 degraded, 7 wrong).

#include <cmath>
#include <iostream>
#include <limits>

#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include "typed_trace.hpp"

namespace knotpath::cli {

namespace {

struct VerifyArgs {
  std::string table;
  ModelArgs model;
  unsigned digits = 50;
  std::string json_file;
};

// "1e-3" for a power of ten, else the shortest decimal form.
std::string threshold_text(double x) {
  const int e = static_cast<int>(std::lround(std::log10(x)));
  return std::pow(10.0, e) == x ? fmt::format("1e{}", e) : fmt::format("{:g}", x);
}

// The verdict thresholds of compare_paths (precision.hpp), in words; the
// tests check that reported verdicts obey them.
std::string thresholds_text() {
  return fmt::format(
      "wrong: the event sequences differ, or a coefficient differs by more than {} (relative); "
      "degraded: same events, but a knot penalty differs by more than {} or a coefficient by "
      "more than {} (relative); trustworthy: otherwise",
      threshold_text(VerdictThresholds::wrong_coefficient),
      threshold_text(VerdictThresholds::degraded_knot),
      threshold_text(VerdictThresholds::degraded_coefficient));
}

int status_of(Verdict verdict) {
  switch (verdict) {
    case Verdict::trustworthy:
      return exit_ok;
    case Verdict::degraded:
      return exit_degraded;
    case Verdict::wrong:
      return exit_wrong;
  }
  return exit_wrong;
}

std::string predictor_name(const std::vector<std::string>& names, Index j) {
  return j >= 0 && static_cast<std::size_t>(j) < names.size() ? names[static_cast<std::size_t>(j)]
                                                              : std::string();
}

// "enter x7 at penalty 1.25", "end at penalty 0", "no knot".
std::string event_text(const std::string& event, const std::string& predictor, double penalty) {
  if (event == "(none)") return "no knot (the path already ended)";
  return fmt::format("{}{}{} at penalty {:.12g}", event, predictor.empty() ? "" : " ", predictor,
                     penalty);
}

// The two paths and how they compare.
struct Comparison {
  CrossCheck check;
  bool low_finite = true;  // every value of the double path finite
  std::string high_name;   // arithmetic of the high-precision path
};

// What both reports say about the run (from the double path).
struct RunFacts {
  const LoadedTable& loaded;
  const Path<double>& low;
  const std::vector<std::string>& names;
};

// The comparison lines: knots, events, differences, health.
std::string comparison_text(const Comparison& c, const RunFacts& run) {
  const CrossCheck& check = c.check;
  const auto& names = run.names;
  std::string out = fmt::format("knots:                          double {}, {} {}\n",
                                check.double_knots, c.high_name, check.high_knots);
  if (check.same_events) {
    out += "event sequences:                identical\n";
  } else {
    const Divergence& d = *check.first_difference;
    out += fmt::format(
        "event sequences:                DIFFER from step {}\n"
        "  double has:                   {}\n"
        "  {:<29} {}\n",
        d.step, event_text(d.low_event, predictor_name(names, d.low_predictor), d.low_penalty),
        c.high_name + " has:",
        event_text(d.high_event, predictor_name(names, d.high_predictor), d.high_penalty));
  }
  out += fmt::format(
      "largest knot-penalty difference: {:.3g} (relative to lambda_max, over the {} common "
      "knots)\n",
      check.max_relative_knot_difference,
      check.first_difference ? static_cast<std::size_t>(check.first_difference->step)
                             : check.double_knots);
  out += fmt::format(
      "largest coefficient difference: {:.3g} (relative to the largest high-precision "
      "coefficient or intercept at the knot, over the segments there for a row without "
      "coefficients, the intercept's at least to the response's spread; at every knot of "
      "both paths)\n",
      check.max_coefficient_difference);
  out += fmt::format("condition estimate (double):    {:.3g} (worst along the path)\n",
                     check.condition_estimate);
  out += fmt::format(
      "double health check:            {} ({}, threshold {:.2g})\n",
      check.double_suspect ? "SUSPECT" : "clean", io::estimated_error_text(run.low.worst_estimated_error()),
      run.low.options().suspect_threshold);
  if (!c.low_finite) out += "the double path holds values that are not finite\n";
  return out;
}

// The verdict, the rule behind it and what to do.
std::string verdict_text(Verdict verdict) {
  std::string out = fmt::format("verdict:                        {}\n", to_string(verdict));
  out += fmt::format("thresholds: {}\n", thresholds_text());
  switch (verdict) {
    case Verdict::trustworthy:
      out += "the double path of this table can be used as it is\n";
      break;
    case Verdict::degraded:
      out +=
          "the double path has the right events but has lost digits; for figures beyond "
          "about 6 significant digits use knotpath trace --precision 50\n";
      break;
    case Verdict::wrong:
      out +=
          "do not use the double path of this table: trace it with --precision 50 (or "
          "--precision exact with --no-standardize)\n";
      break;
  }
  return out;
}

std::string verify_text(const Comparison& c, const RunFacts& run) {
  const io::RunContext& context = run.loaded.context;
  return fmt::format(
             "{} path of {} on {} predictors, {} rows used ({})\n"
             "traced in double and in {}; the table's decimals were parsed exactly into both\n\n",
             to_string(run.low.options().variant),
             context.response, run.names.size(), run.low.preparation().used_observations,
             context.source, c.high_name) +
         comparison_text(c, run) + verdict_text(c.check.verdict);
}

using json = nlohmann::ordered_json;

// The first difference of the event sequences, or null.
json first_difference_json(const CrossCheck& check, const std::vector<std::string>& names) {
  if (!check.first_difference) return nullptr;
  const Divergence& d = *check.first_difference;
  auto side = [&](const std::string& event, Index predictor, double penalty) {
    json s;
    s["event"] = event;
    s["predictor"] = predictor >= 0 ? json(predictor_name(names, predictor)) : json(nullptr);
    s["penalty"] = event == "(none)" ? json(nullptr) : json(penalty);
    return s;
  };
  return {{"step", d.step},
          {"double", side(d.low_event, d.low_predictor, d.low_penalty)},
          {"high", side(d.high_event, d.high_predictor, d.high_penalty)}};
}

json verify_document(const Comparison& c, const RunFacts& run, unsigned digits, int status) {
  const CrossCheck& check = c.check;
  const io::RunContext& context = run.loaded.context;
  json doc;
  doc["format"] = "knotpath-verify";
  doc["format_version"] = 1;
  doc["program"] = {{"name", "knotpath"}, {"version", context.program_version}};
  doc["source"] = context.source;
  doc["response"] = context.response;
  doc["predictors"] = run.names;
  doc["rows_used"] = run.low.preparation().used_observations;
  doc["variant"] = to_string(run.low.options().variant);
  doc["intercept"] = run.low.options().with_intercept;
  doc["standardize"] = run.low.options().standardize;
  doc["high_precision"] = {{"arithmetic", c.high_name}, {"digits", digits}};
  doc["double_knots"] = check.double_knots;
  doc["high_knots"] = check.high_knots;
  doc["same_events"] = check.same_events;
  doc["first_difference"] = first_difference_json(check, run.names);
  doc["max_relative_knot_difference"] = check.max_relative_knot_difference;
  doc["max_coefficient_difference"] = check.max_coefficient_difference;
  doc["condition_estimate"] = check.condition_estimate;
  doc["double_suspect"] = check.double_suspect;
  doc["double_worst_estimated_error"] = run.low.worst_estimated_error();
  doc["suspect_threshold"] = run.low.options().suspect_threshold;
  doc["double_finite"] = c.low_finite;
  doc["verdict"] = to_string(check.verdict);
  doc["thresholds"] = {{"wrong_coefficient", VerdictThresholds::wrong_coefficient},
                       {"degraded_knot", VerdictThresholds::degraded_knot},
                       {"degraded_coefficient", VerdictThresholds::degraded_coefficient},
                       {"rule", thresholds_text()}};
  doc["exit_status"] = status;
  return doc;
}

template <class High>
int run_verify(const VerifyArgs& args, const Global& global) {
  TracedTwice<High> traced = trace_twice<High>(args.table, args.model, global);
  LoadedTable& loaded = traced.loaded;
  const Path<High>& high = traced.high;
  const Path<double>& low = traced.low;
  loaded.progress.reset();
  Comparison c;
  c.high_name = io::arithmetic_name<High>();
  c.check = compare_paths(low, high);
  // A double path with values that are not finite compares as NaN, which
  // no threshold catches: it is wrong.
  try {
    require_finite_path(low);
  } catch (const failure&) {
    c.low_finite = false;
    c.check.verdict = Verdict::wrong;
  }
  const int status = status_of(c.check.verdict);
  const RunFacts run{loaded, low, loaded.context.predictor_names};
  std::cout << verify_text(c, run);
  if (!args.json_file.empty()) {
    const json doc = verify_document(c, run, args.digits, status);
    write_output(args.json_file, [&](std::ostream& o) { o << doc.dump(2) << '\n'; });
    std::cout << "wrote " << args.json_file << '\n';
  }
  std::cout.flush();
  return status;
}

}  // namespace

CLI::App* add_verify_command(CLI::App& app, Global& global) {
  auto args = std::make_shared<VerifyArgs>();
  CLI::App* command = app.add_subcommand(
      "verify",
      "Trace in double and in high precision and say whether the double path can be trusted "
      "(exit status 0 trustworthy, 6 degraded, 7 wrong)");
  command->add_option("TABLE", args->table, "Delimited text table with a header row; - reads stdin")
      ->required();
  add_model_options(*command, args->model);
  add_reading_options(*command, args->model);
  command
      ->add_option("--digits", args->digits,
                   "Significant decimal digits of the high-precision trace (default 50; other "
                   "values need MPFR)")
      ->check(CLI::Range(20u, 100000u))
      ->default_str("50")
      ->group("Arithmetic");
  command->add_option("--json", args->json_file, "Write the report as a JSON document to this file")
      ->group("Output");
  command->footer(
      "Example:\n"
      "  knotpath verify mixtures.csv --response hardness --json check.json\n");
  command->callback([args, &global] {
    if (args->digits == 50) {
      global.status = run_verify<float50>(*args, global);
      return;
    }
#ifdef KNOTPATH_HAVE_MPFR
    set_mpfr_digits(args->digits);
    global.status = run_verify<mpfr_float>(*args, global);
#else
    throw failure(exit_usage, "this build has no MPFR: verify runs at --digits 50 only");
#endif
  });
  return command;
}

}  // namespace knotpath::cli
