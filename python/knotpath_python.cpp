/// \file knotpath_python.cpp
/// \brief knotpath._core, the compiled part of the Python module: a thin
/// pybind11 binding over the library (trace(), trace_sparse(), Path and its
/// queries, the audit, saved paths, cross_validate() with its repeats and the
/// queries of its kept result (the curves and predictor_activity() at any
/// point), information_criteria(), entry_significance(), first_step_t_test(),
/// cross_check()). It
/// implements no method of its own;
/// the pure-Python layer (knotpath/__init__.py) turns DataFrames, names and
/// sparse matrices into the arrays taken here, and words into options.
///
/// Memory (the contract the module documents):
///  - a Fortran-ordered (column-major) float64 array is read in place
///    through an Eigen::Map: the binding makes no copy, and the storage the
///    library chooses makes only its own (the dense storage's centred, scaled
///    copy; none for the view and Gram storages);
///  - a C-ordered one is read in place through a row-major Map, except by
///    the view storage, which works on one column-major copy (trace());
///  - a CSC matrix's arrays are copied once into an Eigen::SparseMatrix,
///    the type trace_sparse() and its design hold a reference to;
///  - the responses, weights and new rows (vectors and small blocks) are
///    copied into Eigen objects; the caller's arrays are never written.
/// The GIL is released while the library works; a trace polls Ctrl-C through
/// TraceOptions::interrupt_requested (at most every 50 ms, see below).

#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <chrono>
#include <fstream>
#include <memory>
#include <sstream>
#include <string>
#include <utility>
#include <vector>

#include <knotpath/io/report.hpp>
#include <knotpath/io/saved.hpp>
#include <knotpath/knotpath.hpp>
#include <knotpath/version.hpp>

namespace py = pybind11;
namespace kp = knotpath;

