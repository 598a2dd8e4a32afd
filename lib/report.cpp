// Reports of a traced path; see include/knotpath/io/report.hpp.

#include "knotpath/io/report.hpp"

#include "knotpath/precision.hpp"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <cerrno>
#include <cmath>
#include <cstring>
#include <limits>
#include <sstream>
#include <type_traits>

#include <fmt/format.h>

namespace knotpath::io {

std::string round_trip(double value) {
  return fmt::format("{:.17g}", value);
}

namespace {

template <class Scalar>
constexpr bool is_double_v = std::is_same_v<Scalar, double>;

#ifdef KNOTPATH_HAVE_MPFR
template <class Scalar>
constexpr bool is_mpfr_v = std::is_same_v<Scalar, mpfr_float>;
#else
template <class Scalar>
constexpr bool is_mpfr_v = false;
#endif

// Boost.Multiprecision text in the shortest of fixed/scientific ("%g" style).
template <class Scalar>
std::string multiprecision_text(const Scalar& value, int digits) {
  return value.str(digits, std::ios_base::fmtflags(0));
}

}  // namespace

template <class Scalar>
std::string number_text(const Scalar& value) {
  if constexpr (is_double_v<Scalar>) {
    return round_trip(value);
  } else if constexpr (std::is_same_v<Scalar, long double>) {
    return fmt::format("{:.21g}", value);  // max_digits10 of the x87 64-bit significand
  } else if constexpr (detail::is_exact_v<Scalar>) {
    using boost::multiprecision::denominator;
    using boost::multiprecision::numerator;
    return numerator(value).str() + "/" + denominator(value).str();
  } else if constexpr (is_mpfr_v<Scalar>) {
    return multiprecision_text(value, static_cast<int>(value.precision()) + 2);
  } else {
    return multiprecision_text(value, std::numeric_limits<Scalar>::max_digits10);
  }
}

template <class Scalar>
double nearest_double(const Scalar& value) {
  if constexpr (detail::is_exact_v<Scalar>) {
    // Through 50 digits: rounds to the nearest double (a direct mpq
    // conversion truncates).
    using boost::multiprecision::denominator;
    using boost::multiprecision::numerator;
    const float50 q = float50(numerator(value).str()) / float50(denominator(value).str());
    return static_cast<double>(q);
  } else {
    return static_cast<double>(value);
  }
}

template <class Scalar>
std::string arithmetic_name() {
  if constexpr (is_double_v<Scalar>)
    return "double";
  else if constexpr (std::is_same_v<Scalar, long double>)
    return "long double";
  else if constexpr (detail::is_exact_v<Scalar>)
    return "exact rational";
  else if constexpr (is_mpfr_v<Scalar>)
    return fmt::format("MPFR, {} significant digits", Scalar::default_precision());
  else
    return fmt::format("{} significant digits", std::numeric_limits<Scalar>::digits10);
}

template <class Scalar>
double mu_as_double(const Path<Scalar>& path, const Scalar& lambda) {
  // The convention of scaling.hpp, on the nearest doubles (display only).
  const double n = nearest_double(path.preparation().weight_sum);
  if (!(n > 0)) return 0.0;
  return nearest_double(lambda) / penalty_scale(path.preparation().standardized, n);
}

template <class Scalar>
std::optional<Scalar> r_squared(const Path<Scalar>& path, const Scalar& rss) {
  const Scalar& tss = path.preparation().total_sum_of_squares;
  if (!(tss > Scalar(0))) return std::nullopt;
  return Scalar(Scalar(1) - rss / tss);
}

template <class Scalar>
std::string event_word(const Path<Scalar>& path, const Knot<Scalar>& knot) {
  if (knot.event == EventKind::end || knot.event == EventKind::stop)
    return to_string(path.stop_reason());
  return to_string(knot.event);
}

namespace {

// CSV field: quoted when it holds a delimiter, quote or line break.
std::string csv_field(const std::string& s) {
  if (s.find_first_of(",\"\r\n") == std::string::npos) return s;
  std::string out = "\"";
  for (char c : s) {
    if (c == '"') out += '"';
    out += c;
  }
  return out + "\"";
}

std::string name_of(const std::vector<std::string>& names, Index j) {
  if (j < 0) return "";
  return names.at(static_cast<std::size_t>(j));
}

using json = nlohmann::ordered_json;

// Writes scalar numbers into JSON objects: plain numbers for double; beyond
// double the full text, with the nearest doubles collected for the object's
// "decimal" member (added by finish, so it comes last).
template <class Scalar>
class JsonNumbers {
 public:
  void put(json& object, const char* key, const Scalar& value) {
    if constexpr (is_double_v<Scalar>) {
      object[key] = value;
    } else {
      object[key] = number_text(value);
      decimal_[key] = nearest_double(value);
    }
  }
  void put_null(json& object, const char* key) {
    object[key] = nullptr;
    if constexpr (!is_double_v<Scalar>) decimal_[key] = nullptr;
  }
  void put_coefficients(json& object, const json& exact, const json& decimal) {
    object["coefficients"] = exact;
    if constexpr (!is_double_v<Scalar>) decimal_["coefficients"] = decimal;
  }
  void finish(json& object) {
    if constexpr (!is_double_v<Scalar>) object["decimal"] = decimal_;
    decimal_ = json::object();
  }

