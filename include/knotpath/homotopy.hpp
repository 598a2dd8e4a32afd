#pragma once
/// \file homotopy.hpp
/// \brief The least-angle homotopy and its lasso modification: every knot of
/// the regularization path of a prepared problem, from lambda_max down to 0.
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
/// correlation clearly outward again, and one whose column is numerically in
/// the span of the active columns is held out (recorded in Path::held_out())
/// until the active set loses a member. Held out columns stay on the
/// boundary (their correlation is lambda times a constant while A is fixed),
/// so the KKT conditions hold throughout.
///
/// The tie rules rest on one fact (Schur complement of the active Gram
/// matrix): for a single column j, s_j d_j < 0 with j in A holds exactly
/// when f_j - s_j a_j < 0 with j out of A, i.e. when its correlation moves
/// inside the boundary once it is out. So one column at a time may be kept
/// out (or made to leave) on that sign test; several at once carry no such
/// guarantee, which is why they go one per row.
///
/// Columns over processes (a SharedColumnDesign, mpi_columns.hpp): every
/// process runs this same homotopy on replicated state; only the search for
/// entries runs over the process's own columns, and three reductions join
/// the processes: the largest start level (lambda_max), the smallest step
/// (the min-location of the next knot) and the entry candidates tied with
/// it, gathered in process order, which is column order. The events, and
/// their documented order, are those of one process holding every column.

#include <algorithm>
#include <cmath>
#include <cstring>
#include <span>
#include <tuple>
#include <type_traits>
#include <utility>
#include <vector>

#include "design/concept.hpp"
#include "detail/scalar.hpp"
#include "factor.hpp"
#include "knot.hpp"
#include "options.hpp"
#include "prepare.hpp"

namespace knotpath {

namespace detail {

/// A possible event at distance `step` below the current penalty.
template <class Scalar>
struct Candidate {
  Scalar step;   // g: distance in penalty from the current knot
  bool leave;    // leave (true) or enter (false)
  Index column;  // prepared column
  int sign;      // entering sign, or sign of the leaving coefficient
};

/// The estimated relative error of each knot's prepared problem
/// (Knot::prepared_error): the
/// largest of
///  - the condition of the active system at the knot's solution times the
///    unit roundoff (the error of the directions summed into it;
///    Homotopy's solution_condition, at most the factor's condition
///    estimate),
///  - the centring amplification times the unit roundoff (the prepared
///    columns carry that error under an intercept; Preparation),
///  - the measured drift of the active correlations from their exact value
///    lambda f_j s_j before each reset, relative to lambda_max,
///  - the condition of every factor that decided which tied entries stay
///    out (a decision only as good as that condition times the roundoff),
///  - the estimate of the knot before: a knot inherits the state (b, c) of
///    the knots before it, so an error made on an ill-conditioned stretch
///    stays in the path after the factor recovers.
class ErrorEstimate {
 public:
  /// \param unit_roundoff          epsilon of the traced scalar type
  /// \param centring_amplification Preparation::centring_amplification (1 without intercept)
  ErrorEstimate(double unit_roundoff, double centring_amplification)
      : eps_(unit_roundoff), centring_(centring_amplification) {}

  /// lambda_max, the scale of the drift.
  void set_penalty_scale(double lambda_max) { lambda_scale_ = lambda_max; }
  /// One active correlation's distance from lambda f_j s_j before its reset.
  void note_drift(double absolute) { drift_ = std::max(drift_, absolute); }
  /// A tie decided on a factor of this condition estimate.
  void note_tie_decision(double condition) { carried_ = std::max(carried_, condition * eps_); }
  /// The estimate of the next knot, whose active system has this condition
  /// at its solution.
  double next_knot(double condition) {
    carried_ = std::max({condition * eps_, centring_ * eps_, lambda_scale_ > 0 ? drift_ / lambda_scale_ : 0.0,
                         carried_});
    return carried_;
  }

 private:
  double eps_;               // unit roundoff of the scalar type
  double centring_;          // centring amplification of the prepared columns
  double lambda_scale_ = 0;  // lambda_max (0 until the first knot is known)
  double drift_ = 0;         // largest measured drift so far, absolute
  double carried_ = 0;       // the estimate of the last knot (or a larger tie term)
};

}  // namespace detail

/// What one run of the homotopy records (Path is assembled from it).
template <class Scalar>
struct TracedKnots {
  std::vector<Knot<Scalar>> knots;         ///< the rows of the knot table
  std::vector<HeldOut<Scalar>> held_out;   ///< predictors held out as collinear
  StopReason reason = StopReason::completed;  ///< why the path ended
};

/// One trace of the homotopy over a design operator and its preparation.
/// Build it, call run() once. Cost per knot: one
/// design.direction_correlations (O(n q) dense) plus O(k^2) for the factor
/// and O(q) for the step search; nothing is allocated per knot beyond the
/// knot's own record (and the factor's room, doubled when full: a few times
/// in a path). It writes the design's scratch space (see trace_design()).
template <DesignOperator Design>
class Homotopy {
 public:
  /// The arithmetic type of the design (double, a 50-digit float, a rational).
  using Scalar = typename Design::Scalar;

