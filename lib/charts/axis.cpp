// Axis ticks, tick labels, label spreading, XML escaping and the validation
// of the chart inputs.
#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <numeric>

#include <knotpath/errors.hpp>
#include <knotpath/io/charts.hpp>

namespace knotpath::charts {

namespace detail {

namespace {
// Heckbert's nice number: 1, 2, 5 or 10 times a power of ten near `x`.
double nice_step(double x) {
  const double exponent = std::floor(std::log10(x));
  const double base = std::pow(10.0, exponent);
  const double f = x / base;
  double nice = 10;
  if (f < 1.5)
    nice = 1;
  else if (f < 3)
    nice = 2;
  else if (f < 7)
    nice = 5;
  return nice * base;
}
}  // namespace

std::vector<double> linear_ticks(double lo, double hi, int target) {
  std::vector<double> ticks;
  if (!std::isfinite(lo) || !std::isfinite(hi)) return ticks;
  if (hi < lo) std::swap(lo, hi);
  if (hi == lo) return {lo};
  const double step = nice_step((hi - lo) / std::max(1, target - 1));
  // Tolerance for "inside": a millionth of a step absorbs rounding of k*step.
  const double slack = step * 1e-6;
  const double first = std::ceil((lo - slack) / step);
  for (double k = first;; k += 1) {
    double v = k * step;
    if (v > hi + slack) break;
    if (std::abs(v) < slack) v = 0;  // no "-0" or 1e-17 at the origin
    ticks.push_back(v);
  }
  return ticks;
}

std::vector<double> log_ticks(double lo, double hi) {
  std::vector<double> ticks;
  if (!(lo > 0) || !(hi > lo) || !std::isfinite(hi)) return ticks;
  const double decades = std::log10(hi / lo);
  // Short ranges also get 2 and 5 times each power of ten; very long ones
  // keep every second or third power so labels do not crowd.
  std::vector<double> mantissas = decades < 2.5 ? std::vector<double>{1, 2, 5} : std::vector<double>{1};
  const int stride = decades > 14 ? 3 : decades > 7 ? 2 : 1;
  const int e0 = static_cast<int>(std::floor(std::log10(lo))) - 1;
  const int e1 = static_cast<int>(std::ceil(std::log10(hi))) + 1;
  const double slack = 1e-9;
  for (int e = e0; e <= e1; ++e) {
    if (stride > 1 && ((e % stride) + stride) % stride != 0) continue;
    for (double m : mantissas) {
      // Parse the decimal text so 5e-3 is the double nearest 0.005.
      char buf[32];
      std::snprintf(buf, sizeof buf, "%ge%d", m, e);
      const double v = std::strtod(buf, nullptr);
      if (v >= lo * (1 - slack) && v <= hi * (1 + slack)) ticks.push_back(v);
    }
  }
  // A range narrower than one 1-2-5 step: fall back to linear ticks.
  if (ticks.size() < 2) return linear_ticks(lo, hi, 4);
  return ticks;
}

std::string tick_label(double value, double step) {
  if (value == 0) return "0";
  const double a = std::abs(value);
  char buf[40];
  if (a >= 1e-4 && a < 1e7) {
    // Enough decimals to show the step, no trailing zeros.
    int decimals = 0;
    if (step > 0 && std::isfinite(step)) decimals = std::max(0, static_cast<int>(std::ceil(-std::log10(step) - 1e-9)));
    // More decimals while the text does not read back as the value (a step
    // of 0.25 needs two although its size suggests one).
    for (; decimals < 12; ++decimals) {
      std::snprintf(buf, sizeof buf, "%.*f", decimals, value);
      if (std::abs(std::strtod(buf, nullptr) - value) <= std::abs(step) * 1e-6) break;
    }
    std::snprintf(buf, sizeof buf, "%.*f", decimals, value);
    std::string s = buf;
    if (s.find('.') != std::string::npos) {
      while (!s.empty() && s.back() == '0') s.pop_back();
      if (!s.empty() && s.back() == '.') s.pop_back();
    }
    return s;
  }
  for (int precision = 1; precision <= 17; ++precision) {
    std::snprintf(buf, sizeof buf, "%.*g", precision, value);
    const double back = std::strtod(buf, nullptr);
    if (std::abs(back - value) <= std::max(step, a) * 1e-3) break;
  }
  return buf;
}

std::vector<double> spread_labels(const std::vector<double>& wanted, double gap, double lo, double hi) {
  const std::size_t m = wanted.size();
  std::vector<double> out(m);
  if (m == 0) return out;
  std::vector<std::size_t> order(m);
  std::iota(order.begin(), order.end(), 0);
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return wanted[a] < wanted[b]; });
  if (m > 1 && (hi - lo) < gap * static_cast<double>(m - 1)) gap = (hi - lo) / static_cast<double>(m - 1);
  // Least squares positions z with z[i+1] - z[i] >= gap: with u[i] = z[i] -
  // i*gap this is isotonic regression of v[i] = wanted[i] - i*gap, solved by
  // pooling adjacent violators (Ayer et al. 1955; Barlow et al. 1972).
  std::vector<double> level, weight;
  std::vector<std::size_t> count;
  for (std::size_t i = 0; i < m; ++i) {
    level.push_back(wanted[order[i]] - static_cast<double>(i) * gap);
    weight.push_back(1);
    count.push_back(1);
    while (level.size() > 1 && level[level.size() - 2] > level.back()) {
      const double w = weight[weight.size() - 2] + weight.back();
      const double v = (level[level.size() - 2] * weight[weight.size() - 2] + level.back() * weight.back()) / w;
      const std::size_t c = count[count.size() - 2] + count.back();
      level.pop_back();
      weight.pop_back();
      count.pop_back();
      level.back() = v;
      weight.back() = w;
      count.back() = c;
    }
  }
  // Clipping a non-decreasing u into the box keeps it optimal for the box.
  const double u_hi = hi - static_cast<double>(m - 1) * gap;
  std::size_t i = 0;
  for (std::size_t b = 0; b < level.size(); ++b)
    for (std::size_t c = 0; c < count[b]; ++c, ++i)
      out[order[i]] = std::clamp(level[b], lo, std::max(lo, u_hi)) + static_cast<double>(i) * gap;
  return out;
}

