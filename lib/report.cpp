// Reports of a traced path; see include/knotpath/io/report.hpp.

#include "knotpath/io/report.hpp"

#include <fcntl.h>
#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <cerrno>
#include <cmath>
#include <cstring>
#include <sstream>

#include <fmt/format.h>

namespace knotpath::io {

std::string round_trip(double value) { return fmt::format("{:.17g}", value); }

double size_free_penalty(const Path<double>& path, double lambda) {
  const double n = path.preparation().weight_sum;
  return n > 0 ? lambda / std::sqrt(n) : 0.0;
}

std::optional<double> r_squared(const Path<double>& path, double rss) {
  const double tss = path.preparation().total_sum_of_squares;
  if (!(tss > 0)) return std::nullopt;
  return 1.0 - rss / tss;
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

std::string event_name(const Path<double>& path, const Knot<double>& knot) {
  if (knot.event == EventKind::end || knot.event == EventKind::stop)
    return to_string(path.stop_reason());
  return to_string(knot.event);
}

std::string name_of(const std::vector<std::string>& names, Index j) {
  if (j < 0) return "";
  return names.at(static_cast<std::size_t>(j));
}

std::string variant_name(Variant v) { return v == Variant::lasso ? "lasso" : "least-angle"; }

std::string constraint_name(SignConstraint c) {
  switch (c) {
    case SignConstraint::nonnegative: return "nonnegative";
    case SignConstraint::nonpositive: return "nonpositive";
    case SignConstraint::none: break;
  }
  return "none";
}

std::string stop_explanation(StopReason reason) {
  switch (reason) {
    case StopReason::completed: return "the path reached penalty 0";
    case StopReason::max_knots: return "the knot limit (--max-knots) was reached";
    case StopReason::min_penalty: return "the penalty floor (--min-penalty) was reached";
    case StopReason::max_active: return "the active-set limit (--max-active) was reached";
    case StopReason::step_limit:
      return "the safety bound on homotopy steps was hit: numerical trouble, the path is incomplete";
  }
  return "?";
}

}  // namespace

void write_knot_table(std::ostream& out, const Path<double>& path,
                      const std::vector<std::string>& names) {
  out << "step,penalty,event,predictor,active,l1_norm,r_squared,intercept";
  for (const auto& name : names) out << ',' << csv_field(name);
  out << '\n';
  const auto p = static_cast<std::size_t>(path.predictors());
  std::vector<double> beta(p);
  for (const auto& knot : path.knots()) {
    std::fill(beta.begin(), beta.end(), 0.0);
    for (const auto& [j, value] : knot.coefficients) beta[static_cast<std::size_t>(j)] = value;
    const auto r2 = r_squared(path, knot.rss);
    out << knot.step << ',' << round_trip(knot.penalty) << ',' << event_name(path, knot) << ','
        << csv_field(name_of(names, knot.predictor)) << ',' << knot.active << ','
        << round_trip(knot.l1_norm) << ',' << (r2 ? round_trip(*r2) : std::string()) << ','
        << round_trip(knot.intercept);
    for (double b : beta) out << ',' << round_trip(b);
    out << '\n';
  }
}

nlohmann::ordered_json path_document(const Path<double>& path, const RunContext& context) {
  using json = nlohmann::ordered_json;
  const auto& names = context.predictor_names;
  const auto& prep = path.preparation();
  const auto& options = path.options();
  json doc;
  doc["format"] = "knotpath-path";
  doc["format_version"] = 1;
  doc["program"] = {{"name", "knotpath"}, {"version", context.program_version}};

  json data;
  data["source"] = context.source;
  data["response"] = context.response;
  data["weights"] = context.weights ? json(*context.weights) : json(nullptr);
  data["rows_read"] = context.rows_read;
  data["rows_dropped_missing"] = context.rows_dropped;
  data["rows_used"] = prep.used_observations;
  data["weight_sum"] = prep.weight_sum;
  data["predictors"] = names;
  data["text_columns_skipped"] = context.text_columns;
  data["columns_not_used"] = context.unused_columns;
  data["response_mean"] = prep.response_mean;
  data["total_sum_of_squares"] = prep.total_sum_of_squares;
  doc["data"] = data;

  json opts;
  opts["variant"] = variant_name(options.variant);
  opts["intercept"] = options.fit_intercept;
  opts["standardize"] = options.standardize;
  opts["ridge"] = options.ridge;
  json factors = json::object();
  json signs = json::object();
  for (std::size_t j = 0; j < names.size(); ++j) {
    factors[names[j]] = options.penalty_factor(j);
    signs[names[j]] = constraint_name(options.sign_constraint(j));
  }
  opts["penalty_factors"] = factors;
  opts["sign_constraints"] = signs;
  opts["max_knots"] = options.max_knots;
  opts["min_penalty"] = options.min_penalty;
  opts["max_active"] = options.max_active;
  doc["options"] = opts;

  doc["lambda_max"] = path.lambda_max();
  doc["mu_max"] = size_free_penalty(path, path.lambda_max());
  doc["stop_reason"] = to_string(path.stop_reason());
  doc["stop_explanation"] = stop_explanation(path.stop_reason());
  doc["worst_condition_estimate"] = path.worst_condition_estimate();

  json knots = json::array();
  json events = json::array();
  for (const auto& knot : path.knots()) {
    json k;
    k["step"] = knot.step;
    k["penalty"] = knot.penalty;
    k["mu"] = size_free_penalty(path, knot.penalty);
    k["event"] = event_name(path, knot);
    k["predictor"] = knot.predictor >= 0 ? json(name_of(names, knot.predictor)) : json(nullptr);
    k["active"] = knot.active;
    k["l1_norm"] = knot.l1_norm;
    const auto r2 = r_squared(path, knot.rss);
    k["r_squared"] = r2 ? json(*r2) : json(nullptr);
    k["rss"] = knot.rss;
    k["intercept"] = knot.intercept;
    json coefficients = json::object();
    for (const auto& [j, value] : knot.coefficients) coefficients[name_of(names, j)] = value;
    k["coefficients"] = coefficients;
    knots.push_back(k);
    if (knot.event == EventKind::enter || knot.event == EventKind::leave) {
      events.push_back({{"step", knot.step},
                        {"penalty", knot.penalty},
                        {"mu", size_free_penalty(path, knot.penalty)},
                        {"event", to_string(knot.event)},
                        {"predictor", name_of(names, knot.predictor)},
                        {"sign", knot.sign}});
    }
  }
  doc["knots"] = knots;
  doc["events"] = events;

  json excluded = json::array();
  for (const auto& e : path.excluded())
    excluded.push_back({{"predictor", name_of(names, e.predictor)}, {"reason", e.reason}});
  doc["excluded"] = excluded;
  json held = json::array();
  for (const auto& h : path.held_out())
    held.push_back({{"predictor", name_of(names, h.predictor)},
                    {"step", h.step},
                    {"penalty", h.penalty},
                    {"squared_sine", h.squared_sine},
                    {"saturated", h.saturated}});
  doc["held_out"] = held;
  return doc;
}

std::string audit_text(const Path<double>& path, const RunContext& context) {
  const auto& names = context.predictor_names;
  std::string out = fmt::format(
      "{} path of {} on {} predictors, {} rows used ({})\n",
      path.options().variant == Variant::lasso ? "lasso" : "least-angle", context.response,
      names.size(), path.preparation().used_observations, context.source);
  struct Row {
    std::string cells[8];
  };
  std::vector<Row> rows;
  rows.push_back({{"step", "penalty", "mu", "event", "predictor", "active", "l1_norm", "R^2"}});
  for (const auto& knot : path.knots()) {
    const auto r2 = r_squared(path, knot.rss);
    rows.push_back({{fmt::format("{}", knot.step), fmt::format("{:.6g}", knot.penalty),
                     fmt::format("{:.6g}", size_free_penalty(path, knot.penalty)),
                     event_name(path, knot), name_of(names, knot.predictor),
                     fmt::format("{}", knot.active), fmt::format("{:.6g}", knot.l1_norm),
                     r2 ? fmt::format("{:.4f}", *r2) : std::string("-")}});
  }
  std::size_t width[8] = {};
  for (const auto& r : rows)
    for (int c = 0; c < 8; ++c) width[c] = std::max(width[c], r.cells[c].size());
  // Numbers right-aligned, words left-aligned.
  const bool right[8] = {true, true, true, false, false, true, true, true};
  for (const auto& r : rows) {
    std::string line;
    for (int c = 0; c < 8; ++c) {
      if (c) line += "  ";
      line += right[c] ? fmt::format("{:>{}}", r.cells[c], width[c])
                       : fmt::format("{:<{}}", r.cells[c], width[c]);
    }
    while (!line.empty() && line.back() == ' ') line.pop_back();
    out += line + '\n';
  }
  out += fmt::format("stop: {} ({})\n", to_string(path.stop_reason()),
                     stop_explanation(path.stop_reason()));
  if (context.rows_dropped > 0)
    out += fmt::format("rows dropped for missing cells: {}\n", context.rows_dropped);
  for (const auto& e : path.excluded())
    out += fmt::format("excluded: {} ({})\n", name_of(names, e.predictor), e.reason);
  for (const auto& h : path.held_out())
    out += fmt::format("held out: {} at step {} (penalty {:.6g}): {}\n", name_of(names, h.predictor),
                       h.step, h.penalty,
                       h.saturated ? "the active set already had as many columns as usable rows"
                                   : "its column is numerically in the span of the active columns");
  if (!context.text_columns.empty()) {
    std::string list;
    for (const auto& t : context.text_columns) list += (list.empty() ? "" : ", ") + t;
    out += "text columns skipped: " + list + "\n";
  }
  return out;
}

std::string coefficient_table(const Solution<double>& solution, const Path<double>& path,
                              const std::vector<std::string>& names, bool csv) {
  (void)path;
  std::vector<std::pair<std::string, double>> terms;
  terms.emplace_back("(intercept)", solution.intercept);
  for (Index j = 0; j < solution.coefficients.size(); ++j)
    terms.emplace_back(name_of(names, j), solution.coefficients(j));
  std::string out;
  if (csv) {
    out = "predictor,coefficient\n";
    for (const auto& [name, value] : terms) out += csv_field(name) + "," + round_trip(value) + "\n";
    return out;
  }
  std::size_t width = std::string("predictor").size();
  for (const auto& t : terms) width = std::max(width, t.first.size());
  out += fmt::format("{:<{}}  {:>14}\n", "predictor", width, "coefficient");
  for (const auto& [name, value] : terms)
    out += fmt::format("{:<{}}  {:>14.8g}\n", name, width, value);
  return out;
}

void write_atomically(const std::filesystem::path& target,
                      const std::function<void(std::ostream&)>& write) {
  std::ostringstream buffer;
  write(buffer);  // an exception here leaves nothing on disk
  const std::string content = buffer.str();

  const std::filesystem::path directory =
      target.has_parent_path() ? target.parent_path() : std::filesystem::path(".");
  static std::atomic<unsigned> counter{0};
  std::filesystem::path temporary;
  int fd = -1;
  for (int attempt = 0; attempt < 100 && fd < 0; ++attempt) {
    temporary = directory / fmt::format(".{}.tmp-{}-{}", target.filename().string(),
                                        static_cast<long>(::getpid()), counter++);
    fd = ::open(temporary.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0666);
    if (fd < 0 && errno != EEXIST) break;
  }
  if (fd < 0)
    throw output_error(fmt::format("cannot write {}: {}", target.string(), std::strerror(errno)));
  auto fail = [&](const char* what) {
    const int saved = errno;
    ::close(fd);
    std::error_code ignored;
    std::filesystem::remove(temporary, ignored);
    throw output_error(
        fmt::format("cannot write {}: {} ({})", target.string(), std::strerror(saved), what));
  };
  std::size_t done = 0;
  while (done < content.size()) {
    const ssize_t n = ::write(fd, content.data() + done, content.size() - done);
    if (n < 0) {
      if (errno == EINTR) continue;
      fail("write");
    }
    done += static_cast<std::size_t>(n);
  }
  if (::fsync(fd) != 0 && errno != EINVAL) fail("fsync");
  if (::close(fd) != 0) {
    const int saved = errno;
    std::error_code ignored;
    std::filesystem::remove(temporary, ignored);
    throw output_error(fmt::format("cannot write {}: {}", target.string(), std::strerror(saved)));
  }
  if (::rename(temporary.c_str(), target.c_str()) != 0) {
    const int saved = errno;
    std::error_code ignored;
    std::filesystem::remove(temporary, ignored);
    throw output_error(fmt::format("cannot write {}: {}", target.string(), std::strerror(saved)));
  }
}

}  // namespace knotpath::io