namespace {

using DoubleArray = py::array_t<double, py::array::c_style | py::array::forcecast>;
using ColumnMajorMap = Eigen::Map<const kp::Matrix<double>>;
using RowMajorMap =
    Eigen::Map<const Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>>;

// ---------------------------------------------------------------- arrays

/// A 1-D array (any numeric dtype, converted) as an Eigen vector; None or
/// an empty object gives an empty vector (the library's "no weights").
kp::Vector<double> vector_of(const py::object& given, const char* what) {
  if (given.is_none()) return {};
  const DoubleArray a = DoubleArray::ensure(given);
  if (!a) throw kp::invalid_option(what, "must be a one-dimensional array of numbers");
  if (a.ndim() != 1)
    throw kp::invalid_option(
        what, "must be one-dimensional (got " + std::to_string(a.ndim()) + " dimensions)");
  return Eigen::Map<const kp::Vector<double>>(a.data(), a.shape(0));
}

/// A row-major numpy block of a column-major matrix.
py::array_t<double> array_of(const kp::Matrix<double>& m) {
  py::array_t<double> out({m.rows(), m.cols()});
  auto view = out.mutable_unchecked<2>();
  for (Eigen::Index i = 0; i < m.rows(); ++i)
    for (Eigen::Index j = 0; j < m.cols(); ++j) view(i, j) = m(i, j);
  return out;
}

/// The layout of a 2-D float64 design the binding reads in place.
enum class Layout { column_major, row_major };

/// Checks a dense design handed over by the Python layer (which converts
/// any other dtype or a strided array once) and says how to read it.
Layout layout_of(const py::array& x) {
  if (x.ndim() != 2) throw kp::invalid_option("x", "must be a two-dimensional array");
  if (!x.dtype().is(py::dtype::of<double>()))
    throw kp::invalid_option("x", "must hold float64 values");
  if (x.flags() & py::array::f_style) return Layout::column_major;
  if (x.flags() & py::array::c_style) return Layout::row_major;
  throw kp::invalid_option("x",
                           "must be contiguous in Fortran (column-major) or C (row-major) order");
}

/// Calls f with an Eigen::Map over the design's own memory.
template <class F>
auto with_design(const py::array& x, F&& f) {
  const auto* data = static_cast<const double*>(x.data());
  const Eigen::Index n = x.shape(0), p = x.shape(1);
  if (layout_of(x) == Layout::column_major) return f(ColumnMajorMap(data, n, p));
  return f(RowMajorMap(data, n, p));
}

/// A copy of a dense design as the library's column-major Matrix (the
/// selection entry points take that type).
kp::Matrix<double> matrix_of(const py::array& x) {
  return with_design(x, [](const auto& map) { return kp::Matrix<double>(map); });
}

// ---------------------------------------------------------------- options

/// The enum value whose library word (to_string) is `word`.
template <class Enum>
Enum enum_of(const py::handle& value, const char* field, std::initializer_list<Enum> values) {
  const std::string word = py::str(value);
  std::string known;
  for (Enum e : values) {
    if (kp::to_string(e) == word) return e;
    known += (known.empty() ? "" : ", ") + kp::to_string(e);
  }
  throw kp::invalid_option(field, "\"" + word + "\" is not one of " + known);
}

/// Ctrl-C while the GIL is released: Python only records the signal, so
/// the trace asks for it (TraceOptions::interrupt_requested, once per knot).
/// Taking the GIL costs microseconds, so the flag is looked at no more than
/// every 50 ms; a knot costs no more than a clock read otherwise.
bool python_interrupt_requested() {
  using clock = std::chrono::steady_clock;
  thread_local clock::time_point last = clock::now();
  const clock::time_point now = clock::now();
  if (now - last < std::chrono::milliseconds(50)) return false;
  last = now;
  py::gil_scoped_acquire gil;
  return PyErr_CheckSignals() != 0;  // the KeyboardInterrupt stays set for the caller
}

/// TraceOptions from the keyword arguments the Python layer passes (field
/// names of the C++ struct; enum values as the library's words). The
/// library's validate() checks the values when the trace starts.
kp::TraceOptions options_of(const py::dict& given) {
  kp::TraceOptions o;
  for (const auto& [key, value] : given) {
    const std::string field = py::str(key);
    if (value.is_none()) continue;  // the default
    if (field == "variant")
      o.variant = enum_of(value, "variant", {kp::Variant::lasso, kp::Variant::least_angle});
    else if (field == "storage")
      o.storage = enum_of(
          value, "storage",
          {kp::Storage::automatic, kp::Storage::dense, kp::Storage::gram, kp::Storage::view});
    else if (field == "with_intercept")
      o.with_intercept = value.cast<bool>();
    else if (field == "standardize")
      o.standardize = value.cast<bool>();
    else if (field == "penalty_scales")
      o.penalty_scales = value.cast<std::vector<double>>();
    else if (field == "unpenalized")
      o.unpenalized = value.cast<std::vector<std::size_t>>();
    else if (field == "left_out")
      o.left_out = value.cast<std::vector<std::size_t>>();
    else if (field == "sign_constraints") {
      for (const auto& word : value)
        o.sign_constraints.push_back(
            enum_of(word, "sign_constraints",
                    {kp::SignConstraint::none, kp::SignConstraint::nonnegative,
                     kp::SignConstraint::nonpositive}));
    } else if (field == "ridge")
      o.ridge = value.cast<double>();
    else if (field == "max_knots")
      o.max_knots = value.cast<std::size_t>();
    else if (field == "min_penalty")
      o.min_penalty = value.cast<double>();
    else if (field == "max_active")
      o.max_active = value.cast<std::size_t>();
    else if (field == "collinearity_tolerance")
      o.collinearity_tolerance = value.cast<double>();
    else if (field == "tie_tolerance")
      o.tie_tolerance = value.cast<double>();
    else if (field == "max_steps")
      o.max_steps = value.cast<std::size_t>();
    else if (field == "suspect_threshold")
      o.suspect_threshold = value.cast<double>();
    else if (field == "threads")
      o.threads = value.cast<std::size_t>();
    else if (field == "predictor_names")
      o.predictor_names = value.cast<std::vector<std::string>>();
    else
      throw kp::invalid_option(field, "is not an option of a trace");
  }
  o.interrupt_requested = python_interrupt_requested;
  return o;
}

/// The options a path was traced with, as a dict of the same keys.
py::dict options_dict(const kp::TraceOptions& o) {
  py::dict d;
  d["variant"] = kp::to_string(o.variant);
  d["storage"] = kp::to_string(o.storage);
  d["with_intercept"] = o.with_intercept;
  d["standardize"] = o.standardize;
  d["penalty_scales"] = o.penalty_scales;
  d["unpenalized"] = o.unpenalized;
  d["left_out"] = o.left_out;
  std::vector<std::string> signs;
  for (auto c : o.sign_constraints) signs.push_back(kp::to_string(c));
  d["sign_constraints"] = signs;
  d["ridge"] = o.ridge;
  d["max_knots"] = o.max_knots;
  d["min_penalty"] = o.min_penalty;
  d["max_active"] = o.max_active;
  d["collinearity_tolerance"] = o.collinearity_tolerance;
  d["tie_tolerance"] = o.tie_tolerance;
  d["max_steps"] = o.max_steps;
  d["suspect_threshold"] = o.suspect_threshold;
  d["threads"] = o.threads;
  return d;
}

// ---------------------------------------------------------------- the path

/// A traced or loaded path with what a saved file keeps beside it.
struct PathHandle {
  std::shared_ptr<const kp::Path<double>> path;       ///< immutable, shared by copies
  std::string response;                               ///< the response's name ("" when unknown)
  std::vector<kp::io::NamedPenalty<double>> choices;  ///< named penalties (a selection's)

