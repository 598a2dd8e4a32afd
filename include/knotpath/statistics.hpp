#pragma once
/// \file statistics.hpp
/// \brief Sufficient statistics of (X, y): weighted means and centred
/// co-moments of the predictors and the response, computed in row blocks and
/// merged exactly. The Gram design (design/gram.hpp) is built from them.
///
/// References:
///  - T. F. Chan, G. H. Golub & R. J. LeVeque (1979), "Updating formulae and
///    a pairwise algorithm for computing sample variances", Stanford CS report
///    STAN-CS-79-773 (pairwise merge of means and co-moments).
///  - B. P. Welford (1962), "Note on a method for calculating corrected sums
///    of squares and products", Technometrics 4(3), 419-420.
///
/// Statistics of a block of rows are computed two-pass inside the block
/// (block means, then the centred cross-products with one matrix product) and
/// blocks are merged with Chan et al.'s update
///     n = na + nb,  delta = mean_b - mean_a,
///     mean = mean_a + delta * nb / n,
///     C = C_a + C_b + (na nb / n) delta delta^T,
/// which never forms raw sums of squares, so large means do not cancel the
/// spread. Any engine that can add these records across machines can feed the
/// tracer. Once the statistics exist the path costs O(p k) per knot,
/// independent of n.

#include <algorithm>
#include <cmath>
#include <limits>
#include <type_traits>
#include <string>
#include <utility>
#include <vector>

#include "detail/scalar.hpp"
#include "errors.hpp"
#include "prepare.hpp"

namespace knotpath {

template <class Scalar>
class StatisticsAccumulator;

/// Weighted sufficient statistics of (X, y): everything the Gram design needs.
/// Mergeable: statistics of disjoint row blocks combine exactly as if the
/// rows had been processed together.
template <class Scalar>
struct SufficientStatistics {
  Scalar weight_sum{0};        ///< sum of weights of the rows seen
  Index rows = 0;              ///< rows with positive weight
  Vector<Scalar> means;        ///< weighted predictor means (p)
  Scalar response_mean{0};     ///< weighted response mean
  Matrix<Scalar> comoments;    ///< sum_i w_i (x_i - mean)(x_i - mean)^T (p x p)
  Vector<Scalar> cross;        ///< sum_i w_i (x_i - mean)(y_i - ybar) (p)
  Scalar response_comoment{0}; ///< sum_i w_i (y_i - ybar)^2
  Vector<Scalar> minimum;      ///< smallest value per predictor, over rows with positive weight (p)
  Vector<Scalar> maximum;      ///< largest value per predictor, over rows with positive weight (p)

  /// Number of predictors.
  Index predictors() const noexcept { return means.size(); }

  /// Statistics of the rows of (x, y) with weights (empty: all 1). One pass
  /// over the data in blocks of `block_rows` rows (0: automatic, about 2^20
  /// entries per block and at least 1024 rows: 8 MB of doubles, few enough
  /// blocks that the per-block cost of the product stays small; measured in
  /// bench/README.md), O(n p^2) with a symmetric
  /// rank update per block (half the flops of a general product) into one
  /// accumulator; buffers are allocated once. Rows are shifted by the
  /// weighted means of the first block before their products are summed and
  /// the shift is removed at the end (the shifted-data algorithm: with a shift
  /// close to the mean the correction is tiny, so large means do not cancel
  /// the spread; Chan, Golub & LeVeque 1979, section 3).
  template <class Derived>
  static SufficientStatistics from_rows(const Eigen::MatrixBase<Derived>& x, const Vector<Scalar>& y,
                                        const Vector<Scalar>& weights = Vector<Scalar>(),
                                        Index block_rows = 0) {
    if (y.size() != x.rows()) throw invalid_data("response length differs from the design's rows");
    SufficientStatistics s = empty(x.cols());
    Vector<Scalar> sum_x;
    ResponsePass response;
    Vector<Scalar> yb;
    design_pass(x, weights, block_rows, s, sum_x, [&](const auto& xm, const std::vector<Index>& used, const auto& wm) {
      yb.resize(xm.rows());
      for (Index r = 0; r < xm.rows(); ++r) yb(r) = y(used[static_cast<std::size_t>(r)]);
      response.add(xm, yb, wm, weights.size() != 0, s.cross);
    });
    if (s.rows != 0) response.finish(s, sum_x);
    return s;
  }