  /// `design` holds the prepared columns described by `prep` (column k of
  /// the design is predictor prep.columns[k]); both must outlive the object.
  /// `options` must have been validated.
  Homotopy(const Design& design, const Preparation<Scalar>& prep, const TraceOptions& options)
      : design_(design),
        prep_(prep),
        options_(options),
        q_(design.cols()),
        lasso_(options.variant == Variant::lasso),
        ridge_(options.ridge),
        collinear_tol_(detail::resolve_tolerance<Scalar>(options.collinearity_tolerance, 1e4)),
        tie_tol_(detail::resolve_tolerance<Scalar>(options.tie_tolerance, 1e3)),
        step_limit_(options.max_steps ? options.max_steps
                                      : 8 * static_cast<std::size_t>(design.rows() + q_) + 100),
        usable_rank_(prep.used_observations - (prep.intercept ? 1 : 0)),
        factor_of_(q_),
        b_(Vector<Scalar>::Zero(q_)),
        c_(q_),
        a_(Vector<Scalar>::Zero(q_)),
        sign_(static_cast<std::size_t>(q_), 0),
        is_active_(static_cast<std::size_t>(q_), 0),
        blocked_(static_cast<std::size_t>(q_), 0),
        just_left_(static_cast<std::size_t>(q_), 0),
        factor_(std::min<Index>({q_, design.rows() + 1, initial_factor_room})),
        cross_(q_ + 1),
        d_(q_ + 1),
        rhs_(q_ + 1),
        active_c_(q_ + 1),
        b_active_(q_ + 1),
        scale_work_(q_ + 1),
        scale_solution_(q_ + 1),
        rhs_scale_(q_ + 1),
        column_norm_(static_cast<std::size_t>(q_), 0.0),
        travelled_(static_cast<std::size_t>(q_), 0.0),
        estimate_(detail::to_double(detail::epsilon<Scalar>()), prep.centring_amplification) {
    if constexpr (SharedColumnDesign<Design>) std::tie(own_begin_, own_end_) = design.own_columns();
    for (Index k = 0; k < q_; ++k) factor_of_(k) = Scalar(prep.penalty_weights[static_cast<std::size_t>(k)]);
    design.response_correlations(c_);
    rss_ = design.response_squared_norm();
    note_correlation_noise();
    entered_.reserve(static_cast<std::size_t>(q_));
    candidates_.reserve(2 * static_cast<std::size_t>(q_) + 2);
    events_.reserve(2 * static_cast<std::size_t>(q_) + 2);
  }

  /// Traces the path: the start knot, then one segment and its events per
  /// pass until the penalty reaches 0 or a stopping rule holds.
  TracedKnots<Scalar> run() {
    fit_unpenalized();
    start();
    for (std::size_t steps = 1;; ++steps) {
      if (steps > step_limit_) {
        stop(StopReason::step_limit);
        break;
      }
      if (options_.interrupt_requested && options_.interrupt_requested()) throw interrupted();
      const Index k = active_count();
      solve_direction();
      design_.direction_correlations(std::span<const Index>(active_), d_.head(k), a_);
      find_candidates(k);
      const Segment segment = next_knot();
      if (segment.step > zero_) advance(segment, k);
      if (segment.stop_here) {
        stop(StopReason::min_penalty);
        break;
      }
      if (segment.reaches_end) {
        lambda_ = zero_;
        record(EventKind::end, -1, 0);
        break;
      }
      collect_events(segment.nearest);
      if (apply_events()) break;
    }
    place_held_out_at_knots();
    return {std::move(knots_), std::move(held_out_), reason_};
  }

 private:
  // How far the next knot lies and what happens there.
  struct Segment {
    Scalar nearest;    // smallest candidate step (lambda when there is none)
    Scalar step;       // the step taken: nearest, or down to the end or the minimum penalty
    bool reaches_end;  // no event before penalty 0
    bool stop_here;    // the minimum penalty comes first
  };

  Index active_count() const { return static_cast<Index>(active_.size()); }
  std::size_t at(Index k) const { return static_cast<std::size_t>(k); }

  // The factor's room: a few columns at first, doubled when full, held to
  // the largest active set the data allow (n + 1 columns without a ridge, q
  // in any case). Reserving that bound up front zeroed a bound^2 block
  // (8 MB at n = 1000, 5% of a 1000 x 20000 design) that a path stopped
  // after a few hundred knots never reaches. The factor's values do not
  // depend on its room: its operations read the leading block only, in an
  // order set by the block's size (Eigen's triangular solves and products
  // read the columns unaligned whatever their stride).
  static constexpr Index initial_factor_room = 64;
  void make_factor_room() {
    const Index room = factor_.capacity();
    if (factor_.size() < room) return;
    const Index usual_bound = std::min<Index>(q_, design_.rows() + 1);
    const Index bound = room < usual_bound ? usual_bound : q_;
    factor_.reserve(std::max<Index>(room + 1, std::min<Index>(2 * room, bound)));
  }

  // Adds prepared column j to the factor, or holds it out (recorded) when it
  // is numerically in the span of the active columns.
  bool try_add(Index j, const Scalar& lambda, Index step) {
    auto cross = cross_.head(active_count());
    design_.cross_products(j, std::span<const Index>(active_), cross);
    const Scalar diag = design_.squared_norm(j) + ridge_;
    make_factor_room();
    AddOutcome outcome = factor_.add(cross, diag, collinear_tol_);
    if (!outcome.added) {
      blocked_[at(j)] = 1;
      // A column refused near the tolerance (its squared sine within two
      // orders of it) is one the exact problem adds: from here the events
      // may differ from the exact path's, which the estimate says by passing
      // first_order_limit (unit roundoff / tolerance = 1e-4). A sine at
      // rounding level (an exact duplicate) is collinear in the exact
      // problem too and says nothing.
      const bool saturated = active_count() >= usable_rank_;
      if (!saturated && outcome.squared_sine >= 1e-2 * detail::to_double(collinear_tol_))
        estimate_.note_tie_decision(1.0 / outcome.squared_sine);
      held_out_.push_back(
          {step, lambda, prep_.columns[at(j)], outcome.squared_sine, active_count() >= usable_rank_});
      return false;
    }
    active_.push_back(j);
    active_ascending_.insert(std::lower_bound(active_ascending_.begin(), active_ascending_.end(), j), j);
    is_active_[at(j)] = 1;
    return true;
  }

