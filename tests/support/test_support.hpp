#pragma once
// Shared helpers for the tests: reference-data lookup, a small CSV reader for
// the reference files, random designs, an independent coordinate-descent
// solver and a KKT checker. Test code only; nothing here is library API.

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <limits>
#include <map>
#include <optional>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include <knotpath/knotpath.hpp>

namespace knotpath::testing {

/// Folder of the reference datasets: $KNOTPATH_DATA_DIR, else the configured
/// default (../shared/data beside the project root).
/// Sets the per-predictor penalty weights f_j the formulas use (0:
/// unpenalized, +infinity: left out, else the penalty scale) through
/// TraceOptions' three fields, so that tests can state designs as weights.
inline void set_penalty_weights(TraceOptions& options, const std::vector<double>& weights) {
  options.penalty_scales.assign(weights.size(), 1.0);
  options.unpenalized.clear();
  options.left_out.clear();
  for (std::size_t j = 0; j < weights.size(); ++j) {
    if (weights[j] == 0.0)
      options.unpenalized.push_back(j);
    else if (std::isinf(weights[j]))
      options.left_out.push_back(j);
    else
      options.penalty_scales[j] = weights[j];
  }
}

/// The weights f_j of predictors 0..p-1 read from the option fields here
/// (0 unpenalized, infinity left out, else the scale or 1), not through
/// TraceOptions::penalty_weights(), so that the tests check the library's rule.
inline std::vector<double> penalty_weights(const TraceOptions& options, std::size_t p) {
  std::vector<double> w(p, 1.0);
  for (std::size_t j = 0; j < p; ++j) {
    if (!options.penalty_scales.empty()) w[j] = options.penalty_scales.at(j);
    if (std::find(options.left_out.begin(), options.left_out.end(), j) != options.left_out.end())
      w[j] = std::numeric_limits<double>::infinity();
    if (std::find(options.unpenalized.begin(), options.unpenalized.end(), j) != options.unpenalized.end())
      w[j] = 0.0;
  }
  return w;
}

inline std::filesystem::path data_dir() {
  if (const char* env = std::getenv("KNOTPATH_DATA_DIR"); env && *env) return env;
  return KNOTPATH_DEFAULT_DATA_DIR;
}

/// Path of a reference file, or nullopt when it is absent.
inline std::optional<std::filesystem::path> reference_file(const std::string& relative) {
  auto path = data_dir() / relative;
  if (std::filesystem::exists(path)) return path;
  return std::nullopt;
}

/// Skips the current test with a clear message when a reference file is absent.
#define KNOTPATH_REQUIRE_REFERENCE(var, relative)                                                \
  auto var##_opt = ::knotpath::testing::reference_file(relative);                                \
  if (!var##_opt)                                                                                \
    GTEST_SKIP() << "reference data " << (relative) << " not found under "                      \
                 << ::knotpath::testing::data_dir()                                              \
                 << " (set KNOTPATH_DATA_DIR to the folder holding ../shared/data)";            \
  const std::filesystem::path var = *var##_opt

/// A numeric CSV with a header row (the reference files' format).
struct CsvTable {
  std::vector<std::string> names;
  std::vector<std::vector<double>> rows;
  Index column(const std::string& name) const {
    for (std::size_t j = 0; j < names.size(); ++j)
      if (names[j] == name) return static_cast<Index>(j);
    throw std::runtime_error("no column " + name);
  }
};

inline CsvTable read_csv(const std::filesystem::path& path) {
  std::ifstream in(path);
  if (!in) throw std::runtime_error("cannot open " + path.string());
  CsvTable t;
  std::string line;
  std::getline(in, line);
  {
    std::stringstream ss(line);
    std::string cell;
    while (std::getline(ss, cell, ',')) t.names.push_back(cell);
  }
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#') continue;
    std::stringstream ss(line);
    std::string cell;
    std::vector<double> row;
    while (std::getline(ss, cell, ',')) row.push_back(std::stod(cell));
    t.rows.push_back(std::move(row));
  }
  return t;
}

/// The same table kept as text, so that high-precision and rational types can
/// parse every decimal exactly (never through double).
struct CsvText {
  std::vector<std::string> names;
  std::vector<std::vector<std::string>> rows;
};

inline CsvText read_csv_text(const std::filesystem::path& path) {
  std::ifstream in(path);
  if (!in) throw std::runtime_error("cannot open " + path.string());
  CsvText t;
  std::string line, cell;
  std::getline(in, line);
  for (std::stringstream ss(line); std::getline(ss, cell, ',');) t.names.push_back(cell);
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#') continue;
    std::vector<std::string> row;
    for (std::stringstream ss(line); std::getline(ss, cell, ',');) row.push_back(cell);
    t.rows.push_back(std::move(row));
  }
  return t;
}

