// The data of knotpath select: its table read whole, or a block at a time
// into one set of statistics per fold (streamed exact cross-validation;
// FoldStatisticsAccumulator, cross_validation.hpp).

#include "select_data.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <map>
#include <functional>
#include <set>
#include <string>

#include <fmt/format.h>

#include <nlohmann/json.hpp>

#include <knotpath/shards.hpp>

#include "ranks.hpp"
#include "typed_trace.hpp"

namespace knotpath::cli {

namespace {

// The user's fold column: distinct labels >= 0 become folds 0..K-1 in
// ascending order of the label; a negative label keeps the row in every
// training set.
// Refuses a fold label that is not a whole number; `row` counts the
// table's kept rows from 0.
void check_fold_label(double v, std::size_t row, const std::string& name, const std::string& source) {
  if (v != std::floor(v) || std::fabs(v) > 1e15)
    throw failure(exit_bad_input,
                  fmt::format("{}: data row {}: fold column \"{}\" holds {:.17g}, not a whole "
                              "number",
                              source, row + 1, name, v));
}

std::vector<long> folds_from_column(const Vector<double>& labels, const std::string& name,
                                    const std::string& source) {
  std::map<double, long> fold_of_label;
  for (Index i = 0; i < labels.size(); ++i) {
    const double v = labels(i);
    check_fold_label(v, static_cast<std::size_t>(i), name, source);
    if (v >= 0) fold_of_label.emplace(v, 0);
  }
  long next = 0;
  for (auto& [label, fold] : fold_of_label) fold = next++;
  std::vector<long> out(static_cast<std::size_t>(labels.size()), -1);
  for (Index i = 0; i < labels.size(); ++i)
    if (labels(i) >= 0) out[static_cast<std::size_t>(i)] = fold_of_label.at(labels(i));
  return out;
}

// The fold column's position in the table (or a block of it), refused
// when absent or not numeric.
Index fold_column_position(const io::Table& table, const std::string& fold_name, const std::string& shown_name) {
  const Index at = table.find(fold_name);
  if (at < 0) {
    const auto& text = table.text_columns;
    if (std::find(text.begin(), text.end(), fold_name) != text.end())
      throw failure(exit_bad_input,
                    shown_name + ": the fold column \"" + fold_name + "\" is not numeric");
    throw failure(exit_bad_input,
                  shown_name + ": no column named \"" + fold_name + "\" (--fold-column)");
  }
  return at;
}

// The fold column (at `at`) is no predictor: takes it out of the columns
// and of out's names and options, which must keep at least one predictor.
void take_fold_column_out(SelectData& out, io::ColumnAssignment& columns, Index at);

void set_folds_aside(SelectData& out, io::ColumnAssignment& columns, const io::Table& table,
                     const std::string& fold_name) {
  const Index at = fold_column_position(table, fold_name, out.shown_name);
  out.fold_of = folds_from_column(table.column_vector(at), fold_name, out.shown_name);
  take_fold_column_out(out, columns, at);
}

// Takes the table column at `at` out of the predictors of `columns` (its
// position and name); the predictor index it had, if it was one.
std::optional<std::size_t> remove_predictor_column(io::ColumnAssignment& columns, Index at) {
  auto& positions = columns.predictors;
  const auto found = std::find(positions.begin(), positions.end(), at);
  if (found == positions.end()) return std::nullopt;
  const auto k = found - positions.begin();
  positions.erase(found);
  columns.names.erase(columns.names.begin() + k);
  return static_cast<std::size_t>(k);
}

void take_fold_column_out(SelectData& out, io::ColumnAssignment& columns, Index at) {
  const auto& positions = columns.predictors;
  if (const std::optional<std::size_t> taken = remove_predictor_column(columns, at)) {
    const std::size_t k = *taken;
    const auto at_k = static_cast<std::ptrdiff_t>(k);
    auto& names = out.context.predictor_names;
    names.erase(names.begin() + at_k);
    auto& scales = out.options.penalty_scales;
    if (scales.size() == names.size() + 1) scales.erase(scales.begin() + at_k);
    for (auto* list : {&out.options.unpenalized, &out.options.left_out}) {
      std::erase(*list, k);
      for (auto& j : *list)
        if (j > k) --j;
    }
    auto& signs = out.options.sign_constraints;
    if (signs.size() == names.size() + 1) signs.erase(signs.begin() + at_k);
  }
  if (positions.empty())
    throw failure(
        exit_bad_input,
        out.shown_name + ": no numeric predictor columns besides the response and the folds");
  try {
    out.options.validate(positions.size());
  } catch (const invalid_option& e) {
    throw failure(exit_usage, e.what());
  }
}

// As trace: data with nothing to trace are refused. Rows of positive
// weight added a block at a time; refuse() after the last.
struct ResponseConstancy {
  Index used = 0;
  bool constant = true;
  double first = 0;

