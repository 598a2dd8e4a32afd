// The program's outputs and messages (issue 19, point 2): how an output
// file is written by what its path is (a regular file or new path is
// replaced atomically, a symbolic link keeps being a link, a named pipe or
// an open descriptor is written in place and never replaced), standard
// output as an output (`--knots -`, `--json -`), every failed write to
// standard output as an I/O error (exit status 5 with a message), and the
// one "knotpath: " prefix of every error message with the program's option
// names. Device nodes are never written over: a full device is only ever
// opened by the test as the program's standard output.

#include <fcntl.h>
#include <signal.h>
#include <sys/stat.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cerrno>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "cli_runner.hpp"

namespace {

namespace fs = std::filesystem;
using knotpath::testing::Outcome;
using knotpath::testing::slurp;

void spit(const fs::path& file, const std::string& text) {
  std::ofstream out(file, std::ios::binary);
  out << text;
}

// How many times `needle` occurs in `text`.
std::size_t count(const std::string& text, const std::string& needle) {
  std::size_t n = 0;
  for (auto at = text.find(needle); at != std::string::npos; at = text.find(needle, at + 1)) ++n;
  return n;
}

// A message is one line that starts with the one "knotpath: " prefix.
void expect_one_prefix(const Outcome& r) {
  EXPECT_EQ(r.err.rfind("knotpath: ", 0), 0u) << r.err;
  EXPECT_EQ(count(r.err, "knotpath:"), 1u) << r.err;
}

class CliOutputs : public knotpath::testing::ProgramTest {
 protected:
  CliOutputs() : ProgramTest("outputs", "--quiet") {}

  void SetUp() override {
    ProgramTest::SetUp();
    spit(file("t.csv"),
         "a,b,c,y\n1,2,0.5,3\n2,1,1.5,4\n3,1,0.25,2\n4,3,2,1\n5,2,1,2\n6,0,3,5\n");
  }

  // The knot table as a plain file receives it (the reference of every case).
  std::string knot_table() {
    const Outcome r = run("trace t.csv --response y --knots plain.csv");
    EXPECT_EQ(r.code, 0) << r.err;
    const std::string text = slurp(file("plain.csv"));
    EXPECT_EQ(text.rfind("step,penalty,mu,event", 0), 0u) << text;
    return text;
  }

  // No temporary file of a write was left in `folder`.
  void expect_no_temporary(const fs::path& folder) {
    for (const auto& entry : fs::directory_iterator(folder))
      EXPECT_EQ(entry.path().filename().string().find(".tmp-"), std::string::npos) << entry.path();
  }

