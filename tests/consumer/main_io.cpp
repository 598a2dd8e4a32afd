// Uses the installed compiled extras: write the knot table of the demo path.
#include <cstdio>
#include <sstream>

#include <knotpath/io/report.hpp>
#include <knotpath/knotpath.hpp>

int main() {
  const auto data = knotpath::demo::greenhouse();
  const knotpath::Path<double> path = knotpath::trace<double>(data.x, data.y);
  std::ostringstream out;
  knotpath::io::write_knot_table(out, path, data.predictor_names);
  std::printf("%zu bytes of knot table\n", out.str().size());
  return out.str().rfind("step,penalty,mu,event", 0) == 0 ? 0 : 1;
}