  // HeldOut::step names a row of the knot table: the last knot at or above
  // the penalty where the column was held out (the state of the path after
  // every event at that penalty). try_add records the row the column would
  // have taken, which may be a later predictor's row at a lower penalty or
  // no row at all, so the steps are set once the knots are.
  void place_held_out_at_knots() {
    for (auto& h : held_out_) {
      const auto below = std::partition_point(
          knots_.begin(), knots_.end(), [&](const Knot<Scalar>& k) { return k.penalty >= h.penalty; });
      h.step = std::max<Index>(static_cast<Index>(below - knots_.begin()) - 1, 0);
    }
  }

  // Removes the active column at factor position `position`; columns held
  // out against the larger span may enter again.
  void remove_active(Index position) {
    const Index j = active_[at(position)];
    factor_.remove(position);
    active_.erase(active_.begin() + position);
    active_ascending_.erase(std::lower_bound(active_ascending_.begin(), active_ascending_.end(), j));
    is_active_[at(j)] = 0;
    std::fill(blocked_.begin(), blocked_.end(), 0);
  }

  // d = (Z_A^T Z_A + a2 I)^{-1} f_A s_A into d_ (right-hand side in rhs_),
  // both in factor order.
  void solve_direction() {
    const Index k = active_count();
    auto rhs = rhs_.head(k);
    for (Index i = 0; i < k; ++i) {
      const Index j = active_[at(i)];
      rhs(i) = factor_of_(j) * Scalar(sign_[at(j)]);
    }
    auto d = d_.head(k);
    factor_.solve(rhs, d);
  }

  Index penalized_active() const {
    Index count = 0;
    for (Index j : active_)
      if (factor_of_(j) != zero_) ++count;
    return count;
  }

  bool may_enter_with(Index k, int s) const {
    const SignConstraint constraint = prep_.constraints[at(k)];
    if (constraint == SignConstraint::nonnegative) return s > 0;
    if (constraint == SignConstraint::nonpositive) return s < 0;
    return true;
  }

  bool knot_limit_reached() const { return options_.max_knots != 0 && knots_.size() - 1 >= options_.max_knots; }

  // Unpenalized predictors are fitted (with the intercept) before the path
  // starts: b_U = (Z_U^T Z_U + a2 I)^{-1} c_U, and every correlation updated.
  void fit_unpenalized() {
    std::vector<Index> unpenalized;
    for (Index k = 0; k < q_; ++k)
      if (factor_of_(k) == zero_ && try_add(k, zero_, 0)) unpenalized.push_back(k);
    if (unpenalized.empty()) return;
    const Index m = static_cast<Index>(unpenalized.size());
    Vector<Scalar> c0(m), b0(m);
    for (Index i = 0; i < m; ++i) c0(i) = c_(unpenalized[at(i)]);
    factor_.solve(c0, b0);
    for (Index i = 0; i < m; ++i) {
      b_(unpenalized[at(i)]) = b0(i);
      travelled_[at(unpenalized[at(i)])] = std::abs(detail::to_double(b0(i)));
    }
    // RSS after the fit: ||y||^2 - b.c0 - a2 ||b||^2 (normal equations).
    rss_ -= b0.dot(c0) + ridge_ * b0.squaredNorm();
    design_.direction_correlations(std::span<const Index>(active_), b0, a_);
    c_ -= a_;
    for (Index k : unpenalized) c_(k) = zero_;
  }

  // lambda_max: the largest |c_k| / f_k an inactive column may enter with;
  // the start knot. Held-out notes made before it carry that penalty.
  void start() {
    const std::size_t held_at_start = held_out_.size();
    for (Index k = own_begin_; k < own_end_; ++k) {
      if (is_active_[at(k)] || blocked_[at(k)]) continue;
      for (int s : {+1, -1}) {
        if (!may_enter_with(k, s)) continue;
        const Scalar level = Scalar(s) * c_(k) / factor_of_(k);
        if (level > lambda_) lambda_ = level;
      }
    }
    if constexpr (SharedColumnDesign<Design>) lambda_ = design_.largest_everywhere(lambda_);
    for (std::size_t i = 0; i < held_at_start; ++i) held_out_[i].penalty = lambda_;
    estimate_.set_penalty_scale(detail::to_double(lambda_));
    penalty_scale_ = detail::to_double(lambda_);
    record(EventKind::start, -1, 0);
  }

  void find_candidates(Index k_active) {
    candidates_.clear();
    entry_candidates();
    leave_candidates(k_active);
    std::fill(just_left_.begin(), just_left_.end(), 0);
  }

  // Inactive columns reaching the boundary: s (c_k - g a_k) = (lambda - g) f_k
  // gives g = (lambda f_k - s c_k) / (f_k - s a_k), approached only when
  // f_k - s a_k > 0.
  void entry_candidates() {
    for (Index k = own_begin_; k < own_end_; ++k) {
      if (is_active_[at(k)] || blocked_[at(k)]) continue;
      for (int s : {+1, -1}) {
        if (!may_enter_with(k, s)) continue;
        const Scalar denom = factor_of_(k) - Scalar(s) * a_(k);
        if (!(denom > zero_)) continue;
        // A column that just left on side s moves inside the boundary there
        // (Schur complement, file comment), so a rate at rounding level is
        // noise and would step straight back in; a clearly positive rate
        // means the active set changed again at the same knot, and it may.
        if (just_left_[at(k)] == s && denom <= tie_tol_ * (factor_of_(k) + detail::abs_value<Scalar>(a_(k))))
          continue;
        Scalar g = (lambda_ * factor_of_(k) - Scalar(s) * c_(k)) / denom;
        if (g < zero_) g = zero_;  // already on the boundary (ties, rounding): enters now
        if (g < lambda_) candidates_.push_back({g, false, k, s});
      }
    }
  }

