// Determinism: the same input gives byte-identical knot tables and JSON
// documents, run after run, and whatever thread count is asked for.
// knotpath links no OpenMP, so Eigen runs single-threaded
// (Eigen::nbThreads() == 1) and the OMP_NUM_THREADS / EIGEN thread settings
// cannot change the arithmetic; the test checks that rather than assuming
// it. knotpath's own threads (TraceOptions::threads, `--threads`) split the
// one product per knot into column blocks of fixed width, so 1, 2 or 3
// threads must give bitwise the same path: checked below on designs large
// enough that the threads really start (detail::parallel_threshold). The
// JSON document names its source file, so runs are compared on the same
// file name.

#include <sys/wait.h>
#include <unistd.h>

#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>

#include <fmt/format.h>
#include <gtest/gtest.h>

#include <knotpath/detail/parallel.hpp>
#include <knotpath/io/report.hpp>
#include <knotpath/knotpath.hpp>

#include "cli_runner.hpp"
#include "test_support.hpp"

namespace {

using knotpath::testing::slurp;

namespace fs = std::filesystem;
namespace kp = knotpath;

class Determinism : public knotpath::testing::ProgramTest {
 protected:
  Determinism() : ProgramTest("determinism") {}

  // Runs trace on t.csv with an environment prefix; returns knots + JSON bytes.
  std::pair<std::string, std::string> trace_bytes(const std::string& environment, const std::string& options) {
    const std::string command =
        fmt::format("cd '{}' && env {} '{}' trace t.csv --response y {} --knots k.csv --json p.json "
                    ">/dev/null 2>&1",
                    dir_.string(), environment, KNOTPATH_CLI_PATH, options);
    const int status = std::system(command.c_str());
    EXPECT_TRUE(WIFEXITED(status) && WEXITSTATUS(status) == 0) << command;
    auto out = std::make_pair(slurp(dir_ / "k.csv"), slurp(dir_ / "p.json"));
    fs::remove(dir_ / "k.csv");
    fs::remove(dir_ / "p.json");
    return out;
  }
};

TEST_F(Determinism, RepeatedRunsAndThreadCountsGiveIdenticalBytes) {
  // Correlated design with duplicates and ties (held-out records, tie order):
  // the paths where an unstable order would show first.
  auto p = kp::testing::ar1_problem(150, 40, 0.9, 31, 8, 1.0);
  p.x.col(7) = p.x.col(3);
  for (kp::Index i = 0; i < p.x.rows(); ++i) p.x(i, 11) = static_cast<double>(i % 3);
  {
    std::ofstream out(dir_ / "t.csv");
    for (const auto& name : p.names) out << name << ',';
    out << "y\n";
    for (kp::Index i = 0; i < p.x.rows(); ++i) {
      for (kp::Index j = 0; j < p.x.cols(); ++j) out << kp::io::round_trip(p.x(i, j)) << ',';
      out << kp::io::round_trip(p.y(i)) << '\n';
    }
  }
  for (const std::string options : {"", "--variant least-angle", "--ridge 0.5 --no-standardize"}) {
    SCOPED_TRACE(options);
    const auto first = trace_bytes("", options);
    ASSERT_FALSE(first.first.empty());
    ASSERT_FALSE(first.second.empty());
    EXPECT_EQ(trace_bytes("", options), first) << "second run differs";
    EXPECT_EQ(trace_bytes("OMP_NUM_THREADS=1 EIGEN_NUM_THREADS=1", options), first) << "1 thread differs";
    EXPECT_EQ(trace_bytes("OMP_NUM_THREADS=2 EIGEN_NUM_THREADS=2", options), first) << "2 threads differ";
  }
}

// Every knot's penalty, entering predictor and coefficients, bit for bit.
void expect_identical(const kp::Path<double>& a, const kp::Path<double>& b) {
  ASSERT_EQ(a.knots().size(), b.knots().size());
  for (std::size_t k = 0; k < a.knots().size(); ++k) {
    const auto& ka = a.knots()[k];
    const auto& kb = b.knots()[k];
    EXPECT_EQ(std::memcmp(&ka.penalty, &kb.penalty, sizeof(double)), 0) << k;
    EXPECT_EQ(ka.predictor, kb.predictor);
    ASSERT_EQ(ka.coefficients.size(), kb.coefficients.size());
    for (std::size_t i = 0; i < ka.coefficients.size(); ++i) {
      EXPECT_EQ(ka.coefficients[i].first, kb.coefficients[i].first);
      EXPECT_EQ(std::memcmp(&ka.coefficients[i].second, &kb.coefficients[i].second, sizeof(double)), 0)
          << "knot " << k << " coefficient " << i;
    }
  }
}

TEST_F(Determinism, ThreadsOptionGivesIdenticalBytes) {
  // 60 x 5000 (300000 entries, above the threshold at which threads start):
  // a wide design, traced through the program with 1, 2 and all threads.
  const kp::Index n = 60, p = 5000;
  ASSERT_GE(static_cast<double>(n * p), kp::detail::parallel_threshold);
  auto prob = kp::testing::ar1_problem(n, p, 0.5, 77, 6, 0.5);
  {
    std::ofstream out(dir_ / "t.csv");
    for (const auto& name : prob.names) out << name << ',';
    out << "y\n";
    for (kp::Index i = 0; i < n; ++i) {
      for (kp::Index j = 0; j < p; ++j) out << kp::io::round_trip(prob.x(i, j)) << ',';
      out << kp::io::round_trip(prob.y(i)) << '\n';
    }
  }
  const auto first = trace_bytes("", "--threads 1 --max-knots 40");
  ASSERT_FALSE(first.first.empty());
  EXPECT_EQ(trace_bytes("", "--threads 2 --max-knots 40"), first) << "--threads 2 differs from --threads 1";
  EXPECT_EQ(trace_bytes("", "--threads 0 --max-knots 40"), first) << "--threads 0 (all cores) differs";
}

TEST(DeterminismLibrary, ThreadCountDoesNotChangeAnyBitInEveryStorage) {
  // Copy, view and sparse designs split their product per knot over threads.
  const kp::Index n = 90, p = 3200;
  ASSERT_GE(static_cast<double>(n * p), kp::detail::parallel_threshold);
  auto prob = kp::testing::ar1_problem(n, p, 0.7, 5, 8, 0.5);
  kp::Vector<double> w(n);
  for (kp::Index i = 0; i < n; ++i) w(i) = 0.5 + static_cast<double>(i % 4);
  for (kp::Storage s : {kp::Storage::dense, kp::Storage::view}) {
    SCOPED_TRACE(static_cast<int>(s));
    kp::TraceOptions o;
    o.storage = s;
    o.max_knots = 60;
    const auto one = kp::trace<double>(prob.x, prob.y, o, w);
    ASSERT_GT(one.knots().size(), 30u);
    for (std::size_t threads : {2u, 3u}) {
      o.threads = threads;
      expect_identical(one, kp::trace<double>(prob.x, prob.y, o, w));
    }
  }
  // Sparse: about 40% stored entries; the threshold counts stored entries.
  auto tall = kp::testing::ar1_problem(240, p, 0.7, 6, 8, 0.5);
  for (kp::Index j = 0; j < p; ++j)
    for (kp::Index i = 0; i < tall.x.rows(); ++i)
      if ((i * 7 + j * 3) % 10 >= 4) tall.x(i, j) = 0.0;
  const kp::SparseMatrix<double> sparse = tall.x.sparseView();
  ASSERT_GE(static_cast<double>(sparse.nonZeros()), kp::detail::parallel_threshold);
  kp::Vector<double> ws(tall.x.rows());
  for (kp::Index i = 0; i < ws.size(); ++i) ws(i) = 0.5 + static_cast<double>(i % 3);
  kp::TraceOptions o;
  o.max_knots = 60;
  const auto one = kp::trace_sparse<double>(sparse, tall.y, o, ws);
  ASSERT_GT(one.knots().size(), 30u);
  for (std::size_t threads : {2u, 3u}) {
    o.threads = threads;
    expect_identical(one, kp::trace_sparse<double>(sparse, tall.y, o, ws));
  }
}

TEST(DeterminismLibrary, SameInputGivesBitIdenticalKnotsInEveryStorage) {
  EXPECT_EQ(Eigen::nbThreads(), 1) << "Eigen would run in parallel: OpenMP got linked";
  auto p = kp::testing::ar1_problem(120, 30, 0.95, 8);
  for (kp::Storage s : {kp::Storage::dense, kp::Storage::gram}) {
    kp::TraceOptions o;
    o.storage = s;
    const auto a = kp::trace<double>(p.x, p.y, o);
    const auto b = kp::trace<double>(p.x, p.y, o);
    ASSERT_EQ(a.knots().size(), b.knots().size());
    for (std::size_t k = 0; k < a.knots().size(); ++k) {
      const auto& ka = a.knots()[k];
      const auto& kb = b.knots()[k];
      EXPECT_EQ(std::memcmp(&ka.penalty, &kb.penalty, sizeof(double)), 0) << k;
      EXPECT_EQ(ka.predictor, kb.predictor);
      ASSERT_EQ(ka.coefficients.size(), kb.coefficients.size());
      for (std::size_t i = 0; i < ka.coefficients.size(); ++i)
        EXPECT_EQ(std::memcmp(&ka.coefficients[i].second, &kb.coefficients[i].second, sizeof(double)), 0);
    }
  }
}

}  // namespace
