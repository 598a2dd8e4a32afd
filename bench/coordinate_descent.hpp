#pragma once
/// \file bench/coordinate_descent.hpp
/// \brief The comparison a user would otherwise reach for: cyclic coordinate
/// descent for the lasso on a grid of penalties. Benchmark code, not library
/// API (namespace knotpath::bench).
///
/// Reference:
///  - J. Friedman, T. Hastie & R. Tibshirani (2010), "Regularization paths
///    for generalized linear models via coordinate descent", Journal of
///    Statistical Software 33(1), 1-22: the soft-thresholding coordinate
///    update (section 2.1), "naive" and "covariance" updates (section 2.2),
///    warm starts along a decreasing log-spaced grid from lambda_max and
///    active-set cycling (section 2.6).
///
/// Problem on centred columns scaled to unit length, z_j = (x_j - m_j) / s_j
/// (the same preparation as knotpath's, so penalties mean the same thing),
/// and the centred response y:
///     minimize 0.5 ||y - Z b||^2 + lambda ||b||_1.
/// Coordinate update with g_j = z_j^T r the gradient (r the residual):
///     b_j <- S(b_j ||z_j||^2 + g_j, lambda) / ||z_j||^2,  S(t, l) = sign(t) max(|t| - l, 0).
/// Grid: L penalties lambda_l = lambda_max * ratio^(l / (L - 1)), with
/// lambda_max = max_j |z_j^T y| (the smallest penalty with b = 0).
/// At each penalty, starting from the previous solution (warm start):
///   repeat { one full sweep over all columns; stop if its largest change is
///            below tolerance; else sweep only the nonzero coefficients (the
///            active set) until their largest change is below tolerance }.
/// "Largest change" is max_j |delta b_j| ||z_j|| (= |delta b_j| for unit
/// columns), relative to max_j |b_j| ||z_j||, floored at 1e-6 ||y||: near
/// lambda_max a coefficient of rounding size (1e-17) would otherwise be its
/// own scale and rounding noise in its gradient (about 1e-16 ||y||) would
/// never pass a relative test. The floor is 1e3 times that noise and far
/// below any coefficient that moves the fit.
///
/// Two bookkeeping schemes (Friedman et al. 2010, section 2.2):
///  - naive: keep the residual r (length n); each update reads z_j (O(n)) and,
///    when b_j changes, updates r (O(n)).
///  - covariance: keep the gradient g = Z^T r (length p); each update is O(1)
///    and a change of b_j updates g with the Gram column Z^T z_j (O(p)), which
///    is computed once (O(n p)) the first time j becomes nonzero and cached.
///    Cheaper when n >> p; `automatic` uses it when n >= 2 p.

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <stdexcept>
#include <vector>

#include <Eigen/Core>

namespace knotpath::bench {

using CdIndex = Eigen::Index;
using CdVector = Eigen::VectorXd;
using CdMatrix = Eigen::MatrixXd;

/// How the coordinate descent keeps its gradient up to date.
enum class CdUpdates {
  automatic,   ///< covariance when n >= 2 p, else naive
  naive,       ///< residual vector, O(n) per coordinate
  covariance,  ///< gradient vector and cached Gram columns, O(p) per change
};

/// Options of the grid fit (defaults: the comparison of knotpath's issue 7).
struct GridOptions {
  CdIndex penalties = 100;          ///< grid size L >= 1
  double smallest_ratio = 1e-3;     ///< lambda_min / lambda_max, in (0, 1]
  double tolerance = 1e-7;          ///< relative largest-change threshold
  std::size_t max_sweeps = 100000;  ///< per penalty (full and active sweeps together)
  CdUpdates updates = CdUpdates::automatic;

  void validate() const {
    if (penalties < 1) throw std::invalid_argument("GridOptions::penalties must be >= 1");
    if (!(smallest_ratio > 0.0 && smallest_ratio <= 1.0))
      throw std::invalid_argument("GridOptions::smallest_ratio must lie in (0, 1]");
    if (!(tolerance > 0.0)) throw std::invalid_argument("GridOptions::tolerance must be > 0");
    if (max_sweeps == 0) throw std::invalid_argument("GridOptions::max_sweeps must be >= 1");
  }
};

/// Solutions on the grid, on the prepared (centred, unit-length) scale.
struct GridFit {
  std::vector<double> penalties;  ///< lambda_0 = lambda_max > ... > lambda_{L-1}
  CdMatrix coefficients;          ///< p x L; column l solves the problem at penalties[l]
  CdVector means;                 ///< m_j
  CdVector scales;                ///< s_j (0 for a constant column, which stays at 0)
  double response_mean = 0;
  std::size_t sweeps = 0;               ///< full and active-set sweeps, all penalties
  std::size_t coordinate_updates = 0;   ///< coefficient changes, all penalties
  bool converged = true;                ///< every penalty met the tolerance within max_sweeps
  bool covariance = false;              ///< which updates ran

