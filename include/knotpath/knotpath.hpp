#pragma once
/// \file knotpath.hpp
/// \brief Umbrella header: the whole public API of the core (options, trace,
/// the path and its queries, selection, inference, precision, demo data;
/// the advanced headers too: prepared problems, design operators, the
/// active-set factor and the homotopy class). A file that only traces and
/// queries compiles faster with core.hpp.
///
/// \code
/// #include <knotpath/knotpath.hpp>
/// knotpath::Path<double> path = knotpath::trace<double>(X, y);
/// auto at = path.at_penalty(0.5 * path.lambda_max());
/// \endcode

#include "adjusted_inference.hpp"
#include "core.hpp"
#include "criteria.hpp"
#include "cross_validation.hpp"
#include "demo.hpp"
#include "design/concept.hpp"
#include "design/dense.hpp"
#include "design/dense_view.hpp"
#include "design/gram.hpp"
#include "design/sparse.hpp"
#include "errors.hpp"
#include "factor.hpp"
#include "first_step_t.hpp"
#include "homotopy.hpp"
#include "inference.hpp"
#include "knot.hpp"
#include "options.hpp"
#include "path.hpp"
#include "precision.hpp"
#include "prepare.hpp"
#include "problem.hpp"
#include "scaling.hpp"
#include "solver.hpp"
#include "statistics.hpp"
#include "trace.hpp"
