// Uses the installed header-only core: trace the demo data, query it, and
// check the version header.
#include <cstdio>
#include <cstring>

#include <knotpath/knotpath.hpp>
#include <knotpath/version.hpp>

int main() {
  const auto data = knotpath::demo::greenhouse();
  const knotpath::Path<double> path = knotpath::trace<double>(data.x, data.y);
  const auto half = path.at_fraction(0.5);
  std::printf("knotpath %s: %zu knots, %zu active at half the final L1 norm\n", knotpath::version_string,
              path.knots().size(), path.active_at(half.penalty).size());
  return path.knots().size() > 2 && std::strlen(knotpath::version_string) > 0 ? 0 : 1;
}
