#pragma once
/// \file core.hpp
/// \brief The light front door: trace a path and query it (options, errors,
/// knots, the path, the tracing front ends for dense, sparse and summarized
/// data, and PathSolver, which prepares a design once for many responses). No Boost.Multiprecision, selection or inference: those live in
/// their own headers (precision.hpp, cross_validation.hpp, criteria.hpp,
/// inference.hpp), and knotpath.hpp includes everything.
///
/// \code
/// #include <knotpath/core.hpp>
/// knotpath::Path<double> path = knotpath::trace<double>(X, y);
/// auto at = path.at_penalty(0.5 * path.lambda_max());
/// \endcode

#include "errors.hpp"
#include "knot.hpp"
#include "options.hpp"
#include "path.hpp"
#include "solver.hpp"
#include "trace.hpp"
