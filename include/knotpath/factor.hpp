#pragma once
/// \file factor.hpp
/// \brief Advanced: the incrementally updated factor of the active Gram
/// matrix the homotopy keeps (users of trace() never touch it; it is public
/// for tests and for callers who build their own active-set methods).
///
/// References:
///  - G. H. Golub & C. F. Van Loan, Matrix Computations (4th ed., 2013),
///    section 6.5 (updating matrix factorizations: appending a column,
///    deleting a column and restoring the triangle with Givens rotations).
///  - B. Efron, T. Hastie, I. Johnstone & R. Tibshirani (2004), "Least angle
///    regression", Ann. Statist. 32(2), 407-499, section 7 (the active-set
///    Cholesky updated one column at a time).
///  - P. E. Gill, G. H. Golub, W. Murray & M. A. Saunders (1974), "Methods for
///    modifying matrix factorizations", Mathematics of Computation 28(126),
///    505-535, method C1 (square-root-free rank-one update of L D L^T, used by
///    LdltFactor to delete a column exactly in rational arithmetic).
///
/// CholeskyFactor invariant: with k = size(), the leading k x k block R of
/// `r_` is upper triangular with positive diagonal and R^T R = G_A (+ ridge I),
/// the Gram matrix of the active columns in the order they were added
/// (removals keep the relative order of the others).
/// LdltFactor invariant: L unit lower triangular, D > 0 diagonal, L D L^T = G_A;
/// no square roots, so every entry is a rational function of the data.

#include <algorithm>
#include <cmath>
#include <limits>
#include <stdexcept>

#include "errors.hpp"
#include <type_traits>

#include "detail/scalar.hpp"

namespace knotpath {

/// Health of the factor: figures that warn when the active Gram matrix is
/// close to singular.
struct FactorHealth {
  double smallest_pivot_ratio = 1.0;  ///< min_i R_ii / max_i R_ii (1 when empty)
  double condition_estimate = 1.0;    ///< estimate of the condition number of G_A: the
                                      ///< larger of (max_i R_ii / min_i R_ii)^2 and, for
                                      ///< hardware floats, a 1-norm estimate (Hager 1984)
  double inverse_norm = 0;            ///< Hager's estimate of ||G_A^{-1}||_1 (hardware floats;
                                      ///< 0 when not computed)
};

namespace detail {
/// Hager's estimate of ||A^{-1}||_1 for a symmetric positive definite A of
/// order k given only a solver (W. W. Hager 1984, "Condition estimates",
/// SIAM J. Sci. Stat. Comput. 5(2); N. J. Higham 1988, ACM TOMS 14(4),
/// algorithm 4.1). At most five solve pairs, O(k^2) each; a lower bound that
/// is usually within a factor 3 of the true norm.
template <class Scalar, class Solver, class Work>
double hager_inverse_norm1(Index k, Solver&& solve, Work& work) {
  if (k == 0) return 0.0;
  // work: at least 4 columns of length >= k (caller-owned: no allocation per call).
  auto x = work.col(0).head(k);
  auto y = work.col(1).head(k);
  auto z = work.col(2).head(k);
  auto xi = work.col(3).head(k);
  x.setConstant(Scalar(1) / Scalar(k));
  double estimate = 0;
  Index last = -1;
  for (int iteration = 0; iteration < 5; ++iteration) {
    solve(x, y);
    estimate = static_cast<double>(y.template lpNorm<1>());
    for (Index i = 0; i < k; ++i) xi(i) = y(i) >= Scalar(0) ? Scalar(1) : Scalar(-1);
    solve(xi, z);  // A symmetric: A^{-T} = A^{-1}
    Index j = 0;
    z.cwiseAbs().maxCoeff(&j);
    if (std::abs(static_cast<double>(z(j))) <= static_cast<double>(z.dot(x)) || j == last) break;
    x.setZero();
    x(j) = Scalar(1);
    last = j;
  }
  return estimate;
}
}  // namespace detail

/// Outcome of CholeskyFactor::add.
struct AddOutcome {
  bool added = false;        ///< false: the column is numerically dependent on the active set
  double squared_sine = 0;   ///< new squared pivot / squared column norm, clamped at 0 (computed: its
                             ///< absolute error is about eps times the condition of the active set)
};

/// Cholesky factor R (G = R^T R) of the Gram matrix of an ordered active set,
/// updated in O(k^2) per added or removed column; never refactorized.
/// Memory: one capacity x capacity matrix, grown by doubling when needed.
///
/// Thread safety: solve() is const but writes a mutable scratch vector, so a
/// factor must not be shared between concurrent traces (each trace owns one).
template <class Scalar>
class CholeskyFactor {
 public:
  /// An empty factor with no reserved room.
  CholeskyFactor() = default;
  /// Reserves room for `capacity` columns (no allocation until it is exceeded).
  explicit CholeskyFactor(Index capacity) { reserve(capacity); }