/// "name,value[,...]" lines of a .certified / .reference file (comments skipped).
inline std::map<std::string, double> read_reference_values(const std::filesystem::path& path) {
  std::ifstream in(path);
  std::map<std::string, double> out;
  std::string line;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#') continue;
    auto comma = line.find(',');
    if (comma == std::string::npos) continue;
    std::string rest = line.substr(comma + 1);
    out[line.substr(0, comma)] = std::stod(rest.substr(0, rest.find(',')));
  }
  return out;
}

/// Design and response taken from a table: response by name, the rest as predictors.
struct Problem {
  Matrix<double> x;
  Vector<double> y;
  std::vector<std::string> names;
};

inline Problem problem_from(const CsvTable& t, const std::string& response) {
  Problem p;
  const Index r = t.column(response);
  const Index n = static_cast<Index>(t.rows.size());
  const Index cols = static_cast<Index>(t.names.size());
  p.x.resize(n, cols - 1);
  p.y.resize(n);
  for (Index j = 0; j < cols; ++j)
    if (j != r) p.names.push_back(t.names[static_cast<std::size_t>(j)]);
  for (Index i = 0; i < n; ++i) {
    Index k = 0;
    for (Index j = 0; j < cols; ++j) {
      const double v = t.rows[static_cast<std::size_t>(i)][static_cast<std::size_t>(j)];
      if (j == r)
        p.y(i) = v;
      else
        p.x(i, k++) = v;
    }
  }
  return p;
}

/// Gaussian design with AR(1) correlation rho between neighbouring columns,
/// and a sparse truth: y = X beta + noise.
inline Problem ar1_problem(Index n, Index p, double rho, unsigned seed, Index nonzero = 5,
                           double noise = 1.0) {
  std::mt19937_64 gen(seed);
  std::normal_distribution<double> normal(0.0, 1.0);
  Problem prob;
  prob.x.resize(n, p);
  const double tail = std::sqrt(1.0 - rho * rho);
  for (Index i = 0; i < n; ++i) {
    double prev = normal(gen);
    prob.x(i, 0) = prev;
    for (Index j = 1; j < p; ++j) {
      prev = rho * prev + tail * normal(gen);
      prob.x(i, j) = prev;
    }
  }
  Vector<double> beta = Vector<double>::Zero(p);
  for (Index k = 0; k < std::min(nonzero, p); ++k) beta((k * 7) % p) = (k % 2 ? -1.0 : 1.0) * (1.0 + k);
  prob.y = prob.x * beta;
  for (Index i = 0; i < n; ++i) prob.y(i) += noise * normal(gen) + 3.0;
  for (Index j = 0; j < p; ++j) prob.names.push_back("x" + std::to_string(j));
  return prob;
}

/// Problem after the same weighted centring/scaling the library documents,
/// built independently here: z_j = sqrt(w)(x_j - m_j)/s_j, yc = sqrt(w)(y - ybar).
struct Centred {
  Matrix<double> z;
  Vector<double> y;
  Vector<double> scale;  // s_j (1 when not standardizing)
  Vector<double> mean;   // m_j
  double ymean = 0;
};

inline Centred centre(const Matrix<double>& x, const Vector<double>& y, bool intercept, bool standardize,
                      const Vector<double>& weights = Vector<double>()) {
  const Index n = x.rows(), p = x.cols();
  Vector<double> w = weights.size() ? weights : Vector<double>(Vector<double>::Ones(n));
  const double wsum = w.sum();
  Centred c;
  c.mean = Vector<double>::Zero(p);
  c.scale = Vector<double>::Ones(p);
  if (intercept) {
    c.ymean = w.dot(y) / wsum;
    for (Index j = 0; j < p; ++j) c.mean(j) = w.dot(x.col(j)) / wsum;
  }
  c.z.resize(n, p);
  c.y = (y.array() - c.ymean) * w.array().sqrt();
  for (Index j = 0; j < p; ++j) {
    Vector<double> col = (x.col(j).array() - c.mean(j)) * w.array().sqrt();
    if (standardize) c.scale(j) = col.norm();
    c.z.col(j) = col / c.scale(j);
  }
  return c;
}

