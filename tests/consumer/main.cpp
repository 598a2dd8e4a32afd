// Uses the installed header-only core: trace the demo data, query it, and
// check the version header. Built with KNOTPATH_CONSUMER_CORE_ONLY it is the
// consumer of find_package(knotpath) without components: the umbrella header
// must compile and link with neither GMP nor MPFR (exact rationals then come
// from Boost's header-only cpp_rational).
#include <cstdio>
#include <cstring>
#include <type_traits>

#include <knotpath/knotpath.hpp>
#include <knotpath/version.hpp>

#ifdef KNOTPATH_CONSUMER_CORE_ONLY
#if defined(KNOTPATH_HAVE_GMP) || defined(KNOTPATH_HAVE_MPFR)
#error "knotpath::knotpath alone must not turn on GMP or MPFR"
#endif
static_assert(std::is_same_v<knotpath::rational, boost::multiprecision::cpp_rational>);
#endif

int main() {
  const auto data = knotpath::demo::greenhouse();
  const knotpath::Path<double> path = knotpath::trace<double>(data.x, data.y);
  const auto half = path.at_relative_budget(0.5);
  std::printf("knotpath %s: %zu knots, %zu active at half the final L1 norm\n", knotpath::version_string,
              path.knots().size(), path.active_at(half.penalty).size());
  return path.knots().size() > 2 && std::strlen(knotpath::version_string) > 0 ? 0 : 1;
}