  /// Coefficients of column l on the original scale of x: beta_j = b_j / s_j.
  CdVector original_scale(CdIndex l) const {
    CdVector beta = CdVector::Zero(coefficients.rows());
    for (CdIndex j = 0; j < beta.size(); ++j)
      if (scales(j) > 0) beta(j) = coefficients(j, l) / scales(j);
    return beta;
  }
};

namespace detail {

inline double soft_threshold(double t, double level) {
  if (t > level) return t - level;
  if (t < -level) return t + level;
  return 0.0;
}

}  // namespace detail

/// Fits the lasso at the grid of penalties by cyclic coordinate descent with
/// warm starts and active-set cycling (see the file comment). Cost: one copy
/// of X (the prepared columns), then sweeps.
inline GridFit coordinate_descent_grid(const CdMatrix& x, const CdVector& y, const GridOptions& options = {}) {
  options.validate();
  const CdIndex n = x.rows(), p = x.cols();
  if (y.size() != n) throw std::invalid_argument("coordinate_descent_grid: response length differs from rows");
  GridFit fit;
  fit.covariance = options.updates == CdUpdates::covariance ||
                   (options.updates == CdUpdates::automatic && n >= 2 * p);

  // Preparation: centre, scale each column to unit length (one copy of X).
  fit.response_mean = y.mean();
  const CdVector yc = y.array() - fit.response_mean;
  fit.means = x.colwise().mean().transpose();
  fit.scales.resize(p);
  CdMatrix z(n, p);
  CdVector norm2(p);  // ||z_j||^2: 1, or 0 for a constant column
  for (CdIndex j = 0; j < p; ++j) {
    z.col(j) = x.col(j).array() - fit.means(j);
    const double s = z.col(j).norm();
    fit.scales(j) = s;
    if (s > 0) z.col(j) /= s;
    norm2(j) = s > 0 ? 1.0 : 0.0;
  }

  CdVector gradient = z.transpose() * yc;  // Z^T r with r = y at b = 0
  const double lambda_max = gradient.cwiseAbs().maxCoeff();
  fit.penalties.resize(static_cast<std::size_t>(options.penalties));
  for (CdIndex l = 0; l < options.penalties; ++l) {
    const double t = options.penalties > 1 ? static_cast<double>(l) / static_cast<double>(options.penalties - 1) : 0.0;
    fit.penalties[static_cast<std::size_t>(l)] = lambda_max * std::pow(options.smallest_ratio, t);
  }
  fit.coefficients = CdMatrix::Zero(p, options.penalties);

  CdVector b = CdVector::Zero(p);
  CdVector residual;                       // naive: r = y - Z b
  std::vector<CdVector> gram_columns;      // covariance: Z^T z_j, filled on first use
  if (fit.covariance)
    gram_columns.resize(static_cast<std::size_t>(p));
  else
    residual = yc;
  std::vector<CdIndex> all(static_cast<std::size_t>(p)), active;
  for (CdIndex j = 0; j < p; ++j) all[static_cast<std::size_t>(j)] = j;
  active.reserve(static_cast<std::size_t>(p));

  // One sweep over `set` at penalty lambda; returns the largest |change|.
  auto sweep = [&](const std::vector<CdIndex>& set, double lambda) {
    double largest = 0;
    for (CdIndex j : set) {
      if (norm2(j) == 0) continue;
      const double g = fit.covariance ? gradient(j) : z.col(j).dot(residual);
      const double updated = detail::soft_threshold(b(j) * norm2(j) + g, lambda) / norm2(j);
      const double delta = updated - b(j);
      if (delta == 0) continue;
      b(j) = updated;
      ++fit.coordinate_updates;
      if (fit.covariance) {
        CdVector& column = gram_columns[static_cast<std::size_t>(j)];
        if (column.size() == 0) column.noalias() = z.transpose() * z.col(j);
        gradient.noalias() -= delta * column;
      } else {
        residual.noalias() -= delta * z.col(j);
      }
      largest = std::max(largest, std::abs(delta));
    }
    ++fit.sweeps;
    return largest;
  };
  const double floor_scale = 1e-6 * yc.norm();
  auto threshold = [&]() { return options.tolerance * std::max(b.cwiseAbs().maxCoeff(), floor_scale); };

  for (CdIndex l = 0; l < options.penalties; ++l) {
    const double lambda = fit.penalties[static_cast<std::size_t>(l)];
    std::size_t sweeps_here = 0;
    while (true) {
      const double full_change = sweep(all, lambda);
      ++sweeps_here;
      if (full_change <= threshold() || sweeps_here >= options.max_sweeps) break;
      active.clear();
      for (CdIndex j = 0; j < p; ++j)
        if (b(j) != 0) active.push_back(j);
      while (sweeps_here < options.max_sweeps) {
        const double change = sweep(active, lambda);
        ++sweeps_here;
        if (change <= threshold()) break;
      }
    }
    if (sweeps_here >= options.max_sweeps) fit.converged = false;
    fit.coefficients.col(l) = b;
  }
  return fit;
}

}  // namespace knotpath::bench