  /// Number of columns currently factored.
  Index size() const noexcept { return size_; }
  /// Columns the factor has room for before add() must grow it.
  Index capacity() const noexcept { return r_.rows(); }

  /// Makes room for `capacity` columns, keeping the current factor.
  void reserve(Index capacity) {
    if (capacity <= r_.rows()) return;
    Matrix<Scalar> grown = Matrix<Scalar>::Zero(capacity, capacity);
    grown.topLeftCorner(size_, size_) = r_.topLeftCorner(size_, size_);
    r_.swap(grown);
    work_.resize(capacity);
    if constexpr (std::is_floating_point_v<Scalar>) {
      // conservativeResize keeps the row sums of |R| in the fifth column.
      health_work_.conservativeResize(capacity, 5);
      column_sums_.conservativeResize(capacity);
    }
  }

  /// Appends a column whose inner products with the active columns are
  /// `cross` (length size(), in factor order) and whose squared norm is
  /// `diagonal`. One triangular solve, O(k^2). The column is refused (and
  /// the factor left unchanged) when its squared pivot is <= tolerance *
  /// diagonal, i.e. it is numerically in the span of the active columns.
  /// Throws internal_error when `cross.size() != size()`.
  template <class CrossVector>
  AddOutcome add(const CrossVector& cross, const Scalar& diagonal, const Scalar& tolerance) {
    if (cross.size() != size_) throw internal_error("CholeskyFactor::add: size mismatch");
    if (size_ + 1 > r_.rows()) reserve(std::max<Index>(2 * r_.rows(), size_ + 1));
    AddOutcome outcome;
    if (!(diagonal > Scalar(0))) return outcome;
    // Solve R^T w = cross (forward substitution on the lower triangle R^T).
    auto w = work_.head(size_);
    for (Index i = 0; i < size_; ++i) {
      Scalar s = cross(i);
      for (Index m = 0; m < i; ++m) s -= r_(m, i) * w(m);
      w(i) = s / r_(i, i);
    }
    Scalar pivot2 = diagonal - w.squaredNorm();
    outcome.squared_sine = std::max(0.0, detail::to_double(Scalar(pivot2 / diagonal)));  // rounding can dip below 0
    if (!(pivot2 > tolerance * diagonal)) return outcome;
    r_.col(size_).head(size_) = w;
    r_(size_, size_) = detail::square_root(pivot2);
    for (Index i = 0; i < size_; ++i) r_(size_, i) = Scalar(0);
    ++size_;
    if constexpr (std::is_floating_point_v<Scalar>) add_norms(size_ - 1);
    outcome.added = true;
    return outcome;
  }

  /// Removes the column at `position` (0-based, factor order) and restores the
  /// triangle with Givens rotations, O(k^2). Throws internal_error when
  /// `position` is not in [0, size()).
  void remove(Index position) {
    if (position < 0 || position >= size_)
      throw internal_error("CholeskyFactor::remove: position out of range");
    const Index k = size_;
    // Shift the later columns left: R becomes upper Hessenberg from `position`.
    for (Index c = position; c + 1 < k; ++c) r_.col(c).head(k) = r_.col(c + 1).head(k);
    for (Index m = position; m + 1 < k; ++m) {
      // Rotate rows m and m+1 to annihilate the subdiagonal entry (m+1, m).
      const Scalar a = r_(m, m);
      const Scalar b = r_(m + 1, m);
      const Scalar rad = detail::square_root(Scalar(a * a + b * b));
      const Scalar c = a / rad;
      const Scalar s = b / rad;
      r_(m, m) = rad;
      r_(m + 1, m) = Scalar(0);
      for (Index col = m + 1; col + 1 < k; ++col) {
        const Scalar top = r_(m, col);
        const Scalar bottom = r_(m + 1, col);
        r_(m, col) = c * top + s * bottom;
        r_(m + 1, col) = c * bottom - s * top;
      }
    }
    r_.col(k - 1).head(k).setZero();
    r_.row(k - 1).head(k).setZero();
    --size_;
    if constexpr (std::is_floating_point_v<Scalar>) {
      // Givens rotations change every row from `position` on: sum again.
      health_work_.col(4).head(size_).setZero();
      for (Index i = 0; i < size_; ++i) add_norms(i);
    }
  }

