// The C++ side of bench/bench_python.py (issue 21): traces a design read
// from a raw file of column-major doubles (x, then y) with the options the
// Python side uses, and prints the median wall time of the trace and the
// knot count. Usage: bench_python_reference FILE n p K repeats
// (K = TraceOptions::max_knots; storage view, what automatic picks for a
// large wide design, so that neither side copies X).

#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <vector>

#include <knotpath/core.hpp>

#include "timing.hpp"

namespace kp = knotpath;

int main(int argc, char** argv) {
  if (argc != 6) {
    std::fprintf(stderr, "usage: %s FILE n p K repeats\n", argv[0]);
    return 2;
  }
  const kp::Index n = std::atol(argv[2]), p = std::atol(argv[3]);
  const int repeats = std::atoi(argv[5]);
  kp::Matrix<double> x(n, p);
  kp::Vector<double> y(n);
  std::ifstream in(argv[1], std::ios::binary);
  in.read(reinterpret_cast<char*>(x.data()),
          static_cast<std::streamsize>(sizeof(double) * x.size()));
  in.read(reinterpret_cast<char*>(y.data()),
          static_cast<std::streamsize>(sizeof(double) * y.size()));
  if (!in) {
    std::fprintf(stderr, "cannot read %ld x %ld doubles and the response from %s\n",
                 static_cast<long>(n), static_cast<long>(p), argv[1]);
    return 2;
  }
  kp::TraceOptions options;
  options.storage = kp::Storage::view;
  options.max_knots = static_cast<std::size_t>(std::atol(argv[4]));
  std::vector<double> times;
  std::size_t knots = 0;
  for (int r = 0; r < repeats; ++r)
    times.push_back(
        knotpath::bench::seconds([&] { knots = kp::trace<double>(x, y, options).knots().size(); }));
  std::printf("%.9f %zu\n", knotpath::bench::median(times), knots);
  return 0;
}