  // Active coefficients reaching zero (lasso, or a sign constraint). An
  // active column still at zero whose direction opposes its sign leaves at
  // once (else the next segment would break its KKT condition), one per
  // knot row, the most negative s_k d_k first (file comment).
  void leave_candidates(Index k_active) {
    const auto d = d_.head(k_active);
    Index stuck = -1;
    Scalar stuck_agreement(0);
    for (Index i = 0; i < k_active; ++i) {
      const Index k = active_[at(i)];
      if (factor_of_(k) == zero_) continue;
      const bool must_leave = lasso_ || prep_.constraints[at(k)] != SignConstraint::none;
      if (!must_leave) continue;
      if (b_(k) * d(i) < zero_) {
        const Scalar g = -b_(k) / d(i);
        if (g < lambda_) candidates_.push_back({g, true, k, detail::sign_of(b_(k))});
      } else if (b_(k) == zero_ && Scalar(sign_[at(k)]) * d(i) < stuck_agreement) {
        stuck_agreement = Scalar(sign_[at(k)]) * d(i);
        stuck = k;
      }
    }
    if (stuck >= 0) candidates_.push_back({zero_, true, stuck, sign_[at(stuck)]});
  }

  // Without candidates the nearest step is lambda itself, which reaches the
  // end (every candidate's step is below lambda).
  Segment next_knot() const {
    Segment segment{lambda_, lambda_, false, false};
    for (const auto& candidate : candidates_) segment.nearest = std::min<Scalar>(segment.nearest, candidate.step);
    if constexpr (SharedColumnDesign<Design>) segment.nearest = design_.smallest_everywhere(segment.nearest);
    segment.reaches_end = !(segment.nearest < lambda_ - tie_tol_ * lambda_);
    segment.step = segment.reaches_end ? lambda_ : segment.nearest;
    if (lambda_ - segment.step < Scalar(options_.min_penalty)) {
      segment.step = lambda_ - Scalar(options_.min_penalty);
      if (segment.step < zero_) segment.step = zero_;  // lambda_max itself is below the minimum penalty
      segment.stop_here = true;
    }
    return segment;
  }

  // Moves b, c, the RSS and lambda down the segment; the active
  // correlations are then reset to their exact value lambda f_j s_j and the
  // distance measured.
  void advance(const Segment& segment, Index k_active) {
    const Scalar& g = segment.step;
    const auto d = d_.head(k_active);
    const auto rhs = rhs_.head(k_active);
    auto active_c = active_c_.head(k_active);
    for (Index i = 0; i < k_active; ++i) active_c(i) = c_(active_[at(i)]);
    auto b_active = b_active_.head(k_active);
    for (Index i = 0; i < k_active; ++i) b_active(i) = b_(active_[at(i)]);
    // ||r - g u||^2 with u = Z_A d: u.r = d.(c_A + a2 b_A), u.u = d.rhs - a2 ||d||^2.
    const Scalar u_dot_r = d.dot(active_c) + ridge_ * d.dot(b_active);
    const Scalar u_dot_u = d.dot(rhs) - ridge_ * d.squaredNorm();
    rss_ += g * (g * u_dot_u - Scalar(2) * u_dot_r);
    note_penalty_slope(k_active);
    for (Index i = 0; i < k_active; ++i) {
      b_(active_[at(i)]) += g * d(i);
      travelled_[at(active_[at(i)])] += std::abs(detail::to_double(Scalar(g * d(i))));
    }
    c_ -= g * a_;
    lambda_ -= g;
    if (segment.reaches_end && !segment.stop_here) lambda_ = zero_;
    // c_ holds x_j^T r; with a ridge weight a2 the active correlation that
    // equals lambda f_j s_j is x_j^T r - a2 b_j, which moved by g a2 d_j
    // more than c_ did (the update above uses the design's products only).
    for (Index i = 0; i < k_active; ++i) {
      const Index j = active_[at(i)];
      const Scalar exact = lambda_ * factor_of_(j) * Scalar(sign_[at(j)]);
      const Scalar moved = c_(j) - ridge_ * g * d(i);
      estimate_.note_drift(detail::to_double(detail::abs_value<Scalar>(Scalar(moved - exact))));
      c_(j) = exact;
    }
  }

  // The events of this knot: candidates within the tie tolerance of the
  // nearest, leaves first, each kind by ascending column.
  void collect_events(const Scalar& nearest) {
    events_.clear();
    for (const auto& candidate : candidates_)
      if (candidate.step <= nearest + tie_tol_ * (lambda_ + nearest)) events_.push_back(candidate);
    if constexpr (SharedColumnDesign<Design>) gather_tied_entries();
    std::sort(events_.begin(), events_.end(), [](const auto& x, const auto& y) {
      if (x.leave != y.leave) return x.leave;
      return x.column < y.column;
    });
  }

  // Columns over processes: the tied entries of every process, in process
  // (= column) order, then the leave events, which every process found
  // alike on the replicated active set: the order in which one process
  // holding every column lists them, so the sort below orders them alike.
  void gather_tied_entries() {
    static_assert(std::is_trivially_copyable_v<detail::Candidate<Scalar>>,
                  "columns over processes need a scalar type that is sent as bytes");
    using Candidate = detail::Candidate<Scalar>;
    std::vector<char> mine;
    for (const auto& event : events_)
      if (!event.leave) {
        const auto* bytes = reinterpret_cast<const char*>(&event);
        mine.insert(mine.end(), bytes, bytes + sizeof(Candidate));
      }
    const std::vector<char> all = design_.gather_everywhere(mine);
    std::vector<Candidate> leaves;
    for (const auto& event : events_)
      if (event.leave) leaves.push_back(event);
    events_.clear();
    for (std::size_t at = 0; at + sizeof(Candidate) <= all.size(); at += sizeof(Candidate)) {
      Candidate event;
      std::memcpy(&event, all.data() + at, sizeof(Candidate));
      events_.push_back(event);
    }
    events_.insert(events_.end(), leaves.begin(), leaves.end());
  }