std::string xml_escape(const std::string& text) {
  std::string out;
  out.reserve(text.size());
  for (char c : text) {
    switch (c) {
      case '&': out += "&amp;"; break;
      case '<': out += "&lt;"; break;
      case '>': out += "&gt;"; break;
      case '"': out += "&quot;"; break;
      case '\'': out += "&#39;"; break;
      default:
        // Control characters are not allowed in XML 1.0 text.
        if (static_cast<unsigned char>(c) < 0x20 && c != '\n' && c != '\t')
          out += ' ';
        else
          out += c;
    }
  }
  return out;
}

}  // namespace detail

void ChartPath::validate() const {
  if (knots.empty()) throw invalid_option("path.knots", "the path has no knots");
  for (std::size_t k = 1; k < knots.size(); ++k)
    if (!(knots[k].penalty <= knots[k - 1].penalty))
      throw invalid_option("path.knots", "penalties must be non-increasing (knot " + std::to_string(k) + ")");
  for (const auto& k : knots) {
    if (!std::isfinite(k.penalty) || k.penalty < 0)
      throw invalid_option("path.knots", "penalties must be finite and >= 0");
    for (const auto& [j, b] : k.coefficients) {
      if (j < 0 || static_cast<std::size_t>(j) >= names.size())
        throw invalid_option("path.names", "a coefficient refers to predictor " + std::to_string(j) +
                                               " but there are " + std::to_string(names.size()) + " names");
      if (!std::isfinite(b)) throw invalid_option("path.knots", "coefficients must be finite");
    }
  }
  if (!predictor_sd.empty() && predictor_sd.size() != names.size())
    throw invalid_option("path.predictor_sd", "needs one entry per name or none");
}

void ChartOptions::validate() const {
  if (!std::isfinite(width) || width < 320 || width > 10000)
    throw invalid_option("width", "must lie in [320, 10000]");
  if (max_predictors < 1) throw invalid_option("max_predictors", "must be >= 1");
  if (id_prefix.empty() || !std::isalpha(static_cast<unsigned char>(id_prefix[0])))
    throw invalid_option("id_prefix", "must start with a letter");
  for (char c : id_prefix)
    if (!std::isalnum(static_cast<unsigned char>(c)) && c != '-' && c != '_')
      throw invalid_option("id_prefix", "letters, digits, '-' and '_' only");
}

void SelectionCurve::validate() const {
  if (points.empty()) throw invalid_option("selection.points", "the curve has no points");
  for (const auto& p : points) {
    if (!std::isfinite(p.penalty) || p.penalty < 0)
      throw invalid_option("selection.points", "penalties must be finite and >= 0");
    if (!std::isfinite(p.mean_error) || !std::isfinite(p.standard_error) || p.standard_error < 0)
      throw invalid_option("selection.points", "errors must be finite, standard errors >= 0");
  }
  for (const auto& c : criteria)
    for (const auto& [x, v] : c.values)
      if (!std::isfinite(x) || x < 0 || !std::isfinite(v))
        throw invalid_option("selection.criteria", "criterion '" + c.name + "' has a non-finite value");
}

}  // namespace knotpath::charts
