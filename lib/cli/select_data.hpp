#pragma once
// The data of `knotpath select` (internals of the knotpath program; code in
// lib/cli/select_data.cpp): its arguments, and its table read whole (rows
// in memory) or in blocks (one set of statistics per fold, no row kept).

#include <cstddef>
#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include <knotpath/adjusted_inference.hpp>
#include <knotpath/cross_validation.hpp>

#include "cli.hpp"

namespace knotpath::cli {

/// The arguments of `knotpath select` (add_select_command() fills them).
struct SelectArgs {
  std::vector<std::string> tables;  // TABLE: one, or the shards of one
  std::string table;                // the one table (tables' only one)
  ModelArgs model;
  std::size_t folds = 10;
  bool leave_one_out = false;
  std::uint64_t seed = CrossValidationOptions{}.seed;
  std::string fold_column;
  std::size_t repeats = 1;  // fold seeds seed, seed + 1, ...: the curve is their mean
  std::optional<double> noise_variance;
  bool no_tests = false;
  double level = AdjustedInferenceOptions{}.level;  // of the adjusted intervals
  double fdr = 0.10;                                // ForwardStop's target
  PrecisionArgs precision;
  std::string json_file;
  std::string report_dir;
  std::string save_file;
};

/// The data of a select run, read like trace reads them.
struct SelectData {
  Matrix<double> x;
  Vector<double> y, w;
  std::vector<long> fold_of;  // empty: folds from the seed
  /// The table read in blocks (--read blocks, or auto on a tall table):
  /// the statistics of each fold, x, y and w empty (no row is kept).
  std::optional<FoldParts<double>> parts;
  TraceOptions options;
  io::RunContext context;
  std::string shown_name;
  io::RowLines row_lines;  // where the table's kept rows start (data_message)
  std::shared_ptr<Progress> progress;
  /// For --precision other than double: the table with its cells' decimal
  /// text and the columns' roles (fold column set aside), parsed into the
  /// arithmetic by table_data(); unused for double.
  LoadedTable text;
};

/// select's table read whole, like trace reads it, with the fold column
/// (--fold-column) set aside as each row's fold; `keep_text`: the cells'
/// decimal text stays for --precision. Refuses a constant response.
SelectData read_select_data(const SelectArgs& args, const Global& global, bool keep_text);

/// Whether select reads its table in blocks: --read blocks (refused, exit
/// 2, with the reason when the run needs the table whole), or --read auto
/// when nothing rules it out.
bool select_reads_blocks(const SelectArgs& args, bool in_double);

/// select's table read a block at a time: the folds' statistics (parts)
/// once the table qualifies (or at once for --read blocks), else its rows
/// kept and joined as read_select_data() gives them.
SelectData read_select_blocks(const SelectArgs& args, const CrossValidationOptions& cv, const Global& global);

/// Whether select reads its tables as shards: several tables, or --pieces.
bool select_reads_shards(const SelectArgs& args);

/// select over shards (several tables, or one cut into --pieces; under an
/// MPI job each process reads its own): each shard read in blocks into its
/// folds' statistics, the parts merged over the shard tree (shards.hpp),
/// the same bits for any number of processes. Returns the data (parts set)
/// on rank 0; the other processes end with quiet_exit. Refuses (exit 2)
/// --read whole, --indicators, --leave-one-out, --repeats, --precision other
/// than double (`in_double` false) and standard input.
SelectData read_select_shards(const SelectArgs& args, const CrossValidationOptions& cv, const Global& global,
                              bool in_double);

}  // namespace knotpath::cli
