// Determinism: the same input gives byte-identical knot tables and JSON
// documents, run after run, and whatever thread count the environment asks
// for. knotpath links no OpenMP and starts no worker threads in the core
// (the program's only extra thread draws the progress line on a terminal),
// so Eigen runs single-threaded (Eigen::nbThreads() == 1) and the
// OMP_NUM_THREADS / EIGEN thread settings cannot change the arithmetic; the
// test checks both facts rather than assuming them. The JSON document names
// its source file, so runs are compared on the same file name.

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

#include <knotpath/io/report.hpp>
#include <knotpath/knotpath.hpp>

#include "test_support.hpp"

namespace {

namespace fs = std::filesystem;
namespace kp = knotpath;

std::string slurp(const fs::path& file) {
  std::ifstream in(file, std::ios::binary);
  std::stringstream s;
  s << in.rdbuf();
  return s.str();
}

class Determinism : public ::testing::Test {
 protected:
  void SetUp() override {
    dir_ = fs::temp_directory_path() / fmt::format("knotpath-determinism-{}", ::getpid());
    fs::remove_all(dir_);
    fs::create_directories(dir_);
  }
  void TearDown() override {
    if (!HasFailure()) fs::remove_all(dir_);
  }
  // Runs trace on t.csv with an environment prefix; returns knots + JSON bytes.
  std::pair<std::string, std::string> run(const std::string& environment, const std::string& options) {
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
  fs::path dir_;
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
    const auto first = run("", options);
    ASSERT_FALSE(first.first.empty());
    ASSERT_FALSE(first.second.empty());
    EXPECT_EQ(run("", options), first) << "second run differs";
    EXPECT_EQ(run("OMP_NUM_THREADS=1 EIGEN_NUM_THREADS=1", options), first) << "1 thread differs";
    EXPECT_EQ(run("OMP_NUM_THREADS=2 EIGEN_NUM_THREADS=2", options), first) << "2 threads differ";
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