  /// Solves (R^T R) x = rhs for x (two triangular solves, O(k^2)). `rhs` and
  /// `x` have length size() and may be the same object.
  template <class In, class Out>
  void solve(const In& rhs, Out& x) const {
    if constexpr (std::is_floating_point_v<Scalar>) {
      // Eigen's blocked triangular solves: R^T is read row by row as R's
      // contiguous columns, R column by column (no strided access).
      auto z = work_.head(size_);
      z = rhs;
      const auto r = r_.topLeftCorner(size_, size_);
      r.template triangularView<Eigen::Upper>().transpose().solveInPlace(z);
      r.template triangularView<Eigen::Upper>().solveInPlace(z);
      x = z;
      return;
    }
    auto z = work_.head(size_);
    for (Index i = 0; i < size_; ++i) {
      Scalar s = rhs(i);
      for (Index m = 0; m < i; ++m) s -= r_(m, i) * z(m);
      z(i) = s / r_(i, i);
    }
    for (Index i = size_ - 1; i >= 0; --i) {
      Scalar s = z(i);
      for (Index m = i + 1; m < size_; ++m) s -= r_(i, m) * x(m);
      x(i) = s / r_(i, i);
    }
  }

  /// The current triangle R (size() x size()).
  Matrix<Scalar> triangle() const { return r_.topLeftCorner(size_, size_); }

  /// || |R^T| |R| |x| ||_inf for `x` of length size() (factor order), as a
  /// double: the size of the product the factor's backward error can reach
  /// at the solution x. The computed factor satisfies R^T R = G + dG with
  /// |dG| <= gamma_{k+1} |R^T| |R| (N. J. Higham, Accuracy and Stability of
  /// Numerical Algorithms, 2nd ed., SIAM 2002, theorem 10.3), so
  /// ||G^{-1}||_1 times this, over ||x||_inf, is a condition number of G at
  /// x (the mixed form of the componentwise condition number of Higham
  /// 2002, section 7.2, with |R^T| |R| for |G|): never above
  /// ||R||_1 ||R||_inf ||G^{-1}||_1, much below it when x is not spread
  /// along the columns of largest |R| sums. Two triangular products, O(k^2);
  /// nothing allocated.
  template <class In>
  double gram_product_bound(const In& x) const {
    if (size_ == 0) return 0.0;
    // Column by column over the contiguous columns of R: z = |R| |x|, then
    // (|R|^T z)_j = |R_{.j}| . z, no temporary matrix.
    auto z = work_.head(size_);
    z.setZero();
    for (Index j = 0; j < size_; ++j)
      z.head(j + 1) += r_.col(j).head(j + 1).cwiseAbs() * detail::abs_value(Scalar(x(j)));
    Scalar largest(0);
    for (Index j = 0; j < size_; ++j)
      largest = std::max<Scalar>(largest, r_.col(j).head(j + 1).cwiseAbs().dot(z.head(j + 1)));
    return detail::to_double(largest);
  }

  /// Health figures of the current factor.
  FactorHealth health() const {
    FactorHealth h;
    if (size_ == 0) return h;
    double lo = detail::to_double(detail::abs_value(r_(0, 0)));
    double hi = lo;
    for (Index i = 1; i < size_; ++i) {
      double v = detail::to_double(detail::abs_value(r_(i, i)));
      lo = std::min(lo, v);
      hi = std::max(hi, v);
    }
    h.smallest_pivot_ratio = hi > 0 ? lo / hi : 0.0;
    h.condition_estimate = lo > 0 ? (hi / lo) * (hi / lo) : std::numeric_limits<double>::infinity();
    if constexpr (std::is_floating_point_v<Scalar>) {
      // The pivot ratio can underestimate cond(G) by orders of magnitude, so
      // for hardware floats also estimate ||G||_1 ||G^{-1}||_1: ||G||_1 <=
      // ||R||_1 ||R||_inf (G = R^T R) and Hager's estimator for ||G^{-1}||_1
      // (a few solves, O(k^2)). The larger of the two estimates is reported.
      // The column and row sums of |R| are kept up to date by add() and
      // remove() (add_norms), O(k) here.
      const double col_max = static_cast<double>(column_sums_.head(size_).maxCoeff());
      const double row_max = static_cast<double>(health_work_.col(4).head(size_).maxCoeff());
      const double inverse = detail::hager_inverse_norm1<Scalar>(
          size_, [&](const auto& in, auto& out) { this->solve(in, out); }, health_work_);
      h.condition_estimate = std::max(h.condition_estimate, col_max * row_max * inverse);
      h.inverse_norm = inverse;
    }
    return h;
  }