  void add(const Vector<double>& y, const Vector<double>& w) {
    for (Index i = 0; i < y.size(); ++i) {
      if (w.size() != 0 && !(w(i) > 0)) continue;
      if (used++ == 0)
        first = y(i);
      else if (y(i) != first)
        constant = false;
    }
  }
  // Adds the rows of the next shard (`other`), as if read after these.
  void merge(const ResponseConstancy& other) {
    if (other.used == 0) return;
    constant = used == 0 ? other.constant : constant && other.constant && other.first == first;
    if (used == 0) first = other.first;
    used += other.used;
  }
  void refuse(const SelectData& out, const std::string& response) const {
    if (out.options.with_intercept && used > 1 && constant)
      throw failure(exit_bad_input,
                    fmt::format("{}: the response \"{}\" is constant (every row holds "
                                "{:.17g}); there is nothing to select",
                                out.shown_name, response, first));
  }
};

// The model arguments of select's table: the fold column read (with --use)
// and refused as the response, the weights or a dropped column.
ModelArgs select_model_args(const SelectArgs& args) {
  ModelArgs model = args.model;
  const std::string& fold_name = args.fold_column;
  if (!fold_name.empty()) {
    if (fold_name == model.response || fold_name == model.weights)
      throw failure(exit_usage,
                    "the fold column \"" + fold_name + "\" is also the response or the weights");
    const std::vector<std::string> dropped = split_list(model.drop, "--drop");  // names may hold commas
    if (std::find(dropped.begin(), dropped.end(), fold_name) != dropped.end())
      throw failure(exit_usage, "the fold column \"" + fold_name + "\" is listed in --drop");
    if (!model.use.empty())
      model.use.push_back(quoted_list_item(fold_name));  // read it; removed from the predictors below
  }
  return model;
}

// ---- select --read blocks: one set of statistics per fold, no row kept ----
//
// A fold column needs one pass: each block's rows go to their fold's
// statistics (FoldStatisticsAccumulator: every part keeps the whole table's
// block boundaries, so the parts are those the rows route forms, bit for
// bit). Seeded folds need the number of rows first (the shuffle of
// make_folds() is over all of them): a first pass counts the rows that
// survive --missing and reads the weights, make_folds() draws the very
// assignment of --read whole (its shuffle is over all the rows: up to 40
// bytes a row while drawn, one 8-byte fold number a row kept after, against
// the table's 8 (p + 2)), and a second pass
// accumulates; standard input cannot be read twice and is refused.
// Leave-one-out (K = n sets of statistics), --repeats (R K sets) and
// --precision other than double read the table whole.
//
// --read auto keeps the blocks until the rows read make the full path take
// the Gram route at this and every larger row count (gram_for_more_rows,
// trace's rule) with the folds' statistics within
// detail::fold_statistics_budget for the folds seen so far, and another
// block follows; then it streams. A table that never qualifies is
// cross-validated from its kept rows, as --read whole would.

// Why select must read this table whole (empty: it may stream).
std::string needs_whole_table(const SelectArgs& args, bool in_double) {
  if (args.leave_one_out) return "leave-one-out needs one set of statistics per row";
  if (args.repeats > 1) return "--repeats needs every repeat's folds (R K sets of statistics)";
  if (!in_double) return "--precision parses the table's decimal text, kept whole";
  if (args.fold_column.empty() && args.table == "-")
    return "seeded folds read the table twice (the rows are counted before the folds are drawn) and "
           "standard input can be read only once (give a file, or --fold-column)";
  return {};
}

// Pass 1 for seeded folds over one table or shard: the rows kept (those
// --missing leaves) and their weights (empty: unweighted).
struct CountedRows {
  Index rows = 0;
  Vector<double> weights;
};

CountedRows count_rows(const ShardSource& source, const ModelArgs& model, const Global& global) {
  Index rows = 0;
  std::vector<double> weights;
  bool weighted = false;
  const auto restart = [&] {
    rows = 0;
    weights.clear();
  };
  CountedRows out;
  const auto take = [&](io::Table& block, const LoadedTable& loaded) {
    rows += static_cast<Index>(block.rows);
    weighted = loaded.columns.weights >= 0;
    if (weighted) {
      const Vector<double> w = block.column_vector(loaded.columns.weights);
      weights.insert(weights.end(), w.data(), w.data() + w.size());
    }
  };
  // A bad weight is the data's fault, named by its line, before the folds
  // are drawn from the weights (the library's rule, as the whole reading
  // reports it: regression test BadInput.RowProblemsNameTheLineOfTheFile);
  // checked within read_in_blocks, so that a piece names the file's line.
  const auto check_weights = [&](LoadedTable& table) {
    out.rows = rows;
    if (!weighted) return;
    out.weights = Eigen::Map<const Vector<double>>(weights.data(), static_cast<Index>(weights.size()));
    with_data_messages(table.shown_name, table.context.predictor_names, table.table.row_lines,
                       [&] { (void)detail::used_rows<double>(out.weights, rows, TraceOptions{}); });
  };
  (void)read_in_blocks(source, model, global, restart, take, check_weights);
  return out;
}

// The assignment make_folds() draws for `rows` rows of these weights (that
// of --read whole).
std::vector<long> drawn_folds(Index rows, const CrossValidationOptions& cv, const Vector<double>& weights) {
  try {
    return make_folds<double>(rows, cv, weights);
  } catch (const invalid_option& e) {
    throw failure(exit_usage, e.what());
  }
}

std::vector<long> seeded_folds_of_table(const SelectArgs& args, const ModelArgs& model,
                                        const CrossValidationOptions& cv, const Global& global) {
  const CountedRows counted = count_rows(ShardSource{args.table}, model, global);
  return drawn_folds(counted.rows, cv, counted.weights);
}

// A block kept until the reading streams (or to the end): its data, fold
// labels (fold column) and where its rows lie in the file.
struct SelectPiece {
  TableData<double> data;
  std::vector<double> labels;
  std::size_t first_row = 0;
  io::RowLines lines;
};

// Pass 2 (or the one pass of a fold column): the blocks into the folds'
// statistics, or kept (auto, before the table qualifies).
class SelectBlocks {
 public:
  SelectBlocks(const SelectArgs& args, bool forced, const std::vector<long>& seeded)
      : args_(args), forced_(forced), seeded_(seeded) {}