  // Applies the events of this knot; true when a stopping rule ended the path.
  // Every leaving coefficient reached zero within the tie tolerance, so all
  // are zero before any row is recorded. Entries are added first and
  // recorded by flush_entries(), after the tie rule has kept out those whose
  // direction would break their sign.
  bool apply_events() {
    entered_.clear();
    for (const auto& event : events_)
      if (event.leave) {
        b_(event.column) = zero_;
        travelled_[at(event.column)] = 0;  // set exactly: its rounding left with it
      }
    for (const auto& event : events_) {
      if (event.leave) {
        leave(event);
        if (knot_limit_reached()) {
          stop(StopReason::max_knots);
          return true;
        }
        continue;
      }
      if (is_active_[at(event.column)] || blocked_[at(event.column)]) continue;  // its other sign
      if (options_.max_active != 0 && factor_of_(event.column) != zero_ &&
          static_cast<std::size_t>(penalized_active()) >= options_.max_active) {
        if (!flush_entries()) stop(StopReason::max_active);
        return true;
      }
      if (try_add(event.column, lambda_, static_cast<Index>(knots_.size() + entered_.size()))) {
        sign_[at(event.column)] = event.sign;
        c_(event.column) = lambda_ * factor_of_(event.column) * Scalar(event.sign);
        entered_.push_back(event.column);
      }
    }
    return flush_entries();
  }

  void leave(const detail::Candidate<Scalar>& event) {
    const auto position = std::find(active_.begin(), active_.end(), event.column) - active_.begin();
    remove_active(static_cast<Index>(position));
    just_left_[at(event.column)] = event.sign;
    record(EventKind::leave, event.column, event.sign);
  }

  // Records the entries of this knot; true when the knot limit ended the path.
  bool flush_entries() {
    if (entered_.empty()) return false;
    if (lasso_) keep_out_tied_entries();
    const Index before = static_cast<Index>(active_.size() - entered_.size());
    for (std::size_t i = 0; i < entered_.size(); ++i) {
      const Index j = entered_[i];
      record(EventKind::enter, j, sign_[at(j)], before + static_cast<Index>(i) + 1);
      if (knot_limit_reached()) {
        stop(StopReason::max_knots);
        return true;
      }
    }
    entered_.clear();
    return false;
  }

  // Tied entries whose joint direction opposes their sign stay out, on the
  // side they reached, for the next segment: the most negative s_j d_j is
  // dropped and the direction solved again until every entry agrees.
  void keep_out_tied_entries() {
    while (true) {
      const Index k = active_count();
      solve_direction();
      const auto d = d_.head(k);
      Index worst_position = -1;
      Scalar worst(0);
      for (Index i = 0; i < k; ++i) {
        const Index j = active_[at(i)];
        if (std::find(entered_.begin(), entered_.end(), j) == entered_.end()) continue;
        const Scalar agreement = Scalar(sign_[at(j)]) * d(i);
        if (agreement < worst) {
          worst = agreement;
          worst_position = i;
        }
      }
      if (worst_position < 0) return;
      estimate_.note_tie_decision(factor_.health().condition_estimate);
      const Index j = active_[at(worst_position)];
      remove_active(worst_position);
      just_left_[at(j)] = sign_[at(j)];
      entered_.erase(std::find(entered_.begin(), entered_.end(), j));
    }
  }

  void stop(StopReason reason) {
    reason_ = reason;
    record(EventKind::stop, -1, 0);
  }

  // Appends the knot at the current penalty: coefficients and intercept on
  // the original scale, penalized L1 norm, RSS, the event's column and its
  // correlation, the factor's health and the error estimate.
  void record(EventKind kind, Index column, int s, Index active_after = -1) {
    Knot<Scalar> knot;
    knot.step = static_cast<Index>(knots_.size());
    knot.penalty = lambda_;
    knot.event = kind;
    knot.sign = s;
    knot.active_count = active_after >= 0 ? active_after : active_count();
    knot.rss = rss_ < zero_ ? zero_ : rss_;
    record_coefficients(knot);
    if (column >= 0) {
      knot.predictor = prep_.columns[at(column)];
      const double denom =
          std::sqrt(detail::to_double(design_.squared_norm(column)) * detail::to_double(knot.rss));
      knot.correlation = denom > 0 ? detail::to_double(c_(column)) / denom : 0.0;
    }
    const FactorHealth health = factor_.health();
    knot.condition_estimate = health.condition_estimate;
    knot.prepared_error = estimate_.next_knot(solution_condition(health));
    const Index entering =
        kind == EventKind::enter && column >= 0
            ? static_cast<Index>(std::find(active_.begin(), active_.end(), column) - active_.begin())
            : -1;
    knot.estimated_error = reported_scale_error(knot.prepared_error, health.inverse_norm, knot,
                                                entering < active_count() ? entering : -1);
    // Once suspect, always suspect: a knot inherits the state of the knots
    // before it (RELIABILITY.md, fuzzing finding 6), even where the error
    // they left is small against this knot's larger coefficients.
    knot.suspect =
        knot.estimated_error > options_.suspect_threshold || (!knots_.empty() && knots_.back().suspect);
    knots_.push_back(std::move(knot));
  }