  /// The design side of from_rows(): checks the weights, then reads x in
  /// blocks of rows of positive weight, shifts them by the weighted means of
  /// the first block, and accumulates rows, weight_sum, minimum, maximum,
  /// the comoments (shift removed) and the means into `s` (empty(p) on
  /// entry); `sum_x` receives sum w (x - shift). After each block,
  /// `block(xm, used, wm)` sees the block's shifted rows (scaled by sqrt(w)
  /// for floating types with weights), the user's indices of its rows and
  /// their weights: what the response side (ResponsePass) needs. Throws
  /// invalid_data for a weight that is negative or not finite
  /// (detail::check_weight, naming its row) and for a design
  /// value that is not finite (naming its row and column).
  template <class Derived, class Block>
  static void design_pass(const Eigen::MatrixBase<Derived>& x, const Vector<Scalar>& weights, Index block_rows,
                          SufficientStatistics& s, Vector<Scalar>& sum_x, Block&& block) {
    if (weights.size() != 0 && weights.size() != x.rows())
      throw invalid_data("weights length differs from the design's rows");
    const Index n = x.rows(), p = x.cols();
    const bool weighted = weights.size() != 0;
    for (Index i = 0; weighted && i < n; ++i) detail::check_weight(weights(i), static_cast<std::size_t>(i));
    block_rows = block_height(n, p, block_rows);
    Matrix<Scalar> xb(block_rows, p);  // shifted (and sqrt(w)-scaled) rows of a block
    Vector<Scalar> wb(block_rows);
    Vector<Scalar> shift = Vector<Scalar>::Zero(p);  // K: weighted means of the first used rows
    sum_x = Vector<Scalar>::Zero(p);                 // sum w (x - K)
    std::vector<Index> used;
    used.reserve(static_cast<std::size_t>(block_rows));
    for (Index start = 0; start < n; start += block_rows) {
      const Index len = std::min(block_rows, n - start);
      used.clear();
      for (Index i = 0; i < len; ++i)
        if (!weighted || weights(start + i) > Scalar(0)) used.push_back(start + i);
      const Index m = static_cast<Index>(used.size());
      if (m == 0) continue;
      gather_block(x, weights, used, start, len, xb, wb);
      auto xm = xb.topRows(m);
      auto wm = wb.head(m);
      add_design_block(s, shift, sum_x, xm, wm, used, weighted);
      block(xm, used, wm);
    }
    remove_design_shift(s, shift, sum_x);
  }

  /// The response side of from_rows(), block by block, in the order the
  /// design pass hands the blocks over: the response is shifted by the
  /// weighted mean of the first block, its sums and sum of squares are
  /// accumulated, and the cross-products with the block's shifted rows are
  /// added to `cross`. finish() removes the shift. Kept apart so that a
  /// design summarized once (PathSolver) meets many responses with the very
  /// operations from_rows() performs: the same statistics to the last bit.
  struct ResponsePass {
    Scalar shift{0};  ///< weighted mean of the first block's responses
    Scalar sum{0};    ///< sum w (y - shift)
    Scalar sum_of_squares{0};  ///< sum w (y - shift)^2
    bool started = false;      ///< the shift is set

    /// Adds one block: `xm` as design_pass() hands it, `ym` the block's
    /// responses (overwritten), `wm` their weights. Throws invalid_data
    /// for a response that is not finite.
    template <class XBlock, class YBlock, class WBlock>
    void add(const XBlock& xm, YBlock& ym, const WBlock& wm, bool weighted, Vector<Scalar>& cross) {
      for (Index r = 0; r < ym.size(); ++r)
        if (!is_finite(ym(r))) throw invalid_data("the response is not finite (NaN or infinite) in a block of rows");
      if (!started) {
        shift = ym.dot(wm) / wm.sum();
        started = true;
      }
      ym.array() -= shift;
      sum += ym.dot(wm);
      for (Index r = 0; r < ym.size(); ++r) sum_of_squares += wm(r) * ym(r) * ym(r);
      if constexpr (std::is_floating_point_v<Scalar>) {
        if (weighted)
          for (Index r = 0; r < ym.size(); ++r) ym(r) *= std::sqrt(wm(r));
        cross.noalias() += xm.transpose() * ym;
      } else {
        for (Index j = 0; j < xm.cols(); ++j) {
          Scalar acc(0);
          for (Index r = 0; r < ym.size(); ++r) acc += wm(r) * xm(r, j) * ym(r);
          cross(j) += acc;
        }
      }
    }
    /// Removes the shift from the cross-products and sets the response's
    /// mean and comoment in `s` (whose design side is complete; `sum_x` as
    /// design_pass() returned it).
    void finish(SufficientStatistics& s, const Vector<Scalar>& sum_x) const {
      const Scalar wsum = s.weight_sum;
      for (Index j = 0; j < s.predictors(); ++j) s.cross(j) -= sum_x(j) * sum / wsum;
      s.response_comoment = sum_of_squares - sum * sum / wsum;
      s.response_mean = shift + sum / wsum;
    }
  };