  void take(io::Table& block, const LoadedTable& loaded) {
    if (!begun_) begin(block, loaded);
    SelectPiece piece;
    piece.first_row = block.first_row;
    if (fold_at_ >= 0) {
      const Vector<double> labels = block.column_vector(fold_at_);
      for (Index i = 0; i < labels.size(); ++i)
        check_fold_label(labels(i), block.first_row + static_cast<std::size_t>(i), args_.fold_column, loaded.shown_name);
      piece.labels.assign(labels.data(), labels.data() + labels.size());
    }
    piece.data = table_data<double>(block, data_columns_, loaded.shown_name);
    piece.lines = block.row_lines;
    for (auto& mark : piece.lines.marks) mark.first += block.first_row;
    constancy_.add(piece.data.y, piece.data.w);
    const Index p = static_cast<Index>(data_columns_.predictors.size());
    if (!stream_ && (forced_ || (rows_ > 0 && gram_for_more_rows<double>(static_cast<Index>(rows_), p, loaded.options) &&
                                 within_budget(p)))) {
      stream_.emplace(p, data_columns_.weights >= 0);
    }
    rows_ += block.rows;
    if (!stream_)  // the kept blocks' folds, which within_budget() counts
      for (double v : piece.labels)
        if (v >= 0) labels_seen_.insert(v);
    kept_.push_back(std::move(piece));
    if (stream_) {
      for (SelectPiece& kept : kept_) add_to_stream(kept, loaded);
      kept_.clear();
    }
  }

  // After the last block: the select data, streamed (parts) or kept (x, y,
  // w). `whole`: the table is all the rows (a shard's constant response is
  // refused only once the shards are merged, ResponseConstancy::merge).
  SelectData finish(LoadedTable& loaded, bool whole = true) {
    SelectData out;
    out.shown_name = loaded.shown_name;
    out.row_lines = loaded.table.row_lines;
    out.progress = loaded.progress;
    out.options = loaded.options;
    out.context = std::move(loaded.context);
    io::ColumnAssignment columns = loaded.columns;
    if (fold_at_ >= 0) take_fold_column_out(out, columns, fold_at_);
    if (whole) constancy_.refuse(out, args_.model.response);
    if (stream_) {
      out.parts = with_data_messages(out.shown_name, out.context.predictor_names, out.row_lines,
                                     [&] { return stream_->finish(); });
      out.context.block_rows = args_.model.block_rows;  // the audit says the table was read in blocks
      return out;
    }
    join_kept(out);
    return out;
  }

