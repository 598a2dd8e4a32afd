#pragma once
/// \file design/concept.hpp
/// \brief The narrow interface between the homotopy and the storage of the
/// (prepared: centred, scaled, weighted) design.
///
/// The tracer never touches the matrix itself. It asks a design operator for
///  - sizes: rows(), cols();
///  - the response side: response_correlations(c) = Z^T y, response_squared_norm() = y^T y;
///  - Gram entries: squared_norm(j) = z_j^T z_j and cross_products(j, A, out)
///    with out(i) = z_{A_i}^T z_j (what the factor needs to add column j);
///    `out` is an Eigen::Ref of length |A| that the caller owns;
///  - one product per knot: direction_correlations(A, d, a) with a = Z^T (Z_A d),
///    `d` an Eigen::Ref of length |A| and `a` of length q (never resized).
/// None of these may allocate per call after construction (the hot loop
/// allocates nothing per knot beyond the knot's own record).
/// Dense, sparse and sufficient-statistics (Gram) designs implement these
/// without the homotopy changing.

#include <concepts>
#include <span>
#include <utility>
#include <vector>

#include "../detail/scalar.hpp"

namespace knotpath {

/// A design operator over prepared columns z_0..z_{q-1} and a prepared response y.
template <class D>
concept DesignOperator = requires(const D& design, Index j, std::span<const Index> active,
                                  const Vector<typename D::Scalar>& coefficients,
                                  Vector<typename D::Scalar>& out) {
  typename D::Scalar;
  { design.rows() } -> std::convertible_to<Index>;
  { design.cols() } -> std::convertible_to<Index>;
  { design.squared_norm(j) } -> std::convertible_to<typename D::Scalar>;
  { design.response_squared_norm() } -> std::convertible_to<typename D::Scalar>;
  design.response_correlations(out);
  design.cross_products(j, active, out);
  design.direction_correlations(active, coefficients, out);
};

/// A design operator whose columns are spread over the processes of a job
/// (mpi_columns.hpp), each process holding a contiguous block of them. The
/// homotopy runs on every process with the same replicated state (active
/// set, factor, coefficients) and needs, beyond DesignOperator:
///  - own_columns(): the prepared columns [begin, end) this process holds;
///    the direction correlations a_j and the correlations c_j it is asked
///    about are current only there and on the active set;
///  - largest_everywhere(x) / smallest_everywhere(x): x reduced over the
///    processes (exact: a maximum or minimum rounds nothing);
///  - gather_everywhere(bytes): every process's bytes, concatenated in
///    process order, on every process.
/// Each is collective: every process calls it at the same point of the
/// trace, which the replicated state guarantees. A design without these
/// members is traced as one process holding every column.
template <class D>
concept SharedColumnDesign =
    DesignOperator<D> && requires(const D& design, const typename D::Scalar& x, const std::vector<char>& bytes) {
      { design.own_columns() } -> std::convertible_to<std::pair<Index, Index>>;
      { design.largest_everywhere(x) } -> std::convertible_to<typename D::Scalar>;
      { design.smallest_everywhere(x) } -> std::convertible_to<typename D::Scalar>;
      { design.gather_everywhere(bytes) } -> std::convertible_to<std::vector<char>>;
    };

}  // namespace knotpath