  // The condition of the active system at the knot's solution, the factor
  // of the knot's own term in ErrorEstimate. The factor's backward error dG
  // (|dG| <= gamma |R^T| |R|, Higham 2002, theorem 10.3) moves each
  // direction d by G^{-1} dG d, and b_A is the sum of the steps g d of the
  // segments since each column entered (b is never solved afresh), so the
  // rounding it carries is bounded by
  //   ||d b_A||_inf <= gamma ||G^{-1}||_1 || |R^T| |R| t ||_inf,
  // t_k = sum |g d_k| the distance coefficient k travelled (travelled_;
  // t = |b_A| on a path whose coefficients only grow). Over ||b_A||_inf this
  // is the condition returned (CholeskyFactor::gram_product_bound; the mixed
  // condition number of Higham 2002, section 7.2, at t). Where t = |b_A| it
  // never exceeds the norm-wise ||R||_1 ||R||_inf ||G^{-1}||_1 of
  // FactorHealth and falls well below it when the solution does not load
  // the columns of largest |R| sums: the knots with many active columns of
  // a well-conditioned design, where the norm-wise figure overshot the
  // measured error by up to 260 (RELIABILITY.md, "Health check
  // calibration"). Without Hager's estimate (exact and multiprecision
  // factors), or with no nonzero coefficient, the factor's condition
  // estimate. O(k^2).
  double solution_condition(const FactorHealth& health) {
    if constexpr (!std::is_floating_point_v<Scalar>) {
      return health.condition_estimate;
    } else {
      const Index k_active = active_count();
      if (!(health.inverse_norm > 0) || k_active == 0) return health.condition_estimate;
      auto travelled = b_active_.head(k_active);
      double size = 0;
      for (Index i = 0; i < k_active; ++i) {
        const Index k = active_[at(i)];
        travelled(i) = Scalar(travelled_[at(k)]);
        size = std::max(size, std::abs(detail::to_double(b_(k))));
      }
      if (!(size > 0)) return health.condition_estimate;
      return health.inverse_norm * factor_.gram_product_bound(travelled) / size;
    }
  }

  // The error estimate on the scale the knot reports (Knot::estimated_error).
  // `prepared` bounds the error of the prepared coefficients b relative to
  // max_k |b_k| (ErrorEstimate). Model: db = G^{-1} r for a perturbation r
  // of the active correlations with ||r||_inf <= rho, rho chosen so that the
  // plain bound ||G^{-1}||_1 rho equals prepared * max_k |b_k| (G = G_A,
  // `inverse_norm` its Hager estimate). Dividing by the scales and forming
  // the intercept a = ybar - v^T b (v_k = m_j / s_j) carry it to the
  // original scale (Hoelder's inequality, G symmetric):
  //   |d beta_j| <= ||G^{-1} e_k||_1 rho / s_j,
  //   |d a|      <= ||G^{-1} v||_1 rho + means_rounding(),
  // the last term the rounding of the means ybar and m_j and of the
  // intercept's own sum. ||G^{-1} e_k||_1 is solved for the coefficient of the
  // smallest scale and bounded by ||G^{-1}||_1 for the others. A knot
  // penalty off by u lambda_max plus the rounding of a correlation
  // (correlation_noise_) moves the solution along the segment's slope
  // (penalty_slope_ for the coefficients, intercept_slope_ for the
  // intercept), which adds that penalty error times the slope. The
  // coefficients' error is relative to the largest of |a| and |beta_j|, the
  // intercept's to at least the response's spread (response_spread(),
  // prepare.hpp), as the cross-check measures them (compare_paths); the
  // estimate is the larger of the two. Without a Hager estimate (exact
  // and multiprecision factors) every ||G^{-1} x||_1 is bounded by
  // ||G^{-1}||_1 ||x||_1.
  //
  // At an entry (`entering`: the new column's factor position k, else -1)
  // the knot penalty carries the rounding of the entry step's numerator,
  // lambda f_k - s c_k, divided by f_k - s a_k: near collinear entries make
  // that denominator small and the knot penalty moves by far more than the
  // rounding of lambda (GCC's sweep design 176: 200 u of lambda_max). Both
  // paths then run along different directions between the two knot
  // penalties, d_old and d_new, and the difference there is
  // |dg| |d_new - d_old|. At an entry d_new - d_old = s (f_k - s a_k)
  // G^{-1} e_k (d_old padded with a zero; the new column's direction is
  // s (f_k - s a_k) / S and the bordered inverse's last column is
  // (-w, 1) / S, S the Schur complement of the new column), so the
  // denominator cancels: the difference is the numerator's rounding times
  // G^{-1} e_k,
  // a perturbation of the entering correlation seen through the new
  // factor, carried to the reported scale like the others (its
  // coefficients over their scales, v^T G^{-1} e_k for the intercept).
  // Not at a row without a nonzero coefficient (the first entry, whose
  // denominator is f_k: a = 0 there): its coefficients have no size of
  // their own, and the cross-check measures such a row against the
  // segment that leaves zero, whose slope the next row's penalty term
  // carries.
  // Cost: two solves, three at an entry, O(k^2) each.
  double reported_scale_error(double prepared, double inverse_norm, const Knot<Scalar>& knot, Index entering) {
    const double top = solution_size(knot);
    if (!(top > 0)) return prepared;
    const Index k_active = active_count();
    auto v = scale_work_.head(k_active);
    auto w = scale_solution_.head(k_active);
    double b_size = 0;
    double smallest_scale = std::numeric_limits<double>::infinity(), next_scale = smallest_scale;
    Index smallest = -1;
    for (Index i = 0; i < k_active; ++i) {
      const Index k = active_[at(i)];
      const Index j = prep_.columns[at(k)];
      const double b = std::abs(detail::to_double(b_(k)));
      const double scale = detail::to_double(prep_.scales(j));
      b_size = std::max(b_size, b);
      if (scale < smallest_scale) {
        next_scale = smallest_scale;
        smallest_scale = scale;
        smallest = i;
      } else {
        next_scale = std::min(next_scale, scale);
      }
      v(i) = prep_.means(j) / prep_.scales(j);
    }
    // ||G^{-1}||_1 rho, with sqrt(k) for the rounding of the k-term sums of
    // the factor's solves (rounding errors of a sum of k terms grow like
    // sqrt(k) in practice: N. J. Higham, Accuracy and Stability of
    // Numerical Algorithms, 2nd ed., SIAM 2002, section 2.8).
    const double forward = std::sqrt(static_cast<double>(std::max<Index>(k_active, 1))) * prepared * b_size;
    // ||G^{-1} x||_1 / ||G^{-1}||_1, from a solve when Hager's estimate exists.
    auto aligned = [&](auto&& x) {
      if (!(inverse_norm > 0)) return detail::to_double(Scalar(x.template lpNorm<1>()));
      factor_.solve(x, w);
      return std::min(detail::to_double(Scalar(w.template lpNorm<1>())) / inverse_norm,
                      detail::to_double(Scalar(x.template lpNorm<1>())));
    };
    double coefficient_error = 0;
    if (smallest >= 0) {
      coefficient_error = k_active > 1 ? forward / next_scale : 0.0;
      auto e = rhs_scale_.head(k_active);
      e.setZero();
      e(smallest) = Scalar(1);
      coefficient_error = std::max(coefficient_error, forward * aligned(e) / smallest_scale);
    }
    const double eps = detail::to_double(detail::epsilon<Scalar>());
    double intercept_error = prep_.intercept ? forward * aligned(v) + means_rounding(k_active) : 0.0;
    const double penalty_error = eps * penalty_scale_ + correlation_noise_;
    if (entering >= 0 && b_size > 0) {
      auto e = rhs_scale_.head(k_active);
      e.setZero();
      e(entering) = Scalar(1);
      factor_.solve(e, w);
      double moved = 0;
      for (Index i = 0; i < k_active; ++i)
        moved = std::max(moved, std::abs(detail::to_double(w(i))) /
                                    detail::to_double(prep_.scales(prep_.columns[at(active_[at(i)])])));
      coefficient_error += penalty_error * moved;
      if (prep_.intercept) intercept_error += penalty_error * std::abs(detail::to_double(Scalar(v.dot(w))));
    }
    const double reported =
        std::max((coefficient_error + penalty_error * penalty_slope_) / top,
                 (intercept_error + penalty_error * intercept_slope_) / std::max(top, response_spread(prep_)));
    // Beyond the first order in the prepared problem, beyond it here too.
    return prepared > first_order_limit ? std::max(reported, prepared) : reported;
  }