  /// Rows per block of from_rows() for `block_rows` asked (0: automatic,
  /// about 2^20 entries per block and at least 1024 rows: 8 MB of doubles,
  /// few enough blocks that the per-block cost of the product stays small;
  /// measured in bench/README.md), at least 1 and at most n.
  static Index block_height(Index n, Index p, Index block_rows) {
    if (block_rows <= 0) block_rows = std::max<Index>(1024, (Index(1) << 20) / std::max<Index>(p, 1));
    return std::max<Index>(1, std::min(block_rows, n));
  }

  /// Statistics with no rows yet.
  static SufficientStatistics empty(Index p) {
    SufficientStatistics s;
    s.means = Vector<Scalar>::Zero(p);
    s.comoments = Matrix<Scalar>::Zero(p, p);
    s.cross = Vector<Scalar>::Zero(p);
    s.minimum = Vector<Scalar>::Zero(p);
    s.maximum = Vector<Scalar>::Zero(p);
    return s;
  }

  /// Adds the statistics of other rows (Chan, Golub & LeVeque 1979).
  void merge(const SufficientStatistics& other) {
    if (other.predictors() != predictors()) throw invalid_data("merging statistics of different widths");
    if (other.weight_sum == Scalar(0)) return;
    if (weight_sum == Scalar(0)) {
      *this = other;
      return;
    }
    const Scalar n = weight_sum + other.weight_sum;
    const Scalar factor = weight_sum * other.weight_sum / n;
    const Vector<Scalar> dx = other.means - means;
    const Scalar dy = other.response_mean - response_mean;
    for (Index j = 0; j < predictors(); ++j)
      for (Index i = 0; i < predictors(); ++i)
        comoments(i, j) += other.comoments(i, j) + factor * dx(i) * dx(j);
    for (Index j = 0; j < predictors(); ++j) cross(j) += other.cross(j) + factor * dx(j) * dy;
    response_comoment += other.response_comoment + factor * dy * dy;
    for (Index j = 0; j < predictors(); ++j) means(j) += dx(j) * other.weight_sum / n;
    response_mean += dy * other.weight_sum / n;
    for (Index j = 0; j < predictors(); ++j) {
      minimum(j) = std::min<Scalar>(minimum(j), other.minimum(j));
      maximum(j) = std::max<Scalar>(maximum(j), other.maximum(j));
    }
    weight_sum = n;
    rows += other.rows;
  }


 private:
  static bool is_finite(const Scalar& v) {
    if constexpr (std::is_floating_point_v<Scalar>) return std::isfinite(v);
    else return true;
  }

  // Copies the used rows of block [start, start + len) of x (and their
  // weights, 1 without weights) into the top rows of xb and wb.
  template <class Derived>
  static void gather_block(const Eigen::MatrixBase<Derived>& x, const Vector<Scalar>& weights,
                           const std::vector<Index>& used, Index start, Index len, Matrix<Scalar>& xb,
                           Vector<Scalar>& wb) {
    const Index m = static_cast<Index>(used.size());
    if (m == len) {
      xb.topRows(m) = x.middleRows(start, m);
      if (weights.size() != 0) wb.head(m) = weights.segment(start, m); else wb.head(m).setOnes();
      return;
    }
    for (Index r = 0; r < m; ++r) wb(r) = weights(used[static_cast<std::size_t>(r)]);
    if constexpr (Derived::IsRowMajor) {
      for (Index r = 0; r < m; ++r) xb.row(r) = x.row(used[static_cast<std::size_t>(r)]);
    } else {
      // Column by column: the block's rows of one column lie together, so a
      // sparse selection of rows (a fold's) reads each column's block once
      // instead of touching every column for every row.
      for (Index j = 0; j < x.cols(); ++j)
        for (Index r = 0; r < m; ++r) xb(r, j) = x(used[static_cast<std::size_t>(r)], j);
    }
  }