  const kp::Path<double>& operator*() const { return *path; }
  const kp::Path<double>* operator->() const { return path.get(); }
};

PathHandle handle_of(kp::Path<double>&& path, std::string response) {
  return {std::make_shared<const kp::Path<double>>(std::move(path)), std::move(response), {}};
}

std::vector<std::string> names_of(const kp::Path<double>& path) {
  std::vector<std::string> names;
  for (Eigen::Index j = 0; j < path.predictor_count(); ++j) names.push_back(path.predictor_name(j));
  return names;
}

/// The coefficients of every knot, knots x p (dense: 8 k p bytes, built
/// only when asked for; the Python side's Path.knots["coefficients"]).
py::array_t<double> knot_coefficients(const PathHandle& handle) {
  const kp::Path<double>& path = *handle;
  const auto& knots = path.knots();
  const auto k = static_cast<py::ssize_t>(knots.size());
  py::array_t<double> coefficients({k, static_cast<py::ssize_t>(path.predictor_count())});
  auto beta = coefficients.mutable_unchecked<2>();
  for (py::ssize_t i = 0; i < k; ++i) {
    for (py::ssize_t j = 0; j < beta.shape(1); ++j) beta(i, j) = 0.0;
    for (const auto& [j, value] : knots[static_cast<std::size_t>(i)].coefficients) beta(i, j) = value;
  }
  return coefficients;
}

/// The knot table as columns (the CSV's columns, DESIGN.md, plus the rows'
/// health and both L1 norms): numpy arrays, events and names as lists; the
/// coefficients apart (knot_coefficients()).
py::dict knot_columns(const PathHandle& handle) {
  const kp::Path<double>& path = *handle;
  const auto& knots = path.knots();
  const auto k = static_cast<py::ssize_t>(knots.size());
  py::array_t<long long> step(k), predictor(k), active(k);
  py::array_t<double> penalty(k), mu(k), penalized_l1(k), plain_l1(k), r_squared(k), intercept(k),
      rss(k), estimated_error(k);
  py::array_t<bool> suspect(k);
  std::vector<std::string> events, names;
  for (py::ssize_t i = 0; i < k; ++i) {
    const kp::Knot<double>& knot = knots[static_cast<std::size_t>(i)];
    step.mutable_at(i) = knot.step;
    predictor.mutable_at(i) = knot.predictor;
    active.mutable_at(i) = knot.active_count;
    penalty.mutable_at(i) = knot.penalty;
    mu.mutable_at(i) = path.mu_of(knot.penalty);
    penalized_l1.mutable_at(i) = knot.penalized_l1;
    plain_l1.mutable_at(i) = knot.plain_l1;
    const auto r2 = kp::io::r_squared(path, knot.rss);
    r_squared.mutable_at(i) = r2 ? *r2 : std::numeric_limits<double>::quiet_NaN();
    intercept.mutable_at(i) = knot.intercept;
    rss.mutable_at(i) = knot.rss;
    estimated_error.mutable_at(i) = knot.estimated_error;
    suspect.mutable_at(i) = knot.suspect;
    events.push_back(kp::io::event_word(path, knot));
    names.push_back(knot.predictor >= 0 ? path.predictor_name(knot.predictor) : std::string());
  }
  py::dict d;
  d["step"] = step;
  d["penalty"] = penalty;
  d["mu"] = mu;
  d["event"] = events;
  d["predictor"] = names;
  d["predictor_index"] = predictor;
  d["active_count"] = active;
  d["penalized_l1"] = penalized_l1;
  d["plain_l1"] = plain_l1;
  d["r_squared"] = r_squared;
  d["intercept"] = intercept;
  d["rss"] = rss;
  d["estimated_error"] = estimated_error;
  d["suspect"] = suspect;
  return d;
}

/// The kinds of point a query names, each answered by its Path query.
kp::Solution<double> solution_at(const kp::Path<double>& path, const std::string& kind,
                                 double value) {
  if (kind == "penalty") return path.at_penalty(value);
  if (kind == "mu") return path.at_mu(value);
  if (kind == "budget") return path.at_budget(value);
  if (kind == "relative_budget") return path.at_relative_budget(value);
  throw kp::invalid_query("no query at a \"" + kind +
                          "\" (penalty, mu, budget or relative_budget)");
}

/// Solutions at m points of one kind: rows of `coefficients` are points.
py::dict solutions(const PathHandle& handle, const std::string& kind, const py::object& values) {
  const kp::Vector<double> points = vector_of(values, kind.c_str());
  const kp::Path<double>& path = *handle;
  const auto m = static_cast<py::ssize_t>(points.size());
  const auto p = static_cast<py::ssize_t>(path.predictor_count());
  py::array_t<double> penalty(m), mu(m), intercept(m), penalized_l1(m), plain_l1(m),
      coefficients({m, p});
  py::array_t<bool> beyond(m);
  auto beta = coefficients.mutable_unchecked<2>();
  for (py::ssize_t i = 0; i < m; ++i) {
    const kp::Solution<double> s = solution_at(path, kind, points(i));
    penalty.mutable_at(i) = s.penalty;
    mu.mutable_at(i) = path.mu_of(s.penalty);
    intercept.mutable_at(i) = s.intercept;
    penalized_l1.mutable_at(i) = s.penalized_l1;
    plain_l1.mutable_at(i) = s.plain_l1;
    beyond.mutable_at(i) = s.beyond_path;
    for (py::ssize_t j = 0; j < p; ++j) beta(i, j) = s.coefficients(j);
  }
  py::dict d;
  d["penalty"] = penalty;
  d["mu"] = mu;
  d["intercept"] = intercept;
  d["penalized_l1"] = penalized_l1;
  d["plain_l1"] = plain_l1;
  d["coefficients"] = coefficients;
  d["beyond_path"] = beyond;
  d["stopped_path"] = path.stopped_early();
  return d;
}

/// Predictions for new rows at m points: rows x m. Penalties and mu go
/// through Path::predict_many (mu converted by Path::lambda_of, as at_mu
/// does); budgets through their solutions, with predict()'s formula.
py::array_t<double> predictions(const PathHandle& handle, const py::array& new_rows,
                                const std::string& kind, const py::object& values) {
  const kp::Path<double>& path = *handle;
  const kp::Matrix<double> rows = matrix_of(new_rows);
  const kp::Vector<double> points = vector_of(values, kind.c_str());
  if (kind == "penalty" || kind == "mu") {
    std::vector<double> lambdas;
    for (Eigen::Index i = 0; i < points.size(); ++i) {
      if (kind == "mu" && !(points(i) >= 0.0)) throw kp::invalid_query("mu must be >= 0");
      lambdas.push_back(kind == "mu" ? path.lambda_of(points(i)) : points(i));
    }
    return array_of(path.predict_many(rows, lambdas).values);
  }
  if (rows.cols() != path.predictor_count())
    throw kp::invalid_query("new rows have " + std::to_string(rows.cols()) +
                            " columns, the path has " + std::to_string(path.predictor_count()));
  kp::Matrix<double> out(rows.rows(), points.size());
  for (Eigen::Index i = 0; i < points.size(); ++i) {
    const kp::Solution<double> s = solution_at(path, kind, points(i));
    out.col(i) = rows * s.coefficients;
    out.col(i).array() += s.intercept;
  }
  return array_of(out);
}

/// The library's aligned audit (io::audit_text), with the module as its source.
std::string audit(const PathHandle& handle, const std::string& source) {
  kp::io::RunContext context;
  context.source = source;
  context.response = handle.response.empty() ? "the response" : handle.response;
  context.predictor_names = names_of(*handle);
  context.rows_read = static_cast<std::size_t>(handle->preparation().observations);
  return kp::io::audit_text(*handle, context);
}

void save(const PathHandle& handle, const std::string& file) {
  std::ostringstream text;
  kp::io::save_path(text, kp::io::SavedPath<double>{*handle, handle.response, handle.choices, {}});
  kp::io::write_atomically(file, [&](std::ostream& out) { out << text.str(); });
}

PathHandle load(const std::string& file) {
  std::ifstream in(file, std::ios::binary);
  if (!in) throw kp::io::saved_path_error(file, "cannot be opened");
  kp::io::SavedPath<double> saved = kp::io::load_path<double>(in, file);
  if (!saved.expanded.empty())
    throw kp::io::saved_path_error(file,
                                   "expands text columns into indicators, which the Python module "
                                   "does not do; predict from it with the knotpath program");
  PathHandle handle = handle_of(std::move(saved.path), saved.response);
  handle.choices = std::move(saved.choices);
  return handle;
}

// ---------------------------------------------------------------- tracing

PathHandle trace_dense(const py::array& x, const py::object& y, const py::object& weights,
                       const py::dict& given, const std::string& response) {
  const kp::TraceOptions options = options_of(given);
  const kp::Vector<double> response_values = vector_of(y, "response");
  const kp::Vector<double> w = vector_of(weights, "weights");
  layout_of(x);
  kp::Path<double> path;
  {
    py::gil_scoped_release release;
    path = with_design(
        x, [&](const auto& map) { return kp::trace<double>(map, response_values, options, w); });
  }
  return handle_of(std::move(path), response);
}

/// A CSC matrix as its three arrays (scipy's data, indices, indptr).
kp::SparseMatrix<double, int> sparse_of(
    const DoubleArray& data,
    const py::array_t<int, py::array::c_style | py::array::forcecast>& indices,
    const py::array_t<int, py::array::c_style | py::array::forcecast>& starts, Eigen::Index rows,
    Eigen::Index cols) {
  if (starts.size() != cols + 1 || indices.size() != data.size())
    throw kp::invalid_option("x", "is not a consistent compressed-column matrix");
  const Eigen::Map<const kp::SparseMatrix<double, int>> map(
      rows, cols, static_cast<Eigen::Index>(data.size()), starts.data(), indices.data(),
      data.data());
  return kp::SparseMatrix<double, int>(map);  // trace_sparse's design refers to this type
}

PathHandle trace_compressed(
    const DoubleArray& data,
    const py::array_t<int, py::array::c_style | py::array::forcecast>& indices,
    const py::array_t<int, py::array::c_style | py::array::forcecast>& starts, Eigen::Index rows,
    Eigen::Index cols, const py::object& y, const py::object& weights, const py::dict& given,
    const std::string& response) {
  const kp::TraceOptions options = options_of(given);
  const kp::Vector<double> response_values = vector_of(y, "response");
  const kp::Vector<double> w = vector_of(weights, "weights");
  kp::Path<double> path;
  {
    py::gil_scoped_release release;
    const kp::SparseMatrix<double, int> x = sparse_of(data, indices, starts, rows, cols);
    path = kp::trace_sparse<double, int>(x, response_values, options, w);
  }
  return handle_of(std::move(path), response);
}

// ---------------------------------------------------------------- selection

py::dict point_dict(const kp::CurvePoint<double>& point) {
  py::dict d;
  d["mu"] = point.mu;
  d["penalty"] = point.lambda;
  d["error"] = point.error;
  d["standard_error"] = point.standard_error;
  return d;
}

/// A finished cross-validation kept for the queries that follow it: the
/// curve, the repeats' curves and the stability counts at any penalty. The
/// full path's PathHandle shares it (an aliasing pointer to its full_path:
/// no copy), so the fold paths live as long as either.
struct CrossValidationHandle {
  std::shared_ptr<const kp::CrossValidation<double>> cv;  ///< immutable, shared with the full path