/// Independent solver: cyclic coordinate descent on
///   0.5 ||y - Z b||^2 + lambda sum_j f_j |b_j| + 0.5 ridge ||b||^2,
/// with optional nonnegativity (+1) / nonpositivity (-1) per column, run until
/// the largest coefficient change is below tol (relative to max |b|) or
/// max_sweeps sweeps. Written from the textbook update (soft thresholding);
/// shares no code with the library.
inline Vector<double> coordinate_descent(const Matrix<double>& z, const Vector<double>& y, double lambda,
                                         const std::vector<double>& factors = {}, double ridge = 0.0,
                                         const std::vector<int>& signs = {}, double tol = 1e-13,
                                         int max_sweeps = 200000) {
  const Index p = z.cols();
  Vector<double> b = Vector<double>::Zero(p);
  Vector<double> r = y;
  Vector<double> norms(p);
  for (Index j = 0; j < p; ++j) norms(j) = z.col(j).squaredNorm();
  for (int sweep = 0; sweep < max_sweeps; ++sweep) {
    double biggest = 0, scale = 0;
    for (Index j = 0; j < p; ++j) {
      if (norms(j) == 0) continue;
      const double f = factors.empty() ? 1.0 : factors[static_cast<std::size_t>(j)];
      const double rho = z.col(j).dot(r) + norms(j) * b(j);
      double v = std::copysign(std::max(std::abs(rho) - lambda * f, 0.0), rho) / (norms(j) + ridge);
      const int s = signs.empty() ? 0 : signs[static_cast<std::size_t>(j)];
      if (s > 0 && v < 0) v = 0;
      if (s < 0 && v > 0) v = 0;
      const double delta = v - b(j);
      if (delta != 0) {
        r -= delta * z.col(j);
        b(j) = v;
      }
      biggest = std::max(biggest, std::abs(delta));
      scale = std::max(scale, std::abs(v));
    }
    if (biggest <= tol * std::max(scale, 1e-300)) break;
    if (sweep % 50 == 49) r = y - z * b;  // refresh against drift
  }
  return b;
}

/// Largest violation of the lasso KKT conditions on the prepared scale,
/// relative to lambda, floored at 1e-4 max_j |z_j^T y| (about 1e-4 lambda_max)
/// so that the figure stays meaningful as lambda goes to 0:
///   active: z_j^T r - ridge b_j = lambda f_j sign(b_j);  inactive: |z_j^T r| <= lambda f_j.
inline double kkt_violation(const Matrix<double>& z, const Vector<double>& y, const Vector<double>& b,
                            double lambda, const std::vector<double>& factors = {}, double ridge = 0.0,
                            const std::vector<int>& signs = {}) {
  Vector<double> c = z.transpose() * (y - z * b) - ridge * b;
  const double scale = std::max(lambda, 1e-300 + (z.transpose() * y).cwiseAbs().maxCoeff() * 1e-4);
  double worst = 0;
  for (Index j = 0; j < z.cols(); ++j) {
    if (z.col(j).squaredNorm() == 0) continue;
    const double f = factors.empty() ? 1.0 : factors[static_cast<std::size_t>(j)];
    const int s = signs.empty() ? 0 : signs[static_cast<std::size_t>(j)];
    double v;
    if (b(j) != 0)
      v = std::abs(c(j) - lambda * f * (b(j) > 0 ? 1.0 : -1.0));
    else if (s > 0)
      v = std::max(0.0, c(j) - lambda * f);
    else if (s < 0)
      v = std::max(0.0, -c(j) - lambda * f);
    else
      v = std::max(0.0, std::abs(c(j)) - lambda * f);
    worst = std::max(worst, v / scale);
  }
  return worst;
}

/// Original-scale solution mapped to the prepared scale: b_j = s_j beta_j.
inline Vector<double> to_prepared(const Centred& c, const Vector<double>& beta) {
  return beta.cwiseProduct(c.scale);
}

}  // namespace knotpath::testing
