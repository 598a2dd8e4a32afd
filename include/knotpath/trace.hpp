#pragma once
/// \file trace.hpp
/// \brief The least-angle homotopy and its lasso modification: every knot of
/// the regularization path from lambda_max down to 0.
///
/// References:
///  - B. Efron, T. Hastie, I. Johnstone & R. Tibshirani (2004), "Least angle
///    regression", Annals of Statistics 32(2), 407-499 (the least angle walk
///    and the lasso modification, section 3.1).
///  - M. R. Osborne, B. Presnell & B. A. Turlach (2000), "A new approach to
///    variable selection in least squares problems", IMA Journal of
///    Numerical Analysis 20, 389-403 (the homotopy for the lasso).
///  - H. Zou & T. Hastie (2005), "Regularization and variable selection via
///    the elastic net", JRSS B 67(2), 301-320 (the ridge term).
///
/// Problem on the prepared columns z_j (see prepare.hpp), with penalty
/// factors f_j and ridge weight a2:
///     minimize 0.5 ||y - Z b||^2 + lambda sum_j f_j |b_j| + 0.5 a2 ||b||^2.
/// State between knots: active set A (in factor order) with signs s_A, the
/// correlations c = Z^T (y - Z b) - a2 b. Invariants (KKT):
///     c_j = lambda f_j s_j for j in A;  |c_j| <= lambda f_j for j not in A
/// (one-sided for sign-constrained predictors). Unpenalized predictors
/// (f_j = 0) are in A from the start with c_j = 0.
/// While A is fixed the solution moves along d = (Z_A^T Z_A + a2 I)^{-1} f_A s_A:
///     b_A(lambda - g) = b_A(lambda) + g d,   c(lambda - g) = c(lambda) - g a,
/// with a = Z^T Z_A d (a_j + a2 d_j on A). The next knot is the smallest
/// step g > 0 at which an inactive |c_j| reaches (lambda - g) f_j (enter) or,
/// in the lasso variant, an active coefficient reaches 0 (leave).
///
/// Simultaneous events (steps within the tie tolerance of the smallest one)
/// happen at one knot, in this documented order: all leave events by
/// ascending predictor index, then all enter events by ascending predictor
/// index. Each is its own row of the knot table with the same penalty.
/// Active predictors still at zero whose direction opposes their sign (after
/// a tie) leave one per row, the most negative first, the direction being
/// recomputed in between. A predictor that just left re-enters at the same
/// knot only when a later change of the active set there turns its
/// correlation clearly outward again, and one
/// whose column is numerically in the span of the active columns is held out
/// (recorded in Path::held_out()) until the active set loses a member.
/// Held out columns stay on the boundary (their correlation is lambda times
/// a constant while A is fixed), so the KKT conditions hold throughout.

#include <algorithm>
#include <span>
#include <vector>

#include "design/concept.hpp"
#include "design/dense.hpp"
#include "design/dense_view.hpp"
#include "design/gram.hpp"
#include "design/sparse.hpp"
#include "detail/scalar.hpp"
#include "factor.hpp"
#include "options.hpp"
#include "path.hpp"
#include "prepare.hpp"

