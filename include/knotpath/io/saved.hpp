#pragma once
/// \file io/saved.hpp
/// \brief Saving a traced path to a file and reading it back exactly: every
/// number of the path to its last bit, with the options, the predictor
/// names, the preparation (means, scales, exclusions), the held-out
/// predictors, the stop reason and any named penalties (a selection's
/// choices), so that a loaded path answers every query as the original.
///
/// Implements no published method: it stores the records Path is assembled
/// from (path.hpp) and assembles it again from them.
///
/// The file ("knotpath saved path", format version saved_format_version) is
/// a JSON document of our own layout:
///   {"format": "knotpath-saved-path", "format_version": 1,
///    "arithmetic": "double" | "long-double" | "50-digits" | "mpfr" | "exact",
///    "digits": D (mpfr only: its decimal precision),
///    "numbers": how numbers are written (below),
///    "checksum": 64-bit FNV-1a of the compact text of "body", 16 hex digits,
///    "body": {"response", "choices", "options", "preparation", "knots",
///             "held_out", "stop", "ridge", "expanded"}}
/// "expanded" lists the text columns expanded into indicator predictors
/// (column, levels, reference, names), so that new rows are expanded alike;
/// a file without it expanded none.
/// Numbers of the path are JSON strings, each exact in its arithmetic:
///  - double and long double (and every double field of the records, such as
///    health figures and options): the C hexadecimal floating form of
///    std::to_chars(..., std::chars_format::hex), e.g. "1.8p+1" for 3 and
///    "-1p-3" for -0.125: a binary significand written digit for digit, so
///    reading it back gives the same bits (no decimal rounding at all);
///  - exact rationals: the fraction "p/q" in lowest terms;
///  - 50-digit and MPFR floats: decimal text with enough significant digits
///    to read back to the same value (max_digits10 of the 50-digit type;
///    MPFR: its decimal precision + 2).
/// The checksum makes a damaged or hand-edited file a clear error instead of
/// a path that silently answers differently.

#include <array>
#include <charconv>
#include <cstdint>
#include <cstdio>
#include <initializer_list>
#include <istream>
#include <iterator>
#include <limits>
#include <ostream>
#include <sstream>
#include <string>
#include <system_error>
#include <type_traits>
#include <utility>
#include <vector>

#include <nlohmann/json.hpp>

#include "../errors.hpp"
#include "../knot.hpp"
#include "../options.hpp"
#include "../path.hpp"
#include "../precision.hpp"
#include "../prepare.hpp"
#include "table.hpp"

namespace knotpath::io {

/// The format version this library writes and the newest it reads.
inline constexpr int saved_format_version = 1;

/// A saved file cannot be read: it is not a saved path, it was written by a
/// newer version of the format, it holds another arithmetic than the one
/// asked for, or it is damaged (truncated, edited, inconsistent). what()
/// reads "knotpath: saved path SOURCE: WHY".
class saved_path_error : public knotpath::error {
 public:
  /// \param source the file name (or a description of the stream)
  /// \param why    what is wrong
  saved_path_error(const std::string& source, const std::string& why)
      : knotpath::error("knotpath: saved path " + source + ": " + why) {}
};

/// A named penalty stored with a path (for instance a selection's choice).
template <class Scalar>
struct NamedPenalty {
  std::string name;  ///< how it is asked for (e.g. "least-error")
  Scalar penalty{0}; ///< its lambda on this path
};

/// A path with what a later user of it needs: the response's name and the
/// named penalties chosen for it.
template <class Scalar>
struct SavedPath {
  Path<Scalar> path;                         ///< the traced path
  std::string response;                      ///< the response's name ("" when unknown)
  std::vector<NamedPenalty<Scalar>> choices; ///< named penalties, in the order saved
  /// Text columns of the traced table expanded into indicator predictors
  /// (their levels and reference), so that new rows can be expanded alike.
  std::vector<IndicatorColumn> expanded;