  template <class>
  friend class StatisticsAccumulator;

  // One block's share of design_pass(): `xm` holds the block's rows of
  // positive weight (gathered), `wm` their weights, `used` their rows.
  // Checks the values, updates rows, weight_sum, minimum and maximum, sets
  // the shift from the first block, shifts xm, adds sum w (x - shift) to
  // sum_x and the block's comoments to s. xm is left shifted (and
  // root-weighted, for floating types with weights): what ResponsePass reads.
  template <class XBlock, class WBlock>
  static void add_design_block(SufficientStatistics& s, Vector<Scalar>& shift, Vector<Scalar>& sum_x, XBlock& xm,
                               const WBlock& wm, const std::vector<Index>& used, bool weighted) {
    const Index p = xm.cols(), m = xm.rows();
    check_finite(xm, used);
    for (Index j = 0; j < p; ++j) {
      const Scalar lo = xm.col(j).minCoeff(), hi = xm.col(j).maxCoeff();
      s.minimum(j) = s.rows == 0 ? lo : std::min<Scalar>(s.minimum(j), lo);
      s.maximum(j) = s.rows == 0 ? hi : std::max<Scalar>(s.maximum(j), hi);
    }
    if (s.rows == 0) {
      const Scalar wsum = wm.sum();
      for (Index j = 0; j < p; ++j) shift(j) = xm.col(j).dot(wm) / wsum;
    }
    for (Index j = 0; j < p; ++j) xm.col(j).array() -= shift(j);
    s.rows += m;
    s.weight_sum += wm.sum();
    for (Index j = 0; j < p; ++j) sum_x(j) += xm.col(j).dot(wm);
    accumulate_comoments(s, xm, wm, weighted);
  }

  // The end of the design side: C = S - sum_x sum_x^T / W and
  // mean = K + sum_x / W remove the shift K (nothing when no row was used).
  static void remove_design_shift(SufficientStatistics& s, const Vector<Scalar>& shift, const Vector<Scalar>& sum_x) {
    if (s.rows == 0) return;
    const Index p = s.predictors();
    const Scalar wsum = s.weight_sum;
    for (Index j = 0; j < p; ++j)
      for (Index i = j; i < p; ++i) {
        s.comoments(i, j) -= sum_x(i) * sum_x(j) / wsum;
        s.comoments(j, i) = s.comoments(i, j);
      }
    for (Index j = 0; j < p; ++j) s.means(j) = shift(j) + sum_x(j) / wsum;
  }

  // A NaN or infinite design value is reported as such, with its place
  // (the Gram preparation would otherwise see only non-finite sums).
  template <class XBlock>
  static void check_finite(const XBlock& xm, const std::vector<Index>& used) {
    if constexpr (std::is_floating_point_v<Scalar>) {
      if (xm.allFinite()) return;
      for (Index j = 0; j < xm.cols(); ++j)
        for (Index r = 0; r < xm.rows(); ++r)
          if (!std::isfinite(xm(r, j))) {
            const auto row = static_cast<std::size_t>(used[static_cast<std::size_t>(r)]);
            throw invalid_data::at_row(row, "the design value is not finite", static_cast<std::size_t>(j));
          }
    }
  }

