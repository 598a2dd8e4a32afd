// libFuzzer target: the tracer on small designs decoded from the input bytes
// (n <= 12 rows, p <= 10 predictors, options, weights). The trace must either
// throw a documented exception (knotpath::invalid_option / invalid_data /
// invalid_query, errors.hpp) or return a path whose every knot satisfies the
// KKT conditions of the traced objective (trace.hpp, "Invariants (KKT)"),
// checked here independently on the prepared columns:
//   lasso:        c_j = lambda f_j sign(b_j) where b_j != 0, |c_j| <= lambda f_j elsewhere
//   least angle:  |c_j| = lambda f_j on active columns, |c_j| <= lambda f_j elsewhere
//   (one-sided for sign-constrained predictors), c = Z^T (y - Z b) - ridge b.
// Knots flagged suspect (Knot::suspect: estimated relative error above
// 1e-6, i.e. double precision may not carry this design) are skipped: for
// them the library itself says "cross-check before trusting", which is the
// documented behaviour, not a bug. Columns held out as numerically collinear
// get the extra allowance their recorded angle implies (see below).
//
// Tolerance (absolute, on the prepared scale), from the error model of a
// backward-stable solve: a computed knot is the exact knot of data perturbed
// by O(eps) relative, so its correlations are off by about
//   eps * kappa * zmax * (||y|| + zmax ||b||_1)
// with kappa the active factor's condition estimate (Knot::condition_estimate)
// (or the centring amplification, if larger: see below) and zmax the
// largest prepared column norm; the path's own error estimate
// (Knot::prepared_error, which includes the measured correlation drift)
// times lambda_max (times the largest penalty factor, see below) bounds
// what accumulates over the knots. Both get a
// factor 1e3 for the growth constants of n, p <= 12 and the up to a hundred
// updates of one path (Higham, Accuracy and Stability of Numerical
// Algorithms, 2nd ed., ch. 10: Cholesky backward error c n eps).

#include <cmath>
#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <limits>
#include <vector>

#include <knotpath/knotpath.hpp>

#include "decode_design.hpp"  // relative: fuzz.sh compiles with -Iinclude only