  /// The named penalty `name`, or nullptr when the file has none of that name.
  const NamedPenalty<Scalar>* choice(const std::string& name) const {
    for (const auto& c : choices)
      if (c.name == name) return &c;
    return nullptr;
  }
};

/// The arithmetic word of a scalar type in a saved file ("double", "exact", ...).
template <class Scalar>
std::string saved_arithmetic() {
  if constexpr (std::is_same_v<Scalar, double>)
    return "double";
  else if constexpr (std::is_same_v<Scalar, long double>)
    return "long-double";
  else if constexpr (std::is_same_v<Scalar, float50>)
    return "50-digits";
  else if constexpr (detail::is_exact_v<Scalar>)
    return "exact";
#ifdef KNOTPATH_HAVE_MPFR
  else if constexpr (std::is_same_v<Scalar, mpfr_float>)
    return "mpfr";
#endif
  else
    static_assert(sizeof(Scalar) == 0, "no saved form for this scalar type");
}

namespace saved_detail {

using json = nlohmann::ordered_json;

// The one home of how a number is written in a saved file (see the file
// comment) and read back; read_number throws std::invalid_argument for text
// that is not such a number (load_path names the file).
template <class Scalar>
std::string write_number(const Scalar& value) {
  if constexpr (std::is_floating_point_v<Scalar>) {
    std::array<char, 64> buffer{};
    const auto r = std::to_chars(buffer.data(), buffer.data() + buffer.size(), value, std::chars_format::hex);
    return std::string(buffer.data(), r.ptr);
  } else if constexpr (detail::is_exact_v<Scalar>) {
    using boost::multiprecision::denominator;
    using boost::multiprecision::numerator;
    return numerator(value).str() + "/" + denominator(value).str();
  } else if constexpr (std::is_same_v<Scalar, float50>) {
    return value.str(std::numeric_limits<Scalar>::max_digits10);
  } else {
    return value.str(static_cast<std::streamsize>(value.precision()) + 2);
  }
}

template <class Scalar>
Scalar read_number(const std::string& text) {
  if constexpr (std::is_floating_point_v<Scalar>) {
    Scalar value{};
    const char* end = text.data() + text.size();
    const auto r = std::from_chars(text.data(), end, value, std::chars_format::hex);
    if (r.ec != std::errc() || r.ptr != end || text.empty())
      throw std::invalid_argument("\"" + text + "\" is not a hexadecimal floating number");
    return value;
  } else {
    if (text.empty() || text.find_first_not_of("0123456789+-./eE") != std::string::npos)
      throw std::invalid_argument("\"" + text + "\" is not a number");
    try {
      return Scalar(text);
    } catch (const std::exception&) {
      throw std::invalid_argument("\"" + text + "\" is not a number");
    }
  }
}

// 64-bit FNV-1a (Fowler, Noll and Vo; parameters as published by its
// authors: offset basis 14695981039346656037, prime 1099511628211).
inline std::string checksum(const std::string& text) {
  std::uint64_t h = 14695981039346656037ull;
  for (const char c : text) {
    h ^= static_cast<unsigned char>(c);
    h *= 1099511628211ull;
  }
  char out[17];
  std::snprintf(out, sizeof out, "%016llx", static_cast<unsigned long long>(h));
  return out;
}

template <class Scalar>
json vector_json(const Vector<Scalar>& v) {
  json a = json::array();
  for (Index i = 0; i < v.size(); ++i) a.push_back(write_number(v(i)));
  return a;
}

template <class Scalar>
Vector<Scalar> vector_of(const json& a) {
  Vector<Scalar> v(static_cast<Index>(a.size()));
  for (std::size_t i = 0; i < a.size(); ++i) v(static_cast<Index>(i)) = read_number<Scalar>(a.at(i).get<std::string>());
  return v;
}

// The enumeration value whose to_string() (the one home of each enum's
// words: options.hpp, knot.hpp) is `word` (invalid_argument otherwise).
template <class Enum>
Enum enum_of(const std::string& word, std::initializer_list<Enum> values) {
  for (Enum e : values)
    if (word == to_string(e)) return e;
  throw std::invalid_argument("unknown word \"" + word + "\"");
}

inline json options_json(const TraceOptions& o) {
  json j;
  j["variant"] = to_string(o.variant);
  j["storage"] = to_string(o.storage);
  j["with_intercept"] = o.with_intercept;
  j["standardize"] = o.standardize;
  json scales = json::array();
  for (double f : o.penalty_scales) scales.push_back(write_number(f));
  j["penalty_scales"] = scales;
  j["unpenalized"] = o.unpenalized;
  j["left_out"] = o.left_out;
  json signs = json::array();
  for (SignConstraint c : o.sign_constraints) signs.push_back(to_string(c));
  j["sign_constraints"] = signs;
  j["ridge"] = write_number(o.ridge);
  j["max_knots"] = o.max_knots;
  j["min_penalty"] = write_number(o.min_penalty);
  j["max_active"] = o.max_active;
  j["collinearity_tolerance"] = write_number(o.collinearity_tolerance);
  j["tie_tolerance"] = write_number(o.tie_tolerance);
  j["max_steps"] = o.max_steps;
  j["suspect_threshold"] = write_number(o.suspect_threshold);
  j["threads"] = o.threads;
  j["predictor_names"] = o.predictor_names;
  return j;
}

inline TraceOptions options_of(const json& j) {
  TraceOptions o;
  o.variant = enum_of(j.at("variant").get<std::string>(), {Variant::lasso, Variant::least_angle});
  o.storage = enum_of(j.at("storage").get<std::string>(),
                      {Storage::automatic, Storage::dense, Storage::gram, Storage::view});
  o.with_intercept = j.at("with_intercept").get<bool>();
  o.standardize = j.at("standardize").get<bool>();
  for (const auto& f : j.at("penalty_scales")) o.penalty_scales.push_back(read_number<double>(f.get<std::string>()));
  o.unpenalized = j.at("unpenalized").get<std::vector<std::size_t>>();
  o.left_out = j.at("left_out").get<std::vector<std::size_t>>();
  for (const auto& c : j.at("sign_constraints"))
    o.sign_constraints.push_back(enum_of(c.get<std::string>(), {SignConstraint::none, SignConstraint::nonnegative,
                                                                SignConstraint::nonpositive}));
  o.ridge = read_number<double>(j.at("ridge").get<std::string>());
  o.max_knots = j.at("max_knots").get<std::size_t>();
  o.min_penalty = read_number<double>(j.at("min_penalty").get<std::string>());
  o.max_active = j.at("max_active").get<std::size_t>();
  o.collinearity_tolerance = read_number<double>(j.at("collinearity_tolerance").get<std::string>());
  o.tie_tolerance = read_number<double>(j.at("tie_tolerance").get<std::string>());
  o.max_steps = j.at("max_steps").get<std::size_t>();
  o.suspect_threshold = read_number<double>(j.at("suspect_threshold").get<std::string>());
  o.threads = j.at("threads").get<std::size_t>();
  o.predictor_names = j.at("predictor_names").get<std::vector<std::string>>();
  return o;
}

template <class Scalar>
json preparation_json(const Preparation<Scalar>& p) {
  json j;
  j["observations"] = p.observations;
  j["used_observations"] = p.used_observations;
  j["predictors"] = p.predictors;
  j["intercept"] = p.intercept;
  j["standardized"] = p.standardized;
  j["weight_sum"] = write_number(p.weight_sum);
  j["response_mean"] = write_number(p.response_mean);
  j["total_sum_of_squares"] = write_number(p.total_sum_of_squares);
  j["means"] = vector_json(p.means);
  j["scales"] = vector_json(p.scales);
  j["columns"] = p.columns;
  json factors = json::array();
  for (double f : p.penalty_weights) factors.push_back(write_number(f));
  j["penalty_weights"] = factors;
  json signs = json::array();
  for (SignConstraint c : p.constraints) signs.push_back(to_string(c));
  j["constraints"] = signs;
  json excluded = json::array();
  for (const auto& e : p.excluded) excluded.push_back({{"predictor", e.predictor}, {"reason", e.reason}});
  j["excluded"] = excluded;
  j["centring_amplification"] = write_number(p.centring_amplification);
  return j;
}

template <class Scalar>
Preparation<Scalar> preparation_of(const json& j) {
  Preparation<Scalar> p;
  p.observations = j.at("observations").get<Index>();
  p.used_observations = j.at("used_observations").get<Index>();
  p.predictors = j.at("predictors").get<Index>();
  p.intercept = j.at("intercept").get<bool>();
  p.standardized = j.at("standardized").get<bool>();
  p.weight_sum = read_number<Scalar>(j.at("weight_sum").get<std::string>());
  p.response_mean = read_number<Scalar>(j.at("response_mean").get<std::string>());
  p.total_sum_of_squares = read_number<Scalar>(j.at("total_sum_of_squares").get<std::string>());
  p.means = vector_of<Scalar>(j.at("means"));
  p.scales = vector_of<Scalar>(j.at("scales"));
  p.columns = j.at("columns").get<std::vector<Index>>();
  for (const auto& f : j.at("penalty_weights")) p.penalty_weights.push_back(read_number<double>(f.get<std::string>()));
  for (const auto& c : j.at("constraints"))
    p.constraints.push_back(enum_of(c.get<std::string>(), {SignConstraint::none, SignConstraint::nonnegative,
                                                           SignConstraint::nonpositive}));
  for (const auto& e : j.at("excluded"))
    p.excluded.push_back({e.at("predictor").get<Index>(), e.at("reason").get<std::string>()});
  p.centring_amplification = read_number<double>(j.at("centring_amplification").get<std::string>());
  return p;
}

template <class Scalar>
json knot_json(const Knot<Scalar>& k) {
  json j;
  j["step"] = k.step;
  j["penalty"] = write_number(k.penalty);
  j["event"] = to_string(k.event);
  j["predictor"] = k.predictor;
  j["sign"] = k.sign;
  j["correlation"] = write_number(k.correlation);
  j["active_count"] = k.active_count;
  j["penalized_l1"] = write_number(k.penalized_l1);
  j["plain_l1"] = write_number(k.plain_l1);
  j["rss"] = write_number(k.rss);
  j["intercept"] = write_number(k.intercept);
  json coefficients = json::array();
  for (const auto& [index, value] : k.coefficients) coefficients.push_back(json::array({index, write_number(value)}));
  j["coefficients"] = coefficients;
  j["condition_estimate"] = write_number(k.condition_estimate);
  j["prepared_error"] = write_number(k.prepared_error);
  j["estimated_error"] = write_number(k.estimated_error);
  j["suspect"] = k.suspect;
  return j;
}

template <class Scalar>
Knot<Scalar> knot_of(const json& j) {
  Knot<Scalar> k;
  k.step = j.at("step").get<Index>();
  k.penalty = read_number<Scalar>(j.at("penalty").get<std::string>());
  k.event = enum_of(j.at("event").get<std::string>(),
                    {EventKind::start, EventKind::enter, EventKind::leave, EventKind::end, EventKind::stop});
  k.predictor = j.at("predictor").get<Index>();
  k.sign = j.at("sign").get<int>();
  k.correlation = read_number<double>(j.at("correlation").get<std::string>());
  k.active_count = j.at("active_count").get<Index>();
  k.penalized_l1 = read_number<Scalar>(j.at("penalized_l1").get<std::string>());
  k.plain_l1 = read_number<Scalar>(j.at("plain_l1").get<std::string>());
  k.rss = read_number<Scalar>(j.at("rss").get<std::string>());
  k.intercept = read_number<Scalar>(j.at("intercept").get<std::string>());
  for (const auto& c : j.at("coefficients"))
    k.coefficients.emplace_back(c.at(0).get<Index>(), read_number<Scalar>(c.at(1).get<std::string>()));
  k.condition_estimate = read_number<double>(j.at("condition_estimate").get<std::string>());
  k.prepared_error = read_number<double>(j.at("prepared_error").get<std::string>());
  k.estimated_error = read_number<double>(j.at("estimated_error").get<std::string>());
  k.suspect = j.at("suspect").get<bool>();
  return k;
}

// Sizes, indices and orders that Path relies on; throws invalid_argument.
template <class Scalar>
void check_consistent(const Preparation<Scalar>& p, const TraceOptions& o, const std::vector<Knot<Scalar>>& knots,
                      const std::vector<HeldOut<Scalar>>& held_out) {
  auto fail = [](const std::string& why) { throw std::invalid_argument(why); };
  if (p.predictors < 0 || p.means.size() != p.predictors || p.scales.size() != p.predictors)
    fail("the preparation's means or scales do not have one entry per predictor");
  if (p.penalty_weights.size() != p.columns.size() || p.constraints.size() != p.columns.size())
    fail("the preparation's per-column lists differ in length");
  for (std::size_t k = 0; k < p.columns.size(); ++k)
    if (p.columns[k] < 0 || p.columns[k] >= p.predictors || (k > 0 && p.columns[k] <= p.columns[k - 1]))
      fail("the preparation's columns are not ascending predictor indices");
  try {
    o.validate(static_cast<std::size_t>(p.predictors));
  } catch (const invalid_option& e) {
    fail(e.what());
  }
  if (knots.empty()) fail("the path has no knots");
  for (std::size_t i = 0; i < knots.size(); ++i) {
    if (i > 0 && knots[i].penalty > knots[i - 1].penalty) fail("the knots' penalties increase");
    Index last = -1;
    for (const auto& [j, value] : knots[i].coefficients) {
      if (j <= last || j >= p.predictors) fail("a knot's coefficients are not ascending predictor indices");
      last = j;
    }
  }
  for (const auto& h : held_out)
    if (h.predictor < 0 || h.predictor >= p.predictors) fail("a held-out predictor is out of range");
}

}  // namespace saved_detail

/// Writes `saved` to `out` in the saved-path format (see the file comment).
/// The output is one JSON document followed by a line break.
template <class Scalar>
void save_path(std::ostream& out, const SavedPath<Scalar>& saved) {
  using saved_detail::json;
  using saved_detail::write_number;
  const Path<Scalar>& path = saved.path;
  json body;
  body["response"] = saved.response;
  json choices = json::array();
  for (const auto& c : saved.choices) choices.push_back({{"name", c.name}, {"penalty", write_number(c.penalty)}});
  body["choices"] = choices;
  body["options"] = saved_detail::options_json(path.options());
  body["preparation"] = saved_detail::preparation_json(path.preparation());
  json knots = json::array();
  for (const auto& k : path.knots()) knots.push_back(saved_detail::knot_json(k));
  body["knots"] = knots;
  json held = json::array();
  for (const auto& h : path.held_out())
    held.push_back({{"step", h.step},
                    {"penalty", write_number(h.penalty)},
                    {"predictor", h.predictor},
                    {"squared_sine", write_number(h.squared_sine)},
                    {"saturated", h.saturated}});
  body["held_out"] = held;
  body["stop"] = to_string(path.stop_reason());
  body["ridge"] = write_number(path.ridge());
  json expanded = json::array();
  for (const auto& e : saved.expanded)
    expanded.push_back({{"column", e.source}, {"levels", e.levels}, {"reference", e.reference}, {"names", e.names}});
  body["expanded"] = expanded;
  json doc;
  doc["format"] = "knotpath-saved-path";
  doc["format_version"] = saved_format_version;
  doc["arithmetic"] = saved_arithmetic<Scalar>();
#ifdef KNOTPATH_HAVE_MPFR
  if constexpr (std::is_same_v<Scalar, mpfr_float>) doc["digits"] = mpfr_float::default_precision();
#endif
  doc["numbers"] = std::is_floating_point_v<Scalar> ? "hexadecimal floating form (std::to_chars, chars_format::hex)"
                   : detail::is_exact_v<Scalar>     ? "exact fractions p/q"
                                                    : "decimal, every digit of the arithmetic";
  doc["checksum"] = saved_detail::checksum(body.dump());
  doc["body"] = std::move(body);
  out << doc.dump(1) << '\n';
}

/// The header of a saved file: its arithmetic word (saved_arithmetic()) and,
/// for MPFR, its decimal digits (0 otherwise). Reads the whole stream.
/// Throws saved_path_error when the text is not a saved path of a version
/// this library reads. `source` names the file in messages.
struct SavedHeader {
  std::string arithmetic;  ///< "double", "long-double", "50-digits", "mpfr" or "exact"
  unsigned digits = 0;     ///< MPFR decimal digits (0 for the other arithmetics)
};

namespace saved_detail {

// Parses the document and checks its format, version and checksum.
inline json read_document(std::istream& in, const std::string& source) {
  json doc;
  try {
    doc = json::parse(std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>());
  } catch (const json::exception&) {
    throw saved_path_error(source, "not a saved path (not a complete JSON document: damaged or another kind of file)");
  }
  if (!doc.is_object() || !doc.contains("format") || doc["format"] != "knotpath-saved-path")
    throw saved_path_error(source, "not a saved path (no \"format\": \"knotpath-saved-path\")");
  const json& version = doc.value("format_version", json());
  if (!version.is_number_integer() || version.get<long long>() < 1)
    throw saved_path_error(source, "damaged: no valid format_version");
  if (version.get<long long>() > saved_format_version)
    throw saved_path_error(source, "written in format version " + std::to_string(version.get<long long>()) +
                                       ", newer than this knotpath reads (" +
                                       std::to_string(saved_format_version) + "); use a newer knotpath");
  if (!doc.contains("body") || !doc.contains("checksum") || !doc["checksum"].is_string() ||
      doc["checksum"].get<std::string>() != checksum(doc["body"].dump()))
    throw saved_path_error(source, "damaged: its checksum does not match its contents (was it edited or cut?)");
  return doc;
}

}  // namespace saved_detail

/// Reads a saved file's header (see SavedHeader); the stream is consumed.
inline SavedHeader read_saved_header(std::istream& in, const std::string& source) {
  const auto doc = saved_detail::read_document(in, source);
  SavedHeader h;
  try {
    h.arithmetic = doc.at("arithmetic").get<std::string>();
    if (h.arithmetic == "mpfr") h.digits = doc.at("digits").get<unsigned>();
  } catch (const std::exception&) {
    throw saved_path_error(source, "damaged: no valid arithmetic");
  }
  return h;
}

/// Reads a path saved by save_path() in the arithmetic Scalar. Every number
/// reads back to the exact value written, so the loaded path answers every
/// query (Path's queries, predictions, the audit, the events) bit for bit
/// as the path saved. For mpfr_float the default MPFR precision is set to the
/// file's digits (as set_mpfr_digits() does) before any number is read; keep
/// it while querying the path. Throws saved_path_error when the text is not
/// a saved path, is of a newer format version, holds another arithmetic, or
/// is damaged (truncated, edited, or inconsistent records). `source` names
/// the file in messages.
template <class Scalar>
SavedPath<Scalar> load_path(std::istream& in, const std::string& source) {
  using saved_detail::json;
  using saved_detail::read_number;
  const json doc = saved_detail::read_document(in, source);
  const std::string arithmetic = doc.value("arithmetic", std::string());
  if (arithmetic != saved_arithmetic<Scalar>())
    throw saved_path_error(source, "holds a path in arithmetic \"" + arithmetic + "\", not \"" +
                                       saved_arithmetic<Scalar>() + "\"");
  try {
#ifdef KNOTPATH_HAVE_MPFR
    if constexpr (std::is_same_v<Scalar, mpfr_float>) set_mpfr_digits(doc.at("digits").get<unsigned>());
#endif
    const json& body = doc.at("body");
    SavedPath<Scalar> saved;
    saved.response = body.at("response").get<std::string>();
    for (const auto& c : body.at("choices"))
      saved.choices.push_back({c.at("name").get<std::string>(), read_number<Scalar>(c.at("penalty").get<std::string>())});
    if (body.contains("expanded"))
      for (const auto& e : body.at("expanded"))
        saved.expanded.push_back({e.at("column").get<std::string>(), e.at("levels").get<std::vector<std::string>>(),
                                  e.at("reference").get<std::string>(), e.at("names").get<std::vector<std::string>>()});
    TraceOptions options = saved_detail::options_of(body.at("options"));
    Preparation<Scalar> prep = saved_detail::preparation_of<Scalar>(body.at("preparation"));
    std::vector<Knot<Scalar>> knots;
    for (const auto& k : body.at("knots")) knots.push_back(saved_detail::knot_of<Scalar>(k));
    std::vector<HeldOut<Scalar>> held_out;
    for (const auto& h : body.at("held_out"))
      held_out.push_back({h.at("step").get<Index>(), read_number<Scalar>(h.at("penalty").get<std::string>()),
                          h.at("predictor").get<Index>(), read_number<double>(h.at("squared_sine").get<std::string>()),
                          h.at("saturated").get<bool>()});
    const StopReason reason = saved_detail::enum_of(
        body.at("stop").get<std::string>(), {StopReason::completed, StopReason::max_knots, StopReason::min_penalty,
                                             StopReason::max_active, StopReason::step_limit});
    Scalar ridge = read_number<Scalar>(body.at("ridge").get<std::string>());
    saved_detail::check_consistent(prep, options, knots, held_out);
    saved.path = Path<Scalar>(std::move(prep), std::move(options), std::move(knots), std::move(held_out), reason,
                              std::move(ridge));
    return saved;
  } catch (const saved_path_error&) {
    throw;
  } catch (const std::exception& e) {
    throw saved_path_error(source, std::string("damaged: ") + e.what());
  }
}

}  // namespace knotpath::io