  // S += sum_r w_r x_r x_r^T over the block's shifted rows (lower triangle
  // for floating types, by a symmetric rank update of the sqrt(w)-scaled rows).
  template <class XBlock, class WBlock>
  static void accumulate_comoments(SufficientStatistics& s, XBlock& xm, const WBlock& wm, bool weighted) {
    const Index p = xm.cols();
    if constexpr (std::is_floating_point_v<Scalar>) {
      if (weighted)
        for (Index r = 0; r < xm.rows(); ++r) xm.row(r) *= std::sqrt(wm(r));
      s.comoments.template selfadjointView<Eigen::Lower>().rankUpdate(xm.transpose());
    } else {
      for (Index j = 0; j < p; ++j)
        for (Index i = j; i < p; ++i) {
          Scalar acc(0);
          for (Index r = 0; r < xm.rows(); ++r) acc += wm(r) * xm(r, i) * xm(r, j);
          s.comoments(i, j) += acc;
        }
    }
  }
};

/// Sufficient statistics of rows handed over in pieces of any size: a
/// table read a block at a time, rows arriving from a stream, a file larger
/// than memory. The streamed form of SufficientStatistics::from_rows().
///
/// Rows are collected into blocks of a fixed height, block_height(p,
/// block_rows), which does not depend on the number of rows, and each full
/// block is summarised by the very operations from_rows() applies to its
/// blocks (SufficientStatistics::add_design_block and ResponsePass), so
/// finish() returns from_rows() of all the rows, bit for bit, however the
/// rows were cut into pieces. Memory: one block and the p x p comoments,
/// O(height p + p^2), whatever the number of rows.
///
/// Checks: the rows of each add() as trace() checks all of its rows
/// (detail::check_finite_values: a response or design value that is not
/// finite, a weight that is negative or not finite, invalid_data::at_row
/// with the row's index counted from the first row ever added), and at
/// finish() the magnitudes trace() refuses (detail::DataMagnitudes, the
/// same messages) and the data with no rows. With two faults in different
/// add() calls the stream names the earlier call's, which trace() of all
/// the rows may not (it checks every response before any design value).
///
/// Usage:
///     StatisticsAccumulator<double> acc(p, false);
///     while (read_block(x_block, y_block)) acc.add(x_block, y_block);
///     Path<double> path = trace_statistics(acc.finish(), options);
/// Not thread-safe: one accumulator per stream; statistics of streams read
/// in parallel combine with SufficientStatistics::merge (in a fixed order
/// for reproducible bits).
template <class Scalar>
class StatisticsAccumulator {
 public:
  using Statistics = SufficientStatistics<Scalar>;  ///< the statistics it accumulates

  /// Rows per block for `p` predictors: from_rows()'s automatic height
  /// (about 2^20 entries, at least 1024 rows) for block_rows = 0, else
  /// block_rows. A table of n rows traced in memory uses min(this, n), the
  /// same blocks.
  static Index block_height(Index p, Index block_rows = 0) {
    return Statistics::block_height(std::numeric_limits<Index>::max(), p, block_rows);
  }

  /// An accumulator of rows with `predictors` columns; `weighted`: every
  /// add() gives one weight per row (else every row weighs 1).
  StatisticsAccumulator(Index predictors, bool weighted, Index block_rows = 0)
      : weighted_(weighted),
        height_(block_height(predictors, block_rows)),
        statistics_(Statistics::empty(predictors)),
        shift_(Vector<Scalar>::Zero(predictors)),
        sum_x_(Vector<Scalar>::Zero(predictors)),
        xb_(height_, predictors),
        yb_(height_),
        wb_(height_),
        magnitudes_(predictors) {
    if (predictors < 0) throw invalid_data("a negative number of predictors");
    used_.reserve(static_cast<std::size_t>(height_));
  }

  /// Number of predictors.
  Index predictors() const noexcept { return statistics_.predictors(); }
  /// Rows added so far (weight-0 rows included).
  Index rows_added() const noexcept { return added_; }

  /// Adds the rows of x (m x p) with responses y (m) and, for a weighted
  /// accumulator, weights w (m; empty otherwise). Throws invalid_data for
  /// sizes that disagree and for a bad value (naming its row), and
  /// invalid_query after finish().
  template <class Derived>
  void add(const Eigen::MatrixBase<Derived>& x, const Vector<Scalar>& y, const Vector<Scalar>& w = Vector<Scalar>()) {
    if (finished_) throw invalid_query("rows added to statistics already finished");
    if (x.cols() != predictors())
      throw invalid_data("rows of " + std::to_string(x.cols()) + " predictors added to statistics of " +
                         std::to_string(predictors()));
    if (y.size() != x.rows())
      throw invalid_data("the response has " + std::to_string(y.size()) + " values but the rows added are " +
                         std::to_string(x.rows()));
    if (w.size() != (weighted_ ? x.rows() : 0))
      throw invalid_data(weighted_ ? "weighted statistics need one weight per row added"
                                   : "weights given to statistics made without weights");
    detail::check_finite_values(x, y, w, static_cast<std::size_t>(added_));
    magnitudes_.note(x, y, w);
    // Whole runs of rows into the block (the same values, row for row, as
    // copying them one at a time: the blocks and their sums do not change).
    for (Index i = 0; i < x.rows();) {
      const Index take = std::min(height_ - filled_, x.rows() - i);
      xb_.middleRows(filled_, take) = x.middleRows(i, take);
      yb_.segment(filled_, take) = y.segment(i, take);
      if (weighted_)
        wb_.segment(filled_, take) = w.segment(i, take);
      else
        wb_.segment(filled_, take).setOnes();
      i += take;
      added_ += take;
      filled_ += take;
      if (filled_ == height_) summarise_block();
    }
  }

