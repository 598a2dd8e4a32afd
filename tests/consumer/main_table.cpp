// Uses the installed table reader across the compiled library's boundary:
// the reader hands plain buffers over and this program's own Eigen (built
// with this program's flags: -march=native or the sanitizers in
// tools/install-and-consume.sh) builds and frees the matrix.
#include <cstdio>
#include <sstream>

#include <knotpath/io/table.hpp>
#include <knotpath/knotpath.hpp>

int main() {
  std::istringstream text("y,a,b\n1,2,3\n2,4,1\n3,5,7\n5,1,2\n8,0,4\n");
  knotpath::io::Table table = knotpath::io::read_table(text, "<consumer>");
  const knotpath::Vector<double> y = table.column_vector(table.find("y"));
  const knotpath::Matrix<double> x = table.take_matrix({table.find("a"), table.find("b")});
  const knotpath::Path<double> path = knotpath::trace<double>(x, y);
  std::printf("%zu knots from a %ld x %ld table\n", path.knots().size(), static_cast<long>(x.rows()),
              static_cast<long>(x.cols()));
  return x.rows() == 5 && x.cols() == 2 && x(4, 1) == 4.0 && path.knots().size() >= 3 ? 0 : 1;
}
