// golden_dump OUT_DIR [FUZZ_CORPUS_DIR]: traces a fixed corpus of designs and
// writes, for each one, what a user of the library would read from its path,
// so that tools/golden.sh can compare a changed library with files recorded
// before the change (tests/golden/expected/dump). Per design NAME:
//   NAME.knots.csv  the knot table (io::write_knot_table)
//   NAME.json       the JSON document (io::path_document, dump(1))
//   NAME.at.csv     solutions at the midpoint penalty of every segment, at
//                   penalty 0 and at L1 budgets of 0.25, 0.5 and 0.9 times
//                   the final norm (Path::at_budget), 17 significant digits
//   NAME.error.txt  instead of the three above when trace() throws: what()
// Designs:
//   fuzz_trace/SEED  every seed file of the fuzz_trace corpus (sorted by name),
//                    decoded as the fuzz target decodes it (decode_design.hpp);
//                    FUZZ_CORPUS_DIR defaults to this source tree's corpus
//   soak/seed-S      the first 40 designs of the numerical soak
//                    (soak_design.hpp, seeds 1000..1039)
//   demo/OPTIONS     the built-in demo data (demo.hpp) with default options,
//                    without standardizing, and with each explicit storage
// Exit status 0 when every file was written (a design whose trace throws is
// part of the corpus, not a failure), 2 on bad arguments or I/O failure.

#include <algorithm>
#include <cstddef>
#include <cstdint>
#include <exception>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <iterator>
#include <sstream>
#include <stdexcept>
#include <string>
#include <utility>
#include <vector>

#include <knotpath/demo.hpp>
#include <knotpath/io/report.hpp>
#include <knotpath/knotpath.hpp>

#include "../fuzz/decode_design.hpp"
#include "../support/soak_design.hpp"