  const kp::CrossValidation<double>& operator*() const { return *cv; }
  const kp::CrossValidation<double>* operator->() const { return cv.get(); }
};

/// The size-free penalty of a point named by its kind: "mu" as it is,
/// "penalty" (the full data's lambda) through full_path.mu_of, the one
/// conversion cross_validation.hpp uses.
double mu_of_point(const kp::CrossValidation<double>& cv, const std::string& kind, double value) {
  if (kind == "mu") return value;
  if (kind == "penalty") return cv.full_path.mu_of(value);
  throw kp::invalid_query("no cross-validation query at a \"" + kind + "\" (penalty or mu)");
}

/// The averaged curve at m points and each repeat's curve there:
/// error (CV), standard_error (the mean of the repeats' SEs), spread (the
/// standard deviation of the repeats' curves), repeat_error (repeats x m).
py::dict curve_at(const CrossValidationHandle& handle, const std::string& kind,
                  const py::object& values) {
  const kp::CrossValidation<double>& cv = *handle;
  const kp::Vector<double> points = vector_of(values, kind.c_str());
  const auto m = static_cast<py::ssize_t>(points.size());
  const auto repeats = static_cast<py::ssize_t>(cv.repeats);
  py::array_t<double> mu(m), penalty(m), error(m), standard_error(m), spread(m),
      repeat_error({repeats, m});
  auto per_repeat = repeat_error.mutable_unchecked<2>();
  for (py::ssize_t i = 0; i < m; ++i) {
    const kp::CurveDetail<double> detail = cv.detail_at_mu(mu_of_point(cv, kind, points(i)));
    mu.mutable_at(i) = detail.point.mu;
    penalty.mutable_at(i) = detail.point.lambda;
    error.mutable_at(i) = detail.point.error;
    standard_error.mutable_at(i) = detail.point.standard_error;
    spread.mutable_at(i) = detail.spread;
    for (py::ssize_t r = 0; r < repeats; ++r)
      per_repeat(r, i) = detail.repeat_error[static_cast<std::size_t>(r)];
  }
  py::dict d;
  d["mu"] = mu;
  d["penalty"] = penalty;
  d["error"] = error;
  d["standard_error"] = standard_error;
  d["spread"] = spread;
  d["repeat_error"] = repeat_error;
  return d;
}

/// The stability counts at one point (predictor_activity()): per predictor,
/// the fold paths with a nonzero coefficient there, their fraction, and
/// whether the full path's coefficient is nonzero.
py::dict activity_at(const CrossValidationHandle& handle, const std::string& kind, double value) {
  const kp::CrossValidation<double>& cv = *handle;
  const double mu = mu_of_point(cv, kind, value);
  const kp::PredictorActivity activity = kp::predictor_activity(cv, mu);
  const auto p = static_cast<py::ssize_t>(activity.active_in_folds.size());
  py::array_t<long long> in_folds(p);
  py::array_t<double> fraction(p);
  py::array_t<bool> in_full_path(p);
  for (py::ssize_t j = 0; j < p; ++j) {
    const auto k = static_cast<std::size_t>(j);
    in_folds.mutable_at(j) = static_cast<long long>(activity.active_in_folds[k]);
    fraction.mutable_at(j) = activity.fraction(k);
    in_full_path.mutable_at(j) = activity.active_in_full_path[k];
  }
  py::dict d;
  d["mu"] = mu;
  d["penalty"] = mu * cv.full_scale;
  d["fold_paths"] = activity.fold_paths;
  d["active_in_folds"] = in_folds;
  d["fraction"] = fraction;
  d["active_in_full_path"] = in_full_path;
  return d;
}

/// The fold of each row in each repeat (repeats x rows; -1: never held
/// out), from the folds' held-out rows (repeat r's K folds are folds[r K ..]).
py::array_t<long long> repeat_fold_of(const kp::CrossValidation<double>& cv) {
  const auto rows = static_cast<py::ssize_t>(cv.fold_of.size());
  const std::size_t k = cv.folds_per_repeat();
  py::array_t<long long> out({static_cast<py::ssize_t>(cv.repeats), rows});
  auto view = out.mutable_unchecked<2>();
  for (py::ssize_t r = 0; r < view.shape(0); ++r)
    for (py::ssize_t i = 0; i < rows; ++i) view(r, i) = -1;
  for (std::size_t f = 0; f < cv.folds.size(); ++f)
    for (kp::Index i : cv.folds[f].held_out)
      view(static_cast<py::ssize_t>(f / k), i) = static_cast<long long>(f % k);
  return out;
}

/// Exact cross-validation (cross_validate()) as plain objects: the two
/// choices, the curve at the merged knots, the folds, the full path, and the
/// kept result for later queries (CrossValidationHandle). `repeats` is
/// signed so that a negative count reaches the library's message
/// (CrossValidationOptions::validate_repeat_count), not a conversion error.
py::dict cross_validation(const py::array& x, const py::object& y, const py::object& weights,
                          const py::dict& given, std::size_t folds, bool leave_one_out,
                          std::uint64_t seed, const py::object& fold_of, std::size_t threads,
                          long long repeats, const std::string& response) {
  const kp::TraceOptions options = options_of(given);
  kp::CrossValidationOptions::validate_repeat_count(repeats);
  kp::CrossValidationOptions cv;
  cv.folds = folds;
  cv.leave_one_out = leave_one_out;
  cv.seed = seed;
  cv.threads = threads;
  cv.repeats = static_cast<std::size_t>(repeats);
  if (!fold_of.is_none()) cv.fold_of = fold_of.cast<std::vector<long>>();
  const kp::Vector<double> response_values = vector_of(y, "response");
  const kp::Vector<double> w = vector_of(weights, "weights");
  const kp::Matrix<double> design = matrix_of(x);  // cross_validate() takes a Matrix
  auto result = std::make_shared<kp::CrossValidation<double>>();
  {
    py::gil_scoped_release release;
    cv.validate(design.rows());
    *result = kp::cross_validate<double>(design, response_values, options, cv, w);
  }
  py::dict d;
  py::dict least = point_dict(result->minimum), parsimonious = point_dict(result->parsimonious);
  least["spread"] = result->spread_at_mu(result->minimum.mu);
  parsimonious["spread"] = result->spread_at_mu(result->parsimonious.mu);
  d["least_error"] = least;
  d["parsimonious"] = parsimonious;
  std::vector<double> mu, penalty, error, standard_error, spread;
  for (const double at : result->knot_mus()) {
    const kp::CurveDetail<double> detail = result->detail_at_mu(at);
    mu.push_back(detail.point.mu);
    penalty.push_back(detail.point.lambda);
    error.push_back(detail.point.error);
    standard_error.push_back(detail.point.standard_error);
    spread.push_back(detail.spread);
  }
  py::dict curve;
  curve["mu"] = py::array(py::cast(mu));
  curve["penalty"] = py::array(py::cast(penalty));
  curve["error"] = py::array(py::cast(error));
  curve["standard_error"] = py::array(py::cast(standard_error));
  curve["spread"] = py::array(py::cast(spread));
  d["curve"] = curve;
  d["fold_of"] = py::array(py::cast(result->fold_of));
  d["repeat_fold_of"] = repeat_fold_of(*result);
  d["fold_count"] = result->folds.size();
  d["repeats"] = result->repeats;
  d["folds_per_repeat"] = result->folds_per_repeat();
  d["mu_high"] = result->mu_high;
  d["mu_low"] = result->mu_low;
  PathHandle full{
      std::shared_ptr<const kp::Path<double>>(result, &result->full_path),
      response,
      {{"least-error", result->minimum.lambda}, {"parsimonious", result->parsimonious.lambda}}};
  d["path"] = full;
  d["native"] = CrossValidationHandle{std::move(result)};
  return d;
}

std::string source_word(kp::NoiseVarianceSource source) {
  switch (source) {
    case kp::NoiseVarianceSource::given:
      return "given";
    case kp::NoiseVarianceSource::least_squares:
      return "least-squares";
    case kp::NoiseVarianceSource::cross_validated_fit:
      return "cross-validated-fit";
    case kp::NoiseVarianceSource::sparse_fit:
      return "sparse-fit";
  }
  return "?";
}

/// Cp, AIC and BIC at every knot (information_criteria()), from the data
/// when given, else from the path alone.
py::dict criteria(const PathHandle& handle, const py::object& x, const py::object& y,
                  const py::object& weights, double noise_variance,
                  double cross_validated_penalty) {
  kp::CriteriaOptions options;
  options.noise_variance = noise_variance;
  options.cross_validated_penalty = cross_validated_penalty;
  kp::InformationCriteria<double> c;
  if (x.is_none()) {
    py::gil_scoped_release release;
    c = kp::information_criteria(*handle, options);
  } else {
    const kp::Matrix<double> design = matrix_of(x.cast<py::array>());
    const kp::Vector<double> response_values = vector_of(y, "response"),
                             w = vector_of(weights, "weights");
    py::gil_scoped_release release;
    c = kp::information_criteria<double>(design, response_values, *handle, options, w);
  }
  const auto k = static_cast<py::ssize_t>(c.knots.size());
  py::array_t<long long> step(k), nonzero(k);
  py::array_t<double> penalty(k), mu(k), df(k), rss(k), cp(k), aic(k), bic(k);
  for (py::ssize_t i = 0; i < k; ++i) {
    const auto& r = c.knots[static_cast<std::size_t>(i)];
    step.mutable_at(i) = r.step;
    nonzero.mutable_at(i) = r.nonzero;
    penalty.mutable_at(i) = r.penalty;
    mu.mutable_at(i) = r.mu;
    df.mutable_at(i) = r.degrees_of_freedom;
    rss.mutable_at(i) = r.rss;
    cp.mutable_at(i) = r.mallows_cp;
    aic.mutable_at(i) = r.aic;
    bic.mutable_at(i) = r.bic;
  }
  py::dict d;
  d["step"] = step;
  d["penalty"] = penalty;
  d["mu"] = mu;
  d["nonzero"] = nonzero;
  d["degrees_of_freedom"] = df;
  d["rss"] = rss;
  d["mallows_cp"] = cp;
  d["aic"] = aic;
  d["bic"] = bic;
  d["best_cp"] = c.best_cp;
  d["best_aic"] = c.best_aic;
  d["best_bic"] = c.best_bic;
  d["noise_variance"] = c.noise_variance;
  d["noise_variance_source"] = source_word(c.source);
  d["residual_df"] = c.residual_df;
  d["sample_size"] = c.sample_size;
  return d;
}

/// The covariance and spacing tests of every entry (entry_significance()).
py::dict entry_tests(const PathHandle& handle, const py::array& x, const py::object& y,
                     double noise_variance) {
  const kp::Matrix<double> design = matrix_of(x);
  const kp::Vector<double> response_values = vector_of(y, "response");
  kp::InferenceOptions options;
  options.noise_variance = noise_variance;
  kp::Significance s;
  {
    py::gil_scoped_release release;
    s = kp::entry_significance<double>(design, response_values, *handle, options);
  }
  py::list entries;
  for (const auto& e : s.entries) {
    py::dict entry;
    entry["step"] = e.step;
    entry["predictor"] = handle->predictor_name(e.predictor);
    entry["predictor_index"] = e.predictor;
    entry["sign"] = e.sign;
    entry["penalty"] = e.penalty;
    entry["next_penalty"] = e.next_penalty;
    entry["covariance_statistic"] = e.covariance_statistic;
    entry["covariance_p_value"] = e.covariance_p_value;
    entry["spacing_p_value"] = e.spacing_p_value;
    entry["omega"] = e.omega;
    entry["note"] = e.note;
    entries.append(entry);
  }
  py::dict d;
  d["entries"] = entries;
  d["noise_variance"] = s.noise_variance;
  d["residual_df"] = s.residual_df;
  return d;
}

/// The first least-angle step tested with the noise variance unknown
/// (first_step_t_test()): the exact selective t-test of the global null.
py::dict first_step_t(const PathHandle& handle, const py::array& x, const py::object& y) {
  const kp::Matrix<double> design = matrix_of(x);
  const kp::Vector<double> response_values = vector_of(y, "response");
  kp::FirstStepT f;
  {
    py::gil_scoped_release release;
    f = kp::first_step_t_test<double>(design, response_values, *handle);
  }
  py::dict d;
  d["predictor"] = f.predictor >= 0 ? py::object(py::str(handle->predictor_name(f.predictor))) : py::none();
  d["predictor_index"] = f.predictor;
  d["sign"] = f.sign;
  d["statistic"] = f.statistic;
  d["degrees_of_freedom"] = f.degrees_of_freedom;
  d["lower"] = f.lower;
  d["upper"] = f.upper;
  d["p_value"] = f.p_value;
  d["note"] = f.note;
  return d;
}

/// The double-versus-50-digit cross-check (cross_check()) of the problem
/// the doubles hold.
py::dict verify(const py::array& x, const py::object& y, const py::object& weights,
                const py::dict& given, const std::string& response) {
  const kp::TraceOptions options = options_of(given);
  const kp::Matrix<double> design = matrix_of(x);
  const kp::Vector<double> response_values = vector_of(y, "response"),
                           w = vector_of(weights, "weights");
  kp::CrossCheckPaths<kp::float50> c;
  {
    py::gil_scoped_release release;
    c = kp::cross_check<kp::float50>(design, response_values, options, w);
  }
  py::dict d;
  d["verdict"] = kp::to_string(c.verdict);
  d["same_events"] = c.same_events;
  d["max_relative_knot_difference"] = c.max_relative_knot_difference;
  d["max_coefficient_difference"] = c.max_coefficient_difference;
  d["condition_estimate"] = c.condition_estimate;
  d["double_suspect"] = c.double_suspect;
  d["double_knots"] = c.double_knots;
  d["high_knots"] = c.high_knots;
  d["high_precision"] = kp::io::arithmetic_name<kp::float50>();
  if (c.first_difference) {
    const kp::Divergence& f = *c.first_difference;
    py::dict diff;
    diff["step"] = f.step;
    diff["double_event"] = f.low_event;
    diff["double_predictor"] = f.low_predictor;
    diff["double_penalty"] = f.low_penalty;
    diff["high_event"] = f.high_event;
    diff["high_predictor"] = f.high_predictor;
    diff["high_penalty"] = f.high_penalty;
    d["first_difference"] = diff;
  } else {
    d["first_difference"] = py::none();
  }
  d["path"] = handle_of(std::move(c.double_path), response);
  return d;
}

// ---------------------------------------------------------------- errors

/// The library's exceptions as Python's: bad options, data and queries are
/// ValueErrors (subclasses named after the library's kinds), a damaged saved
/// file too, an interrupted trace is the KeyboardInterrupt that stopped it.
void register_errors(py::module_& m) {
  static py::exception<kp::error> base(m, "KnotpathError", PyExc_RuntimeError);
  static py::exception<kp::invalid_option> option(m, "InvalidOption", PyExc_ValueError);
  static py::exception<kp::invalid_data> data(m, "InvalidData", PyExc_ValueError);
  static py::exception<kp::invalid_query> query(m, "InvalidQuery", PyExc_ValueError);
  static py::exception<kp::io::saved_path_error> saved(m, "SavedPathError", PyExc_ValueError);
  py::register_exception_translator([](std::exception_ptr p) {
    try {
      if (p) std::rethrow_exception(p);
    } catch (const kp::interrupted&) {
      if (!PyErr_Occurred()) PyErr_SetNone(PyExc_KeyboardInterrupt);
    } catch (const kp::invalid_option& e) {
      option(e.what());
    } catch (const kp::invalid_data& e) {
      data(e.what());
    } catch (const kp::invalid_query& e) {
      query(e.what());
    } catch (const kp::io::saved_path_error& e) {
      saved(e.what());
    } catch (const kp::io::output_error& e) {
      PyErr_SetString(PyExc_OSError, e.what());
    } catch (const kp::error& e) {
      base(e.what());
    }
  });
}

}  // namespace

