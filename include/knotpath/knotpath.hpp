#pragma once
/// \file knotpath.hpp
/// \brief Umbrella header: everything a user of the core needs.
///
/// \code
/// #include <knotpath/knotpath.hpp>
/// knotpath::Path<double> path = knotpath::trace<double>(X, y);
/// auto at = path.at_penalty(0.5 * path.lambda_max());
/// \endcode

#include "demo.hpp"
#include "design/concept.hpp"
#include "design/dense.hpp"
#include "design/dense_view.hpp"
#include "design/gram.hpp"
#include "design/sparse.hpp"
#include "errors.hpp"
#include "factor.hpp"
#include "options.hpp"
#include "path.hpp"
#include "prepare.hpp"
#include "trace.hpp"