  // The rounding of the intercept's inputs, absolute. The weighted means
  // ybar and m_j are compensated means (prepare.hpp, weighted_mean), each
  // off by about the unit roundoff times the spread of what it averages,
  // not times the mean itself: the rounding of the correction sum
  // sum w_i (x_i - mean), whose partial sums wander like a random walk of
  // that spread (the statistical form of Higham 2002, sections 2.8 and 4.2).
  // With the final sum a = ybar - sum m_j beta_j:
  //   e (|ybar| + sum_k |v_k b_k|) + e (||y_c|| + sum_k ||z_k|| |b_k|) / sqrt(W),
  // e = epsilon<Scalar> (twice the unit roundoff, as everywhere in this
  // estimate), ||y_c|| / sqrt(W) the spread of the response
  // (Preparation::total_sum_of_squares) and ||z_k|| s_j / sqrt(W) that of
  // predictor j (W the weight sum). A response whose mean is small against
  // its spread thus has a start knot (intercept only) known to this
  // absolute accuracy and no better. O(k).
  double means_rounding(Index k_active) const {
    double mean_shift = 0, spread_shift = 0;
    for (Index i = 0; i < k_active; ++i) {
      const Index k = active_[at(i)];
      const Index j = prep_.columns[at(k)];
      const double b = std::abs(detail::to_double(b_(k)));
      mean_shift += std::abs(detail::to_double(Scalar(prep_.means(j) / prep_.scales(j)))) * b;
      spread_shift += column_norm_[at(k)] * b;
    }
    const double eps = detail::to_double(detail::epsilon<Scalar>());
    const double spread_y = std::sqrt(std::max(detail::to_double(prep_.total_sum_of_squares), 0.0));
    const double weight = std::max(detail::to_double(prep_.weight_sum), 1.0);
    return eps * (std::abs(detail::to_double(prep_.response_mean)) + mean_shift) +
           eps * (spread_y + spread_shift) / std::sqrt(weight);
  }

  // The rounding of one correlation z_k^T y, an n-term inner product. Its
  // i-th addition rounds by about u |S_i|, S_i the partial sum, and those
  // roundings add like independent errors (the statistical form of the
  // inner product's bound, Higham 2002, sections 2.8 and 3.1): about
  // u sqrt(sum_i S_i^2). The partial sums are a drift (i / n) z_k^T y plus
  // a random walk of the terms' fluctuations, of spread about
  // sqrt(i / n) ||z_k|| ||y||; summed over i, u (||z_k|| ||y|| / sqrt(2) +
  // sqrt(n / 3) |z_k^T y|), bounded here by
  //   e (max_k ||z_k|| ||y|| + sqrt(n) max_k |z_k^T y|),
  // e = epsilon<Scalar> (twice the unit roundoff, as everywhere in this
  // estimate).
  // It sets how well lambda_max and every knot penalty are known, and how
  // far the active correlations may be off when they are small against
  // ||y|| (a weak signal, a heavy ridge). Until 2026-12-05 it was
  // u sqrt(n) ||z|| ||y||, the partial sums taken as large as the sum of
  // the terms' magnitudes, which overshot the knot penalties' measured
  // error 4 to 180 times on weak signals. Without the sqrt(n) the bound
  // then failed where knot penalties moved more than u ||z|| ||y|| (GCC's
  // sweep design 203: entries up to 70 u of lambda_max apart from the exact
  // ones); with the entry term of reported_scale_error it holds there
  // (RELIABILITY.md, "Health check calibration").
  // Also keeps ||z_k|| per column for means_rounding().
  void note_correlation_noise() {
    double column = 0;
    for (Index k = 0; k < q_; ++k) {
      const double squared = std::max(detail::to_double(design_.squared_norm(k)), 0.0);
      column_norm_[at(k)] = std::sqrt(squared);
      column = std::max(column, squared);
    }
    const double n = static_cast<double>(std::max<Index>(prep_.used_observations, 1));
    double largest = 0;
    for (Index k = 0; k < q_; ++k) largest = std::max(largest, std::abs(detail::to_double(c_(k))));
    correlation_noise_ = detail::to_double(detail::epsilon<Scalar>()) *
                         (std::sqrt(column) * std::sqrt(std::max(detail::to_double(rss_), 0.0)) +
                          std::sqrt(n) * largest);
  }