  // The responses of the rows of positive weight read.
  const ResponseConstancy& constancy() const { return constancy_; }
  // The fold numbers >= 0 of the rows streamed: the parts' folds, in order.
  const std::set<long>& folds_streamed() const { return folds_streamed_; }

 private:
  void begin(const io::Table& block, const LoadedTable& loaded) {
    begun_ = true;
    data_columns_ = loaded.columns;
    if (args_.fold_column.empty()) return;
    fold_at_ = fold_column_position(block, args_.fold_column, loaded.shown_name);
    (void)remove_predictor_column(data_columns_, fold_at_);
  }

  // The rows route would trace the folds from statistics too (the budget of
  // detail::folds_by_statistics for the folds seen so far, or K of --folds).
  bool within_budget(Index p) const {
    const std::size_t k = fold_at_ >= 0 ? std::max<std::size_t>(2, labels_seen_.size()) : args_.folds;
    const std::size_t threads = std::min(detail::resolve_threads(args_.model.threads), k);
    return detail::fold_statistics_bytes<double>(k, threads, p) <= detail::fold_statistics_budget;
  }

  // One block's rows into their folds' statistics, each with its fold
  // number: the label itself (ascending labels are the folds' order, as
  // folds_from_column numbers them) or the seeded fold; negative: never held out.
  void add_to_stream(SelectPiece& piece, const LoadedTable& loaded) {
    const std::size_t m = static_cast<std::size_t>(piece.data.y.size());
    std::vector<long> folds(m);
    for (std::size_t i = 0; i < m; ++i)
      folds[i] = fold_at_ >= 0 ? (piece.labels[i] >= 0 ? static_cast<long>(piece.labels[i]) : -1L)
                               : seeded_[piece.first_row + i];
    for (long f : folds)
      if (f >= 0) folds_streamed_.insert(f);
    with_data_messages(loaded.shown_name, data_columns_.names, piece.lines, [&] {
      stream_->add(piece.data.x, piece.data.y, piece.data.w, folds);
      return 0;
    });
    piece = SelectPiece();
  }

  // The kept blocks joined into one table in memory (--read whole's data).
  void join_kept(SelectData& out) {
    const Index n = static_cast<Index>(rows_), p = static_cast<Index>(data_columns_.predictors.size());
    const bool weighted = data_columns_.weights >= 0;
    out.x.resize(n, p);
    out.y.resize(n);
    if (weighted) out.w.resize(n);
    Vector<double> labels(fold_at_ >= 0 ? n : 0);
    Index at = 0;
    for (SelectPiece& piece : kept_) {
      const Index m = piece.data.y.size();
      out.x.middleRows(at, m) = piece.data.x;
      out.y.segment(at, m) = piece.data.y;
      if (weighted) out.w.segment(at, m) = piece.data.w;
      for (Index i = 0; i < static_cast<Index>(piece.labels.size()); ++i) labels(at + i) = piece.labels[static_cast<std::size_t>(i)];
      at += m;
      piece = SelectPiece();
    }
    kept_.clear();
    if (fold_at_ >= 0) out.fold_of = folds_from_column(labels, args_.fold_column, out.shown_name);
  }

