// Uses the installed table reader across the compiled library's boundary:
// the reader hands plain buffers over and this program's own Eigen (built
// with this program's flags: -march=native or the sanitizers in
// tools/install-and-consume.sh) builds and frees the matrices. The columns
// are chosen by roles (io/roles.hpp), the rule the knotpath program uses.
#include <cstdio>
#include <sstream>
#include <string>
#include <vector>

#include <knotpath/io/roles.hpp>
#include <knotpath/io/table.hpp>
#include <knotpath/knotpath.hpp>

int main() {
  std::istringstream text(
      "y,a,site,b,w,c\n1,2,north,3,1,9\n2,4,south,1,2,8\n3,5,north,7,1,7\n"
      "5,1,east,2,0.5,6\n8,0,west,4,1,5\n");
  knotpath::io::ColumnRoles roles;
  roles.response = "y";
  roles.weights = "w";
  roles.drop = {"c"};
  knotpath::io::Table table = knotpath::io::read_table(text, "<consumer>", roles.read_options());
  const knotpath::io::TableSplit data = knotpath::io::split_table(table, roles);
  const knotpath::Path<double> path = knotpath::trace<double>(data.x, data.y, {}, data.weights);
  std::printf("%zu knots from a %ld x %ld table (predictors %s, %s)\n", path.knots().size(),
              static_cast<long>(data.x.rows()), static_cast<long>(data.x.cols()),
              data.names.at(0).c_str(), data.names.at(1).c_str());
  const bool split_right = data.x.rows() == 5 && data.x.cols() == 2 && data.x(4, 1) == 4.0 &&
                           data.names == std::vector<std::string>{"a", "b"} &&
                           data.weights.size() == 5 && data.weights(3) == 0.5 && data.y(4) == 8.0;
  return split_right && path.knots().size() >= 3 ? 0 : 1;
}