namespace {

namespace kp = knotpath;
using kp::Index;

[[noreturn]] void fail(const char* what, int step, double violation, double allowed) {
  std::fprintf(stderr, "fuzz_trace: %s at knot %d: violation %.3g > allowed %.3g\n", what, step,
               violation, allowed);
  std::abort();
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const kp::testing::FuzzDesign design = kp::testing::decode_design(data, size);
  const kp::TraceOptions& o = design.options;
  const kp::Matrix<double>& x = design.x;
  const kp::Vector<double>& y = design.y;
  const kp::Vector<double>& w = design.weights;
  const Index n = x.rows();

  kp::Path<double> path;
  try {
    path = kp::trace<double>(x, y, o, w);
  } catch (const kp::invalid_option&) {
    return 0;
  } catch (const kp::invalid_data&) {
    return 0;
  } catch (const kp::invalid_query&) {
    return 0;
  }
  // Anything else propagates: libFuzzer reports an uncaught exception as a crash.

  // Independent preparation (prepare.hpp's documented formulas).
  const auto& prep = path.preparation();
  const kp::Vector<double> wt = w.size() ? w : kp::Vector<double>(kp::Vector<double>::Ones(n));
  const double wsum = wt.sum();
  const std::size_t q = prep.columns.size();
  const double ymean = o.with_intercept ? wt.dot(y) / wsum : 0.0;
  const kp::Vector<double> yz = ((y.array() - ymean) * wt.array().sqrt()).matrix();
  kp::Matrix<double> z(n, static_cast<Index>(q));
  std::vector<double> scale(q);
  for (std::size_t k = 0; k < q; ++k) {
    const Index j = prep.columns[k];
    const double m = o.with_intercept ? wt.dot(x.col(j)) / wsum : 0.0;
    kp::Vector<double> col = ((x.col(j).array() - m) * wt.array().sqrt()).matrix();
    scale[k] = o.standardize ? col.norm() : 1.0;
    z.col(static_cast<Index>(k)) = col / scale[k];
  }
  const double eps = std::numeric_limits<double>::epsilon();
  double zmax = 0;
  for (std::size_t k = 0; k < q; ++k) zmax = std::max(zmax, z.col(static_cast<Index>(k)).norm());
  const double lambda_max = path.lambda_max();
  // Column j's boundary is lambda f_j: an error of the path in lambda (ties
  // merged within TraceOptions::tie_tolerance, relative to lambda, and the
  // estimated error, relative to lambda_max) is f_j times larger in its
  // correlation, so that term is scaled by the largest finite factor, at
  // least 1 (common practice: first-order error propagation).
  double fmax = 1;
  for (double f : prep.penalty_weights)
    if (std::isfinite(f)) fmax = std::max(fmax, f);
  for (const auto& knot : path.knots()) {
    if (!std::isfinite(knot.penalty) || !std::isfinite(knot.rss) || !std::isfinite(knot.intercept))
      fail("non-finite knot", static_cast<int>(knot.step), 0, 0);
    for (const auto& [j, v] : knot.coefficients)
      if (!std::isfinite(v)) fail("non-finite coefficient", static_cast<int>(knot.step), 0, 0);
    if (knot.suspect) continue;
    kp::Vector<double> b = kp::Vector<double>::Zero(static_cast<Index>(q));
    const kp::Vector<double> beta = path.dense_coefficients(static_cast<std::size_t>(knot.step));
    for (std::size_t k = 0; k < q; ++k) b(static_cast<Index>(k)) = beta(prep.columns[k]) * scale[k];
    const kp::Vector<double> r = yz - z * b;
    const kp::Vector<double> c = z.transpose() * r - o.ridge * b;
    const double lambda = knot.penalty;
    // Under an intercept the prepared columns carry a relative error of the
    // centring amplification times eps (Preparation::centring_amplification),
    // and b solves the problem of those perturbed columns: c = Z^T (y - Z b)
    // is then off by about that error times zmax (||r|| + zmax ||b||), the
    // shape of the solve's term, so the larger factor enters it (common
    // practice: first-order perturbation). The estimated error holds the
    // same factor, but relative to lambda_max, which can be 0 (a fuzzed path
    // of unpenalized columns only had lambda_max 0 and a view design with
    // amplification 1e5).
    const double kappa = std::max({1.0, knot.condition_estimate, prep.centring_amplification});
    const double allowed = 1e3 * eps * kappa * zmax * (yz.norm() + zmax * b.lpNorm<1>()) +
                           1e3 * knot.prepared_error * lambda_max * fmax;
    for (std::size_t k = 0; k < q; ++k) {
      const Index kk = static_cast<Index>(k);
      const double f = prep.penalty_weights[k];
      const kp::SignConstraint s = prep.constraints[k];
      double v;
      if (b(kk) != 0 && o.variant == kp::Variant::lasso)
        v = std::abs(c(kk) - lambda * f * (b(kk) > 0 ? 1.0 : -1.0));
      else if (b(kk) != 0)
        v = std::abs(std::abs(c(kk)) - lambda * f);
      else if (s == kp::SignConstraint::nonnegative)
        v = std::max(0.0, c(kk) - lambda * f);
      else if (s == kp::SignConstraint::nonpositive)
        v = std::max(0.0, -c(kk) - lambda * f);
      else
        v = std::max(0.0, std::abs(c(kk)) - lambda * f);
      // A column held out as numerically dependent on the active ones
      // (squared sine to their span below TraceOptions::collinearity_tolerance,
      // Path::held_out()) is not added, by design: its correlation may then
      // exceed the boundary by up to sine * ||r|| * ||z_k|| (common practice:
      // Cauchy-Schwarz on the component outside the active span). The recorded
      // sine is computed (in Gram mode as 1 - ||l||^2, absolute error about
      // eps times the condition), so the bound uses the larger of it and the
      // tolerance the rule guarantees (automatic: 1e4 eps, options.hpp).
      // The hold-out applies to every knot at or below its penalty: a
      // HeldOut's step is the *last* row at that penalty (knot.hpp), so an
      // unpenalized column held out while the start fit is made is already
      // out at knot 0 although its step may say 1 (fuzz crash of stop 26).
      double sine2 = 0;
      for (const auto& h : path.held_out())
        if (h.predictor == prep.columns[k] && h.penalty >= knot.penalty)
          sine2 = std::max({sine2, h.squared_sine, 1e4 * eps});
      // With a ridge the angle and the bound live in the augmented problem
      // (Z stacked on sqrt(ridge) I, y on 0): residual (r, -sqrt(ridge) b),
      // column (z_k, sqrt(ridge) e_k); c above is exactly its correlation.
      const double held = std::sqrt(sine2) *
                          std::sqrt(r.squaredNorm() + o.ridge * b.squaredNorm()) *
                          std::sqrt(z.col(kk).squaredNorm() + o.ridge);
      if (v > allowed + held) fail("KKT violation", static_cast<int>(knot.step), v, allowed + held);
    }
  }
  return 0;
}