  /// Counts `count` rows of weight 0 without their values (a weighted
  /// accumulator only): the blocks keep the boundaries they would have had
  /// had those rows been added with weight 0, so the statistics stay bit
  /// for bit those of from_rows() on every row with the skipped ones
  /// weighing 0 (the per-fold parts of a streamed cross-validation,
  /// FoldStatisticsAccumulator). O(count / block height). Throws
  /// invalid_query for an unweighted accumulator or after finish().
  void skip(Index count) {
    if (finished_) throw invalid_query("rows skipped in statistics already finished");
    if (!weighted_) throw invalid_query("only weighted statistics can skip rows (as rows of weight 0)");
    while (count > 0) {
      const Index take = std::min(height_ - filled_, count);
      wb_.segment(filled_, take).setZero();
      filled_ += take;
      added_ += take;
      count -= take;
      if (filled_ == height_) summarise_block();
    }
  }

  /// The statistics of every row added. Summarises the last, partial block,
  /// removes the shifts and checks the magnitudes; the accumulator takes no
  /// rows after it. Throws invalid_data for no rows, or values whose squares
  /// would overflow or underflow (as trace() does).
  Statistics finish() {
    finish_sums();
    magnitudes_.check(weighted_);
    return std::move(statistics_);
  }

  /// finish() without the magnitude checks, for rows that are part of a
  /// whole whose own accumulator makes them (a fold's part: a column whose
  /// largest value on the fold's rows is tiny is not refused when the
  /// whole column is not). Throws invalid_data for no rows and
  /// invalid_query after finish().
  Statistics finish_part_of_checked_whole() {
    finish_sums();
    return std::move(statistics_);
  }

 private:
  // The sums of finish(): the last, partial block summarised, the shifts
  // removed; the accumulator takes no rows after it.
  void finish_sums() {
    if (finished_) throw invalid_query("statistics already finished");
    finished_ = true;
    if (added_ == 0) throw invalid_data("the data have no rows");
    if (filled_ > 0) summarise_block();
    Statistics::remove_design_shift(statistics_, shift_, sum_x_);
    if (statistics_.rows != 0) response_.finish(statistics_, sum_x_);
  }

  // The block's rows of positive weight, moved up in place (as from_rows()
  // gathers them), then summarised by the design side and the response side.
  void summarise_block() {
    used_.clear();
    for (Index i = 0; i < filled_; ++i)
      if (!weighted_ || wb_(i) > Scalar(0)) used_.push_back(block_start_ + i);
    const Index m = static_cast<Index>(used_.size());
    if (m < filled_)
      for (Index r = 0; r < m; ++r) {
        const Index from = used_[static_cast<std::size_t>(r)] - block_start_;
        if (from == r) continue;
        xb_.row(r) = xb_.row(from);
        yb_(r) = yb_(from);
        wb_(r) = wb_(from);
      }
    if (m > 0) {
      auto xm = xb_.topRows(m);
      auto wm = wb_.head(m);
      auto ym = yb_.head(m);
      Statistics::add_design_block(statistics_, shift_, sum_x_, xm, wm, used_, weighted_);
      response_.add(xm, ym, wm, weighted_, statistics_.cross);
    }
    block_start_ += filled_;
    filled_ = 0;
  }

  bool weighted_;
  Index height_;
  Statistics statistics_;                      // design and response sides, shifts not yet removed
  typename Statistics::ResponsePass response_;
  Vector<Scalar> shift_, sum_x_;               // the design side's shift and sum w (x - shift)
  Matrix<Scalar> xb_;                          // height x p: the block being filled
  Vector<Scalar> yb_, wb_;
  std::vector<Index> used_;                    // rows of positive weight of the block
  Index filled_ = 0;                           // rows in the block
  Index block_start_ = 0;                      // row index of the block's first row
  Index added_ = 0;                            // rows added
  bool finished_ = false;
  detail::DataMagnitudes<Scalar> magnitudes_;  // what finish() checks (check_magnitude)
};

}  // namespace knotpath
