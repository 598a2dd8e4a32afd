#pragma once
// Checks of a traced path before anything is written (internals of the
// knotpath program): every value finite, and the exit status when the
// homotopy's safety bound on steps stopped a path.

#include <cmath>
#include <string>

#include <fmt/format.h>

#include "cli.hpp"

namespace knotpath::cli {

/// Refuses a path with a value that is not finite, with exit_numerical (a
/// numerical failure the library should never produce; checked so that it
/// can never be written). Exact paths are always finite.
template <class Scalar>
void require_finite_path(const Path<Scalar>& path) {
  if constexpr (!detail::is_exact_v<Scalar>) {
    auto finite = [](const Scalar& v) { return std::isfinite(detail::to_double(v)); };
    for (const auto& knot : path.knots()) {
      bool ok = finite(knot.penalty) && finite(knot.penalized_l1) && finite(knot.intercept) &&
                finite(knot.rss);
      for (const auto& [j, value] : knot.coefficients) ok = ok && finite(value);
      if (!ok)
        throw failure(
            exit_numerical,
            fmt::format("numerical trouble: knot {} holds a value that is not finite", knot.step));
    }
  }
}

/// Exit status of a finished run: exit_numerical, with a message on stderr
/// naming `which` ("the path", "a path") as incomplete, when the safety bound
/// on steps stopped a path (`hit`); else exit_ok.
int step_limit_status(bool hit, const std::string& which);

/// Exit status of a finished trace (step_limit_status of its one path).
template <class Scalar>
int finished_status(const Path<Scalar>& path) {
  return step_limit_status(path.stop_reason() == StopReason::step_limit, "the path");
}

}  // namespace knotpath::cli
