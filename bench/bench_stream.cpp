// Tables larger than memory (issue 20, see bench/README.md): the program
// traces a generated table read in blocks (`knotpath trace --read blocks`),
// and the benchmark measures, in the same run, the fastest plain passes over
// the same file it can make: reading its bytes (counting lines), and the
// table reader parsing every cell with nothing done with the values (the
// parse limit). Counters: ratio = parse_s / trace_s (the trace's reading
// speed as a fraction of the parse limit; the goal is >= 0.6), raw_ratio =
// raw_s / trace_s, peak_mb (the program's peak resident memory, from wait4;
// the goal is < 64 MB for 2,000,000 x 50), trace_s, parse_s, raw_s, file_mb.
// Sizes: rows and predictors are the benchmark's arguments; `quick` runs in
// CI only to keep the code compiling and running.
#include <benchmark/benchmark.h>

#include <fcntl.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <stdexcept>
#include <string>
#include <vector>

#include <fmt/format.h>
#include <knotpath/io/table.hpp>

#include "lcg.hpp"
#include "timing.hpp"

namespace {

using knotpath::bench::median;
using knotpath::bench::seconds;

// The table of `rows` x `predictors` (and a response), written once into the
// temporary folder and kept for later runs: uniform values with 6 decimals
// (a fixed-seed 64-bit LCG, Knuth's MMIX constants; common practice), the
// response a sum of the first five predictors plus noise.
std::filesystem::path table_file(long rows, long predictors) {
  const auto path = std::filesystem::temp_directory_path() /
                    fmt::format("knotpath-bench-stream-{}x{}.csv", rows, predictors);
  if (std::filesystem::exists(path)) return path;
  const auto partial = path.string() + ".part";
  std::FILE* out = std::fopen(partial.c_str(), "w");
  if (out == nullptr) throw std::runtime_error("cannot write " + partial);
  knotpath::testing::Lcg lcg(2026);
  auto next = [&] { return lcg.uniform(); };
  std::string line;
  for (long j = 0; j < predictors; ++j) line += fmt::format("x{},", j + 1);
  line += "y\n";
  std::fputs(line.c_str(), out);
  std::vector<double> x(static_cast<std::size_t>(predictors));
  for (long i = 0; i < rows; ++i) {
    line.clear();
    double y = 0;
    for (long j = 0; j < predictors; ++j) {
      x[static_cast<std::size_t>(j)] = next();
      if (j < 5) y += x[static_cast<std::size_t>(j)];
      fmt::format_to(std::back_inserter(line), "{:.6f},", x[static_cast<std::size_t>(j)]);
    }
    fmt::format_to(std::back_inserter(line), "{:.6f}\n", y + 0.1 * next());
    std::fputs(line.c_str(), out);
  }
  std::fclose(out);
  std::filesystem::rename(partial, path);
  return path;
}

// The fastest plain pass over the bytes: read them in 1 MB pieces and count
// the line ends.
long raw_pass(const std::filesystem::path& path) {
  std::FILE* in = std::fopen(path.c_str(), "rb");
  std::vector<char> buffer(1 << 20);
  long lines = 0;
  for (std::size_t got; (got = std::fread(buffer.data(), 1, buffer.size(), in)) > 0;)
    for (const char* at = buffer.data(); (at = static_cast<const char*>(
                                               std::memchr(at, '\n', static_cast<std::size_t>(buffer.data() + got - at)))) !=
                                         nullptr;
         ++at)
      ++lines;
  std::fclose(in);
  return lines;
}

// The table reader's pass with nothing done with the values: the parse limit.
std::size_t parse_pass(const std::filesystem::path& path) {
  std::size_t rows = 0;
  (void)knotpath::io::read_table_blocks(path.string(), {}, 4096, [&](knotpath::io::Table& block) {
    rows += block.rows;
  });
  return rows;
}

// Runs the program; returns its peak resident memory in MB (wait4).
double run_program(const std::vector<std::string>& args) {
  std::vector<char*> argv;
  for (const auto& a : args) argv.push_back(const_cast<char*>(a.c_str()));
  argv.push_back(nullptr);
  const pid_t child = ::fork();
  if (child == 0) {
    const int null = ::open("/dev/null", O_WRONLY);
    if (null >= 0) ::dup2(null, STDOUT_FILENO);
    ::execv(argv[0], argv.data());
    std::_Exit(127);
  }
  int status = 0;
  struct rusage usage {};
  ::wait4(child, &status, 0, &usage);
  if (!WIFEXITED(status) || WEXITSTATUS(status) != 0)
    throw std::runtime_error("knotpath trace failed in the benchmark");
  return static_cast<double>(usage.ru_maxrss) / 1024.0;  // kilobytes on Linux
}

void stream(benchmark::State& state) {
  const long rows = state.range(0), predictors = state.range(1);
  const auto path = table_file(rows, predictors);
  std::vector<double> raw, parse, trace, peak;
  for (auto _ : state) {
    raw.push_back(seconds([&] { benchmark::DoNotOptimize(raw_pass(path)); }));
    parse.push_back(seconds([&] { benchmark::DoNotOptimize(parse_pass(path)); }));
    double mb = 0;
    trace.push_back(seconds([&] {
      mb = run_program({KNOTPATH_CLI_PATH, "--quiet", "trace", path.string(), "--response", "y", "--read", "blocks"});
    }));
    peak.push_back(mb);
  }
  state.counters["raw_s"] = median(raw);
  state.counters["parse_s"] = median(parse);
  state.counters["trace_s"] = median(trace);
  state.counters["ratio"] = median(parse) / median(trace);
  state.counters["raw_ratio"] = median(raw) / median(trace);
  state.counters["peak_mb"] = median(peak);
  state.counters["file_mb"] = static_cast<double>(std::filesystem::file_size(path)) / 1e6;
}

#ifdef KNOTPATH_MPIEXEC
// The table cut into `count` shards of consecutive rows (each with the
// header), written once beside it.
std::vector<std::string> shard_files(const std::filesystem::path& table, std::size_t count) {
  const auto folder = table.parent_path() / (table.stem().string() + fmt::format("-{}-shards", count));
  std::vector<std::string> names;
  for (std::size_t s = 0; s < count; ++s) names.push_back((folder / fmt::format("part{}.csv", s)).string());
  if (std::filesystem::exists(folder)) return names;
  const auto partial = folder.string() + ".part";
  std::filesystem::remove_all(partial);
  std::filesystem::create_directories(partial);
  std::ifstream in(table);
  std::string header, line;
  std::getline(in, header);
  const long lines = raw_pass(table) - 1;
  std::vector<std::ofstream> out;
  for (std::size_t s = 0; s < count; ++s)
    out.emplace_back(std::filesystem::path(partial) / fmt::format("part{}.csv", s)) << header << '\n';
  for (long i = 0; std::getline(in, line); ++i)
    out[static_cast<std::size_t>(i) * count / static_cast<std::size_t>(lines)] << line << '\n';
  out.clear();
  std::filesystem::rename(partial, folder);
  return names;
}

// The shards of the table traced by an MPI job of 1 and of 2 processes
// (Open MPI; as root it needs the two variables set here): ratio = the
// one-process time over the two-process time (the goal is >= 1.7 on two
// cores; both runs read and summarise every row, then trace on rank 0).
void mpi_rows(benchmark::State& state) {
  const long rows = state.range(0), predictors = state.range(1);
  const std::vector<std::string> shards = shard_files(table_file(rows, predictors), 8);
  ::setenv("OMPI_ALLOW_RUN_AS_ROOT", "1", 1);
  ::setenv("OMPI_ALLOW_RUN_AS_ROOT_CONFIRM", "1", 1);
  auto command = [&](int processes) {
    std::vector<std::string> args = {KNOTPATH_MPIEXEC, "-n", std::to_string(processes), "--oversubscribe",
                                     KNOTPATH_CLI_PATH, "--quiet", "trace"};
    args.insert(args.end(), shards.begin(), shards.end());
    args.insert(args.end(), {"--response", "y"});
    return args;
  };
  std::vector<double> one, two;
  for (auto _ : state) {
    one.push_back(seconds([&] { run_program(command(1)); }));
    two.push_back(seconds([&] { run_program(command(2)); }));
  }
  state.counters["one_s"] = median(one);
  state.counters["two_s"] = median(two);
  state.counters["ratio"] = median(one) / median(two);
}
#endif

}  // namespace

BENCHMARK(stream)->Name("stream/quick")->Args({20000, 10})->Iterations(1)->Unit(benchmark::kSecond);
BENCHMARK(stream)->Name("stream/full")->Args({2000000, 50})->Iterations(3)->Unit(benchmark::kSecond);

#ifdef KNOTPATH_MPIEXEC
BENCHMARK(mpi_rows)->Name("mpi_rows/quick")->Args({20000, 10})->Iterations(1)->Unit(benchmark::kSecond);
BENCHMARK(mpi_rows)->Name("mpi_rows/full")->Args({2000000, 50})->Iterations(3)->Unit(benchmark::kSecond);
#endif

BENCHMARK_MAIN();