 private:
  json decimal_ = json::object();
};

// Advice for a suspect path, by arithmetic.
template <class Scalar>
std::string suspect_advice(const RunContext& context) {
  if constexpr (is_double_v<Scalar>)
    return fmt::format(
        "double precision may not be enough for this design: the order of entry, the knots and "
        "the coefficients may be wrong. Check it with 'knotpath verify {} --response {}' (same "
        "model options), or trace it with --precision 50 or --precision exact.",
        context.source, context.response);
  else
    return "this arithmetic may not be enough for this design: trace it with more digits "
           "(--precision mpfr --digits N) or with --precision exact.";
}

template <class Scalar>
std::size_t suspect_count(const Path<Scalar>& path) {
  std::size_t count = 0;
  for (const auto& k : path.knots()) count += k.suspect ? 1 : 0;
  return count;
}

// Where a held-out column met the path: "at knot K" when knot K (the last
// at or above its penalty, HeldOut::step) is at its penalty, else "after knot K".
template <class Scalar>
std::string held_out_place(const Path<Scalar>& path, const HeldOut<Scalar>& h) {
  const auto& knot = path.knots().at(static_cast<std::size_t>(h.step));
  return fmt::format("{} knot {} (penalty {:.6g})", knot.penalty == h.penalty ? "at" : "after",
                     h.step, nearest_double(h.penalty));
}

// The held-out notes of the audit: one line per column held out as
// collinear, and one line for all the attempts after saturation (when p > n
// they are many, all at rounding-level penalties; the JSON names them).
template <class Scalar>
std::string held_out_text(const Path<Scalar>& path, const std::vector<std::string>& names) {
  std::string out;
  const HeldOut<Scalar>* first_saturated = nullptr;
  const HeldOut<Scalar>* last_saturated = nullptr;
  std::size_t attempts = 0;
  std::vector<Index> predictors;
  for (const auto& h : path.held_out()) {
    if (!h.saturated) {
      out += fmt::format("held out: {} {}: its column is numerically in the span of the active "
                         "columns\n",
                         name_of(names, h.predictor), held_out_place(path, h));
      continue;
    }
    if (!first_saturated) first_saturated = &h;
    last_saturated = &h;
    ++attempts;
    if (std::find(predictors.begin(), predictors.end(), h.predictor) == predictors.end())
      predictors.push_back(h.predictor);
  }
  if (attempts == 1)
    out += fmt::format("held out: {} {}: the active set already had as many columns as usable "
                       "rows\n",
                       name_of(names, first_saturated->predictor),
                       held_out_place(path, *first_saturated));
  else if (attempts > 1)
    out += fmt::format(
        "held out after saturation: {} predictors{} reached the boundary when the active set "
        "already had as many columns as usable rows, from {} to {} (names in the JSON "
        "document's saturation member)\n",
        predictors.size(),
        attempts == predictors.size() ? std::string() : fmt::format(" ({} times)", attempts),
        held_out_place(path, *first_saturated), held_out_place(path, *last_saturated));
  return out;
}

}  // namespace

std::string stop_explanation(StopReason reason) {
  switch (reason) {
    case StopReason::completed:
      return "the path reached penalty 0";
    case StopReason::max_knots:
      return "the knot limit (--max-knots) was reached";
    case StopReason::min_penalty:
      return "the penalty floor (--min-penalty) was reached";
    case StopReason::max_active:
      return "the active-set limit (--max-active) was reached";
    case StopReason::step_limit:
      return "the safety bound on homotopy steps was hit: numerical trouble, the path is "
             "incomplete";
  }
  return "?";
}

template <class Scalar>
void write_knot_table(std::ostream& out, const Path<Scalar>& path,
                      const std::vector<std::string>& names) {
  constexpr bool exact = detail::is_exact_v<Scalar>;
  out << "step,penalty,mu,event,predictor,active,l1_norm,r_squared,intercept";
  for (const auto& name : names) out << ',' << csv_field(name);
  if constexpr (exact) {
    out << ",decimal:penalty,decimal:mu,decimal:l1_norm,decimal:r_squared,decimal:intercept";
    for (const auto& name : names) out << ',' << csv_field("decimal:" + name);
  }
  out << '\n';
  const auto p = static_cast<std::size_t>(path.predictor_count());
  std::vector<Scalar> beta(p);
  for (const auto& knot : path.knots()) {
    std::fill(beta.begin(), beta.end(), Scalar(0));
    for (const auto& [j, value] : knot.coefficients) beta[static_cast<std::size_t>(j)] = value;
    const auto r2 = r_squared(path, knot.rss);
    // mu from Path::mu_of (scaling.hpp); exact paths are never standardized,
    // so theirs is the exact lambda / n.
    const Scalar mu = path.mu_of(knot.penalty);
    out << knot.step << ',' << number_text(knot.penalty) << ',' << number_text(mu) << ','
        << event_word(path, knot) << ','
        << csv_field(name_of(names, knot.predictor)) << ',' << knot.active_count << ','
        << number_text(knot.penalized_l1) << ',' << (r2 ? number_text(*r2) : std::string()) << ','
        << number_text(knot.intercept);
    for (const Scalar& b : beta) out << ',' << number_text(b);
    if constexpr (exact) {
      out << ',' << round_trip(nearest_double(knot.penalty)) << ','
          << round_trip(nearest_double(mu)) << ','
          << round_trip(nearest_double(knot.penalized_l1)) << ','
          << (r2 ? round_trip(nearest_double(*r2)) : std::string()) << ','
          << round_trip(nearest_double(knot.intercept));
      for (const Scalar& b : beta) out << ',' << round_trip(nearest_double(b));
    }
    out << '\n';
  }
}

namespace {

// The arithmetic of a path other than double and how its numbers are written.
template <class Scalar>
json precision_json() {
  json precision;
  precision["arithmetic"] = arithmetic_name<Scalar>();
  if constexpr (detail::is_exact_v<Scalar>)
    precision["digits"] = nullptr;
  else if constexpr (is_mpfr_v<Scalar>)
    precision["digits"] = Scalar::default_precision();
  else
    precision["digits"] = std::numeric_limits<Scalar>::digits10;
  precision["exact"] = detail::is_exact_v<Scalar>;
  precision["numbers"] = detail::is_exact_v<Scalar>
                             ? "strings holding exact fractions p/q; \"decimal\" members hold "
                               "the nearest doubles"
                             : "strings holding every digit of the arithmetic; \"decimal\" "
                               "members hold the nearest doubles";
  return precision;
}

// The data: where they came from, the rows used and the response's summary.
template <class Scalar>
json data_json(const Path<Scalar>& path, const RunContext& context) {
  const auto& prep = path.preparation();
  json data;
  JsonNumbers<Scalar> data_numbers;
  data["source"] = context.source;
  data["response"] = context.response;
  data["weights"] = context.weights ? json(*context.weights) : json(nullptr);
  data["rows_read"] = context.rows_read;
  data["rows_dropped_missing"] = context.rows_dropped;
  data["rows_used"] = prep.used_observations;
  data["reading"] = context.block_rows == 0 ? "whole" : "blocks";
  data["block_rows"] = context.block_rows == 0 ? json(nullptr) : json(context.block_rows);
  data["shards"] = context.shards;
  data_numbers.put(data, "weight_sum", prep.weight_sum);
  data["predictors"] = context.predictor_names;
  data["text_columns_skipped"] = context.text_columns;
  data["columns_not_used"] = context.unused_columns;
  data_numbers.put(data, "response_mean", prep.response_mean);
  data_numbers.put(data, "total_sum_of_squares", prep.total_sum_of_squares);
  data_numbers.finish(data);
  return data;
}

// The trace options, with the penalty scale (or unpenalized, left out) and sign constraint of every predictor.
template <class Scalar>
json options_json(const Path<Scalar>& path, const std::vector<std::string>& names) {
  const auto& options = path.options();
  json opts;
  opts["variant"] = to_string(options.variant);
  opts["intercept"] = options.with_intercept;
  opts["standardize"] = options.standardize;
  opts["ridge"] = options.ridge;
  json scales = json::object();
  json signs = json::object();
  json unpenalized = json::array(), left_out = json::array();
  const std::vector<double> penalty_weights = options.penalty_weights(names.size());
  for (std::size_t j = 0; j < names.size(); ++j) {
    const double weight = penalty_weights[j];
    if (weight == 0.0)
      unpenalized.push_back(names[j]);
    else if (std::isinf(weight))
      left_out.push_back(names[j]);
    else
      scales[names[j]] = weight;
    signs[names[j]] = to_string(options.sign_constraint(j));
  }
  opts["penalty_scales"] = scales;
  opts["unpenalized"] = unpenalized;
  opts["left_out"] = left_out;
  opts["sign_constraints"] = signs;
  opts["max_knots"] = options.max_knots;
  opts["min_penalty"] = options.min_penalty;
  opts["max_active"] = options.max_active;
  return opts;
}

// One knot: penalty, event, fit and the nonzero coefficients.
template <class Scalar>
json knot_json(const Path<Scalar>& path, const Knot<Scalar>& knot,
               const std::vector<std::string>& names) {
  json k;
  JsonNumbers<Scalar> knot_numbers;
  k["step"] = knot.step;
  knot_numbers.put(k, "penalty", knot.penalty);
  k["mu"] = mu_as_double(path, knot.penalty);
  k["event"] = event_word(path, knot);
  k["predictor"] = knot.predictor >= 0 ? json(name_of(names, knot.predictor)) : json(nullptr);
  k["active"] = knot.active_count;
  knot_numbers.put(k, "l1_norm", knot.penalized_l1);
  const auto r2 = r_squared(path, knot.rss);
  if (r2)
    knot_numbers.put(k, "r_squared", *r2);
  else
    knot_numbers.put_null(k, "r_squared");
  knot_numbers.put(k, "rss", knot.rss);
  knot_numbers.put(k, "intercept", knot.intercept);
  json coefficients = json::object();
  json decimal_coefficients = json::object();
  for (const auto& [j, value] : knot.coefficients) {
    if constexpr (is_double_v<Scalar>) {
      coefficients[name_of(names, j)] = value;
    } else {
      coefficients[name_of(names, j)] = number_text(value);
      decimal_coefficients[name_of(names, j)] = nearest_double(value);
    }
  }
  knot_numbers.put_coefficients(k, coefficients, decimal_coefficients);
  knot_numbers.finish(k);
  return k;
}

// One enter or leave event.
template <class Scalar>
json event_json(const Path<Scalar>& path, const Knot<Scalar>& knot,
                const std::vector<std::string>& names) {
  json e;
  JsonNumbers<Scalar> event_numbers;
  e["step"] = knot.step;
  event_numbers.put(e, "penalty", knot.penalty);
  e["mu"] = mu_as_double(path, knot.penalty);
  e["event"] = to_string(knot.event);
  e["predictor"] = name_of(names, knot.predictor);
  e["sign"] = knot.sign;
  event_numbers.finish(e);
  return e;
}

// The predictors held out as collinear, where and why.
template <class Scalar>
json held_out_json(const Path<Scalar>& path, const std::vector<std::string>& names) {
  json held = json::array();
  for (const auto& h : path.held_out()) {
    json o;
    JsonNumbers<Scalar> held_numbers;
    o["predictor"] = name_of(names, h.predictor);
    o["step"] = h.step;
    held_numbers.put(o, "penalty", h.penalty);
    o["squared_sine"] = h.squared_sine;
    o["saturated"] = h.saturated;
    held_numbers.finish(o);
    held.push_back(o);
  }
  return held;
}

// Saturation of the active set (Path::saturation_step()) and the
// predictors held out after it, each named once (the audit's one line).
template <class Scalar>
json saturation_json(const Path<Scalar>& path, const std::vector<std::string>& names) {
  const auto step = path.saturation_step();
  json saturation;
  saturation["step"] = step ? json(*step) : json(nullptr);
  json predictors = json::array();
  std::size_t attempts = 0;
  for (const auto& h : path.held_out()) {
    if (!h.saturated) continue;
    ++attempts;
    const std::string name = name_of(names, h.predictor);
    if (std::find(predictors.begin(), predictors.end(), name) == predictors.end())
      predictors.push_back(name);
  }
  saturation["held_out_count"] = predictors.size();
  saturation["held_out_attempts"] = attempts;
  saturation["held_out"] = predictors;
  return saturation;
}

}  // namespace

template <class Scalar>
nlohmann::ordered_json health_document(const Path<Scalar>& path, const RunContext& context) {
  json health;
  health["suspect"] = path.suspect();
  health["worst_estimated_error"] = path.worst_estimated_error();
  health["suspect_threshold"] = path.options().suspect_threshold;
  json steps = json::array();
  for (const auto& k : path.knots())
    if (k.suspect) steps.push_back(k.step);
  health["suspect_steps"] = steps;
  health["advice"] = path.suspect() ? json(suspect_advice<Scalar>(context)) : json(nullptr);
  return health;
}

template <class Scalar>
std::string suspect_warning(const Path<Scalar>& path, const RunContext& context) {
  if (!path.suspect()) return {};
  return fmt::format(
      "WARNING: SUSPECT PATH. Health check: {} (threshold {:.2g}) at {} of {} knots (marked "
      "suspect above; worst condition estimate {:.2g}).\nWARNING: {}\n",
      estimated_error_text(path.worst_estimated_error()), path.options().suspect_threshold,
      suspect_count(path),
      path.knots().size(), path.worst_condition_estimate(), suspect_advice<Scalar>(context));
}

template <class Scalar>
std::vector<std::string> audit_notes(const Path<Scalar>& path, const RunContext& context) {
  const auto& names = context.predictor_names;
  std::vector<std::string> notes;
  if (context.rows_dropped > 0)
    notes.push_back(fmt::format("rows dropped for missing cells: {}", context.rows_dropped));
  for (const auto& e : path.excluded())
    notes.push_back(fmt::format("excluded: {} ({})", name_of(names, e.predictor), e.reason));
  // held_out_text(): one line per collinear column, one summary line for
  // those held out after saturation.
  const std::string held = held_out_text(path, names);
  for (std::size_t at = 0, end; at < held.size(); at = end + 1) {
    end = held.find('\n', at);
    if (end == std::string::npos) end = held.size();
    notes.push_back(held.substr(at, end - at));
  }
  if (!context.text_columns.empty()) {
    std::string list;
    for (const auto& t : context.text_columns) list += (list.empty() ? "" : ", ") + t;
    notes.push_back("text columns skipped: " + list);
  }
  for (const auto& note : context.table_notes) notes.push_back(note);
  if (!context.shards.empty())
    notes.push_back(fmt::format("table read from {} shards, each in blocks of {} rows into its own "
                                "statistics, merged in a fixed pairwise tree over the shards in the order "
                                "given (the same path for any number of processes)",
                                context.shards.size(), context.block_rows));
  else if (context.block_rows != 0)
    notes.push_back(fmt::format("table read in blocks of {} rows into its sufficient statistics "
                                "(the path of the Gram storage; memory independent of the row count)",
                                context.block_rows));
  return notes;
}

template <class Scalar>
nlohmann::ordered_json path_document(const Path<Scalar>& path, const RunContext& context) {
  const auto& names = context.predictor_names;
  JsonNumbers<Scalar> numbers;  // for the top-level members
  json doc;
  doc["format"] = "knotpath-path";
  doc["format_version"] = 1;
  doc["program"] = {{"name", "knotpath"}, {"version", context.program_version}};
  if constexpr (!is_double_v<Scalar>) doc["precision"] = precision_json<Scalar>();
  doc["data"] = data_json(path, context);
  doc["options"] = options_json(path, names);
  numbers.put(doc, "lambda_max", path.lambda_max());
  doc["mu_max"] = mu_as_double(path, path.lambda_max());
  doc["stop_reason"] = to_string(path.stop_reason());
  doc["stop_explanation"] = stop_explanation(path.stop_reason());
  doc["worst_condition_estimate"] = path.worst_condition_estimate();
  if (!is_double_v<Scalar> || path.suspect()) doc["health"] = health_document(path, context);
  json knots = json::array();
  json events = json::array();
  for (const auto& knot : path.knots()) {
    knots.push_back(knot_json(path, knot, names));
    if (knot.event == EventKind::enter || knot.event == EventKind::leave)
      events.push_back(event_json(path, knot, names));
  }
  doc["knots"] = knots;
  doc["events"] = events;
  json excluded = json::array();
  for (const auto& e : path.excluded())
    excluded.push_back({{"predictor", name_of(names, e.predictor)}, {"reason", e.reason}});
  doc["excluded"] = excluded;
  doc["held_out"] = held_out_json(path, names);
  doc["saturation"] = saturation_json(path, names);
  if constexpr (!is_double_v<Scalar>) numbers.finish(doc);
  return doc;
}

template <class Scalar>
std::string audit_text(const Path<Scalar>& path, const RunContext& context) {
  const auto& names = context.predictor_names;
  const bool suspect = path.suspect();
  std::string out = fmt::format("{} path of {} on {} predictors, {} rows used ({})\n",
                                to_string(path.options().variant),
                                context.response, names.size(),
                                path.preparation().used_observations, context.source);
  if constexpr (!is_double_v<Scalar>)
    out += fmt::format("arithmetic: {} (numbers below are rounded for display)\n",
                       arithmetic_name<Scalar>());
  struct Row {
    std::string cells[9];
  };
  // The health column appears only on a suspect path (clean paths keep the
  // eight columns of format_version 1).
  const int columns = suspect ? 9 : 8;
  std::vector<Row> rows;
  rows.push_back(
      {{"step", "penalty", "mu", "event", "predictor", "active", "l1_norm", "R^2", "health"}});
  for (const auto& knot : path.knots()) {
    const auto r2 = r_squared(path, knot.rss);
    rows.push_back(
        {{fmt::format("{}", knot.step), fmt::format("{:.6g}", nearest_double(knot.penalty)),
          fmt::format("{:.6g}", mu_as_double(path, knot.penalty)), event_word(path, knot),
          name_of(names, knot.predictor), fmt::format("{}", knot.active_count),
          fmt::format("{:.6g}", nearest_double(knot.penalized_l1)),
          r2 ? fmt::format("{:.4f}", nearest_double(*r2)) : std::string("-"),
          knot.suspect ? "suspect" : ""}});
  }
  std::size_t width[9] = {};
  for (const auto& r : rows)
    for (int c = 0; c < columns; ++c) width[c] = std::max(width[c], r.cells[c].size());
  // Numbers right-aligned, words left-aligned.
  const bool right[9] = {true, true, true, false, false, true, true, true, false};
  for (const auto& r : rows) {
    std::string line;
    for (int c = 0; c < columns; ++c) {
      if (c) line += "  ";
      line += right[c] ? fmt::format("{:>{}}", r.cells[c], width[c])
                       : fmt::format("{:<{}}", r.cells[c], width[c]);
    }
    while (!line.empty() && line.back() == ' ') line.pop_back();
    out += line + '\n';
  }
  out += fmt::format("stop: {} ({})\n", to_string(path.stop_reason()),
                     stop_explanation(path.stop_reason()));
  for (const auto& note : audit_notes(path, context)) out += note + '\n';
  out += suspect_warning(path, context);
  return out;
}

template <class Scalar>
std::string coefficient_table(const Solution<Scalar>& solution, const Path<Scalar>& path,
                              const std::vector<std::string>& names, bool csv) {
  (void)path;
  constexpr bool exact = detail::is_exact_v<Scalar>;
  std::vector<std::pair<std::string, Scalar>> terms;
  terms.emplace_back("(intercept)", solution.intercept);
  for (Index j = 0; j < solution.coefficients.size(); ++j)
    terms.emplace_back(name_of(names, j), solution.coefficients(j));
  std::string out;
  if (csv) {
    out = exact ? "predictor,coefficient,decimal:coefficient\n" : "predictor,coefficient\n";
    for (const auto& [name, value] : terms) {
      out += csv_field(name) + "," + number_text(value);
      if constexpr (exact) out += "," + round_trip(nearest_double(value));
      out += "\n";
    }
    return out;
  }
  std::size_t width = std::string("predictor").size();
  for (const auto& t : terms) width = std::max(width, t.first.size());
  if constexpr (is_double_v<Scalar>) {
    out += fmt::format("{:<{}}  {:>14}\n", "predictor", width, "coefficient");
    for (const auto& [name, value] : terms)
      out += fmt::format("{:<{}}  {:>14.8g}\n", name, width, value);
  } else {
    // Every digit of the arithmetic (exact: the fraction, then its decimal).
    std::size_t value_width = std::string("coefficient").size();
    for (const auto& t : terms) value_width = std::max(value_width, number_text(t.second).size());
    out += fmt::format("{:<{}}  {:>{}}", "predictor", width, "coefficient", value_width);
    out += exact ? fmt::format("  {:>14}\n", "decimal") : std::string("\n");
    for (const auto& [name, value] : terms) {
      out += fmt::format("{:<{}}  {:>{}}", name, width, number_text(value), value_width);
      out += exact ? fmt::format("  {:>14.8g}\n", nearest_double(value)) : std::string("\n");
    }
  }
  return out;
}

// The scalar types the reports are compiled for (see report.hpp).
#define KNOTPATH_REPORTS_FOR(Scalar)                                                             \
  template std::string number_text<Scalar>(const Scalar&);                                       \
  template double nearest_double<Scalar>(const Scalar&);                                         \
  template std::string arithmetic_name<Scalar>();                                                \
  template double mu_as_double<Scalar>(const Path<Scalar>&, const Scalar&);                      \
  template std::optional<Scalar> r_squared<Scalar>(const Path<Scalar>&, const Scalar&);          \
  template std::string event_word<Scalar>(const Path<Scalar>&, const Knot<Scalar>&);             \
  template void write_knot_table<Scalar>(std::ostream&, const Path<Scalar>&,                     \
                                         const std::vector<std::string>&);                       \
  template nlohmann::ordered_json path_document<Scalar>(const Path<Scalar>&, const RunContext&); \
  template std::string audit_text<Scalar>(const Path<Scalar>&, const RunContext&);               \
  template nlohmann::ordered_json health_document<Scalar>(const Path<Scalar>&,                   \
                                                          const RunContext&);                    \
  template std::string suspect_warning<Scalar>(const Path<Scalar>&, const RunContext&);          \
  template std::vector<std::string> audit_notes<Scalar>(const Path<Scalar>&, const RunContext&); \
  template std::string coefficient_table<Scalar>(const Solution<Scalar>&, const Path<Scalar>&,   \
                                                 const std::vector<std::string>&, bool);

KNOTPATH_REPORTS_FOR(double)
KNOTPATH_REPORTS_FOR(long double)
KNOTPATH_REPORTS_FOR(float50)
KNOTPATH_REPORTS_FOR(rational)
#ifdef KNOTPATH_HAVE_MPFR
KNOTPATH_REPORTS_FOR(mpfr_float)
#endif
#undef KNOTPATH_REPORTS_FOR

namespace {

[[noreturn]] void refuse_output(const std::filesystem::path& target, int error, const char* what) {
  if (what)
    throw output_error(
        fmt::format("cannot write {}: {} ({})", target.string(), std::strerror(error), what));
  throw output_error(fmt::format("cannot write {}: {}", target.string(), std::strerror(error)));
}

// Writes all of `content` to `fd`; false (errno set) on the first error.
bool write_all(int fd, const std::string& content) {
  std::size_t done = 0;
  while (done < content.size()) {
    const ssize_t n = ::write(fd, content.data() + done, content.size() - done);
    if (n < 0) {
      if (errno == EINTR) continue;
      return false;
    }
    done += static_cast<std::size_t>(n);
  }
  return true;
}

// How an output path is written (the rules are those of write_atomically).
struct OutputTarget {
  std::filesystem::path file;  ///< the path written or renamed over
  bool direct = false;         ///< written in place: a device, a pipe, a socket, a descriptor
  int descriptor = -1;         ///< one of this process's descriptors the path names (-1: none)
};

// Whether `link` (a symbolic link) lives in /proc: a process's descriptor
// link (/proc/self/fd/N, reached from /dev/stdout or /dev/fd/N) names an open
// descriptor, not a file one could rename over. When it is one of this
// process's descriptors, its number goes to `descriptor`: writing through
// it shares its offset with what the process already wrote there (a second
// opening of a regular file would write over it).
bool descriptor_link(const std::filesystem::path& link, int& descriptor) {
  std::error_code ec;
  const auto folder = std::filesystem::canonical(
      link.has_parent_path() ? link.parent_path() : std::filesystem::path("."), ec);
  if (ec || folder.string().rfind("/proc/", 0) != 0) return false;
  const std::string own = fmt::format("/proc/{}/fd", static_cast<long>(::getpid()));
  const std::string name = link.filename().string();
  if (folder == std::filesystem::path(own) && !name.empty() &&
      std::all_of(name.begin(), name.end(), [](char c) { return c >= '0' && c <= '9'; }) &&
      name.size() < 9)
    descriptor = std::stoi(name);
  return true;
}

// Follows the symbolic links of `target` one by one to the path the content
// belongs to, and says whether it is written in place.
OutputTarget resolve_output(const std::filesystem::path& target) {
  OutputTarget out{target, false};
  for (int hop = 0;; ++hop) {
    struct stat info {};
    if (::lstat(out.file.c_str(), &info) != 0) {
      if (errno == ENOENT) return out;  // a new file (or the missing end of a link)
      refuse_output(target, errno, nullptr);
    }
    if (S_ISREG(info.st_mode)) return out;
    if (S_ISDIR(info.st_mode)) refuse_output(target, EISDIR, nullptr);
    if (!S_ISLNK(info.st_mode) || descriptor_link(out.file, out.descriptor)) {
      out.direct = true;  // device, pipe, socket, open descriptor: never replaced
      return out;
    }
    if (hop == 40) refuse_output(target, ELOOP, nullptr);
    std::error_code ec;
    const std::filesystem::path next = std::filesystem::read_symlink(out.file, ec);
    if (ec) refuse_output(target, ec.value(), nullptr);
    out.file = next.is_absolute() ? next : out.file.parent_path() / next;
  }
}

// In place: the file is opened as it is (no creation, no truncation of a
// device) and written once; appending keeps what a descriptor already holds.
void write_in_place(const std::filesystem::path& target, const OutputTarget& where,
                    const std::string& content) {
  if (where.descriptor >= 0) {  // the process's own descriptor: written through, left open
    if (!write_all(where.descriptor, content)) refuse_output(target, errno, "write");
    return;
  }
  const int fd = ::open(where.file.c_str(), O_WRONLY | O_APPEND | O_CLOEXEC | O_NOCTTY);
  if (fd < 0) refuse_output(target, errno, nullptr);
  if (!write_all(fd, content)) {
    const int saved = errno;
    ::close(fd);
    refuse_output(target, saved, "write");
  }
  if (::close(fd) != 0) refuse_output(target, errno, "close");
}

// A temporary file beside the file, renamed over it when complete.
void replace_atomically(const std::filesystem::path& target, const std::filesystem::path& file,
                        const std::string& content) {
  const std::filesystem::path directory =
      file.has_parent_path() ? file.parent_path() : std::filesystem::path(".");
  static std::atomic<unsigned> counter{0};
  std::filesystem::path temporary;
  int fd = -1;
  for (int attempt = 0; attempt < 100 && fd < 0; ++attempt) {
    temporary = directory / fmt::format(".{}.tmp-{}-{}", file.filename().string(),
                                        static_cast<long>(::getpid()), counter++);
    fd = ::open(temporary.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0666);
    if (fd < 0 && errno != EEXIST) break;
  }
  if (fd < 0) refuse_output(target, errno, nullptr);
  auto fail = [&](int saved, const char* what) {
    std::error_code ignored;
    std::filesystem::remove(temporary, ignored);
    refuse_output(target, saved, what);
  };
  if (!write_all(fd, content)) {
    const int saved = errno;
    ::close(fd);
    fail(saved, "write");
  }
  if (::fsync(fd) != 0 && errno != EINVAL) {
    const int saved = errno;
    ::close(fd);
    fail(saved, "fsync");
  }
  if (::close(fd) != 0) fail(errno, nullptr);
  if (::rename(temporary.c_str(), file.c_str()) != 0) fail(errno, nullptr);
}

}  // namespace

void write_atomically(const std::filesystem::path& target,
                      const std::function<void(std::ostream&)>& write) {
  std::ostringstream buffer;
  write(buffer);  // an exception here leaves nothing on disk
  const std::string content = buffer.str();
  const OutputTarget where = resolve_output(target);
  if (where.direct)
    write_in_place(target, where, content);
  else
    replace_atomically(target, where.file, content);
}

std::string suspect_advice_text(const RunContext& context) {
  return suspect_advice<double>(context);
}

std::string estimated_error_text(double estimate) {
  if (estimate > first_order_limit)
    return fmt::format(
        "estimated relative error {:.2g}: above {:.0e} the estimate bounds nothing, the events "
        "themselves may differ from the exact path's",
        estimate, first_order_limit);
  return fmt::format(
      "estimated relative error up to {:.2g} of the printed coefficients and intercept", estimate);
}

std::string csv_text_field(const std::string& text) { return csv_field(text); }

}  // namespace knotpath::io