namespace {

namespace kp = knotpath;
namespace fs = std::filesystem;
using kp::Index;

constexpr unsigned kFirstSoakSeed = 1000;  // test_soak.cpp draws seeds 1000, 1001, ...
constexpr unsigned kSoakDesigns = 40;
constexpr double kBudgetFractions[] = {0.25, 0.5, 0.9};

/// One design of the corpus and the names its reports use.
struct Input {
  std::string name;  ///< file stem inside its group folder
  kp::Matrix<double> x;
  kp::Vector<double> y;
  kp::Vector<double> weights;  ///< empty: unit weights
  kp::TraceOptions options;
  std::vector<std::string> predictor_names;  ///< x1..xp unless the data names them
  std::string response = "y";
  std::string source;  ///< RunContext::source of the reports
};

Input make_input(std::string name, const kp::Matrix<double>& x, const kp::Vector<double>& y,
                 const kp::Vector<double>& weights, const kp::TraceOptions& options) {
  Input in;
  in.name = std::move(name);
  in.x = x;
  in.y = y;
  in.weights = weights;
  in.options = options;
  return in;
}

std::vector<std::string> numbered_names(Index p) {
  std::vector<std::string> names;
  for (Index j = 0; j < p; ++j) names.push_back("x" + std::to_string(j + 1));
  return names;
}

void write_file(const fs::path& file, const std::string& text) {
  std::ofstream out(file, std::ios::binary);
  out << text;
  out.close();
  if (!out) throw std::runtime_error("cannot write " + file.string());
}

std::string join(const std::vector<std::string>& cells) {
  std::string line;
  for (const auto& c : cells) line += (line.empty() ? "" : ",") + c;
  return line + "\n";
}

/// One row of the answers file: the query, the value asked, then the
/// solution (or the exception the query threw, in the third cell).
template <class Query>
std::string answer_row(const std::string& query, double asked, Query&& query_fn) {
  std::vector<std::string> cells{query, kp::io::round_trip(asked)};
  try {
    const kp::Solution<double> s = query_fn();
    cells.push_back(kp::io::round_trip(s.penalty));
    cells.push_back(kp::io::round_trip(s.penalized_l1));
    cells.push_back(s.beyond_path ? "1" : "0");
    cells.push_back(kp::io::round_trip(s.intercept));
    for (Index j = 0; j < s.coefficients.size(); ++j)
      cells.push_back(kp::io::round_trip(s.coefficients(j)));
  } catch (const std::exception& e) {
    cells.push_back(std::string("error: ") + e.what());
  }
  return join(cells);
}

std::string at_answers(const kp::Path<double>& path, const std::vector<std::string>& names) {
  std::vector<std::string> header{"query",   "asked",       "penalty",
                                  "l1_norm", "beyond_path", "intercept"};
  header.insert(header.end(), names.begin(), names.end());
  std::string text = join(header);
  const auto& knots = path.knots();
  for (std::size_t k = 0; k + 1 < knots.size(); ++k) {
    const double lambda = 0.5 * (knots[k].penalty + knots[k + 1].penalty);
    const std::string query = "midpoint " + std::to_string(k) + "-" + std::to_string(k + 1);
    text += answer_row(query, lambda, [&] { return path.at_penalty(lambda); });
  }
  text += answer_row("penalty", 0.0, [&] { return path.at_penalty(0.0); });
  const double final_norm = knots.empty() ? 0.0 : knots.back().penalized_l1;
  for (double f : kBudgetFractions) {
    const double budget = f * final_norm;
    text += answer_row("budget " + kp::io::round_trip(f), budget,
                       [&] { return path.at_budget(budget); });
  }
  return text;
}

kp::io::RunContext context_of(const Input& in) {
  kp::io::RunContext c;
  c.source = in.source;
  c.response = in.response;
  c.predictor_names = in.predictor_names;
  if (in.weights.size()) c.weights = "w";
  c.rows_read = static_cast<std::size_t>(in.x.rows());
  c.program_version = "golden_dump";  // fixed: a version bump is not an output change
  return c;
}

/// Traces one input and writes its files into `dir`.
void dump(const fs::path& dir, const Input& in) {
  const fs::path stem = dir / in.name;
  kp::Path<double> path;
  try {
    path = kp::trace<double>(in.x, in.y, in.options, in.weights);
  } catch (const std::exception& e) {
    write_file(stem.string() + ".error.txt", std::string(e.what()) + "\n");
    return;
  }
  std::ostringstream table;
  kp::io::write_knot_table(table, path, in.predictor_names);
  write_file(stem.string() + ".knots.csv", table.str());
  write_file(stem.string() + ".json", kp::io::path_document(path, context_of(in)).dump(1) + "\n");
  write_file(stem.string() + ".at.csv", at_answers(path, in.predictor_names));
}

std::vector<Input> fuzz_inputs(const fs::path& corpus) {
  std::vector<fs::path> files;
  for (const auto& entry : fs::directory_iterator(corpus))
    if (entry.is_regular_file()) files.push_back(entry.path());
  std::sort(files.begin(), files.end());
  if (files.empty()) throw std::runtime_error("no seed files in " + corpus.string());
  std::vector<Input> inputs;
  for (const auto& file : files) {
    std::ifstream f(file, std::ios::binary);
    const std::vector<char> bytes{std::istreambuf_iterator<char>(f), {}};
    const auto d = kp::testing::decode_design(reinterpret_cast<const std::uint8_t*>(bytes.data()),
                                              bytes.size());
    Input in = make_input(file.filename().string(), d.x, d.y, d.weights, d.options);
    in.predictor_names = numbered_names(d.x.cols());
    in.source = "fuzz_trace/" + in.name;
    inputs.push_back(std::move(in));
  }
  return inputs;
}

std::vector<Input> soak_inputs() {
  std::vector<Input> inputs;
  for (unsigned s = kFirstSoakSeed; s < kFirstSoakSeed + kSoakDesigns; ++s) {
    const kp::testing::SoakDesign d = kp::testing::random_design(s);
    Input in = make_input("seed-" + std::to_string(s), d.x, d.y, {}, d.options);
    in.predictor_names = numbered_names(d.x.cols());
    in.source = "soak " + d.summary;
    inputs.push_back(std::move(in));
  }
  return inputs;
}

std::vector<Input> demo_inputs() {
  const kp::demo::DemoData data = kp::demo::greenhouse();
  auto input = [&](const std::string& name) {
    Input in = make_input(name, data.x, data.y, {}, {});
    in.predictor_names = data.predictor_names;
    in.response = data.response_name;
    in.source = "built-in demo";
    return in;
  };
  std::vector<Input> inputs{input("default")};
  inputs.push_back(input("no-standardize"));
  inputs.back().options.standardize = false;
  const std::pair<const char*, kp::Storage> storages[] = {
      {"dense", kp::Storage::dense}, {"gram", kp::Storage::gram}, {"view", kp::Storage::view}};
  for (const auto& [name, storage] : storages) {
    inputs.push_back(input(std::string("storage-") + name));
    inputs.back().options.storage = storage;
  }
  return inputs;
}

void dump_group(const fs::path& out, const std::string& group, const std::vector<Input>& inputs) {
  const fs::path dir = out / group;
  fs::create_directories(dir);
  for (const auto& in : inputs) dump(dir, in);
}

}  // namespace

int main(int argc, char** argv) {
  if (argc < 2 || argc > 3) {
    std::cerr << "usage: golden_dump OUT_DIR [FUZZ_CORPUS_DIR]\n";
    return 2;
  }
  const fs::path out = argv[1];
  const fs::path corpus = argc == 3
                              ? fs::path(argv[2])
                              : fs::path(KNOTPATH_SOURCE_DIR) / "tests/fuzz/corpus/fuzz_trace";
  try {
    dump_group(out, "fuzz_trace", fuzz_inputs(corpus));
    dump_group(out, "soak", soak_inputs());
    dump_group(out, "demo", demo_inputs());
  } catch (const std::exception& e) {
    std::cerr << "golden_dump: " << e.what() << "\n";
    return 2;
  }
  return 0;
}