PYBIND11_MODULE(_core, m) {
  m.doc() =
      "knotpath's compiled core: a thin binding over the C++ library (use the knotpath package)";
  register_errors(m);

  py::class_<PathHandle>(m, "Path", "A traced path (knotpath::Path<double>); immutable")
      .def("knot_columns", &knot_columns, "The knot table as columns (without the coefficients)")
      .def("knot_coefficients", &knot_coefficients, "The coefficients of every knot (knots x p)")
      .def("solutions", &solutions, py::arg("kind"), py::arg("values"),
           "Solutions at points of one kind (penalty, mu, budget, relative_budget)")
      .def("predictions", &predictions, py::arg("new_rows"), py::arg("kind"), py::arg("values"),
           "Predictions for new rows at points of one kind: rows x points")
      .def("audit", &audit, py::arg("source"), "The aligned audit text")
      .def("save", &save, py::arg("file"), "Writes the path in the library's saved-path format")
      .def_property_readonly("predictor_names", [](const PathHandle& h) { return names_of(*h); })
      .def_readwrite("response", &PathHandle::response)
      .def_property(
          "choices",
          [](const PathHandle& h) {
            std::vector<std::pair<std::string, double>> out;
            for (const auto& c : h.choices) out.emplace_back(c.name, c.penalty);
            return out;
          },
          [](PathHandle& h, const std::vector<std::pair<std::string, double>>& given) {
            h.choices.clear();
            for (const auto& [name, penalty] : given) h.choices.push_back({name, penalty});
          })
      .def_property_readonly("lambda_max", [](const PathHandle& h) { return h->lambda_max(); })
      .def_property_readonly("stop_reason",
                             [](const PathHandle& h) { return kp::to_string(h->stop_reason()); })
      .def_property_readonly("stopped_early",
                             [](const PathHandle& h) { return h->stopped_early(); })
      .def_property_readonly("suspect", [](const PathHandle& h) { return h->suspect(); })
      .def_property_readonly("worst_estimated_error",
                             [](const PathHandle& h) { return h->worst_estimated_error(); })
      .def_property_readonly("predictor_count",
                             [](const PathHandle& h) { return h->predictor_count(); })
      .def_property_readonly("used_observations",
                             [](const PathHandle& h) { return h->preparation().used_observations; })
      .def_property_readonly("options",
                             [](const PathHandle& h) { return options_dict(h->options()); })
      .def_property_readonly("excluded",
                             [](const PathHandle& h) {
                               std::vector<std::pair<kp::Index, std::string>> out;
                               for (const auto& e : h->excluded())
                                 out.emplace_back(e.predictor, e.reason);
                               return out;
                             })
      .def("mu_of", [](const PathHandle& h, double lambda) { return h->mu_of(lambda); })
      .def("lambda_of", [](const PathHandle& h, double mu) { return h->lambda_of(mu); });

  m.def("trace_dense", &trace_dense, py::arg("x"), py::arg("y"), py::arg("weights"),
        py::arg("options"), py::arg("response"), "Traces a 2-D float64 array (read in place)");
  m.def("trace_compressed", &trace_compressed, py::arg("data"), py::arg("indices"),
        py::arg("starts"), py::arg("rows"), py::arg("cols"), py::arg("y"), py::arg("weights"),
        py::arg("options"), py::arg("response"), "Traces a compressed-column sparse matrix");
  m.def("load", &load, py::arg("file"), "Reads a saved path");
  py::class_<CrossValidationHandle>(
      m, "CrossValidation",
      "A finished cross-validation (knotpath::CrossValidation<double>); immutable")
      .def("curve_at", &curve_at, py::arg("kind"), py::arg("values"),
           "The averaged curve and each repeat's at points of one kind (penalty or mu)")
      .def("activity_at", &activity_at, py::arg("kind"), py::arg("value"),
           "The stability counts (predictor_activity) at one point (penalty or mu)");
  m.def("cross_validation", &cross_validation, py::arg("x"), py::arg("y"), py::arg("weights"),
        py::arg("options"), py::arg("folds"), py::arg("leave_one_out"), py::arg("seed"),
        py::arg("fold_of"), py::arg("threads"), py::arg("repeats"), py::arg("response"));
  m.def("criteria", &criteria, py::arg("path"), py::arg("x"), py::arg("y"), py::arg("weights"),
        py::arg("noise_variance"), py::arg("cross_validated_penalty"));
  m.def("entry_tests", &entry_tests, py::arg("path"), py::arg("x"), py::arg("y"),
        py::arg("noise_variance"));
  m.def("first_step_t_test", &first_step_t, py::arg("path"), py::arg("x"), py::arg("y"));
  m.def("verify", &verify, py::arg("x"), py::arg("y"), py::arg("weights"), py::arg("options"),
        py::arg("response"));
  m.attr("default_seed") = kp::CrossValidationOptions{}.seed;
  m.attr("version") = kp::version_string;
}