  const SelectArgs& args_;
  const bool forced_;
  const std::vector<long>& seeded_;
  bool begun_ = false;
  io::ColumnAssignment data_columns_;  // the roles with the fold column out of the predictors
  Index fold_at_ = -1;                 // the fold column's position (-1: seeded folds)
  std::vector<SelectPiece> kept_;
  std::optional<FoldStatisticsAccumulator<double>> stream_;
  ResponseConstancy constancy_;
  std::set<double> labels_seen_;  // fold labels >= 0 of kept_'s blocks (until the reading streams)
  std::set<long> folds_streamed_;  // fold numbers >= 0 given to stream_
  std::size_t rows_ = 0;
};

// ---- select over shards: several tables, --pieces, the ranks of an MPI job ----
//
// Each shard is read in blocks by the process that owns it (shard_owner)
// into its own FoldParts (SelectBlocks, streaming from the first block).
// Every part (the full statistics, each fold, the rows never held out) is
// then merged over the shard tree of shards.hpp (Ranks::reduce, one
// reduction per part, in that order), so the merged parts, and the whole
// selection, are the same bits for any number of processes.
//
// Fold numbers must mean the same in every shard before the merge. A fold
// column: each shard streams its rows with the label itself as fold number
// (FoldStatisticsAccumulator keeps its parts in ascending label order) and
// reports the labels it saw; rank 0 unites them, and every shard puts its
// parts at their label's place among the united labels (an empty part for a
// label it lacks): the folds folds_from_column() numbers on the one table.
// Seeded folds: a first pass counts every shard's rows and which weigh
// more than 0, rank 0 draws make_folds() over all of them in shard order
// (the assignment of the one table of the same rows) and sends each
// process the slices of its own shards only (1 to 8 bytes a row, the
// fewest that hold K; seeded_folds_of_shards), each shard streaming with
// its slice.
//
// Every step that may fail on a shard is a record gathered on rank 0; rank
// 0 decides for all (the first failure in shard order stops every process
// with its message and status): gather_shard_steps() and decide_for_all()
// (ranks.hpp), the rule trace and at follow too.

// Seeded folds over shards as each process holds them: the fold numbers of
// the rows of its own shards, `width` bytes a row (the fewest of 1, 2, 4, 8
// that hold every number, -1 included: fold_width), little-endian two's
// complement (the same bytes on any machine), one string a shard it owns
// (empty for the others).
struct SeededShare {
  std::size_t width = 0;
  std::vector<std::string> of_shard;