  // The slope of the reported solution along the segment just taken:
  // max(max_k |d_k| / s_j, |v^T d|) per unit of penalty (reported_scale_error).
  void note_penalty_slope(Index k_active) {
    double slope = 0, intercept_slope = 0;
    for (Index i = 0; i < k_active; ++i) {
      const Index j = prep_.columns[at(active_[at(i)])];
      const double d = detail::to_double(d_(i));
      const double scale = detail::to_double(prep_.scales(j));
      slope = std::max(slope, std::abs(d) / scale);
      if (prep_.intercept) intercept_slope += detail::to_double(prep_.means(j)) / scale * d;
    }
    penalty_slope_ = slope;
    intercept_slope_ = std::abs(intercept_slope);
  }

  // beta_j = b_k / s_j for the nonzero active coefficients (ascending j),
  // the penalized L1 norm sum f_k |b_k|, the plain one sum |beta_j| and the
  // intercept ybar - sum m_j beta_j.
  // The sums run in factor order (their rounding is part of the knot's
  // value); the coefficients are listed in ascending predictor order from
  // active_ascending_ (prepared columns ascend with the predictors), which
  // saves sorting them at every knot.
  void record_coefficients(Knot<Scalar>& knot) const {
    Scalar l1(0), plain(0), fitted_mean_shift(0);
    for (Index k : active_) {
      if (b_(k) == zero_) continue;
      const Index j = prep_.columns[at(k)];
      const Scalar beta = b_(k) / prep_.scales(j);
      l1 += factor_of_(k) * detail::abs_value<Scalar>(b_(k));
      plain += detail::abs_value<Scalar>(beta);
      fitted_mean_shift += prep_.means(j) * beta;
    }
    knot.coefficients.reserve(active_ascending_.size());
    for (Index k : active_ascending_) {
      if (b_(k) == zero_) continue;
      const Index j = prep_.columns[at(k)];
      knot.coefficients.emplace_back(j, Scalar(b_(k) / prep_.scales(j)));
    }
    knot.penalized_l1 = l1;
    knot.plain_l1 = plain;
    knot.intercept = prep_.intercept ? Scalar(prep_.response_mean - fitted_mean_shift) : zero_;
  }

  const Design& design_;               // the prepared columns and response
  const Preparation<Scalar>& prep_;    // means, scales, factors and constraints per column
  const TraceOptions& options_;        // validated options
  const Index q_;                      // number of prepared columns
  Index own_begin_ = 0, own_end_ = q_;  // the columns whose entries this process searches
  const bool lasso_;                   // lasso (leave events) or least angle
  const Scalar zero_{0};
  const Scalar ridge_;                 // a2
  const Scalar collinear_tol_;         // squared sine below which a column is held out
  const Scalar tie_tol_;               // relative distance of simultaneous events
  const std::size_t step_limit_;       // safety bound on passes of the loop
  const Index usable_rank_;            // rows with positive weight, less one with an intercept
  Vector<Scalar> factor_of_;           // f_k per prepared column
  Vector<Scalar> b_;                   // coefficients of the prepared problem
  Vector<Scalar> c_;                   // correlations with the residual (ridge-adjusted)
  Vector<Scalar> a_;                   // Z^T Z_A d
  std::vector<Index> active_;          // A, in factor order
  std::vector<Index> active_ascending_;  // A, ascending (record_coefficients)
  std::vector<int> sign_;              // s_k of each column that entered
  std::vector<char> is_active_;        // k in A
  std::vector<char> blocked_;          // held out as collinear until the active set loses a member
  std::vector<int> just_left_;         // sign it left with (or was kept out on), at the last knot
  detail::active_factor_t<Scalar> factor_;  // of Z_A^T Z_A + a2 I
  Vector<Scalar> cross_, d_, rhs_, active_c_, b_active_;  // work buffers of length q + 1
  Vector<Scalar> scale_work_, scale_solution_, rhs_scale_;  // reported_scale_error()'s v, G^{-1} x, e_k
  double penalty_scale_ = 0;  // lambda_max as a double (reported_scale_error)
  double penalty_slope_ = 0;    // note_penalty_slope() of the last segment: max_k |d_k| / s_j
  double intercept_slope_ = 0;  // and |v^T d|, the intercept's
  double correlation_noise_ = 0;  // note_correlation_noise()
  std::vector<double> column_norm_;  // ||z_k|| per prepared column (note_correlation_noise)
  std::vector<double> travelled_;    // sum of |g d_k| over the segments since column k entered
  Scalar rss_{0};                      // residual sum of squares of the prepared problem
  Scalar lambda_{0};                   // current penalty
  std::vector<Knot<Scalar>> knots_;    // recorded so far
  std::vector<HeldOut<Scalar>> held_out_;
  StopReason reason_ = StopReason::completed;
  detail::ErrorEstimate estimate_;     // Knot::estimated_error
  std::vector<detail::Candidate<Scalar>> candidates_, events_;
  std::vector<Index> entered_;         // added at this knot, not yet recorded
};

}  // namespace knotpath