  // Runs the program with `args` in the scratch folder, its standard output
  // on `out_fd` (-1: closed), standard error captured; SIGPIPE is ignored
  // in the program when asked (a write to a pipe without reader then fails
  // with EPIPE instead of ending the process).
  Outcome spawn(const std::vector<std::string>& args, int out_fd, bool ignore_sigpipe) {
    const fs::path err = file(".spawn-stderr");
    const pid_t pid = ::fork();
    if (pid == 0) {
      if (::chdir(dir_.c_str()) != 0) ::_exit(120);
      const int in = ::open("/dev/null", O_RDONLY);
      const int e = ::open(err.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
      if (in < 0 || e < 0) ::_exit(121);
      ::dup2(in, 0);
      ::dup2(e, 2);
      if (out_fd < 0) {
        ::close(1);
      } else if (out_fd != 1) {
        ::dup2(out_fd, 1);
      }
      ::signal(SIGPIPE, ignore_sigpipe ? SIG_IGN : SIG_DFL);
      std::vector<char*> argv;
      std::string program = KNOTPATH_CLI_PATH;
      argv.push_back(program.data());
      std::vector<std::string> copy = args;
      for (auto& a : copy) argv.push_back(a.data());
      argv.push_back(nullptr);
      ::execv(program.c_str(), argv.data());
      ::_exit(122);
    }
    Outcome r;
    int status = 0;
    if (pid > 0 && ::waitpid(pid, &status, 0) == pid)
      r.code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
    r.err = slurp(err);
    fs::remove(err);
    return r;
  }
};

// A symbolic link stays a link: the file it names is replaced (atomically,
// beside it), and a link to a file not yet there creates that file.
TEST_F(CliOutputs, ThroughASymbolicLinkTheLinkStaysAndItsTargetIsWritten) {
  const std::string expected = knot_table();
  fs::create_directories(file("kept"));
  spit(file("kept/real.csv"), "old content\n");
  fs::create_symlink("kept/real.csv", file("link.csv"));
  fs::create_symlink("kept/new.csv", file("dangling.csv"));

  const Outcome r = run("trace t.csv --response y --knots link.csv --json dangling.csv");
  ASSERT_EQ(r.code, 0) << r.err;
  ASSERT_TRUE(fs::is_symlink(fs::symlink_status(file("link.csv"))));
  EXPECT_EQ(fs::read_symlink(file("link.csv")), fs::path("kept/real.csv"));
  EXPECT_EQ(slurp(file("kept/real.csv")), expected);
  ASSERT_TRUE(fs::is_symlink(fs::symlink_status(file("dangling.csv"))));
  ASSERT_TRUE(fs::is_regular_file(fs::symlink_status(file("kept/new.csv"))));
  EXPECT_EQ(nlohmann::json::parse(slurp(file("kept/new.csv"))).at("format"), "knotpath-path");
  expect_no_temporary(dir_);
  expect_no_temporary(file("kept"));
}

// A named pipe is written into, not replaced: its reader receives the knot
// table, and the pipe is still a pipe afterwards.
TEST_F(CliOutputs, NamedPipeIsWrittenInPlace) {
  const std::string expected = knot_table();
  ASSERT_EQ(::mkfifo(file("pipe.csv").c_str(), 0600), 0) << std::strerror(errno);
  // Opened for reading before the program runs (non-blocking, so that a
  // program that never opens the pipe cannot hang the test); the table is
  // far below the pipe's buffer, so the writer never waits for us.
  const int reader = ::open(file("pipe.csv").c_str(), O_RDONLY | O_NONBLOCK);
  ASSERT_GE(reader, 0) << std::strerror(errno);

  const Outcome r = run("trace t.csv --response y --knots pipe.csv");
  std::string received;
  char buffer[4096];
  for (ssize_t n; (n = ::read(reader, buffer, sizeof buffer)) > 0;)
    received.append(buffer, static_cast<std::size_t>(n));
  ::close(reader);
  ASSERT_EQ(r.code, 0) << r.err;
  EXPECT_EQ(received, expected);
  struct stat info {};
  ASSERT_EQ(::lstat(file("pipe.csv").c_str(), &info), 0);
  EXPECT_TRUE(S_ISFIFO(info.st_mode)) << "the named pipe was replaced";
  expect_no_temporary(dir_);
}

// A path that names an open descriptor (/dev/fd/1, the program's standard
// output) is written through that descriptor, after the text printed
// before it, never replaced.
TEST_F(CliOutputs, DescriptorPathWritesIntoTheOpenStandardOutput) {
  struct stat info {};
  if (::lstat("/dev/fd/1", &info) != 0 || !S_ISLNK(info.st_mode))
    GTEST_SKIP() << "/dev/fd/1 is not a descriptor link on this system";
  const std::string expected = knot_table();
  const Outcome r = run("trace t.csv --response y --knots /dev/fd/1");
  ASSERT_EQ(r.code, 0) << r.err;
  EXPECT_EQ(r.out.rfind("lasso path of y", 0), 0u) << r.out;
  ASSERT_GE(r.out.size(), expected.size());
  const std::size_t at = r.out.find(expected);
  ASSERT_NE(at, std::string::npos) << r.out;
  EXPECT_LT(r.out.find("stop: "), at) << "the audit comes first";
}

// "-" is standard output: it then holds only the output asked for, and the
// printed text (audit, notes, wrote lines) goes to standard error.
TEST_F(CliOutputs, DashWritesTheOutputToStandardOutput) {
  const std::string expected = knot_table();
  const Outcome knots = run("trace t.csv --response y --knots -");
  ASSERT_EQ(knots.code, 0) << knots.err;
  EXPECT_EQ(knots.out, expected);
  EXPECT_NE(knots.err.find("lasso path of y"), std::string::npos) << knots.err;
  EXPECT_FALSE(fs::exists(fs::symlink_status(file("-"))));

  const Outcome json = run("trace t.csv --response y --json -");
  ASSERT_EQ(json.code, 0) << json.err;
  EXPECT_EQ(nlohmann::json::parse(json.out).at("format"), "knotpath-path");

  const Outcome verify = run("verify t.csv --response y --json -");
  EXPECT_EQ(nlohmann::json::parse(verify.out).at("format"), "knotpath-verify") << verify.err;

  const Outcome both = run("trace t.csv --response y --knots - --json -");
  EXPECT_EQ(both.code, 2);
  expect_one_prefix(both);
  EXPECT_TRUE(both.out.empty()) << both.out;
  EXPECT_FALSE(fs::exists(fs::symlink_status(file("-"))));
}

// A full device as standard output (opened by the test for writing; the
// node itself is never replaced or written over by a rename).
TEST_F(CliOutputs, FullStandardOutputIsAnIoError) {
  struct stat info {};
  if (::stat("/dev/full", &info) != 0 || !S_ISCHR(info.st_mode))
    GTEST_SKIP() << "no /dev/full character device here";
  const int full = ::open("/dev/full", O_WRONLY);
  ASSERT_GE(full, 0) << std::strerror(errno);
  const Outcome r = spawn({"trace", "t.csv", "--response", "y"}, full, false);
  ::close(full);
  EXPECT_EQ(r.code, 5) << r.err;
  expect_one_prefix(r);
  EXPECT_NE(r.err.find("cannot write standard output"), std::string::npos) << r.err;
}

// Standard output closed by whoever started the program.
TEST_F(CliOutputs, ClosedStandardOutputIsAnIoError) {
  const Outcome r = spawn({"trace", "t.csv", "--response", "y", "--knots", "k.csv"}, -1, false);
  EXPECT_EQ(r.code, 5) << r.err;
  expect_one_prefix(r);
  EXPECT_NE(r.err.find("cannot write standard output"), std::string::npos) << r.err;
  // The knot table went to its file, not into the descriptor number left free.
  EXPECT_EQ(slurp(file("k.csv")), knot_table());
}

// A pipe whose reader has gone (with SIGPIPE ignored, as some shells and
// services start programs): the failed write is reported.
TEST_F(CliOutputs, PipeWithoutReaderIsAnIoError) {
  int ends[2];
  ASSERT_EQ(::pipe(ends), 0);
  ::close(ends[0]);
  const Outcome r = spawn({"trace", "t.csv", "--response", "y"}, ends[1], true);
  ::close(ends[1]);
  EXPECT_EQ(r.code, 5) << r.err;
  expect_one_prefix(r);
  EXPECT_NE(r.err.find("cannot write standard output"), std::string::npos) << r.err;
}

// Every error carries one prefix, whether the library, the program or the
// command-line parser found it, and names the program's options, not the
// library's fields.
TEST_F(CliOutputs, ErrorsHaveOnePrefixAndTheProgramsOptionNames) {
  const Outcome signs = run("trace t.csv --response y --variant least-angle --nonnegative a");
  EXPECT_EQ(signs.code, 2);
  expect_one_prefix(signs);
  EXPECT_EQ(signs.err.find("sign_constraints"), std::string::npos) << signs.err;
  EXPECT_NE(signs.err.find("--nonnegative"), std::string::npos) << signs.err;

  const Outcome query = run("at t.csv --response y --mu -1");
  EXPECT_EQ(query.code, 2);
  expect_one_prefix(query);

  const Outcome range = run("trace t.csv --response y --ridge -1");
  EXPECT_EQ(range.code, 2);
  expect_one_prefix(range);
  EXPECT_NE(range.err.find("\"-1\""), std::string::npos) << "the offending text quoted: " << range.err;
  EXPECT_LT(range.err.size(), 300u) << range.err;

  const Outcome missing = run("trace t.csv");
  EXPECT_EQ(missing.code, 2);
  expect_one_prefix(missing);
  EXPECT_NE(missing.err.find("--response"), std::string::npos) << missing.err;
}

}  // namespace

namespace {

// The README's verify example runs on a table the reader makes with the
// documented command `python3 tools/resin-table.py > resin.csv`; the
// session printed there is what the program prints on it, line for line.
TEST_F(CliOutputs, ReadmeVerifyExampleIsReproducible) {
  if (std::system("python3 -c 'import fractions' >/dev/null 2>&1") != 0)
    GTEST_SKIP() << "python3 is not available (tools/install-deps.sh installs it)";
  const fs::path source = KNOTPATH_SOURCE_DIR;
  const std::string readme = slurp(source / "README.md");
  const std::string make = "$ python3 tools/resin-table.py > resin.csv\n";
  const std::string command = "$ knotpath verify resin.csv --response hardness\n";
  const std::string status = "$ echo $?\n";
  ASSERT_NE(readme.find(make), std::string::npos) << "the README names the table's command";
  const std::size_t begin = readme.find(command);
  ASSERT_NE(begin, std::string::npos);
  const std::size_t end = readme.find(status, begin);
  ASSERT_NE(end, std::string::npos);
  const std::string printed = readme.substr(begin + command.size(), end - begin - command.size());
  const std::string code_line = readme.substr(end + status.size(), readme.find('\n', end + status.size()) - end - status.size());

  const std::string make_table = fmt::format("python3 '{}' > '{}'", (source / "tools/resin-table.py").string(),
                                             file("resin.csv").string());
  ASSERT_EQ(std::system(make_table.c_str()), 0);
  const Outcome r = run("verify resin.csv --response hardness");
  EXPECT_EQ(r.out, printed);
  EXPECT_EQ(std::to_string(r.code), code_line) << r.err;
}

}  // namespace