 private:
  // Adds column i of R (contiguous) to the sums of |R| health() reads:
  // its own sum into column_sums_, and each entry into its row's sum, kept
  // in the fifth column of health_work_. Summed column by column in factor
  // order, so the sums equal a fresh pass over R bit for bit.
  void add_norms(Index i) {
    const auto column = r_.col(i).head(i + 1).cwiseAbs();
    column_sums_(i) = column.sum();
    auto rows = health_work_.col(4).head(i + 1);
    rows(i) = Scalar(0);
    rows += column;
  }

  Matrix<Scalar> r_;               // capacity x capacity; leading size_ block is R
  mutable Vector<Scalar> work_;    // scratch for the triangular solves
  mutable Matrix<Scalar> health_work_;  // capacity x 5 scratch of health() (hardware floats);
                                        // its fifth column holds the row sums of |R|
  Vector<Scalar> column_sums_;     // column sums of |R| (hardware floats)
  Index size_ = 0;                 // number of factored columns
};

/// Square-root-free factor L D L^T of the active Gram matrix, with the same
/// interface as CholeskyFactor: add is one unit-triangular solve, O(k^2);
/// remove deletes the row and column and restores the trailing block by a
/// rank-one update (Gill, Golub, Murray & Saunders 1974, method C1), O(k^2).
/// With exact rational scalars every quantity stays exact.
template <class Scalar>
class LdltFactor {
 public:
  /// An empty factor with no reserved room.
  LdltFactor() = default;
  /// Reserves room for `capacity` columns (no allocation until it is exceeded).
  explicit LdltFactor(Index capacity) { reserve(capacity); }

  /// Number of columns currently factored.
  Index size() const noexcept { return size_; }
  /// Columns the factor has room for before add() must grow it.
  Index capacity() const noexcept { return l_.rows(); }

  /// Makes room for `capacity` columns, keeping the current factor.
  void reserve(Index capacity) {
    if (capacity <= l_.rows()) return;
    Matrix<Scalar> grown = Matrix<Scalar>::Zero(capacity, capacity);
    grown.topLeftCorner(size_, size_) = l_.topLeftCorner(size_, size_);
    l_.swap(grown);
    Vector<Scalar> d = Vector<Scalar>::Zero(capacity);
    d.head(size_) = d_.head(size_);
    d_.swap(d);
    work_.resize(capacity);
  }

  /// Appends a column whose inner products with the active columns are
  /// `cross` (length size(), factor order) and whose squared norm is
  /// `diagonal`: one unit-triangular solve, O(k^2). The column is refused
  /// (factor unchanged) when its new pivot D_kk is <= tolerance * diagonal;
  /// AddOutcome::squared_sine is D_kk / diagonal. Throws
  /// internal_error when `cross.size() != size()`.
  template <class CrossVector>
  AddOutcome add(const CrossVector& cross, const Scalar& diagonal, const Scalar& tolerance) {
    if (cross.size() != size_) throw internal_error("LdltFactor::add: size mismatch");
    if (size_ + 1 > l_.rows()) reserve(std::max<Index>(2 * l_.rows(), size_ + 1));
    AddOutcome outcome;
    if (!(diagonal > Scalar(0))) return outcome;
    // L z = cross (unit lower), new row of L is w = D^{-1} z, pivot diag - z.w.
    auto z = work_.head(size_);
    for (Index i = 0; i < size_; ++i) {
      Scalar s = cross(i);
      for (Index m = 0; m < i; ++m) s -= l_(i, m) * z(m);
      z(i) = s;
    }
    Scalar pivot = diagonal;
    for (Index i = 0; i < size_; ++i) pivot -= z(i) * z(i) / d_(i);
    outcome.squared_sine = std::max(0.0, detail::to_double(Scalar(pivot / diagonal)));
    if (!(pivot > tolerance * diagonal)) return outcome;
    for (Index i = 0; i < size_; ++i) {
      l_(size_, i) = z(i) / d_(i);
      l_(i, size_) = Scalar(0);
    }
    l_(size_, size_) = Scalar(1);
    d_(size_) = pivot;
    ++size_;
    outcome.added = true;
    return outcome;
  }

