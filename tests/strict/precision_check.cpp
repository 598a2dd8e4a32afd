// Instantiates the precision cross-check (50 digits) and an exact rational
// trace, for the strict-warnings check (tools/strict-headers.sh): with
// KNOTPATH_HAVE_GMP the rational is GMP's, else Boost's header-only one.
// Never run: compiling it is the test.
#include <knotpath/core.hpp>
#include <knotpath/demo.hpp>
#include <knotpath/precision.hpp>

int main() {
  const auto data = knotpath::demo::greenhouse();
  const auto check = knotpath::cross_check<knotpath::float50>(data.x, data.y);
  knotpath::TraceOptions exact;
  exact.standardize = false;
  const knotpath::Matrix<knotpath::rational> x = data.x.cast<knotpath::rational>();
  const knotpath::Vector<knotpath::rational> y = data.y.cast<knotpath::rational>();
  const knotpath::Path<knotpath::rational> exact_path = knotpath::trace<knotpath::rational>(x, y, exact);
  const double total = check.max_coefficient_difference + static_cast<double>(exact_path.knots().size());
  return total != total ? 1 : 0;
}
