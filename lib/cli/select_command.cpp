// knotpath select: choose a penalty by exact cross-validation, compare with
// Mallows' Cp, AIC and BIC, and judge each entry of the path (covariance
// and spacing tests).

#include "select_command.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <fstream>
#include <iostream>
#include <map>
#include <memory>
#include <optional>
#include <set>
#include <sstream>
#include <system_error>

#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include <knotpath/criteria.hpp>
#include <knotpath/cross_validation.hpp>
#include <knotpath/adjusted_inference.hpp>
#include <knotpath/first_step_t.hpp>
#include <knotpath/inference.hpp>

#include "double_copy.hpp"
#include "path_checks.hpp"
#include "ranks.hpp"
#include "report_folder.hpp"
#include "saved_file.hpp"
#include "select_data.hpp"
#include "typed_trace.hpp"

namespace knotpath::cli {

namespace {

using json = nlohmann::ordered_json;

// A number that is finite, else JSON null (NaN marks "not defined").
json number_or_null(double v) {
  return std::isfinite(v) ? json(v) : json(nullptr);
}

std::string shown(double v, int digits = 6) {
  return std::isfinite(v) ? fmt::format("{:.{}g}", v, digits) : std::string("-");
}

// Text of a p-value: below 1e-10 only "< 1e-10" (the far tail is an
// extrapolation of the reference law with a plug-in sigma^2); JSON keeps the number.
std::string shown_p_value(double p) {
  return std::isfinite(p) && p < 1e-10 ? std::string("< 1e-10") : shown(p, 3);
}

// How to read the entry tests (text and JSON): their different null
// hypotheses, when their laws hold, and the multiple-testing warning.
std::vector<std::string> test_reading_notes() {
  return {
      "the two tests ask different questions: the covariance test's null hypothesis is that the "
      "predictors active before the entry already hold every true effect; the spacing test's is "
      "that the entering predictor has no effect given those active with it",
      "the spacing p-value is exact only at step 1 and only with a known noise variance (give "
      "--noise-variance); with an estimated one it is approximate and may reject too often in "
      "small tables",
      "the covariance test's Exp(1) or F reference law is asymptotic: in small tables its level "
      "can be off",
      "reading down a column to choose where to stop is a multiple-testing problem: each "
      "p-value holds for its own step, not for the sequence"};
}

// A count that weights may make fractional: a JSON integer when it is whole.
json whole_or_fraction(double v) {
  if (v == std::floor(v) && std::fabs(v) < 9e15) return json(static_cast<long long>(v));
  return json(v);
}

// Inference after selection at the two choices (adjusted_inference.hpp):
// per active predictor, the selection-adjusted interval and p-value beside
// the naive ones, and the entries' sequential p-values with ForwardStop.
struct AdjustedPoint {
  std::string choice;  // "least CV error" or "parsimonious"
  double mu = 0;
  AdjustedInference inference;
};

struct AdjustedSummary {
  std::vector<AdjustedPoint> points;
  std::vector<EntryPValue> entries;  // the first entries (at most max_adjusted_entries)
  ForwardStopChoice forward_stop;
  bool entries_capped = false;  // the path has more entries than were tested
};

// The sequential p-values cost one polyhedron per entry: select stops at
// this many (a path longer than that is rarely read entry by entry).
constexpr Index max_adjusted_entries = 40;

// Everything select computes, in doubles (a run in another arithmetic is
// copied here number by number, double_copy.hpp).
struct Selection {
  CrossValidation<double> cv;
  std::optional<InformationCriteria<double>> criteria;
  std::string criteria_note;  // why there are none
  std::optional<Significance> significance;
  std::string significance_note;
  // The first step tested with the noise variance unknown (first_step_t.hpp):
  // computed beside the entry tests, also when they fail for want of a
  // variance estimate (more predictors than rows).
  std::optional<FirstStepT> first_step;
  std::string first_step_note;  // why there is none (empty: not asked for)
  std::optional<AdjustedSummary> adjusted;  // inference after selection (issue 22)
  std::string adjusted_note;                // why there is none
  // Stability counts at the two choices (predictor_activity), computed in
  // the run's arithmetic; shown when the folds were drawn more than once.
  PredictorActivity least_activity, lean_activity;
  // Of the path in the arithmetic of the run (not of its double copy):
  std::string arithmetic;          // empty for double
  json precision;                  // the path document's "precision" member (null for double)
  json health;                     // io::health_document
  std::string warning;             // io::suspect_warning (empty on a clean path)
  std::vector<std::string> notes;  // io::audit_notes
  json path_document;              // io::path_document (null: made from cv.full_path)
};

std::string reason_of(const std::exception& e) {
  return user_text(e.what());  // the program's users know the option, not the library's field
}

// The criteria from the statistics when there are some and their
// least-squares fit keeps detail::gram_fit_tolerance (information_criteria
// of SufficientStatistics refuses otherwise); else from the data (the QR of
// the n x p design), which also gives every message.
// The end of a refusal where the rows route would fall back to the rows
// (a table read in blocks keeps none).
constexpr const char* without_rows =
    " (the table was read in blocks, so there are no rows to compute it from instead: --read whole)";

// The rows a result falls back to when the statistics cannot give it: the
// table's rows in memory, or none (`kept` false: read in blocks).
template <class Scalar>
struct SelectRows {
  const Matrix<Scalar>& x;
  const Vector<Scalar>& y;
  const Vector<Scalar>& w;
  bool kept;
};

// Refuses with `refusal` and why there is no fallback when no row is kept;
// returns when the rows can take over.
template <class Scalar>
void need_rows(const SelectRows<Scalar>& rows, const std::string& refusal) {
  if (!rows.kept) throw invalid_query(refusal + without_rows);
}

template <class Scalar>
InformationCriteria<Scalar> criteria_for(const SelectRows<Scalar>& rows, const Path<Scalar>& path,
                                         const CriteriaOptions& co,
                                         const std::optional<SufficientStatistics<Scalar>>& statistics) {
  if (statistics) {
    try {
      return information_criteria(*statistics, path, co);
    } catch (const invalid_query& e) {
      // ill-conditioned, rank-deficient or no residual degree of freedom: the data decide
      need_rows(rows, e.what());
    }
  }
  return information_criteria<Scalar>(rows.x, rows.y, path, co, rows.w);
}

// The covariance and spacing tests. Their reduced paths and omega need only
// the Gram matrix of the active columns, so they run on the sufficient
// statistics of the data (on tall tables those the full path was traced
// from, CrossValidation::statistics; else one O(n p^2) pass; then O(k^2) per step, independent of the number of rows)
// rather than on the n x p design. sigma^2 is the value given, or the
// criteria's least-squares estimate (the same rule,
// detail::given_or_least_squares_variance, on the same data: computed once).
// Without either (the least-angle variant, no criteria) the library's dense
// route estimates it. The results agree with the dense route to rounding
// (tests/test_inference.cpp, EntryTestsFromStatistics). Unweighted data only
// (the caller checks), so `statistics` are those of x and y.
template <class Scalar>
Significance entry_tests(const SelectRows<Scalar>& rows, const Path<Scalar>& path,
                         const std::optional<InformationCriteria<Scalar>>& criteria,
                         std::optional<double> noise_variance,
                         const std::optional<SufficientStatistics<Scalar>>& statistics) {
  double sigma2 = 0;
  Index df = 0;
  if (noise_variance) {
    sigma2 = *noise_variance;
  } else if (criteria && criteria->source == NoiseVarianceSource::least_squares &&
             criteria->noise_variance > Scalar(0)) {
    sigma2 = as_double(criteria->noise_variance);
    df = static_cast<Index>(as_double(criteria->residual_df));
  } else {
    need_rows(rows, "the tests need the noise variance: give --noise-variance, or a least-squares "
                    "estimate the criteria could not make");
    InferenceOptions io;
    return entry_significance<Scalar>(rows.x, rows.y, path, io);
  }
  try {
    return statistics ? entry_significance(*statistics, path, sigma2, df)
                      : entry_significance(SufficientStatistics<Scalar>::from_rows(rows.x, rows.y), path, sigma2, df);
  } catch (const invalid_query& e) {
    // The statistics kept other columns than the path (a column constant
    // only up to rounding): the dense route, on the path's own preparation.
    need_rows(rows, e.what());
    return entry_significance(detail::prepare_for(rows.x, rows.y, path, Vector<Scalar>()).design, path,
                              sigma2, df);
  }
}

// The first step tested with the noise variance unknown: one Gram column
// and Z^T y, from the statistics when there are some (else the dense
// route); the statistics' columns may differ from the path's (a column
// constant only up to rounding): then the dense route, as entry_tests does.
// Unweighted data only (the caller checks).
template <class Scalar>
FirstStepT first_step_test(const SelectRows<Scalar>& rows, const Path<Scalar>& path,
                           const std::optional<SufficientStatistics<Scalar>>& statistics) {
  if (statistics) {
    try {
      return first_step_t_test(*statistics, path);
    } catch (const invalid_query& e) {
      need_rows(rows, e.what());  // else the dense route below
    }
  }
  return first_step_t_test<Scalar>(rows.x, rows.y, path);
}

// Runs on the prepared Gram problem of the data (the statistics the path
// was traced from, or one O(n p^2) pass): everything the polyhedra need is
// Z^T y and Gram columns. sigma^2 and its degrees of freedom are the entry
// tests' (the same rule). On a lasso path the choices are fixed-penalty
// points (Lee et al.); on a least-angle path, the steps down to the knot at
// or above each choice (Tibshirani et al.).
template <class Scalar>
AdjustedSummary adjusted_at_choices(const Matrix<Scalar>& x, const Vector<Scalar>& y, const CrossValidation<Scalar>& cv,
                                    const Significance& significance,
                                    const std::optional<SufficientStatistics<Scalar>>& statistics,
                                    double level, double fdr) {
  const Path<Scalar>& path = cv.full_path;
  const PreparedGram<Scalar> prepared =
      prepare_gram(statistics ? *statistics : SufficientStatistics<Scalar>::from_rows(x, y), path.options());
  detail::check_same_problem(prepared.preparation, path);
  const double sigma2 = significance.noise_variance;
  const Index df = significance.residual_df;
  AdjustedSummary out;
  for (const auto& [choice, point] : {std::pair{"least CV error", &cv.minimum}, std::pair{"parsimonious", &cv.parsimonious}}) {
    AdjustedPoint a{choice, as_double(point->mu), {}};
    if (path.options().variant == Variant::lasso) {
      a.inference = adjusted_inference_at_penalty(prepared.design, path, point->lambda, level, sigma2, df);
    } else {
      Index steps = 0;
      for (const auto& k : path.knots())
        if (k.step > 0 && k.penalty >= point->lambda && (k.event == EventKind::enter || k.event == EventKind::leave)) steps = k.step;
      if (steps > 0) a.inference = adjusted_inference_after_steps(prepared.design, path, steps, level, sigma2, df);
      a.inference.level = level;
    }
    out.points.push_back(std::move(a));
  }
  Index entries = 0;
  for (const auto& k : path.knots()) entries += k.event == EventKind::enter;
  out.entries_capped = entries > max_adjusted_entries;
  Index rows = 0, seen = 0;  // rows covering the first max_adjusted_entries entries
  for (const auto& k : path.knots()) {
    if (k.step == 0) continue;
    if (k.event == EventKind::enter && ++seen > max_adjusted_entries) break;
    rows = k.step;
  }
  out.entries = entry_p_values(prepared.design, path, sigma2, std::max<Index>(rows, 1));
  std::vector<double> p;
  for (const auto& e : out.entries) p.push_back(e.p_value);
  out.forward_stop = forward_stop(p, fdr);
  return out;
}

template <class Scalar>
Selection run_selection(const SelectData& data, const Matrix<Scalar>& x, const Vector<Scalar>& y,
                        const Vector<Scalar>& w, const CrossValidationOptions& cv_options,
                        std::optional<double> noise_variance, bool tests, double level = 0.9,
                        double fdr = 0.1, const FoldParts<Scalar>* parts = nullptr) {
  Selection s;
  if (data.progress)
    data.progress->status(fmt::format(
        "cross-validation: tracing the full path and the folds{} ({} rows, {} predictors)",
        parts ? " from their statistics" : "", parts ? parts->observations : x.rows(),
        parts ? parts->folds.front().predictors() : x.cols()));
  CrossValidation<Scalar> cv;
  try {
    cv = parts ? cross_validate<Scalar>(*parts, data.options, cv_options.threads)
               : cross_validate<Scalar>(x, y, data.options, cv_options, w);
  } catch (const invalid_option& e) {
    throw failure(exit_usage, e.what());
  } catch (const invalid_data& e) {
    const std::string message = data_message(e, data.shown_name, data.context.predictor_names, data.row_lines);
    // From statistics alone: a fold whose error needs its rows (cross_validate of FoldParts).
    throw failure(exit_bad_input, parts ? message + " (read the table whole: --read whole)" : message);
  }
  const Path<Scalar>& path = cv.full_path;
  if (path.preparation().columns.empty())
    throw failure(exit_bad_input,
                  data.shown_name + ": no predictor can enter the path (every one was left out)");
  require_finite_path(path);
  s.health = io::health_document(path, data.context);
  s.warning = io::suspect_warning(path, data.context);
  s.notes = io::audit_notes(path, data.context);
  CriteriaOptions co;
  if (noise_variance) co.noise_variance = *noise_variance;
  co.cross_validated_penalty = as_double(cv.minimum.lambda);  // Reid et al. (2016) when p >= n
  if (data.progress) data.progress->status("information criteria (Cp, AIC, BIC)");
  // On tall tables the full path was traced from the table's sufficient
  // statistics: the criteria and the entry tests reuse them (each then
  // independent of the number of rows).
  const std::optional<SufficientStatistics<Scalar>>& statistics = cv.statistics;
  const SelectRows<Scalar> rows{x, y, w, parts == nullptr};
  std::optional<InformationCriteria<Scalar>> criteria;
  try {
    criteria = criteria_for(rows, path, co, statistics);
  } catch (const invalid_option& e) {
    s.criteria_note = reason_of(e);
  } catch (const invalid_query& e) {
    s.criteria_note = reason_of(e);
  }
  if (!tests) {
    s.significance_note = "skipped (--no-tests)";
  } else if (w.size() != 0 || data.context.weights) {  // rows kept, or read in blocks
    s.significance_note = "the tests are defined for unweighted data (--weights given)";
  } else {
    if (data.progress)
      data.progress->status(fmt::format("entry tests (covariance and spacing) of {} knots",
                                        path.knots().size()));
    try {
      s.significance = entry_tests<Scalar>(rows, path, criteria, noise_variance, statistics);
    } catch (const invalid_option& e) {
      s.significance_note = reason_of(e);
    } catch (const invalid_query& e) {
      s.significance_note = reason_of(e);
    }
    try {
      s.first_step = first_step_test<Scalar>(rows, path, statistics);
    } catch (const invalid_option& e) {
      s.first_step_note = reason_of(e);
    } catch (const invalid_query& e) {
      s.first_step_note = reason_of(e);
    }
  }
  if (!s.significance) {
    s.adjusted_note = "needs the entry tests: " + s.significance_note;
  } else {
    if (data.progress) data.progress->status("inference after selection (adjusted intervals)");
    try {
      s.adjusted = adjusted_at_choices<Scalar>(x, y, cv, *s.significance, statistics, level, fdr);
    } catch (const invalid_option& e) {
      s.adjusted_note = reason_of(e);
    } catch (const invalid_query& e) {
      s.adjusted_note = reason_of(e);
    }
  }
  s.least_activity = predictor_activity(cv, cv.minimum.mu);
  s.lean_activity = predictor_activity(cv, cv.parsimonious.mu);
  if constexpr (std::is_same_v<Scalar, double>) {
    s.cv = std::move(cv);
    s.criteria = std::move(criteria);
  } else {
    s.arithmetic = io::arithmetic_name<Scalar>();
    s.path_document = io::path_document(path, data.context);
    s.precision = s.path_document["precision"];
    s.cv = double_copy(cv);
    if (criteria) s.criteria = double_copy(*criteria);
  }
  return s;
}

std::string source_name(NoiseVarianceSource source) {
  switch (source) {
    case NoiseVarianceSource::given:
      return "given";
    case NoiseVarianceSource::least_squares:
      return "least-squares";
    case NoiseVarianceSource::cross_validated_fit:
      return "cross-validated-fit";
    case NoiseVarianceSource::sparse_fit:
      return "sparse-fit";
  }
  return "?";
}

std::size_t active_count(const Path<double>& path, double lambda) {
  return path.active_at(lambda).size();
}

// The audit with the tests beside each entry.
void print_audit_with_tests(std::ostream& out, const Selection& s, const SelectData& data) {
  const Path<double>& path = s.cv.full_path;
  const auto& names = data.context.predictor_names;
  const double scale = s.cv.full_scale;
  const double tss = path.preparation().total_sum_of_squares;
  std::map<Index, const EntrySignificance*> test_of;
  if (s.significance)
    for (const auto& e : s.significance->entries) test_of[e.step] = &e;
  out << fmt::format("{:>4} {:>10} {:>10}  {:<5}  {:<14} {:>6} {:>7} {:>9} {:>10} {:>10}\n", "step",
                     "penalty", "mu", "event", "predictor", "active", "R^2", "cov.stat", "p(cov)",
                     "p(spacing)");
  for (const auto& k : path.knots()) {
    const std::string name = k.predictor >= 0 ? names[static_cast<std::size_t>(k.predictor)] : "";
    std::string tests;
    if (auto it = test_of.find(k.step); it != test_of.end() && k.event == EventKind::enter)
      tests = fmt::format(" {:>9} {:>10} {:>10}", shown(it->second->covariance_statistic, 4),
                          shown_p_value(it->second->covariance_p_value),
                          shown_p_value(it->second->spacing_p_value));
    out << fmt::format("{:>4} {:>10} {:>10}  {:<5}  {:<14} {:>6} {:>7.4f}{}{}\n", k.step,
                       shown(k.penalty), shown(k.penalty / scale), to_string(k.event), name,
                       k.active_count, tss > 0 ? 1.0 - k.rss / tss : 0.0, tests,
                       k.suspect ? "  suspect" : "");
  }
}

// The arithmetic of the run, the audit's notes (rows dropped, columns
// skipped, predictors excluded or held out) and a suspect path's warning:
// the lines trace prints (io::audit_notes, io::suspect_warning).
void print_health_and_notes(std::ostream& out, const Selection& s) {
  if (!s.arithmetic.empty())
    out << "arithmetic: " << s.arithmetic
        << " (the paths, the cross-validation curve, the criteria and the tests; numbers below "
           "are rounded to double for display)\n";
  for (const auto& note : s.notes) out << note << '\n';
  out << s.warning;
  if (!s.warning.empty() && s.arithmetic.empty())
    out << "WARNING: the penalty is chosen on this path and on the folds' paths traced like it: "
           "make the choice in higher precision with knotpath select --precision 50 (same "
           "options).\n";
}

// The tests' reference laws and noise variance (printout and report).
std::string tests_phrase(const Significance& sig) {
  return fmt::format(
      "covariance statistic with {} p-value, spacing p-value; noise variance {} ({})",
      sig.residual_df > 0 ? fmt::format("F(2, {})", sig.residual_df) : std::string("Exp(1)"),
      shown(sig.noise_variance), sig.residual_df > 0 ? "least-squares fit" : "given");
}

// The first-step t-test in one sentence (printout, report), empty when it
// was not asked for (no tests, weights).
std::string first_step_phrase(const Selection& s, const SelectData& data) {
  const std::string head = "first step, noise variance unknown: ";
  if (!s.first_step) return s.first_step_note.empty() ? std::string() : head + "not computed: " + s.first_step_note;
  const FirstStepT& f = *s.first_step;
  if (f.predictor < 0 || !f.note.empty()) return head + "not computed: " + f.note;
  return head +
         fmt::format("{} ({}) t = {} on {} degrees of freedom, truncated to [{}, {}], p {} (exact under "
                     "the global null that no predictor matters; sigma is not estimated)",
                     data.context.predictor_names[static_cast<std::size_t>(f.predictor)], f.sign > 0 ? "+" : "-",
                     shown(f.statistic, 4), f.degrees_of_freedom, shown(f.lower, 4),
                     std::isinf(f.upper) ? std::string("inf") : shown(f.upper, 4),
                     f.p_value < 1e-10 ? shown_p_value(f.p_value) : "= " + shown_p_value(f.p_value));
}

// The reference distribution of the tests and their notes, each once with
// the steps it applies to.
void print_test_notes(std::ostream& out, const Selection& s, const SelectData& data) {
  const std::string first_step = first_step_phrase(s, data);
  if (s.significance) {
    std::vector<std::pair<std::string, std::string>> grouped;  // note, steps
    for (const auto& e : s.significance->entries) {
      if (e.note.empty()) continue;
      auto it = std::find_if(grouped.begin(), grouped.end(),
                             [&](const auto& g) { return g.first == e.note; });
      if (it == grouped.end())
        grouped.emplace_back(e.note, std::to_string(e.step));
      else
        it->second += ", " + std::to_string(e.step);
    }
    std::string notes;
    for (const auto& [note, steps] : grouped)
      notes += fmt::format("  note (step{} {}): {}\n",
                           steps.find(',') == std::string::npos ? "" : "s", steps, note);
    out << "tests: " << tests_phrase(*s.significance) << '\n';
    if (!first_step.empty()) out << "  " << first_step << '\n';
    for (const auto& line : test_reading_notes()) out << "  " << line << '\n';
    out << notes;
  } else {
    out << "tests: not computed: " << s.significance_note << '\n';
    if (!first_step.empty()) out << "  " << first_step << '\n';
  }
}

// The two choices in sentences (the printout and the HTML report say the
// same): each names its penalty, its error and its size. The standard error
// belongs to the minimum, where it sets the parsimonious choice's threshold;
// the parsimonious choice has none of its own.
struct ChoiceSentences {
  std::string least, parsimonious, threshold;
};

ChoiceSentences choice_sentences(const Selection& s) {
  const Path<double>& path = s.cv.full_path;
  const auto& cv = s.cv;
  const std::size_t least_active = active_count(path, cv.minimum.lambda);
  const std::size_t lean_active = active_count(path, cv.parsimonious.lambda);
  ChoiceSentences said;
  said.least = fmt::format(
      "least CV error (exact): {} (standard error {}) at lambda {}, mu {}, with {} predictor{} "
      "active",
      shown(cv.minimum.error, 7), shown(cv.minimum.standard_error, 4), shown(cv.minimum.lambda, 7),
      shown(cv.minimum.mu, 7), least_active, least_active == 1 ? "" : "s");
  said.parsimonious = fmt::format(
      "parsimonious (within 1 SE): lambda {}, mu {}, with {} predictor{} active and CV error {}",
      shown(cv.parsimonious.lambda, 7), shown(cv.parsimonious.mu, 7), lean_active,
      lean_active == 1 ? "" : "s", shown(cv.parsimonious.error, 7));
  said.threshold = fmt::format(
      "the largest mu whose CV error is at most {} = least CV error {} + its standard error {}",
      shown(cv.minimum.error + cv.minimum.standard_error, 7), shown(cv.minimum.error, 7),
      shown(cv.minimum.standard_error, 4));
  return said;
}

// How the folds were made (a phrase of the printout and the report).
std::string folds_phrase(const Selection& s, const SelectArgs& args) {
  const auto& cv = s.cv;
  if (!args.fold_column.empty())
    return fmt::format("{} folds from column \"{}\"", cv.folds.size(), args.fold_column);
  if (args.leave_one_out) return fmt::format("leave-one-out ({} folds)", cv.folds.size());
  if (cv.repeats > 1)
    return fmt::format("{} folds drawn with each of {} seeds ({} to {}), the curve averaged over them",
                       cv.folds_per_repeat(), cv.repeats, args.seed, repeat_seed(args.seed, cv.repeats - 1));
  return fmt::format("{} folds, seed {}", cv.folds.size(), args.seed);
}

// How the averaged curve's standard error and spread are read (printout and
// report), with the spread at the least CV error; empty for one seed.
std::string repeats_phrase(const Selection& s) {
  const auto& cv = s.cv;
  if (cv.repeats < 2) return {};
  return fmt::format(
      "standard errors are the mean over the {} seeds of each seed's standard error of its fold errors; "
      "at the least CV error the seeds' curves spread by {} (their standard deviation)",
      cv.repeats, shown(cv.spread_at_mu(cv.minimum.mu), 4));
}

// One row of the stability listing: a predictor's activity at both choices.
struct ActivityRow {
  std::size_t predictor = 0;
  double least = 0, lean = 0;    // fractions of the fold paths
  bool least_full = false, lean_full = false;  // active in the full path
};

// The predictors active in some fold path or in the full path at either
// choice, most stable first (parsimonious fraction, then least-error
// fraction, then input order).
std::vector<ActivityRow> activity_rows(const Selection& s) {
  std::vector<ActivityRow> rows;
  const auto& a = s.least_activity;
  const auto& b = s.lean_activity;
  for (std::size_t j = 0; j < a.active_in_folds.size(); ++j) {
    if (a.active_in_folds[j] == 0 && b.active_in_folds[j] == 0 && !a.active_in_full_path[j] &&
        !b.active_in_full_path[j])
      continue;
    rows.push_back({j, a.fraction(j), b.fraction(j), a.active_in_full_path[j], b.active_in_full_path[j]});
  }
  std::stable_sort(rows.begin(), rows.end(), [](const ActivityRow& x, const ActivityRow& y) {
    return x.lean != y.lean ? x.lean > y.lean : x.least > y.least;
  });
  return rows;
}

// The sentence that says what the stability fractions count (printout,
// report and JSON).
std::string activity_reading(const Selection& s) {
  return fmt::format(
      "share of the {} fold paths ({} seeds x {} folds) with a nonzero coefficient at each choice's "
      "size-free penalty; \"full\" marks a predictor active in the path of all rows there. The "
      "cross-validation analogue of the selection probability of Meinshausen & Buhlmann (2010): "
      "training sets of folds instead of half-samples, and no threshold or error bound",
      s.least_activity.fold_paths, s.cv.repeats, s.cv.folds_per_repeat());
}

// The note under the stability listing (printout and report) of the
// predictors it leaves out; empty when it lists every one.
std::string unlisted_activity(std::size_t listed, std::size_t predictors) {
  if (listed >= predictors) return {};
  return fmt::format("{} more predictors are active in no fold path at either choice", predictors - listed);
}

// A fraction as a percentage with one decimal.
std::string shown_share(double fraction) { return fmt::format("{:.1f}%", 100 * fraction); }

// The stability listing (printout), only with more than one seed.
void print_activity(std::ostream& out, const Selection& s, const SelectData& data) {
  if (s.cv.repeats < 2) return;
  const auto& names = data.context.predictor_names;
  out << "\nstability: " << activity_reading(s) << '\n';
  out << fmt::format("  {:<28} {:>19} {:>19}\n", "predictor", "at least CV error", "parsimonious");
  const auto rows = activity_rows(s);
  for (const auto& r : rows) {
    std::string line = fmt::format("  {:<28} {:>13} {:<5} {:>13} {:<4}", names[r.predictor], shown_share(r.least),
                                   r.least_full ? "full" : "", shown_share(r.lean), r.lean_full ? "full" : "");
    line.erase(line.find_last_not_of(' ') + 1);
    out << line << '\n';
  }
  if (const std::string more = unlisted_activity(rows.size(), names.size()); !more.empty())
    out << "  (" << more << ")\n";
}

// How the folds were made, the exact curve and the two choices.
void print_cross_validation(std::ostream& out, const Selection& s, const SelectArgs& args) {
  const auto& cv = s.cv;
  const std::string how = folds_phrase(s, args);
  out << fmt::format(
      "\nexact cross-validation: {}; the curve is {} quadratic pieces on mu in [{}, {}]\n", how,
      cv.pieces.size(), shown(cv.mu_low), shown(cv.mu_high));
  out << "  (exact: the grid-free minimizer of this K-fold curve, not of the unknown "
         "prediction error)\n";
  const ChoiceSentences said = choice_sentences(s);
  out << "  " << said.least << "\n  " << said.parsimonious << ",\n    " << said.threshold << '\n';
  if (cv.repeats > 1) out << "  (" << repeats_phrase(s) << ")\n";
}

// Where the criteria's noise variance came from (printout and report).
std::string noise_source_phrase(const InformationCriteria<double>& ic) {
  std::string source;
  switch (ic.source) {
    case NoiseVarianceSource::given:
      source = "given";
      break;
    case NoiseVarianceSource::least_squares:
      source = fmt::format("least-squares fit, {} residual df", shown(ic.residual_df));
      break;
    case NoiseVarianceSource::cross_validated_fit:
      source = fmt::format(
          "RSS / (n - active) of the lasso fit at the least CV error, {} residual df "
          "(Reid, Tibshirani & Friedman 2016); give --noise-variance when it matters",
          shown(ic.residual_df));
      break;
    case NoiseVarianceSource::sparse_fit:
      source = fmt::format(
          "rough estimate from a sparse lasso fit, {} residual df; give --noise-variance when "
          "it matters",
          shown(ic.residual_df));
      break;
  }
  return source;
}

// How to read the criteria: the AIC's form and what d counts.
std::string criteria_reading(const Selection& s) {
  const auto& options = s.cv.full_path.options();
  return std::string(
             "AIC in its unknown-variance form n log(RSS/n) + 2 d; Cp and BIC use the "
             "noise variance above; d: ") +
         (options.ridge != 0.0                      ? "the elastic net's trace degrees of freedom"
          : options.variant == Variant::least_angle ? "the number of steps (Efron et al. 2004)"
                                                    : "the number of nonzero coefficients") +
         ", plus the intercept";
}

// Where Mallows' Cp, AIC and BIC are least.
void print_criteria(std::ostream& out, const Selection& s) {
  if (s.criteria) {
    const auto& ic = *s.criteria;
    const std::string source = noise_source_phrase(ic);
    out << fmt::format("\ninformation criteria (noise variance {}, {}):\n",
                       shown(ic.noise_variance), source);
    auto best = [&](const char* label, std::size_t i) {
      const auto& c = ic.knots[i];
      out << fmt::format("  {:<12} least at step {:>3}: lambda {:>11}  mu {:>11}  {} nonzero\n",
                         label, c.step, shown(c.penalty, 7), shown(c.mu, 7), c.nonzero);
    };
    best("Mallows' Cp", ic.best_cp);
    best("AIC", ic.best_aic);  // n log(RSS / n) + 2 d: sigma^2 not used
    best("BIC", ic.best_bic);
    out << "  (" << criteria_reading(s) << ")\n";
  } else {
    out << "\ninformation criteria: not computed: " << s.criteria_note << '\n';
  }
}

// The coefficients at the two choices (predictors zero at both counted).
void print_choice_coefficients(std::ostream& out, const Selection& s, const SelectData& data) {
  const Path<double>& path = s.cv.full_path;
  const auto& names = data.context.predictor_names;
  const auto& cv = s.cv;
  const Solution<double> least = path.at_penalty(cv.minimum.lambda);
  const Solution<double> lean = path.at_penalty(cv.parsimonious.lambda);
  out << fmt::format("\ncoefficients (original scale) {:>19} {:>19}\n", "at least CV error",
                     "parsimonious");
  out << fmt::format("  {:<28} {:>19} {:>19}\n", "(intercept)", shown(least.intercept, 8),
                     shown(lean.intercept, 8));
  std::size_t zero = 0;
  for (std::size_t j = 0; j < names.size(); ++j) {
    const double a = least.coefficients(static_cast<Index>(j)),
                 b = lean.coefficients(static_cast<Index>(j));
    if (a == 0 && b == 0) {
      ++zero;
      continue;
    }
    out << fmt::format("  {:<28} {:>19} {:>19}\n", names[j], shown(a, 8), shown(b, 8));
  }
  if (zero) out << fmt::format("  ({} more predictors are 0 at both)\n", zero);
}

// How to read the adjusted inference (printout, report and JSON): what is
// conditioned on, what the interval is for, when the law is exact, the
// stopping rule's assumption, and the limits of any such analysis.
std::vector<std::string> adjusted_reading_notes(const Selection& s) {
  const bool lasso = s.cv.full_path.options().variant == Variant::lasso;
  std::vector<std::string> notes{
      lasso ? "conditioned on: the active set and the signs of the lasso coefficients at each chosen penalty "
              "(Lee, Sun, Sun & Taylor 2016); the penalty is treated as fixed, although cross-validation chose "
              "it from the same data: the adjustment does not cover that choice"
            : "conditioned on: the path's steps down to each chosen penalty with their signs (Tibshirani, "
              "Taylor, Lockhart & Tibshirani 2016); the number of steps is treated as fixed, although "
              "cross-validation chose it from the same data",
      "each interval is for the projected coefficient: the coefficient of that predictor in the "
      "least-squares fit of the mean response on the intercept and the predictors selected at that point, "
      "not its coefficient in a model with all predictors, and not a causal effect",
      "the truncated normal law is exact for Gaussian noise of known variance (--noise-variance) and a "
      "fixed design; with the variance estimated from the full least-squares fit it is approximate",
      "an end shown as inf is unbounded: the data cannot bound the coefficient on that side; an adjusted "
      "interval can be far wider than the naive one, and need not contain the estimate when the estimate lies "
      "close to the edge of what the selection allows",
      "ForwardStop (G'Sell, Wager, Chouldechova & Tibshirani 2016) keeps the first k entries with "
      "-1/k sum log(1 - p_i) <= the FDR asked; it assumes independent p-values, uniform for the null "
      "entries, which the sequential adjusted p-values (each conditioned on the steps up to its entry) "
      "satisfy exactly only at the first step",
      "no substitute for a designed study (a new sample, a randomized trial) where decisions affect people"};
  return notes;
}

// An interval's end as text: inf for an unbounded one.
std::string shown_end(double v) {
  if (std::isinf(v)) return v > 0 ? "inf" : "-inf";
  return shown(v, 4);
}

std::string interval_text(double lo, double hi) {
  return "[" + shown_end(lo) + ", " + shown_end(hi) + "]";
}

// The noise variance the adjustment used, and whether the law is exact.
std::string adjusted_variance_phrase(const AdjustedInference& a) {
  return a.residual_df > 0 ? fmt::format("noise variance {} from the least-squares fit, {} residual df: approximate",
                                         shown(a.noise_variance), a.residual_df)
                           : fmt::format("noise variance {} given: exact law", shown(a.noise_variance));
}

std::string adjusted_point_heading(const AdjustedPoint& p) {
  const auto& a = p.inference;
  const std::size_t m = a.coefficients.size();
  return fmt::format("at {} (lambda {}, mu {}; {} active{})", p.choice, shown(a.penalty, 6), shown(p.mu, 6), m,
                     a.conditioning == Conditioning::steps ? fmt::format(", after {} steps", a.steps) : std::string());
}

// Selection-adjusted intervals and p-values at the two choices, the
// entries' sequential p-values and the ForwardStop choice.
void print_adjusted(std::ostream& out, const Selection& s, const SelectData& data) {
  if (!s.adjusted) {
    out << "\ninference after selection: not computed: " << s.adjusted_note << '\n';
    return;
  }
  const auto& names = data.context.predictor_names;
  const AdjustedSummary& a = *s.adjusted;
  const AdjustedInference& first = a.points.front().inference;
  out << fmt::format("\ninference after selection ({:g}% intervals; {}):\n", 100 * first.level,
                     adjusted_variance_phrase(first));
  for (const auto& p : a.points) {
    out << "  " << adjusted_point_heading(p) << ":\n";
    if (p.inference.coefficients.empty()) {
      out << "    (no predictor active)\n";
      continue;
    }
    out << fmt::format("    {:<20} {:>11} {:>25} {:>9} {:>25} {:>9}\n", "predictor", "estimate", "adjusted interval",
                       "p(adj)", "naive interval", "p(naive)");
    for (const auto& c : p.inference.coefficients)
      out << fmt::format("    {:<20} {:>11} {:>25} {:>9} {:>25} {:>9}\n", names[static_cast<std::size_t>(c.predictor)],
                         shown(c.estimate, 5), interval_text(c.lower, c.upper), shown_p_value(c.p_value),
                         interval_text(c.naive_lower, c.naive_upper), shown_p_value(c.naive_p_value));
  }
  out << "  entries, adjusted one-sided p-values (each in the model after its step, in the direction of its sign):\n";
  out << "   ";
  for (const auto& e : a.entries)
    out << fmt::format(" {}{} {}{};", e.step, "", names[static_cast<std::size_t>(e.predictor)] + (e.sign > 0 ? "+" : "-"),
                       " " + shown_p_value(e.p_value));
  out << (a.entries_capped ? fmt::format(" (the first {} entries)\n", max_adjusted_entries) : std::string("\n"));
  const auto& f = a.forward_stop;
  std::string kept;
  for (std::size_t i = 0; i < f.chosen; ++i)
    kept += (i ? ", " : "") + names[static_cast<std::size_t>(a.entries[i].predictor)];
  out << fmt::format("  ForwardStop at false discovery rate {:g}: keeps the first {} entr{}{}\n", f.alpha, f.chosen,
                     f.chosen == 1 ? "y" : "ies", f.chosen ? " (" + kept + ")" : std::string());
  for (const auto& line : adjusted_reading_notes(s)) out << "  " << line << '\n';
}

charts::ReportTable adjusted_table(const Selection& s, const SelectData& data) {
  charts::ReportTable t;
  t.heading = "Inference after selection";
  t.id = "adjusted-inference";
  if (!s.adjusted) {
    t.lead = {"Not computed: " + s.adjusted_note};
    return t;
  }
  const auto& names = data.context.predictor_names;
  const AdjustedSummary& a = *s.adjusted;
  const AdjustedInference& first = a.points.front().inference;
  t.lead = {fmt::format("{:g}% intervals and p-values adjusted for the selection, beside the naive ones that "
                        "ignore it ({}).",
                        100 * first.level, adjusted_variance_phrase(first))};
  t.columns = {"model", "predictor", "estimate", "adjusted interval", "p (adjusted)", "naive interval", "p (naive)"};
  t.text_columns = {true, true, false, false, false, false, false};
  for (const auto& p : a.points)
    for (const auto& c : p.inference.coefficients)
      t.rows.push_back({adjusted_point_heading(p), names[static_cast<std::size_t>(c.predictor)], shown(c.estimate, 5),
                        interval_text(c.lower, c.upper), shown_p_value(c.p_value),
                        interval_text(c.naive_lower, c.naive_upper), shown_p_value(c.naive_p_value)});
  std::string kept;
  for (std::size_t i = 0; i < a.forward_stop.chosen; ++i)
    kept += (i ? ", " : "") + names[static_cast<std::size_t>(a.entries[i].predictor)];
  t.lead.push_back(fmt::format("ForwardStop at false discovery rate {:g} keeps the first {} entries{}.",
                               a.forward_stop.alpha, a.forward_stop.chosen, kept.empty() ? "" : " (" + kept + ")"));
  t.notes = adjusted_reading_notes(s);
  return t;
}

json adjusted_json(const Selection& s, const SelectData& data) {
  if (!s.adjusted) return json{{"note", s.adjusted_note}};
  const auto& names = data.context.predictor_names;
  const AdjustedSummary& a = *s.adjusted;
  json points = json::array();
  for (const auto& p : a.points) {
    json coefficients = json::array();
    for (const auto& c : p.inference.coefficients)
      coefficients.push_back(json{{"predictor", names[static_cast<std::size_t>(c.predictor)]},
                                  {"sign", c.sign},
                                  {"estimate", c.estimate},
                                  {"standard_error", c.standard_error},
                                  {"lower", number_or_null(c.lower)},
                                  {"upper", number_or_null(c.upper)},
                                  {"p_value", c.p_value},
                                  {"one_sided_p_value", c.one_sided_p_value},
                                  {"naive_lower", c.naive_lower},
                                  {"naive_upper", c.naive_upper},
                                  {"naive_p_value", c.naive_p_value},
                                  {"truncation_lower", number_or_null(c.truncation_lower)},
                                  {"truncation_upper", number_or_null(c.truncation_upper)}});
    points.push_back(json{{"choice", p.choice},
                          {"penalty", p.inference.penalty},
                          {"mu", p.mu},
                          {"conditioned_on", p.inference.conditioning == Conditioning::penalty
                                                 ? "active set and signs at the penalty"
                                                 : "the first steps and their signs"},
                          {"steps", p.inference.steps},
                          {"coefficients", coefficients}});
  }
  json entries = json::array();
  for (const auto& e : a.entries)
    entries.push_back(json{{"step", e.step},
                           {"predictor", names[static_cast<std::size_t>(e.predictor)]},
                           {"sign", e.sign},
                           {"p_value", e.p_value}});
  const AdjustedInference& first = a.points.front().inference;
  return json{{"level", first.level},
              {"noise_variance", first.noise_variance},
              {"residual_df", first.residual_df},
              {"exact", first.residual_df == 0},
              {"unbounded_end", "null: the interval is unbounded on that side"},
              {"points", points},
              {"entries", entries},
              {"entries_capped", a.entries_capped},
              {"forward_stop", json{{"fdr", a.forward_stop.alpha},
                                    {"kept_entries", a.forward_stop.chosen},
                                    {"statistic", a.forward_stop.statistic}}},
              {"reading", adjusted_reading_notes(s)}};
}

// Chart 5's data: one panel per choice with active predictors.
charts::AdjustedIntervals intervals_chart(const Selection& s, const SelectData& data) {
  charts::AdjustedIntervals chart;
  if (!s.adjusted) return chart;
  const auto& names = data.context.predictor_names;
  chart.level = s.adjusted->points.front().inference.level;
  for (const auto& p : s.adjusted->points) {
    if (p.inference.coefficients.empty()) continue;
    charts::IntervalPanel panel;
    panel.heading = adjusted_point_heading(p);
    for (const auto& c : p.inference.coefficients)
      panel.rows.push_back({names[static_cast<std::size_t>(c.predictor)], c.estimate, c.standard_error, c.lower,
                            c.upper, c.naive_lower, c.naive_upper, c.p_value, c.naive_p_value});
    chart.panels.push_back(std::move(panel));
  }
  return chart;
}

// The stability chart (chart 6) of a repeated cross-validation: the rows of
// the printout's listing; no rows with one seed.
charts::StabilityBars stability_chart(const Selection& s, const SelectData& data) {
  charts::StabilityBars bars;
  if (s.cv.repeats < 2) return bars;
  bars.fold_paths = s.least_activity.fold_paths;
  bars.seeds = s.cv.repeats;
  for (const auto& r : activity_rows(s))
    bars.rows.push_back({data.context.predictor_names[r.predictor], r.least, r.lean, r.least_full, r.lean_full});
  return bars;
}

// The text select prints.
void print_selection(std::ostream& out, const Selection& s, const SelectData& data,
                     const SelectArgs& args) {
  const Path<double>& path = s.cv.full_path;
  const auto& prep = path.preparation();
  out << fmt::format("{} path of {} on {} predictors, {} rows used ({})\n",
                     to_string(path.options().variant),
                     data.context.response, data.context.predictor_names.size(),
                     prep.used_observations, data.context.source);
  print_audit_with_tests(out, s, data);
  print_health_and_notes(out, s);
  print_test_notes(out, s, data);
  print_cross_validation(out, s, args);
  print_criteria(out, s);
  print_choice_coefficients(out, s, data);
  print_activity(out, s, data);
  print_adjusted(out, s, data);
  out << '\n';
  for (const auto& line : caution_lines(true)) out << "caution: " << line << '\n';
}

// The numbers of the HTML report (issue 19, point 3): the two choices and
// the coefficients at each, the criteria at every knot, the entry tests.
// Cells hold the digits of the printout (shown()), so the page and the text
// agree; the JSON keeps every digit.
charts::ReportTable choices_table(const Selection& s, const SelectData& data,
                                  const SelectArgs& args) {
  const Path<double>& path = s.cv.full_path;
  const auto& names = data.context.predictor_names;
  const ChoiceSentences said = choice_sentences(s);
  charts::ReportTable t;
  t.heading = "Choices of the penalty";
  t.id = "choices";
  t.lead = {fmt::format("Exact cross-validation: {}; the curve is {} quadratic pieces on mu in "
                        "[{}, {}]. Exact means the grid-free minimizer of this K-fold curve, not "
                        "of the unknown prediction error.",
                        folds_phrase(s, args), s.cv.pieces.size(), shown(s.cv.mu_low),
                        shown(s.cv.mu_high)),
            said.least + ".", said.parsimonious + ": " + said.threshold + "."};
  t.columns = {"predictor", "at the least CV error", "parsimonious"};
  const Solution<double> least = path.at_penalty(s.cv.minimum.lambda);
  const Solution<double> lean = path.at_penalty(s.cv.parsimonious.lambda);
  t.rows.push_back({"(intercept)", shown(least.intercept, 8), shown(lean.intercept, 8)});
  std::size_t zero = 0;
  for (std::size_t j = 0; j < names.size(); ++j) {
    const double a = least.coefficients(static_cast<Index>(j)),
                 b = lean.coefficients(static_cast<Index>(j));
    if (a == 0 && b == 0) {
      ++zero;
      continue;
    }
    t.rows.push_back({names[j], shown(a, 8), shown(b, 8)});
  }
  t.notes.push_back("Coefficients on the original scale of the data, intercept first.");
  if (zero) t.notes.push_back(fmt::format("{} more predictors are 0 at both choices.", zero));
  return t;
}

charts::ReportTable criteria_table(const Selection& s) {
  charts::ReportTable t;
  t.heading = "Information criteria";
  t.id = "criteria";
  if (!s.criteria) {
    t.lead = {"Not computed: " + s.criteria_note};
    return t;
  }
  const auto& ic = *s.criteria;
  t.lead = {
      fmt::format("Mallows' Cp, AIC and BIC at every knot of the path; noise variance {} "
                  "({}).",
                  shown(ic.noise_variance), noise_source_phrase(ic))};
  for (const auto& [label, i] : {std::pair<const char*, std::size_t>{"Mallows' Cp", ic.best_cp},
                                 {"AIC", ic.best_aic},
                                 {"BIC", ic.best_bic}}) {
    const auto& c = ic.knots[i];
    t.lead.push_back(fmt::format("{} is least at step {}: lambda {}, mu {}, {} nonzero.", label,
                                 c.step, shown(c.penalty, 7), shown(c.mu, 7), c.nonzero));
    if (std::find(t.marked_rows.begin(), t.marked_rows.end(), i) == t.marked_rows.end())
      t.marked_rows.push_back(i);
  }
  t.columns = {"step", "lambda", "mu", "nonzero", "d", "RSS", "Mallows' Cp", "AIC", "BIC"};
  t.text_columns.assign(t.columns.size(), false);
  for (const auto& c : ic.knots)
    t.rows.push_back({std::to_string(c.step), shown(c.penalty, 7), shown(c.mu, 7),
                      std::to_string(c.nonzero), shown(c.degrees_of_freedom), shown(c.rss, 7),
                      shown(c.mallows_cp, 7), shown(c.aic, 7), shown(c.bic, 7)});
  t.marked_meaning = "Highlighted: a step where at least one criterion is least.";
  t.notes = {criteria_reading(s) + ".",
             "AIC is not defined (-) where RSS = 0 or d reaches the number of rows."};
  return t;
}

charts::ReportTable entry_tests_table(const Selection& s, const SelectData& data) {
  charts::ReportTable t;
  t.heading = "Entry tests";
  t.id = "entry-tests";
  std::string first_step = first_step_phrase(s, data);
  if (!first_step.empty()) first_step[0] = 'F';
  if (!s.significance) {
    t.lead = {"Not computed: " + s.significance_note};
    if (!first_step.empty()) t.lead.push_back(first_step + ".");
    return t;
  }
  const auto& sig = *s.significance;
  const auto& names = data.context.predictor_names;
  t.lead = {"Each entry of the path: " + tests_phrase(sig) + "."};
  if (!first_step.empty()) t.lead.push_back(first_step + ".");
  t.columns = {"step",           "predictor",   "sign", "lambda", "mu", "covariance statistic",
               "p (covariance)", "p (spacing)", "note"};
  t.text_columns = {false, true, false, false, false, false, false, false, true};
  for (const auto& e : sig.entries)
    t.rows.push_back({std::to_string(e.step), names[static_cast<std::size_t>(e.predictor)],
                      e.sign > 0 ? "+" : "\xE2\x88\x92", shown(e.penalty),
                      shown(e.penalty / s.cv.full_scale), shown(e.covariance_statistic, 4),
                      shown_p_value(e.covariance_p_value), shown_p_value(e.spacing_p_value),
                      e.note});
  t.notes = test_reading_notes();
  return t;
}

// The stability counts as a table of the report (only with more than one seed).
charts::ReportTable stability_table(const Selection& s, const SelectData& data) {
  charts::ReportTable t;
  t.heading = "Stability across folds and seeds";
  t.id = "stability";
  t.lead = {"Each predictor's " + activity_reading(s) + ".", repeats_phrase(s) + "."};
  t.columns = {"predictor", "at the least CV error", "in the full path", "parsimonious", "in the full path"};
  t.text_columns = {true, false, true, false, true};
  const auto& names = data.context.predictor_names;
  const auto rows = activity_rows(s);
  for (const auto& r : rows)
    t.rows.push_back({names[r.predictor], shown_share(r.least), r.least_full ? "yes" : "no", shown_share(r.lean),
                      r.lean_full ? "yes" : "no"});
  if (const std::string more = unlisted_activity(rows.size(), names.size()); !more.empty())
    t.notes.push_back(more + ".");
  return t;
}

std::vector<charts::ReportTable> report_tables(const Selection& s, const SelectData& data,
                                               const SelectArgs& args) {
  std::vector<charts::ReportTable> tables{choices_table(s, data, args), criteria_table(s),
                                          entry_tests_table(s, data), adjusted_table(s, data)};
  if (s.cv.repeats > 1) tables.insert(tables.begin() + 1, stability_table(s, data));
  return tables;
}

json choice_json(const CurvePoint<double>& c, const Path<double>& path,
                 const std::vector<std::string>& names) {
  const Solution<double> s = path.at_penalty(c.lambda);
  // Only the nonzero coefficients, as the path document's knots list them.
  json coefficients = json::object();
  for (std::size_t j = 0; j < names.size(); ++j)
    if (s.coefficients(static_cast<Index>(j)) != 0)
      coefficients[names[j]] = s.coefficients(static_cast<Index>(j));
  return json{{"penalty", c.lambda},
              {"mu", c.mu},
              {"cv_error", c.error},
              {"standard_error", c.standard_error},
              {"active", active_count(path, c.lambda)},
              {"intercept", s.intercept},
              {"coefficients", coefficients}};
}

// The stability counts of every predictor at both choices (only with more
// than one seed).
json stability_json(const Selection& s, const std::vector<std::string>& names) {
  auto at = [](const PredictorActivity& a, std::size_t j) {
    return json{{"fraction", a.fraction(j)},
                {"fold_paths_active", a.active_in_folds[j]},
                {"full_path_active", static_cast<bool>(a.active_in_full_path[j])}};
  };
  json predictors = json::array();
  for (std::size_t j = 0; j < names.size(); ++j)
    predictors.push_back(json{{"predictor", names[j]},
                              {"minimum", at(s.least_activity, j)},
                              {"parsimonious", at(s.lean_activity, j)}});
  return json{{"fold_paths", s.least_activity.fold_paths},
              {"reading", activity_reading(s)},
              {"predictors", predictors}};
}

json selection_document(const Selection& s, const SelectData& data, const SelectArgs& args) {
  const Path<double>& path = s.cv.full_path;
  const auto& names = data.context.predictor_names;
  const auto& cv = s.cv;
  json doc;
  doc["format"] = "knotpath-selection";
  doc["format_version"] = 1;
  doc["program"] = json{{"name", "knotpath"}, {"version", version()}};
  if (!s.arithmetic.empty()) {
    doc["precision"] = s.precision;
    doc["precision"]["numbers"] =
        "computed in this arithmetic; written as the nearest doubles (\"path\" holds the path "
        "with every digit)";
  }
  doc["health"] = s.health;
  doc["audit_notes"] = s.notes;
  json folds{{"count", cv.folds_per_repeat()}};
  if (!args.fold_column.empty()) {
    folds["from"] = "column";
    folds["column"] = args.fold_column;
  } else if (args.leave_one_out) {
    folds["from"] = "leave-one-out";
  } else {
    folds["from"] = "seed";
    folds["seed"] = args.seed;
    if (cv.repeats > 1) {  // members only when repeated: one seed's document is unchanged
      folds["repeats"] = cv.repeats;
      json seeds = json::array();
      for (std::size_t r = 0; r < cv.repeats; ++r) seeds.push_back(repeat_seed(args.seed, r));
      folds["seeds"] = seeds;
      folds["averaging"] = repeats_phrase(s);
    }
  }
  json curve = json::array();
  for (const double mu : cv.knot_mus()) {
    const CurveDetail<double> detail = cv.detail_at_mu(mu);
    const CurvePoint<double>& p = detail.point;
    curve.push_back(json{{"mu", p.mu},
                         {"penalty", p.lambda},
                         {"cv_error", p.error},
                         {"standard_error", p.standard_error}});
    if (cv.repeats > 1) curve.back()["spread"] = detail.spread;
  }
  doc["cross_validation"] = json{{"folds", folds},
                                 {"mu_high", cv.mu_high},
                                 {"mu_low", cv.mu_low},
                                 {"pieces", cv.pieces.size()},
                                 {"minimum", choice_json(cv.minimum, path, names)},
                                 {"parsimonious", choice_json(cv.parsimonious, path, names)},
                                 {"curve_at_knots", curve}};
  if (s.criteria) {
    const auto& ic = *s.criteria;
    json knots = json::array();
    for (const auto& c : ic.knots)
      knots.push_back(json{{"step", c.step},
                           {"penalty", c.penalty},
                           {"mu", c.mu},
                           {"nonzero", c.nonzero},
                           {"parameters", c.parameters},
                           {"rss", c.rss},
                           {"mallows_cp", c.mallows_cp},
                           {"degrees_of_freedom", c.degrees_of_freedom},
                           {"aic", number_or_null(c.aic)},
                           {"bic", c.bic}});
    auto best = [&](std::size_t i) {
      const auto& c = ic.knots[i];
      return json{{"step", c.step}, {"penalty", c.penalty}, {"mu", c.mu}, {"nonzero", c.nonzero}};
    };
    doc["information_criteria"] = json{
        {"noise_variance", ic.noise_variance}, {"noise_variance_source", source_name(ic.source)},
        {"residual_df", whole_or_fraction(ic.residual_df)}, {"observations", ic.observations},
        {"sample_size", whole_or_fraction(ic.sample_size)},
        {"best_mallows_cp", best(ic.best_cp)}, {"best_aic", best(ic.best_aic)},
        {"best_bic", best(ic.best_bic)},       {"knots", knots}};
  } else {
    doc["information_criteria"] = json{{"note", s.criteria_note}};
  }
  if (s.significance) {
    const auto& sig = *s.significance;
    json entries = json::array();
    for (const auto& e : sig.entries)
      entries.push_back(json{{"step", e.step},
                             {"predictor", names[static_cast<std::size_t>(e.predictor)]},
                             {"sign", e.sign},
                             {"penalty", e.penalty},
                             {"covariance_statistic", number_or_null(e.covariance_statistic)},
                             {"covariance_p_value", number_or_null(e.covariance_p_value)},
                             {"spacing_p_value", number_or_null(e.spacing_p_value)},
                             {"note", e.note}});
    doc["significance"] =
        json{{"noise_variance", sig.noise_variance},
             {"residual_df", sig.residual_df},
             {"covariance_reference", sig.residual_df > 0 ? "F(2, residual_df)" : "Exp(1)"},
             {"entries", entries}};
  } else {
    doc["significance"] = json{{"note", s.significance_note}};
  }
  if (s.significance) doc["significance"]["reading"] = test_reading_notes();
  if (s.first_step) {
    const FirstStepT& f = *s.first_step;
    doc["significance"]["first_step_unknown_variance"] = json{
        {"predictor", f.predictor >= 0 ? json(names[static_cast<std::size_t>(f.predictor)]) : json(nullptr)},
        {"sign", f.sign},
        {"t_statistic", number_or_null(f.statistic)},
        {"degrees_of_freedom", number_or_null(f.degrees_of_freedom)},
        {"truncation_lower", number_or_null(f.lower)},
        {"truncation_upper", number_or_null(f.upper)},
        {"p_value", number_or_null(f.p_value)},
        {"null_hypothesis", "no predictor matters (E y constant); Gaussian errors, fixed design; sigma unknown"},
        {"note", f.note}};
  } else if (!s.first_step_note.empty()) {
    doc["significance"]["first_step_unknown_variance"] = json{{"note", s.first_step_note}};
  }
  doc["adjusted_inference"] = adjusted_json(s, data);
  doc["cross_validation"]["one_standard_error_rule"] =
      json{{"threshold", cv.minimum.error + cv.minimum.standard_error},
           {"standard_error_at_minimum", cv.minimum.standard_error}};
  if (cv.repeats > 1) doc["cross_validation"]["stability"] = stability_json(s, names);
  doc["cautions"] = caution_lines(true);
  doc["path"] =
      s.path_document.is_null() ? io::path_document(path, data.context) : s.path_document;
  return doc;
}

// The arithmetics select offers beyond double: every floating one of
// --precision; not exact, since cross-validation compares folds on the
// size-free penalty (a square root with standardized columns, scaling.hpp)
// and its standard errors are square roots. --report
// draws double charts, as with trace.
void check_select_precision(const SelectArgs& args) {
  const Arithmetic arithmetic = arithmetic_of(args.precision);
  if (arithmetic == Arithmetic::exact)
    throw failure(exit_usage,
                  "select --precision exact is unavailable: cross-validation compares the folds on "
                  "the size-free penalty (" + std::string(size_free_penalty_rule) +
                      "), and the square roots of that rule with standardized columns and of the "
                      "standard errors have no exact rational value; use --precision 50 or --precision "
                      "mpfr (trace --precision exact traces the path itself exactly)");
  if (!args.report_dir.empty())
    throw failure(exit_usage,
                  "--report draws the double path: it cannot be combined with --precision");
  check_precision(args.precision, args.model);
}

// The selection in the arithmetic of --precision: the table's cells parsed
// exactly from their decimal text, then everything computed in it.
Selection run_in_precision(SelectData& data, const CrossValidationOptions& cv,
                           const SelectArgs& args) {
  return with_arithmetic(arithmetic_of(args.precision), [&](auto zero) {
    using Scalar = decltype(zero);
    if constexpr (detail::is_exact_v<Scalar>) {
      throw failure(exit_usage, "select --precision exact is unavailable");
      return Selection{};
    } else {
      const TableData<Scalar> d = table_data<Scalar>(data.text);
      return run_selection<Scalar>(data, d.x, d.y, d.w, cv, args.noise_variance, !args.no_tests, args.level,
                                   args.fdr);
    }
  });
}

// Status of a finished run: numerical trouble when the safety bound on
// steps stopped the full path or a fold's path.
int finished(const CrossValidation<double>& cv) {
  bool hit = cv.full_path.stop_reason() == StopReason::step_limit;
  for (const auto& f : cv.folds) hit = hit || f.path.stop_reason() == StopReason::step_limit;
  return step_limit_status(hit, "a path");
}

}  // namespace

CLI::App* add_select_command(CLI::App& app, Global& global) {
  auto args = std::make_shared<SelectArgs>();
  CLI::App* command = app.add_subcommand("select",
                                         "Choose a penalty by exact cross-validation, compare "
                                         "Cp/AIC/BIC, and test each entry of the path");
  command
      ->add_option("TABLE", args->tables,
                   "Delimited text table with a header row; - reads stdin. Several tables are read as the shards "
                   "of one (the same columns), each in blocks into its folds' statistics")
      ->required();
  add_model_options(*command, args->model);
  add_pieces_option(*command, args->model);
  auto* folds =
      command->add_option("--folds", args->folds, "Number of cross-validation folds (>= 2)")
          ->check(CLI::Range(std::size_t{2}, std::size_t{1000000}))
          ->default_str("10")
          ->group("Cross-validation");
  auto* loo = command->add_flag("--leave-one-out", args->leave_one_out, "Every row is its own fold")
                  ->group("Cross-validation");
  auto* seed = command->add_option("--seed", args->seed, "Seed of the fold assignment")
                   ->default_str(std::to_string(CrossValidationOptions{}.seed))
                   ->group("Cross-validation");
  auto* column =
      command
          ->add_option("--fold-column", args->fold_column,
                       "Column of fold labels (whole numbers; each label >= 0 is a fold, a "
                       "negative label keeps the row in every training set); not a predictor")
          ->group("Cross-validation");
  command
      ->add_option("--repeats", args->repeats,
                   "Draw the folds this many times, from seeds SEED, SEED+1, ...; the curve is their "
                   "mean and each predictor's share of active fold paths is listed (not with "
                   "--leave-one-out or --fold-column)")
      ->check(CLI::Range(std::size_t{1}, std::size_t{10000}))
      ->default_str("1")
      ->group("Cross-validation");
  folds->excludes(loo)->excludes(column);
  loo->excludes(column)->excludes(seed);
  column->excludes(seed);
  command
      ->add_option("--noise-variance", args->noise_variance,
                   "Noise variance sigma^2 for the criteria and tests (default: estimated)")
      ->check(positive_number())
      ->group("Criteria");
  command
      ->add_flag("--no-tests", args->no_tests,
                 "Skip the covariance and spacing tests of each entry and the adjusted inference")
      ->group("Criteria");
  command
      ->add_option("--level", args->level,
                   "Confidence level of the selection-adjusted and naive intervals, in (0, 1)")
      ->check(CLI::Range(1e-6, 1 - 1e-6))
      ->default_str("0.9")
      ->group("Criteria");
  command
      ->add_option("--fdr", args->fdr,
                   "False discovery rate of the ForwardStop rule over the entries' adjusted p-values")
      ->check(CLI::Range(1e-6, 1 - 1e-6))
      ->default_str("0.1")
      ->group("Criteria");
  add_reading_options(*command, args->model.reading, args->model.block_rows,
                      "into one set of sufficient statistics per fold; seeded folds read the table twice",
                      "blocks once the rows far outnumber the predictors, when that gives the choices of "
                      "reading whole; never with --leave-one-out, --repeats or --precision");
  add_precision_options(*command, args->precision);
  command
      ->add_option("--json", args->json_file,
                   "Write the selection and the path as JSON to this file")
      ->group("Output");
  command
      ->add_option("--report", args->report_dir,
                   "Write an HTML report with charts (report.html and SVG files) into this folder")
      ->group("Output");
  command
      ->add_option("--save", args->save_file,
                   std::string("Save the path with its two choices (") + least_error_choice + ", " +
                       parsimonious_choice + ") for knotpath predict and knotpath at --path --choice")
      ->group("Output");
  command->footer(
      "Example:\n"
      "  knotpath select patients.csv --response progression --folds 10 --seed 7 --json "
      "selection.json "
      "--report report\n"
      "  knotpath select part1.csv part2.csv part3.csv --response progression --fold-column fold --json "
      "selection.json\n"
      "  mpirun -n 4 knotpath select patients.csv --pieces 8 --response progression --json selection.json\n"
      "Several tables (or --pieces) are the shards of one: each is read in blocks into its folds' statistics and\n"
      "the shards' statistics are merged in one fixed tree, so under mpirun (each process reading its own\n"
      "shards) the choices are the same bits for any number of processes. Seeded folds are drawn over all the\n"
      "rows in shard order (a first pass counts them), as for the one table of the same rows.\n");
  command->callback([args, &global] {
    const bool in_double = args->precision.precision == "double" && args->precision.digits == 0;
    if (!in_double) check_select_precision(*args);
    CrossValidationOptions cv;
    cv.folds = args->folds;
    cv.leave_one_out = args->leave_one_out;
    cv.seed = args->seed;
    cv.repeats = args->repeats;
    try {  // a usage error before the table is read
      cv.validate_repeats(!args->fold_column.empty());
    } catch (const invalid_option& e) {
      throw failure(exit_usage, e.what());
    }
    const bool shards = select_reads_shards(*args);
    if (!shards) {
      if (Ranks::world().rank() != 0) throw quiet_exit{0};  // one table: rank 0 reads it
      args->table = args->tables.front();
    }
    SelectData data = shards                                  ? read_select_shards(*args, cv, global, in_double)
                      : select_reads_blocks(*args, in_double) ? read_select_blocks(*args, cv, global)
                                                              : read_select_data(*args, global, !in_double);
    cv.fold_of = data.fold_of;
    cv.threads = args->model.threads;  // --threads: the folds in parallel
    Selection s = in_double ? run_selection<double>(data, data.x, data.y, data.w, cv, args->noise_variance,
                                                    !args->no_tests, args->level, args->fdr,
                                                    data.parts ? &*data.parts : nullptr)
                            : run_in_precision(data, cv, *args);
    require_finite_path(s.cv.full_path);
    std::ostringstream text;
    print_selection(text, s, data, *args);
    // Outputs only after everything is computed: an error writes nothing.
    json doc;
    if (!args->json_file.empty()) doc = selection_document(s, data, *args);
    charts::SelectionCurve curve;
    if (!args->report_dir.empty()) {
      curve = charts::selection_curve(s.cv, s.criteria ? &*s.criteria : nullptr);
      curve.error_unit = "squared units of " + data.context.response;
    }
    data.progress.reset();  // clears the progress line before printing
    std::cout << text.str();
    if (!args->json_file.empty()) {
      write_output(args->json_file, [&](std::ostream& out) { out << doc.dump(2) << '\n'; });
      std::cout << "wrote " << args->json_file << '\n';
    }
    if (!args->save_file.empty()) {
      write_saved(args->save_file, s.cv.full_path, data.context,
                  {{least_error_choice, s.cv.minimum.lambda}, {parsimonious_choice, s.cv.parsimonious.lambda}});
      std::cout << "wrote " << args->save_file << '\n';
    }
    if (!args->report_dir.empty()) {
      const auto files = write_report_dir(args->report_dir, s.cv.full_path, data.context, &curve,
                                          report_tables(s, data, *args), intervals_chart(s, data),
                                          stability_chart(s, data));
      std::cout << "wrote " << files.front() << " (HTML report; charts beside it)\n";
    }
    std::cout.flush();
    global.status = finished(s.cv);
  });
  return command;
}

}  // namespace knotpath::cli
