#pragma once
/// \file cli_runner.hpp
/// \brief Running the knotpath program from a test: a scratch folder per
/// test, the exit status, standard output and standard error of each run.
///
/// The program's path comes from the KNOTPATH_CLI_PATH compile definition
/// (tests/CMakeLists.txt). A test's folder is removed when the test passes
/// and kept for inspection when it fails.

#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <utility>
#include <vector>

#include <fmt/format.h>
#include <gtest/gtest.h>

namespace knotpath::testing {

/// What one run of the program gave.
struct Outcome {
  int code = -1;         ///< exit status (-1 when killed by a signal)
  std::string out, err;  ///< standard output and standard error
};

/// The whole content of a file ("" when it cannot be read).
inline std::string slurp(const std::filesystem::path& file) {
  std::ifstream in(file, std::ios::binary);
  std::stringstream s;
  s << in.rdbuf();
  return s.str();
}

/// A GoogleTest fixture owning a scratch folder named
/// knotpath-<prefix>-<suite>-<test>-<pid> in the temporary directory, in
/// which the program runs.
class ProgramTest : public ::testing::Test {
 protected:
  /// `prefix` names the folder; `options` go before every command's own
  /// arguments (e.g. "--quiet").
  explicit ProgramTest(std::string prefix, std::string options = "")
      : prefix_(std::move(prefix)), options_(std::move(options)) {}

  void SetUp() override {
    const auto* info = ::testing::UnitTest::GetInstance()->current_test_info();
    dir_ = std::filesystem::temp_directory_path() /
           fmt::format("knotpath-{}-{}-{}-{}", prefix_, info->test_suite_name(), info->name(), ::getpid());
    std::filesystem::remove_all(dir_);
    std::filesystem::create_directories(dir_);
  }
  void TearDown() override {
    if (!HasFailure()) std::filesystem::remove_all(dir_);
  }

  /// A file in the scratch folder.
  std::filesystem::path file(const std::string& name) const { return dir_ / name; }

  /// Runs the program with `args` (already quoted as needed) in the scratch
  /// folder, standard input from `stdin_file`.
  Outcome run(const std::string& args, const std::string& stdin_file = "/dev/null") const {
    const std::filesystem::path out = dir_ / ".stdout", err = dir_ / ".stderr";
    const std::string command =
        fmt::format("cd '{}' && '{}' {} {} <'{}' >'{}' 2>'{}'", dir_.string(), KNOTPATH_CLI_PATH, options_, args,
                    stdin_file, out.string(), err.string());
    const int status = std::system(command.c_str());
    Outcome r;
    r.code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
    r.out = slurp(out);
    r.err = slurp(err);
    std::filesystem::remove(out);
    std::filesystem::remove(err);
    return r;
  }

  /// Names of the files in the scratch folder, sorted (temporary files of
  /// failed writes would show here).
  std::vector<std::string> listing() const {
    std::vector<std::string> names;
    for (const auto& entry : std::filesystem::directory_iterator(dir_)) names.push_back(entry.path().filename());
    std::sort(names.begin(), names.end());
    return names;
  }

  std::filesystem::path dir_;

 private:
  std::string prefix_, options_;
};

}  // namespace knotpath::testing