  // Shard s's fold numbers, one a row (a shard of this process).
  std::vector<long> folds(std::size_t s) const {
    const std::string& bytes = of_shard.at(s);
    std::vector<long> out(bytes.size() / width);
    for (std::size_t i = 0; i < out.size(); ++i) {
      std::uint64_t bits = 0;
      for (std::size_t b = 0; b < width; ++b)
        bits |= std::uint64_t{static_cast<unsigned char>(bytes[i * width + b])} << (8 * b);
      if (width < 8 && (bits >> (8 * width - 1)) != 0) bits |= ~std::uint64_t{0} << (8 * width);  // sign
      out[i] = static_cast<long>(static_cast<std::int64_t>(bits));
    }
    return out;
  }
};

// The fewest bytes (1, 2, 4 or 8) that hold fold numbers -1..top.
std::size_t fold_width(long top) {
  for (const std::size_t width : {std::size_t{1}, std::size_t{2}, std::size_t{4}})
    if (top < (1L << (8 * width - 1))) return width;
  return 8;
}

// Appends `folds`, `width` bytes each (SeededShare's code), to `out`.
void append_folds(const std::vector<long>& folds, std::size_t width, std::string& out) {
  for (long f : folds) {
    const auto bits = static_cast<std::uint64_t>(static_cast<std::int64_t>(f));
    for (std::size_t b = 0; b < width; ++b) out.push_back(static_cast<char>((bits >> (8 * b)) & 0xff));
  }
}

// Seeded folds over shards. A first pass counts every shard's rows and
// which weigh more than 0 (gather_shard_steps); rank 0 draws make_folds()
// over all of them in shard order (the assignment of the one table of the
// same rows), and each process receives only the slices of its own shards
// (Ranks::scatter: the processes own runs of shards in rank order, so the
// assignment in shard order is already cut by process), so that memory
// beyond rank 0 follows the rows of the process's own shards.
SeededShare seeded_folds_of_shards(const std::vector<ShardSource>& sources, const ModelArgs& model,
                                   const CrossValidationOptions& cv, const Global& global) {
  const Ranks& ranks = Ranks::world();
  const std::size_t count = sources.size();
  std::vector<Index> rows_of(count, 0);  // this process's shards' rows
  const auto records = gather_shard_steps(ranks, count, [&](std::size_t s) {
    const CountedRows counted = count_rows(sources[s], model, global);
    rows_of[s] = counted.rows;
    std::string usable;  // '1' a row of positive weight, '0' another (empty: unweighted)
    for (Index i = 0; i < counted.weights.size(); ++i) usable += counted.weights(i) > 0 ? '1' : '0';
    return nlohmann::json{{"rows", counted.rows}, {"usable", usable}};
  });
  std::string assignment;                                        // rank 0: every row's fold, coded
  std::vector<std::size_t> shares(static_cast<std::size_t>(ranks.size()), 0);  // rank 0: bytes a process
  const std::vector<long long> width = decide_for_all(ranks, records, [&] {
    std::vector<Index> first{0};
    bool weighted = false;
    for (const auto& record : records) {
      first.push_back(first.back() + record["rows"].get<Index>());
      weighted = weighted || !record["usable"].get<std::string>().empty();
    }
    const Index rows = first.back();
    Vector<double> weights(weighted ? rows : 0);
    if (weighted)
      for (std::size_t s = 0; s < count; ++s) {
        const std::string usable = records[s]["usable"].get<std::string>();
        for (Index i = 0; i < first[s + 1] - first[s]; ++i)
          weights(first[s] + i) = usable.empty() || usable[static_cast<std::size_t>(i)] == '1' ? 1.0 : 0.0;
      }
    const std::vector<long> folds = drawn_folds(rows, cv, weights);
    const std::size_t bytes = fold_width(*std::max_element(folds.begin(), folds.end()));
    append_folds(folds, bytes, assignment);
    for (std::size_t s = 0; s < count; ++s)
      shares[static_cast<std::size_t>(shard_owner(s, count, ranks.size()))] +=
          static_cast<std::size_t>(first[s + 1] - first[s]) * bytes;
    return std::vector<long long>{static_cast<long long>(bytes)};
  });
  SeededShare out;
  out.width = static_cast<std::size_t>(width.at(0));
  out.of_shard.resize(count);
  const std::string mine = ranks.scatter(assignment, shares);
  assignment = std::string();
  std::size_t at = 0;
  for (std::size_t s = 0; s < count; ++s) {
    if (shard_owner(s, count, ranks.size()) != ranks.rank()) continue;
    const std::size_t length = static_cast<std::size_t>(rows_of[s]) * out.width;
    if (at + length > mine.size()) throw failure(exit_internal, "internal error: a shard's folds are missing");
    out.of_shard[s] = mine.substr(at, length);
    at += length;
  }
  if (at != mine.size()) throw failure(exit_internal, "internal error: folds of no shard of this process");
  return out;
}

// One shard's parts as this process read them, with the fold numbers of
// its folds (ascending, parts.folds' order).
struct ShardParts {
  FoldParts<double> parts;
  std::vector<long> folds;
};

// A shard's parts spread over the K folds of the united `labels`: the full
// statistics, fold 0..K-1 (empty where the shard has no row of it), the
// rows never held out: K + 2 parts, the order of the reductions.
std::vector<SufficientStatistics<double>> parts_in_order(ShardParts& shard, const std::vector<long long>& labels,
                                                         Index p) {
  std::vector<SufficientStatistics<double>> out;
  out.push_back(std::move(*shard.parts.full));
  std::size_t next = 0;
  for (long long label : labels) {
    if (next < shard.folds.size() && shard.folds[next] == label)
      out.push_back(std::move(shard.parts.folds[next++]));
    else
      out.push_back(SufficientStatistics<double>::empty(p));
  }
  out.push_back(std::move(shard.parts.never_held_out));
  return out;
}

// The refusals of select over shards (exit 2, with the reason).
void refuse_what_shards_cannot_do(const SelectArgs& args, const std::vector<ShardSource>& sources, bool in_double) {
  const char* what = args.model.pieces != 0 ? "the pieces of one table" : "several tables (shards)";
  if (args.model.reading == "whole")
    throw failure(exit_usage, fmt::format("select reads {} in blocks into each fold's statistics: --read whole "
                                          "reads one table as one",
                                          what));
  if (!streams_rows(select_model_args(args)))
    throw failure(exit_usage, fmt::format("select cannot expand --indicators over {}: a text column's levels would "
                                          "have to agree across them (read one table with --read whole)",
                                          what));
  for (const auto& source : sources)
    if (source.path == "-")
      throw failure(exit_usage, "standard input (-) cannot be a shard of select (give files)");
  if (const std::string reason = needs_whole_table(args, in_double); !reason.empty())
    throw failure(exit_usage, fmt::format("select over {}: {} (select one table with --read whole)", what, reason));
}

// Pass 2 (the one pass of a fold column): the shards this process owns,
// each into its parts (`mine`, with the shard's index; shard 0's data, its
// context and options, in `first`, on rank 0), and every shard's record
// on rank 0 (gather_shard_steps).
struct ReadShards {
  std::vector<std::pair<std::size_t, ShardParts>> mine;
  std::optional<SelectData> first;
  std::vector<nlohmann::json> records;
};

ReadShards read_shard_parts(const SelectArgs& args, const std::vector<ShardSource>& sources, const ModelArgs& model,
                            const std::optional<SeededShare>& seeded, const Global& global) {
  const std::size_t count = sources.size();
  ReadShards out;
  out.records = gather_shard_steps(Ranks::world(), count, [&](std::size_t s) {
    const std::vector<long> slice = seeded ? seeded->folds(s) : std::vector<long>();
    std::optional<SelectBlocks> blocks;
    SelectData data;
    LoadedTable loaded = read_in_blocks(
        sources[s], model, global, [&] { blocks.emplace(args, true, slice); },
        [&](io::Table& block, const LoadedTable& l) { blocks->take(block, l); },
        [&](LoadedTable& l) {  // within the reading: a bad row found at the end names the file's line
          if (l.table.rows == 0) throw failure(exit_bad_input, sources[s].name() + ": the table holds no data row");
          data = blocks->finish(l, false);
        });
    const ResponseConstancy& constancy = blocks->constancy();
    const std::set<long>& folds = blocks->folds_streamed();
    nlohmann::json record{{"source", sources[s].name()},
                          {"rows", loaded.table.rows},
                          {"dropped", loaded.table.dropped_rows},
                          {"names", loaded.table.names},
                          {"predictors", data.context.predictor_names},
                          {"folds", folds},
                          {"observations", data.parts->observations},
                          {"constancy", {{"used", constancy.used}, {"constant", constancy.constant},
                                         {"first", constancy.first}}}};
    out.mine.emplace_back(s, ShardParts{std::move(*data.parts), {folds.begin(), folds.end()}});
    data.parts.reset();
    if (s == 0) out.first = std::move(data);
    return record;
  });
  return out;
}

// Rank 0 checks the shards' records (the same columns; the response not
// constant over all of them) and unites their fold numbers; every process
// gets [p, K, the united fold numbers] (decide_for_all).
std::vector<long long> unite_shards(const std::vector<ShardSource>& sources, ReadShards& read,
                                    const std::string& response) {
  const auto& records = read.records;
  return decide_for_all(Ranks::world(), records, [&] {
    std::set<long long> labels;
    ResponseConstancy constancy;
    for (const auto& record : records) {
      for (const char* what : {"names", "predictors"})
        if (record[what] != records.front()[what]) refuse_unlike_shard(records.front(), record, what);
      for (long long f : record["folds"]) labels.insert(f);
      ResponseConstancy part;
      part.used = record["constancy"]["used"].get<Index>();
      part.constant = record["constancy"]["constant"].get<bool>();
      part.first = record["constancy"]["first"].get<double>();
      constancy.merge(part);
    }
    read.first->shown_name = shards_source(sources);
    constancy.refuse(*read.first, response);
    std::vector<long long> out{static_cast<long long>(records.front()["predictors"].size()),
                               static_cast<long long>(labels.size())};
    out.insert(out.end(), labels.begin(), labels.end());
    return out;
  });
}

// The K + 2 parts merged, part by part, over the shard tree (on rank 0;
// empty elsewhere): the full statistics, folds 0..K-1, the rows never held out.
std::vector<std::optional<SufficientStatistics<double>>> merge_shard_parts(ReadShards& read, std::size_t count,
                                                                           const std::vector<long long>& labels,
                                                                           Index p) {
  std::vector<std::vector<SufficientStatistics<double>>> ordered;
  for (auto& [s, shard] : read.mine) ordered.push_back(parts_in_order(shard, labels, p));
  std::vector<std::optional<SufficientStatistics<double>>> merged;
  for (std::size_t j = 0; j < labels.size() + 2; ++j) {
    std::vector<std::pair<std::size_t, SufficientStatistics<double>>> part;
    for (std::size_t m = 0; m < read.mine.size(); ++m) part.emplace_back(read.mine[m].first, std::move(ordered[m][j]));
    merged.push_back(Ranks::world().reduce(std::move(part), count, p));
  }
  return merged;
}

// Rank 0's select data: shard 0's context and options, the merged parts,
// and the audit's counts over every shard.
SelectData shards_select_data(const SelectArgs& args, const std::vector<ShardSource>& sources, ReadShards& read,
                              std::vector<std::optional<SufficientStatistics<double>>>& merged) {
  SelectData out = std::move(*read.first);
  FoldParts<double> parts;
  parts.full = std::move(*merged.front());
  for (std::size_t j = 1; j + 1 < merged.size(); ++j) parts.folds.push_back(std::move(*merged[j]));
  parts.never_held_out = std::move(*merged.back());
  std::size_t rows = 0, dropped = 0;
  for (const auto& record : read.records) {
    parts.observations += record["observations"].get<Index>();
    rows += record["rows"].get<std::size_t>();
    dropped += record["dropped"].get<std::size_t>();
  }
  out.parts = std::move(parts);
  out.context.source = out.shown_name;
  out.context.rows_read = rows;
  out.context.rows_dropped = dropped;
  out.context.block_rows = args.model.block_rows;
  for (const auto& source : sources) out.context.shards.push_back(source.name());
  out.row_lines = io::RowLines();  // no row is kept: the parts name none
  return out;
}

}  // namespace

bool select_reads_shards(const SelectArgs& args) { return args.tables.size() > 1 || args.model.pieces != 0; }

SelectData read_select_shards(const SelectArgs& args, const CrossValidationOptions& cv, const Global& global,
                              bool in_double) {
  const std::vector<ShardSource> sources = shard_sources(args.tables, args.model.pieces);
  refuse_what_shards_cannot_do(args, sources, in_double);
  const ModelArgs model = select_model_args(args);
  std::optional<SeededShare> seeded;
  if (args.fold_column.empty()) seeded = seeded_folds_of_shards(sources, model, cv, global);
  ReadShards read = read_shard_parts(args, sources, model, seeded, global);
  seeded.reset();
  const std::vector<long long> united = unite_shards(sources, read, args.model.response);
  const Index p = static_cast<Index>(united[0]);
  const std::vector<long long> labels(united.begin() + 2, united.end());
  std::vector<std::optional<SufficientStatistics<double>>> merged = merge_shard_parts(read, sources.size(), labels, p);
  if (Ranks::world().rank() != 0) throw quiet_exit{0};
  return shards_select_data(args, sources, read, merged);
}

SelectData read_select_data(const SelectArgs& args, const Global& global, bool keep_text) {
  const ModelArgs model = select_model_args(args);
  const std::string& fold_name = args.fold_column;
  LoadedTable loaded = load_table(args.table, model, global, keep_text);
  SelectData out;
  out.shown_name = loaded.shown_name;
  out.row_lines = loaded.table.row_lines;
  out.progress = loaded.progress;
  io::Table& table = loaded.table;
  out.options = loaded.options;
  out.context = std::move(loaded.context);
  io::ColumnAssignment columns = loaded.columns;

  if (!fold_name.empty()) set_folds_aside(out, columns, table, fold_name);
  loaded.columns = columns;
  io::TableSplit split = io::split_table(table, std::move(columns));
  out.y = std::move(split.y);
  out.w = std::move(split.weights);
  out.x = std::move(split.x);
  if (keep_text)
    out.text = std::move(loaded);  // the decimal text stays (split_table took the numbers)
  else
    table = io::Table();

  ResponseConstancy constancy;
  constancy.add(out.y, out.w);
  constancy.refuse(out, model.response);
  return out;
}


// Whether select reads its table in blocks: --read blocks (refused with a
// reason when it must read whole), or auto when nothing rules it out.
bool select_reads_blocks(const SelectArgs& args, bool in_double) {
  if (!streams_rows(select_model_args(args))) return false;
  const std::string reason = needs_whole_table(args, in_double);
  if (args.model.reading == "blocks" && !reason.empty())
    throw failure(exit_usage, "select --read blocks: " + reason + " (use --read whole)");
  return reason.empty();
}


// select's table read a block at a time (select_reads_blocks()).
SelectData read_select_blocks(const SelectArgs& args, const CrossValidationOptions& cv, const Global& global) {
  const ModelArgs model = select_model_args(args);
  std::vector<long> seeded;
  if (args.fold_column.empty()) seeded = seeded_folds_of_table(args, model, cv, global);
  SelectBlocks blocks(args, args.model.reading == "blocks", seeded);
  LoadedTable loaded = read_in_blocks(args.table, model, global,
                                      [&](io::Table& block, const LoadedTable& l) { blocks.take(block, l); });
  return blocks.finish(loaded);
}

}  // namespace knotpath::cli