namespace knotpath {

namespace detail {

template <class Scalar>
struct Candidate {
  Scalar step;        // g: distance in penalty from the current knot
  bool leave;         // leave (true) or enter (false)
  Index column;       // prepared column
  int sign;           // entering sign, or sign of the leaving coefficient
};

}  // namespace detail

/// Traces the path of a prepared problem. `design` is any DesignOperator over
/// the prepared columns described by `prep` (prep.columns[k] is the user's
/// index of column k). Cost per knot: one design.direction_correlations (O(n q)
/// dense) plus O(k^2) for the factor and O(q) for the step search.
/// Throws invalid_option (options.validate()). Thread safety: the dense, view
/// and sparse operators write scratch space during the trace, so one design
/// object must not be traced by two threads at once (a GramDesign holds none
/// and may be shared); the returned Path is immutable.
template <DesignOperator Design>
Path<typename Design::Scalar> trace_design(const Design& design,
                                           const Preparation<typename Design::Scalar>& prep,
                                           const TraceOptions& options) {
  using Scalar = typename Design::Scalar;
  options.validate(static_cast<std::size_t>(prep.predictors));
  const Index q = design.cols();
  const bool lasso = options.variant == Variant::lasso;
  const Scalar zero(0);
  const Scalar ridge(options.ridge);
  const Scalar collinear_tol = detail::resolve_tolerance<Scalar>(options.collinearity_tolerance, 1e4);
  const Scalar tie_tol = detail::resolve_tolerance<Scalar>(options.tie_tolerance, 1e3);
  const std::size_t step_limit =
      options.max_steps ? options.max_steps
                        : 8 * static_cast<std::size_t>(design.rows() + q) + 100;

  Vector<Scalar> factor_of(q);
  for (Index k = 0; k < q; ++k) factor_of(k) = Scalar(prep.penalty_factors[static_cast<std::size_t>(k)]);

  Vector<Scalar> b = Vector<Scalar>::Zero(q);   // coefficients of the prepared problem
  Vector<Scalar> c(q);                          // correlations with the residual (ridge-adjusted)
  Vector<Scalar> a(q);                          // Z^T Z_A d
  design.response_correlations(c);
  std::vector<Index> active;                    // factor order
  std::vector<int> sign(static_cast<std::size_t>(q), 0);
  std::vector<char> is_active(static_cast<std::size_t>(q), 0);
  std::vector<char> blocked(static_cast<std::size_t>(q), 0);      // held out until a leave
  std::vector<int> just_left(static_cast<std::size_t>(q), 0);     // sign it left with, at the last knot
  detail::active_factor_t<Scalar> factor(std::min<Index>(q, design.rows() + 1));
  // Work buffers sized once (the active set never exceeds q columns): the loop
  // below allocates nothing per knot except the knot's own record.
  Vector<Scalar> cross_buf(q + 1), d_buf(q + 1), rhs_buf(q + 1), active_c_buf(q + 1), b_active_buf(q + 1);
  a.setZero();
  Scalar rss = design.response_squared_norm();
  std::vector<Knot<Scalar>> knots;
  std::vector<HeldOut<Scalar>> held_out;
  StopReason reason = StopReason::completed;
  const Index usable_rank = prep.used_observations - (prep.intercept ? 1 : 0);
  const double eps = detail::to_double(detail::epsilon<Scalar>());
  double drift = 0;  // largest |c_j - lambda f_j s_j| on A before the exact reset, absolute
  double lambda_scale = 0;  // lambda_max (for relative figures)
  double carried_error = 0;  // largest estimated error of the knots recorded so far
  // Centring a column whose mean is many times its spread costs that factor
  // in digits in every storage (detail/centring.hpp; recorded by the
  // preparation; fuzz findings: a view design, then a dense copy whose
  // column varied in its last bits only).
  const double centring_amplification = prep.centring_amplification;

  auto try_add = [&](Index j, const Scalar& lambda, Index step) -> bool {
    auto cross = cross_buf.head(static_cast<Index>(active.size()));
    design.cross_products(j, std::span<const Index>(active), cross);
    const Scalar diag = design.squared_norm(j) + ridge;
    AddOutcome outcome = factor.add(cross, diag, collinear_tol);
    if (!outcome.added) {
      blocked[static_cast<std::size_t>(j)] = 1;
      held_out.push_back({step, lambda, prep.columns[static_cast<std::size_t>(j)],
                          outcome.squared_sine,
                          static_cast<Index>(active.size()) >= usable_rank});
      return false;
    }
    active.push_back(j);
    is_active[static_cast<std::size_t>(j)] = 1;
    return true;
  };

  // The direction of the current active set, d = (Z_A^T Z_A + a2 I)^{-1} f_A s_A,
  // into d_buf (right-hand side f_A s_A in rhs_buf), both in factor order.
  auto solve_direction = [&]() {
    const Index k_now = static_cast<Index>(active.size());
    auto rhs_now = rhs_buf.head(k_now);
    auto d_now = d_buf.head(k_now);
    for (Index i = 0; i < k_now; ++i) {
      const Index j = active[static_cast<std::size_t>(i)];
      rhs_now(i) = factor_of(j) * Scalar(sign[static_cast<std::size_t>(j)]);
    }
    factor.solve(rhs_now, d_now);
  };

  auto penalized_active = [&]() {
    Index count = 0;
    for (Index j : active)
      if (factor_of(j) != zero) ++count;
    return count;
  };

  auto record = [&](EventKind kind, const Scalar& lambda, Index column, int s, Index active_count = -1) {
    Knot<Scalar> knot;
    knot.step = static_cast<Index>(knots.size());
    knot.penalty = lambda;
    knot.event = kind;
    knot.sign = s;
    knot.active = active_count >= 0 ? active_count : static_cast<Index>(active.size());
    knot.rss = rss < zero ? zero : rss;
    Scalar l1(0), fitted_mean_shift(0);
    for (Index k : active) {
      if (b(k) == zero) continue;
      const Index j = prep.columns[static_cast<std::size_t>(k)];
      const Scalar beta = b(k) / prep.scales(j);
      knot.coefficients.emplace_back(j, beta);
      l1 += factor_of(k) * detail::abs_value<Scalar>(b(k));
      fitted_mean_shift += prep.means(j) * beta;
    }
    std::sort(knot.coefficients.begin(), knot.coefficients.end(),
              [](const auto& x, const auto& y) { return x.first < y.first; });
    knot.l1_norm = l1;
    knot.intercept = prep.intercept ? Scalar(prep.response_mean - fitted_mean_shift) : zero;
    if (column >= 0) {
      knot.predictor = prep.columns[static_cast<std::size_t>(column)];
      const double denom = std::sqrt(detail::to_double(design.squared_norm(column)) *
                                     detail::to_double(knot.rss));
      knot.correlation = denom > 0 ? detail::to_double(c(column)) / denom : 0.0;
    }
    knot.condition_estimate = factor.health().condition_estimate;
    // Estimated relative error of this knot: the factor's condition times the
    // unit roundoff (error of the direction), or the measured drift of the
    // updated correlations of the active set, whichever is larger (and see
    // the two further terms below and in flush_entries()).
    // Under an intercept the centring amplification (max |m_j| sqrt(W) /
    // spread_j, above) joins it: the prepared columns carry that error.
    // The estimate is carried forward: a knot inherits the state (b, c) of
    // the knots before it, so an error made on an ill-conditioned stretch
    // stays in the path after the factor recovers (fuzz finding: a nearly
    // duplicate column entered with condition 1e18 and left again; the
    // later knots, well conditioned, were 5e3 lambda off in one correlation).
    knot.estimated_error = std::max({knot.condition_estimate * eps, centring_amplification * eps,
                                     lambda_scale > 0 ? drift / lambda_scale : 0.0, carried_error});
    carried_error = knot.estimated_error;
    knot.suspect = knot.estimated_error > options.suspect_threshold;
    knots.push_back(std::move(knot));
  };

  // Unpenalized predictors: fitted (with the intercept) before the path starts.
  {
    std::vector<Index> unpenalized;
    for (Index k = 0; k < q; ++k)
      if (factor_of(k) == zero && try_add(k, zero, 0)) unpenalized.push_back(k);
    if (!unpenalized.empty()) {
      const Index m = static_cast<Index>(unpenalized.size());
      Vector<Scalar> c0(m), b0(m);  // once, before the loop
      for (Index i = 0; i < m; ++i) c0(i) = c(unpenalized[static_cast<std::size_t>(i)]);
      factor.solve(c0, b0);
      for (Index i = 0; i < m; ++i) b(unpenalized[static_cast<std::size_t>(i)]) = b0(i);
      // RSS after the fit: ||y||^2 - b.c0 - a2 ||b||^2 (normal equations).
      rss -= b0.dot(c0) + ridge * b0.squaredNorm();
      design.direction_correlations(std::span<const Index>(active), b0, a);
      c -= a;
      for (Index k : unpenalized) c(k) = zero;
    }
  }
  // Held-out notes at the start carry penalty 0; fix them after lambda_max is known.
  const std::size_t held_at_start = held_out.size();

  auto may_enter_with = [&](Index k, int s) {
    SignConstraint constraint = prep.constraints[static_cast<std::size_t>(k)];
    if (constraint == SignConstraint::nonnegative) return s > 0;
    if (constraint == SignConstraint::nonpositive) return s < 0;
    return true;
  };

  Scalar lambda(0);
  for (Index k = 0; k < q; ++k) {
    if (is_active[static_cast<std::size_t>(k)] || blocked[static_cast<std::size_t>(k)]) continue;
    for (int s : {+1, -1}) {
      if (!may_enter_with(k, s)) continue;
      const Scalar level = Scalar(s) * c(k) / factor_of(k);
      if (level > lambda) lambda = level;
    }
  }
  for (std::size_t i = 0; i < held_at_start; ++i) held_out[i].penalty = lambda;
  lambda_scale = detail::to_double(lambda);
  record(EventKind::start, lambda, -1, 0);

  std::vector<detail::Candidate<Scalar>> candidates, events;
  std::vector<Index> entered;  // predictors added at the current knot, not yet recorded
  entered.reserve(static_cast<std::size_t>(q));
  candidates.reserve(2 * static_cast<std::size_t>(q) + 2);
  events.reserve(2 * static_cast<std::size_t>(q) + 2);
  std::size_t steps = 0;
  while (true) {
    if (++steps > step_limit) {
      reason = StopReason::step_limit;
      record(EventKind::stop, lambda, -1, 0);
      break;
    }
    const Index k_active = static_cast<Index>(active.size());
    solve_direction();
    auto rhs = rhs_buf.head(k_active);
    auto d = d_buf.head(k_active);
    design.direction_correlations(std::span<const Index>(active), d, a);

    // Candidate events at distance g below the current penalty.
    candidates.clear();
    for (Index k = 0; k < q; ++k) {
      const auto ku = static_cast<std::size_t>(k);
      if (is_active[ku] || blocked[ku]) continue;
      for (int s : {+1, -1}) {
        if (!may_enter_with(k, s)) continue;
        // s (c_k - g a_k) = (lambda - g) f_k  =>  g = (lambda f_k - s c_k) / (f_k - s a_k);
        // the boundary is approached only when f_k - s a_k > 0.
        const Scalar denom = factor_of(k) - Scalar(s) * a(k);
        if (!(denom > zero)) continue;
        // A predictor that just left (or was kept out at a tie) moves inside
        // the boundary on the side it left from (it left because its
        // coefficient, not its correlation, reached zero; Schur complement:
        // s_k d_k < 0 in the old set means f_k - s_k a_k < 0 without it), so
        // a rate f_k - s a_k at rounding level there is noise: skipping it
        // avoids a step straight back in. A clearly positive rate means the
        // active set changed again at the same knot (several left or were
        // kept out), the guarantee is gone, and it may enter (fuzz finding).
        if (just_left[ku] == s &&
            denom <= tie_tol * (factor_of(k) + detail::abs_value<Scalar>(a(k))))
          continue;
        Scalar g = (lambda * factor_of(k) - Scalar(s) * c(k)) / denom;
        if (g < zero) g = zero;  // already on the boundary (ties, rounding): enters now
        if (g < lambda) candidates.push_back({g, false, k, s});
      }
    }
    Index stuck = -1;  // active, still at zero, direction against its sign (most negative s_k d_k)
    Scalar stuck_agreement(0);
    for (Index i = 0; i < k_active; ++i) {
      const Index k = active[static_cast<std::size_t>(i)];
      if (factor_of(k) == zero) continue;
      const bool must_leave = lasso || prep.constraints[static_cast<std::size_t>(k)] != SignConstraint::none;
      if (!must_leave) continue;
      if (b(k) * d(i) < zero) {
        const Scalar g = -b(k) / d(i);
        if (g < lambda) candidates.push_back({g, true, k, detail::sign_of(b(k))});
      } else if (b(k) == zero && Scalar(sign[static_cast<std::size_t>(k)]) * d(i) < stuck_agreement) {
        stuck_agreement = Scalar(sign[static_cast<std::size_t>(k)]) * d(i);
        stuck = k;
      }
    }
    // Still at zero (it entered and has not moved, e.g. after a tie) and the
    // new direction takes it against its sign: it leaves now, or the next
    // segment would break its KKT condition (fuzz finding). One per knot
    // row, the most negative first, as flush_entries() keeps entries out:
    // for a single column s_k d_k < 0 is exactly "its correlation moves
    // inside once it is out" (Schur complement), which is what lets it stay
    // out; leaving several at once gives no such guarantee (fuzz finding:
    // two left together and one's correlation passed lambda by 1%). The
    // others are looked at again with the direction that follows.
    if (stuck >= 0) candidates.push_back({zero, true, stuck, sign[static_cast<std::size_t>(stuck)]});
    std::fill(just_left.begin(), just_left.end(), 0);

    Scalar g_min = lambda;
    for (const auto& cand : candidates) g_min = std::min<Scalar>(g_min, cand.step);
    const bool reaches_end = !(g_min < lambda - tie_tol * lambda) || candidates.empty();
    Scalar g = reaches_end ? lambda : g_min;
    bool stop_here = false;
    if (lambda - g < Scalar(options.min_penalty)) {
      g = lambda - Scalar(options.min_penalty);
      if (g < zero) g = zero;  // lambda_max itself is below the minimum penalty
      stop_here = true;
    }

    // Advance along the segment.
    if (g > zero) {
      auto active_c = active_c_buf.head(k_active);
      for (Index i = 0; i < k_active; ++i) active_c(i) = c(active[static_cast<std::size_t>(i)]);
      auto b_active = b_active_buf.head(k_active);
      for (Index i = 0; i < k_active; ++i) b_active(i) = b(active[static_cast<std::size_t>(i)]);
      // ||r - g u||^2 with u = Z_A d: u.r = d.(c_A + a2 b_A), u.u = d.rhs - a2 ||d||^2.
      const Scalar u_dot_r = d.dot(active_c) + ridge * d.dot(b_active);
      const Scalar u_dot_u = d.dot(rhs) - ridge * d.squaredNorm();
      rss += g * (g * u_dot_u - Scalar(2) * u_dot_r);
      for (Index i = 0; i < k_active; ++i) b(active[static_cast<std::size_t>(i)]) += g * d(i);
      c -= g * a;
      lambda -= g;
      if (reaches_end && !stop_here) lambda = zero;
      for (Index j : active) {
        const Scalar exact = lambda * factor_of(j) * Scalar(sign[static_cast<std::size_t>(j)]);
        drift = std::max(drift, detail::to_double(detail::abs_value<Scalar>(Scalar(c(j) - exact))));
        c(j) = exact;
      }
    }
    if (stop_here) {
      reason = StopReason::min_penalty;
      record(EventKind::stop, lambda, -1, 0);
      break;
    }
    if (reaches_end) {
      lambda = zero;
      record(EventKind::end, lambda, -1, 0);
      break;
    }

    // Events at this knot: leaves (ascending index), then entries (ascending index).
    events.clear();
    for (const auto& cand : candidates)
      if (cand.step <= g_min + tie_tol * (lambda + g_min)) events.push_back(cand);
    std::sort(events.begin(), events.end(), [](const auto& x, const auto& y) {
      if (x.leave != y.leave) return x.leave;
      return x.column < y.column;
    });
    // Entries of this knot are added first and recorded afterwards: when
    // several predictors reach the boundary together, adding all of them can
    // give one a direction against its sign (s_j d_j < 0). Such a predictor
    // would leave again at once; for a single one, s_j d_j < 0 holds exactly
    // when its correlation moves inside the boundary without it (Schur
    // complement: s_j d_j = (f_j - s_j a_j) / pivot), so it stays out, on the
    // side it reached, for the next segment. The most negative one is dropped
    // first and the direction recomputed until every new entry agrees.
    entered.clear();
    auto flush_entries = [&]() -> bool {
      if (entered.empty()) return false;
      while (lasso) {
        const Index k_now = static_cast<Index>(active.size());
        solve_direction();
        auto d_now = d_buf.head(k_now);
        Index worst_pos = -1;
        Scalar worst(0);
        for (Index i = 0; i < k_now; ++i) {
          const Index j = active[static_cast<std::size_t>(i)];
          if (std::find(entered.begin(), entered.end(), j) == entered.end()) continue;
          const Scalar agreement = Scalar(sign[static_cast<std::size_t>(j)]) * d_now(i);
          if (agreement < worst) {
            worst = agreement;
            worst_pos = i;
          }
        }
        if (worst_pos < 0) break;
        // Which tied entry stays out is decided by the signs of a direction
        // solved with all of them in the factor; near-collinear ties make
        // that factor ill-conditioned, the decision is then only as good as
        // its condition times the unit roundoff, and a wrong one shows later
        // as a kept-out correlation drifting past the boundary (fuzz
        // finding). That error joins the carried estimate.
        carried_error = std::max(carried_error, factor.health().condition_estimate * eps);
        const Index j = active[static_cast<std::size_t>(worst_pos)];
        factor.remove(worst_pos);
        active.erase(active.begin() + worst_pos);
        is_active[static_cast<std::size_t>(j)] = 0;
        just_left[static_cast<std::size_t>(j)] = sign[static_cast<std::size_t>(j)];
        entered.erase(std::find(entered.begin(), entered.end(), j));
        // The span shrank: columns held out as collinear with it (possibly
        // at this very knot) are tried again (fuzz finding: a column held out
        // against a tied entry that was then kept out never came back).
        std::fill(blocked.begin(), blocked.end(), 0);
      }
      const Index before = static_cast<Index>(active.size() - entered.size());
      for (std::size_t i = 0; i < entered.size(); ++i) {
        const Index j = entered[i];
        record(EventKind::enter, lambda, j, sign[static_cast<std::size_t>(j)], before + static_cast<Index>(i) + 1);
        if (options.max_knots != 0 && knots.size() - 1 >= options.max_knots) {
          reason = StopReason::max_knots;
          record(EventKind::stop, lambda, -1, 0);
          return true;
        }
      }
      entered.clear();
      return false;
    };
    // Every leaving coefficient is zero at this knot (each reached zero
    // within the tie tolerance of g), so all are set to zero before any row
    // is recorded; otherwise the first leave row would show the later ones
    // at rounding level, possibly with the wrong sign (fuzz finding: -1e-19
    // on a coefficient whose correlation was +lambda).
    for (const auto& ev : events)
      if (ev.leave) b(ev.column) = zero;
    bool halted = false;
    for (const auto& ev : events) {
      const auto ku = static_cast<std::size_t>(ev.column);
      if (ev.leave) {
        auto pos = std::find(active.begin(), active.end(), ev.column);
        factor.remove(static_cast<Index>(pos - active.begin()));
        active.erase(pos);
        is_active[ku] = 0;
        just_left[ku] = ev.sign;
        std::fill(blocked.begin(), blocked.end(), 0);  // the span shrank: retry held-out columns
        record(EventKind::leave, lambda, ev.column, ev.sign);
      } else {
        if (is_active[ku] || blocked[ku]) continue;  // the other sign of the same column
        if (options.max_active != 0 && factor_of(ev.column) != zero &&
            static_cast<std::size_t>(penalized_active()) >= options.max_active) {
          halted = true;
          if (flush_entries()) break;
          reason = StopReason::max_active;
          record(EventKind::stop, lambda, -1, 0);
          break;
        }
        if (try_add(ev.column, lambda, static_cast<Index>(knots.size() + entered.size()))) {
          sign[ku] = ev.sign;
          c(ev.column) = lambda * factor_of(ev.column) * Scalar(ev.sign);
          entered.push_back(ev.column);
        }
        continue;  // entries are recorded by flush_entries()
      }
      if (options.max_knots != 0 && knots.size() - 1 >= options.max_knots) {
        reason = StopReason::max_knots;
        record(EventKind::stop, lambda, -1, 0);
        halted = true;
        break;
      }
    }
    if (!halted) halted = flush_entries();
    if (halted) break;
  }

  return Path<Scalar>(prep, options, std::move(knots), std::move(held_out), reason, ridge);
}

/// Traces the lasso (or least angle) path of y on the columns of x.
///
/// Objective at penalty lambda (see DESIGN notes and TraceOptions):
///     0.5 sum_i w_i (y_i - b0 - x_i^T beta)^2 + lambda sum_j f_j s_j |beta_j|
///                                              + 0.5 ridge sum_j (s_j beta_j)^2.
/// Units: with standardize (the default) s_j is the root weighted sum of
/// squares of the centred column, so lambda is in response units and grows
/// like sqrt(n); lambda / sqrt(n) is the size-free penalty (select.hpp).
/// `weights` may be empty (all 1). Throws invalid_option or invalid_data.
/// Thread safety: each call owns its design and factor and only reads x, y
/// and weights, so concurrent calls are safe.
/// Cost: about one least-squares fit, O(n p k) for k knots with a dense design.
/// Threads: TraceOptions::threads spreads the one product per knot of the
/// dense copy, the view and the sparse design over column blocks of fixed
/// width; the path is bitwise the same for every thread count.
/// Storage: TraceOptions::storage; automatic picks Gram mode (sufficient
/// statistics, O(n p^2) once then O(p k) per knot) when n >= 2 p and
/// p <= 5000 (the p x p Gram matrix then costs at most 200 MB and is cheaper
/// than one X^T v per knot over a full path); for wide designs (p > n) with
/// more than 4e6 entries the view of the user's matrix (no copy); else the
/// dense operator on a centred, scaled copy. Exact types never use the view.
template <class Scalar>
Path<Scalar> trace(const Matrix<Scalar>& x, const Vector<Scalar>& y, const TraceOptions& options = {},
                   const Vector<Scalar>& weights = Vector<Scalar>()) {
  options.validate(static_cast<std::size_t>(x.cols()));
  const bool gram = options.storage == Storage::gram ||
                    (options.storage == Storage::automatic && x.rows() >= 2 * x.cols() && x.cols() <= 5000);
  const bool view = options.storage == Storage::view ||
                    (options.storage == Storage::automatic && !gram && x.cols() > x.rows() &&
                     static_cast<double>(x.rows()) * static_cast<double>(x.cols()) > 4e6);
  if constexpr (detail::is_exact_v<Scalar>) {
    if (options.storage == Storage::view)
      throw invalid_option("storage", "the view of the user's matrix needs a floating scalar type "
                                      "(its implicit scaling takes square roots)");
  } else {
    if (view && !gram) {
      PreparedView<Scalar> prepared = prepare_view<Scalar>(x, y, options, weights);
      prepared.design.set_threads(options.threads);
      return trace_design(prepared.design, prepared.preparation, options);
    }
  }
  if (gram) {
    detail::check_data(x, y, weights);
    PreparedGram<Scalar> prepared = prepare_gram(SufficientStatistics<Scalar>::from_rows(x, y, weights), options);
    prepared.preparation.observations = x.rows();
    return trace_design(prepared.design, prepared.preparation, options);
  }
  PreparedDense<Scalar> prepared = prepare_dense<Scalar>(x, y, options, weights);
  prepared.design.set_threads(options.threads);
  return trace_design(prepared.design, prepared.preparation, options);
}

/// Traces the path of a sparse design (compressed columns, referenced, never
/// densified; centring and scaling applied implicitly). Same objective and
/// exceptions as trace(). Cost per knot O(nnz(X) + n) plus the factor.
template <class Scalar>
Path<Scalar> trace_sparse(const SparseMatrix<Scalar>& x, const Vector<Scalar>& y, const TraceOptions& options = {},
                          const Vector<Scalar>& weights = Vector<Scalar>()) {
  PreparedSparse<Scalar> prepared = prepare_sparse<Scalar>(x, y, options, weights);
  prepared.design.set_threads(options.threads);
  return trace_design(prepared.design, prepared.preparation, options);
}

/// Traces the path from sufficient statistics computed elsewhere (possibly
/// merged across row blocks or machines). Same objective as trace().
/// Cost O(p^2) to prepare, then O(p k) per knot, independent of n. Throws
/// invalid_option or invalid_data (see prepare_gram()).
template <class Scalar>
Path<Scalar> trace_statistics(const SufficientStatistics<Scalar>& statistics, const TraceOptions& options = {}) {
  PreparedGram<Scalar> prepared = prepare_gram(statistics, options);
  return trace_design(prepared.design, prepared.preparation, options);
}

}  // namespace knotpath