  /// Removes the column at `position` (0-based, factor order) and restores
  /// L D L^T of the remaining columns by a rank-one update, O(k^2); exact in
  /// rational arithmetic. Throws internal_error when `position` is not in
  /// [0, size()).
  void remove(Index position) {
    if (position < 0 || position >= size_)
      throw internal_error("LdltFactor::remove: position out of range");
    const Index k = size_;
    // Trailing block gains d_i v v^T with v = L(position+1:, position).
    Scalar alpha = d_(position);
    Vector<Scalar> v = l_.col(position).segment(position + 1, k - position - 1);
    for (Index j = position + 1; j < k; ++j) {
      const Index vj = j - position - 1;
      const Scalar p = v(vj);
      const Scalar d_new = d_(j) + alpha * p * p;
      const Scalar beta = p * alpha / d_new;
      alpha = alpha * d_(j) / d_new;
      d_(j) = d_new;
      for (Index r = j + 1; r < k; ++r) {
        v(r - position - 1) -= p * l_(r, j);
        l_(r, j) += beta * v(r - position - 1);
      }
    }
    // Delete row and column `position`.
    for (Index r = position; r + 1 < k; ++r) {
      l_.row(r).head(k) = l_.row(r + 1).head(k);
      d_(r) = d_(r + 1);
    }
    for (Index c = position; c + 1 < k; ++c) l_.col(c).head(k) = l_.col(c + 1).head(k);
    l_.row(k - 1).head(k).setZero();
    l_.col(k - 1).head(k).setZero();
    d_(k - 1) = Scalar(0);
    --size_;
  }

  /// Solves (L D L^T) x = rhs (two unit-triangular solves and a diagonal
  /// scaling, O(k^2)). `rhs` and `x` have length size() and may be the same
  /// object. Writes the mutable scratch vector: not for concurrent use.
  template <class In, class Out>
  void solve(const In& rhs, Out& x) const {
    auto z = work_.head(size_);
    for (Index i = 0; i < size_; ++i) {
      Scalar s = rhs(i);
      for (Index m = 0; m < i; ++m) s -= l_(i, m) * z(m);
      z(i) = s;
    }
    for (Index i = 0; i < size_; ++i) z(i) /= d_(i);
    for (Index i = size_ - 1; i >= 0; --i) {
      Scalar s = z(i);
      for (Index m = i + 1; m < size_; ++m) s -= l_(m, i) * x(m);
      x(i) = s;
    }
  }

  /// L (size() x size(), unit lower triangular).
  Matrix<Scalar> unit_lower() const { return l_.topLeftCorner(size_, size_); }
  /// The diagonal D.
  Vector<Scalar> diagonal() const { return d_.head(size_); }

  /// Health figures; pivots are sqrt(D) so the figures match CholeskyFactor's.
  FactorHealth health() const {
    FactorHealth h;
    if (size_ == 0) return h;
    double lo = detail::to_double(d_(0)), hi = lo;
    for (Index i = 1; i < size_; ++i) {
      lo = std::min(lo, detail::to_double(d_(i)));
      hi = std::max(hi, detail::to_double(d_(i)));
    }
    h.smallest_pivot_ratio = hi > 0 ? std::sqrt(lo / hi) : 0.0;
    h.condition_estimate = lo > 0 ? hi / lo : std::numeric_limits<double>::infinity();
    return h;
  }

 private:
  Matrix<Scalar> l_;             // capacity x capacity; leading size_ block is L
  Vector<Scalar> d_;             // D
  mutable Vector<Scalar> work_;  // scratch
  Index size_ = 0;
};

namespace detail {
/// The active-set factor the tracer uses for a scalar type: Cholesky with
/// Givens deletions for floating types, square-root-free L D L^T for exact ones.
template <class Scalar>
using active_factor_t =
    std::conditional_t<is_exact_v<Scalar>, LdltFactor<Scalar>, CholeskyFactor<Scalar>>;
}  // namespace detail

}  // namespace knotpath
