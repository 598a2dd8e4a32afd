"""knotpath: the exact lasso and least-angle regularization path, from Python.

A thin layer over the C++ library (the compiled module knotpath._core): the
numbers are the library's, bit for bit the ones the knotpath program prints.

    import knotpath
    path = knotpath.trace(x, y)                  # x: 2-D array, sparse CSC matrix or DataFrame
    path.knot_table()                            # the knot table (a DataFrame when pandas is present)
    path.coefficients_at(penalty=2.5)            # exact, anywhere on the path; arrays of points too
    path.predict(new_rows, mu=[0.1, 0.01])
    print(path.audit())
    cv = knotpath.cross_validate(x, y, folds=10, repeats=5)   # exact curve, averaged over 5 fold draws
    cv.curve_at(mu=0.5), cv.activity_at(mu=0.5)  # the curves and the stability counts anywhere

The objective, for every penalty lambda >= 0 (the library's TraceOptions):

    0.5 sum_i w_i (y_i - b0 - x_i^T b)^2 + lambda sum_j f_j s_j |b_j| + 0.5 ridge sum_j (s_j b_j)^2

with s_j the column's root (weighted) sum of squares after centring when
standardize is on, f_j the penalty scales. mu = lambda / sqrt(n) is the
size-free penalty (lambda / n without standardization).

Memory: a Fortran-ordered (column-major) float64 array is read in place, with
no copy by this module; a C-ordered float64 array is read in place through a
row-major view (the view storage, chosen for large wide designs, then makes
one column-major copy); any other dtype or a strided array is converted once
to a Fortran-ordered float64 copy. A DataFrame is turned into one array by
DataFrame.to_numpy (a view when it needs no conversion, else one copy). A
scipy.sparse matrix is converted to CSC (no copy when it already is one with
sorted, unique indices) and its arrays copied once into the library's sparse
matrix. Selection (cross_validate, criteria, entry_tests, first_step_t_test,
verify) copies a dense design once: the library's entry points take their own
matrix type.

Errors: bad options, data and queries raise ValueError (the subclasses
InvalidOption, InvalidData, InvalidQuery; a damaged saved file SavedPathError),
with the library's message. Ctrl-C stops a long trace (KeyboardInterrupt).
The GIL is released while the library works.
"""

import collections.abc
import sys

import numpy as np

from . import _core
from ._core import InvalidData, InvalidOption, InvalidQuery, KnotpathError, SavedPathError

__version__ = _core.version

__all__ = [
    "trace", "load", "Path", "cross_validate", "CrossValidation", "criteria", "entry_tests", "first_step_t_test",
    "verify",
    "KnotpathError", "InvalidOption", "InvalidData", "InvalidQuery", "SavedPathError",
]


def _pandas():
    try:
        import pandas
    except ImportError:
        return None
    return pandas


# A DataFrame or a sparse matrix can only come from a module already imported:
# looking there keeps a plain numpy trace from importing pandas or SciPy
# (tens of MB of memory and a second of time).
def _is_frame(x):
    pd = sys.modules.get("pandas")
    return pd is not None and isinstance(x, pd.DataFrame)


def _is_sparse(x):
    sparse = sys.modules.get("scipy.sparse")
    return sparse is not None and sparse.issparse(x)


def _dense(x):
    """A 2-D float64 array the library reads in place: the caller's own when
    it is float64 and contiguous in either order, else one Fortran-ordered copy."""
    a = np.asarray(x)
    if a.ndim != 2:
        raise InvalidOption(f"knotpath: option 'x': must be a two-dimensional array (got {a.ndim} dimensions)")
    if a.dtype == np.float64 and (a.flags.f_contiguous or a.flags.c_contiguous):
        return a
    return np.asfortranarray(a, dtype=np.float64)


def _column(frame, name, what):
    if name not in frame.columns:
        raise InvalidOption(f"knotpath: option '{what}': the table has no column named \"{name}\"")
    return frame[name].to_numpy(dtype=np.float64)


class _Data:
    """The caller's data in the library's terms: a design (dense array or CSC
    matrix), its predictor names, the response and the weights."""

    def __init__(self, x, response, weights=None, predictor_names=None, only=None):
        self.names = list(predictor_names) if predictor_names is not None else None
        self.response_name = response if isinstance(response, str) else ""
        self.from_frame = _is_frame(x)
        if self.from_frame:
            roles = [c for c in (response, weights) if isinstance(c, str)]
            columns = list(only) if only is not None else [c for c in x.columns if c not in roles]
            for c in columns:
                if c not in x.columns:
                    raise InvalidQuery(f"knotpath: the table has no column named \"{c}\"")
                if not np.issubdtype(x[c].dtype, np.number) and x[c].dtype != bool:
                    raise InvalidData(f"knotpath: column \"{c}\" is not numeric")
            self.design = _dense(x[columns].to_numpy(dtype=np.float64))
            self.names = [str(c) for c in columns] if self.names is None else self.names
            self.y = _column(x, response, "response") if isinstance(response, str) else response
            self.weights = _column(x, weights, "weights") if isinstance(weights, str) else weights
        else:
            if isinstance(response, str) or isinstance(weights, str):
                raise InvalidOption("knotpath: option 'response': a column name needs a pandas DataFrame")
            self.design = x if _is_sparse(x) else _dense(x)
            self.y, self.weights = response, weights
        self.y = None if self.y is None else np.asarray(self.y)
        self.weights = None if self.weights is None else np.asarray(self.weights)

    def dense(self):
        if _is_sparse(self.design):
            raise InvalidOption("knotpath: option 'x': selection and the cross-check need a dense design "
                                "(call .toarray() on the sparse matrix)")
        return self.design


def _indices(items, names, field):
    """Predictor indices from indices or names."""
    out = []
    for item in items:
        if isinstance(item, str):
            if names is None or item not in names:
                raise InvalidOption(f"knotpath: option '{field}': no predictor named \"{item}\"")
            out.append(names.index(item))
        else:
            out.append(int(item))
    return out


def _per_predictor(value, names, field, default, p):
    """A per-predictor list from a list, or from a dict by name or index
    (predictors it does not name take `default`)."""
    if isinstance(value, dict):
        out = [default] * p
        for key, v in value.items():
            out[_indices([key], names, field)[0]] = v
        return out
    return list(value)


def _options(data, p, penalty_scales=None, unpenalized=(), left_out=(), sign_constraints=None, **fixed):
    """The keyword arguments of a trace as TraceOptions fields (names resolved
    against the data's predictor names; the other fields passed as given)."""
    names = data.names
    options = dict(fixed)
    options["predictor_names"] = names
    if penalty_scales is not None:
        options["penalty_scales"] = [float(f) for f in _per_predictor(penalty_scales, names, "penalty_scales", 1.0, p)]
    options["unpenalized"] = _indices(unpenalized, names, "unpenalized")
    options["left_out"] = _indices(left_out, names, "left_out")
    if sign_constraints is not None:
        if isinstance(sign_constraints, str):
            sign_constraints = [sign_constraints]
        options["sign_constraints"] = _per_predictor(sign_constraints, names, "sign_constraints", "none", p)
    return options


def _trace_options(data, kwargs):
    p = data.design.shape[1]
    return _options(data, p, **kwargs)


# The TraceOptions fields a trace takes as keyword arguments (defaults: the
# library's, listed in trace()'s docstring).
_TRACE_FIELDS = {"variant", "with_intercept", "standardize", "ridge", "max_knots", "min_penalty", "max_active",
                 "storage", "threads", "collinearity_tolerance", "tie_tolerance", "max_steps", "suspect_threshold",
                 "penalty_scales", "unpenalized", "left_out", "sign_constraints"}


def _split_options(kwargs):
    for key in kwargs:
        if key not in _TRACE_FIELDS:
            raise InvalidOption(f"knotpath: option '{key}': is not an option of a trace")
    return kwargs


def trace(x, response, *, weights=None, predictor_names=None, **options):
    """Traces the lasso (or least-angle) path of `response` on the columns of `x`.

    x: a 2-D array (Fortran-ordered float64 is read in place), a scipy.sparse
       matrix (traced as CSC, never densified) or a pandas DataFrame (its
       column names name the predictors in every output).
    response: a 1-D array, or the name of a column of the DataFrame (that
       column is then not a predictor); `weights` likewise (frequency weights >= 0).
    predictor_names: names for an array's columns (default x1, x2, ...).

    Options (the library's TraceOptions; defaults in brackets):
      variant ["lasso"] or "least-angle"; with_intercept [True]; standardize [True];
      penalty_scales (a list, or a dict name -> scale; others 1); unpenalized,
      left_out (names or indices); sign_constraints ("nonnegative" or
      "nonpositive" for all, a list, or a dict name -> word); ridge [0];
      max_knots [0: none], min_penalty [0], max_active [0: none] (stopping rules);
      storage ["automatic"], "dense", "gram" or "view"; threads [1];
      collinearity_tolerance, tie_tolerance, max_steps, suspect_threshold.
    Returns a Path. Raises InvalidOption / InvalidData (ValueError).
    """
    _split_options(options)
    data = _Data(x, response, weights, predictor_names)
    native_options = _trace_options(data, options)
    if _is_sparse(data.design):
        native = _trace_sparse(data, native_options)
    else:
        native = _core.trace_dense(data.design, data.y, data.weights, native_options, data.response_name)
    return Path(native, data.from_frame)


def _trace_sparse(data, native_options):
    csc = data.design.tocsc()  # the same object when it already is CSC
    if not csc.has_canonical_format:  # sorted, unique indices; fix a copy, never the caller's matrix
        csc = csc.copy()
        csc.sum_duplicates()
    if csc.nnz >= 2**31:
        raise InvalidData("knotpath: the sparse matrix has 2^31 or more entries")
    n, p = csc.shape
    return _core.trace_compressed(np.asarray(csc.data, dtype=np.float64), csc.indices, csc.indptr, n, p, data.y,
                                  data.weights, native_options, data.response_name)


def load(file):
    """Reads a path saved by Path.save or by the knotpath program (--save)."""
    return Path(_core.load(str(file)), False)


class Solution:
    """Solutions at one or more points: `penalty`, `mu`, `intercept`,
    `penalized_l1` (sum f_j s_j |b_j|), `plain_l1` (sum |b_j|), `beyond_path`
    (the point lies past the end of a path that stopped early: the last
    knot's solution is given) and `coefficients` (length p, or points x p)."""

    def __init__(self, fields, scalar):
        for key, value in fields.items():
            if scalar and isinstance(value, np.ndarray):
                value = value[0] if value.ndim == 1 else value[0, :]
                value = value.item() if np.ndim(value) == 0 else value
            setattr(self, key, value)

    def __repr__(self):
        return f"Solution(penalty={self.penalty!r}, intercept={self.intercept!r}, coefficients={self.coefficients!r})"


def _point(penalty, mu, budget, relative_budget):
    given = [(k, v) for k, v in (("penalty", penalty), ("mu", mu), ("budget", budget),
                                 ("relative_budget", relative_budget)) if v is not None]
    if len(given) != 1:
        raise InvalidQuery("knotpath: name exactly one of penalty, mu, budget or relative_budget")
    kind, value = given[0]
    scalar = np.ndim(value) == 0
    return kind, np.atleast_1d(np.asarray(value, dtype=np.float64)), scalar



class _KnotColumns(collections.abc.Mapping):
    """Path.knots: the knot table's columns, read-only numpy arrays. The
    dense coefficient table (knots x p, 8 bytes each) is built on its first
    use: on a wide path it can outweigh the design itself."""

    _KEYS = ("step", "penalty", "mu", "event", "predictor", "predictor_index", "active_count", "penalized_l1",
             "plain_l1", "r_squared", "intercept", "rss", "estimated_error", "suspect", "coefficients")

    def __init__(self, native):
        self._native = native
        columns = native.knot_columns()
        columns["event"] = np.array(columns["event"], dtype=object)
        columns["predictor"] = np.array(columns["predictor"], dtype=object)
        for value in columns.values():
            value.setflags(write=False)
        self._values = columns

    def __getitem__(self, key):
        if key == "coefficients" and key not in self._values:
            coefficients = self._native.knot_coefficients()
            coefficients.setflags(write=False)
            self._values[key] = coefficients
        return self._values[key]

    def __contains__(self, key):
        return key in self._KEYS  # without building the coefficients

    def __iter__(self):
        return iter(self._KEYS)

    def __len__(self):
        return len(self._KEYS)

    def __repr__(self):
        return "KnotColumns(" + ", ".join(self._KEYS) + ")"


class Path:
    """A traced path (immutable). Knots, exact queries anywhere on the path,
    predictions, the audit, saving."""

    def __init__(self, native, from_frame):
        self._native = native
        self._from_frame = from_frame
        self._columns = None

    # -- what the path is
    @property
    def predictor_names(self):
        """Names of the predictors, in column order."""
        return self._native.predictor_names

    @property
    def predictor_count(self):
        return self._native.predictor_count

    @property
    def response(self):
        """The response's name ("" when it was an array)."""
        return self._native.response

    @property
    def lambda_max(self):
        """The first knot's penalty."""
        return self._native.lambda_max

    @property
    def stop_reason(self):
        """Why the path ended: "end" (penalty 0), "stop-max-knots", "stop-min-penalty", ..."""
        return self._native.stop_reason

    @property
    def stopped_early(self):
        return self._native.stopped_early

    @property
    def suspect(self):
        """True when a knot's estimated error passes the threshold: run verify()."""
        return self._native.suspect

    @property
    def worst_estimated_error(self):
        return self._native.worst_estimated_error

    @property
    def options(self):
        """The options the path was traced with (a dict of TraceOptions fields)."""
        return self._native.options

    @property
    def excluded(self):
        """Predictors left out before the trace: a list of (name, reason)."""
        return [(self.predictor_names[j], why) for j, why in self._native.excluded]

    @property
    def choices(self):
        """Named penalties kept with the path (a selection's choices), a dict name -> penalty."""
        return dict(self._native.choices)

    def mu_of(self, penalty):
        """The size-free penalty of a penalty lambda (lambda / sqrt(n), or lambda / n unstandardized)."""
        return self._native.mu_of(float(penalty))

    def lambda_of(self, mu):
        return self._native.lambda_of(float(mu))

    # -- the knots
    @property
    def knots(self):
        """The knot table as a dict of numpy arrays: step, penalty, mu, event,
        predictor (names, "" for none), predictor_index (-1 for none),
        active_count, penalized_l1, plain_l1, r_squared (NaN when undefined),
        intercept, rss, estimated_error, suspect, coefficients (knots x p:
        built on first use, since it holds every predictor of every knot)."""
        if self._columns is None:
            self._columns = _KnotColumns(self._native)
        return self._columns

    def knot_table(self):
        """The knot table as a pandas DataFrame with the program's CSV columns
        (step, penalty, mu, event, predictor, active, l1_norm, r_squared,
        intercept, then one column per predictor). Needs pandas."""
        pd = _pandas()
        if pd is None:
            raise ImportError("knot_table() needs pandas (Debian: python3-pandas); Path.knots has the arrays")
        k = self.knots
        table = pd.DataFrame({"step": k["step"], "penalty": k["penalty"], "mu": k["mu"], "event": k["event"],
                              "predictor": k["predictor"], "active": k["active_count"],
                              "l1_norm": k["penalized_l1"], "r_squared": k["r_squared"],
                              "intercept": k["intercept"]})
        beta = pd.DataFrame(k["coefficients"], columns=self.predictor_names)
        return pd.concat([table, beta], axis=1)

    # -- queries
    def solution_at(self, penalty=None, *, mu=None, budget=None, relative_budget=None):
        """The exact solution at one point or an array of points, named by
        exactly one of: penalty (lambda), mu (size-free), budget (penalized
        L1 norm) or relative_budget (a share, 0..1, of the last knot's norm)."""
        kind, values, scalar = _point(penalty, mu, budget, relative_budget)
        return Solution(self._native.solutions(kind, values), scalar)

    def coefficients_at(self, penalty=None, *, mu=None, budget=None, relative_budget=None):
        """Coefficients (original scale) at one point (length p) or many (points x p);
        a pandas Series / DataFrame named by predictor when the path was traced from a DataFrame."""
        kind, values, scalar = _point(penalty, mu, budget, relative_budget)
        beta = self._native.solutions(kind, values)["coefficients"]
        if self._from_frame:
            pd = _pandas()
            if scalar:
                return pd.Series(beta[0], index=self.predictor_names, name=kind)
            return pd.DataFrame(beta, columns=self.predictor_names, index=pd.Index(values, name=kind))
        return beta[0] if scalar else beta

    def predict(self, new_rows, penalty=None, *, mu=None, budget=None, relative_budget=None):
        """Predictions intercept + x^T b for new rows (a 2-D array with p
        columns, or a DataFrame holding the predictors' columns by name) at
        one point (one value per row) or many (rows x points)."""
        kind, values, scalar = _point(penalty, mu, budget, relative_budget)
        index = None
        if _is_frame(new_rows):
            index = new_rows.index
            rows = _dense(new_rows[self.predictor_names].to_numpy(dtype=np.float64))
        else:
            rows = _dense(new_rows)
        out = self._native.predictions(rows, kind, values)
        if scalar:
            out = out[:, 0]
        if index is not None:
            pd = _pandas()
            return pd.Series(out, index=index) if scalar else pd.DataFrame(out, index=index, columns=values)
        return out

    def audit(self, source="Python"):
        """The library's aligned audit of the path (one line per knot, then notes)."""
        return self._native.audit(source)

    def save(self, file, choices=None):
        """Writes the path in the library's saved-path format (the file the
        knotpath program reads with --path); `choices` names penalties (a dict)."""
        if choices is not None:
            self._native.choices = [(str(k), float(v)) for k, v in dict(choices).items()]
        self._native.save(str(file))

    def __repr__(self):
        return (f"<knotpath.Path of {self.response or 'a response'} on {self.predictor_count} predictors: "
                f"{len(self.knots['step'])} knots, {self.stop_reason}>")


# -- selection and the cross-check

def _data_for(path, x, response, weights=None):
    only = path.predictor_names if _is_frame(x) else None
    return _Data(x, response, weights, only=only)


class CrossValidation(dict):
    """The result of cross_validate(): a dict of plain objects (see
    cross_validate) that also answers queries at any point of the curve.

    The fold paths are kept for these queries (and the full path shares
    them), so the result holds R K paths until it and its path are dropped."""

    def __init__(self, fields, native):
        super().__init__(fields)
        self._native = native

    def curve_at(self, penalty=None, *, mu=None):
        """The exact curve at one point or an array of points, named by
        penalty (the full data's lambda) or mu (size-free): a dict of mu,
        penalty, error (the curve, averaged over the repeats), standard_error
        (the mean of the repeats' standard errors), spread (the standard
        deviation of the repeats' curves, divisor R - 1; 0 for one repeat) and
        repeat_error (each repeat's own curve: a row per repeat). Numbers for
        one point, arrays for many. Raises InvalidQuery below the curve's domain."""
        kind, values, scalar = _curve_point(penalty, mu)
        out = self._native.curve_at(kind, values)
        if scalar:
            out = {key: (value[:, 0] if key == "repeat_error" else value[0].item()) for key, value in out.items()}
        return out

    def activity_at(self, penalty=None, *, mu=None):
        """How often each predictor is active at one point (named by penalty
        or mu) across the R K fold paths, and in the full path (the library's
        predictor_activity): a dict of mu, penalty, fold_paths (R K),
        active_in_folds (per predictor: fold paths with a nonzero coefficient
        there), fraction (active_in_folds / fold_paths), active_in_full_path
        (booleans) and predictor (the names, in column order)."""
        kind, values, scalar = _curve_point(penalty, mu)
        if not scalar:
            raise InvalidQuery("knotpath: activity_at takes one point (call it once per point)")
        out = self._native.activity_at(kind, float(values[0]))
        out["predictor"] = self["path"].predictor_names
        return out


def _curve_point(penalty, mu):
    """(kind, values as a 1-D float64 array, whether one number was given) of
    a point of the cross-validation curve, named by penalty or mu."""
    given = [(k, v) for k, v in (("penalty", penalty), ("mu", mu)) if v is not None]
    if len(given) != 1:
        raise InvalidQuery("knotpath: name exactly one of penalty or mu")
    kind, value = given[0]
    return kind, np.atleast_1d(np.asarray(value, dtype=np.float64)), np.ndim(value) == 0


def cross_validate(x, response, *, weights=None, predictor_names=None, folds=10, leave_one_out=False, seed=None,
                   fold_of=None, fold_threads=1, repeats=1, **options):
    """Exact K-fold cross-validation of the path (the library's cross_validate):
    the curve is exact between knots.

    repeats: R >= 1 draws of the seeded folds, repeat r from seed + r; the
       curve is the mean of the R curves and its standard error the mean of
       theirs (the library's CrossValidationOptions::repeats). R > 1 needs
       folds drawn from the seed: it is refused with fold_of or leave_one_out
       (InvalidOption).

    Returns a CrossValidation, a dict: least_error and parsimonious (the
    largest mu within one standard error of the least error), each {mu,
    penalty, error, standard_error, spread}; curve (arrays at the merged
    knots: mu, penalty, error, standard_error, spread); fold_of (each row's
    fold in repeat 0; -1: never held out); repeat_fold_of (repeats x rows);
    repeats; folds_per_repeat (K); fold_count (R K fold paths); mu_high,
    mu_low (the curve's domain); path (the full data's Path, its choices named
    "least-error" and "parsimonious"). Its methods curve_at and activity_at
    answer at any penalty or mu."""
    _split_options(options)
    data = _Data(x, response, weights, predictor_names)
    result = _core.cross_validation(data.dense(), data.y, data.weights, _trace_options(data, options), int(folds),
                                    bool(leave_one_out), _core.default_seed if seed is None else int(seed),
                                    None if fold_of is None else [int(f) for f in fold_of], int(fold_threads),
                                    int(repeats), data.response_name)
    native = result.pop("native")
    result["path"] = Path(result["path"], data.from_frame)
    return CrossValidation(result, native)


def criteria(path, x=None, response=None, *, weights=None, noise_variance=None, cross_validated_penalty=None):
    """Mallows' Cp, AIC and BIC at every knot (the library's
    information_criteria), from the data when x and response are given, else
    from the path alone. Returns a dict of arrays per knot and the best
    knots' indices (best_cp, best_aic, best_bic)."""
    nv = -1.0 if noise_variance is None else float(noise_variance)
    cv = -1.0 if cross_validated_penalty is None else float(cross_validated_penalty)
    if x is None:
        return _core.criteria(path._native, None, None, None, nv, cv)
    data = _data_for(path, x, response, weights)
    return _core.criteria(path._native, data.dense(), data.y, data.weights, nv, cv)


def entry_tests(path, x, response, *, noise_variance=None):
    """The covariance and spacing tests of every entry of an unweighted path
    (the library's entry_significance). Returns {entries: [dict per entry],
    noise_variance, residual_df}."""
    data = _data_for(path, x, response)
    return _core.entry_tests(path._native, data.dense(), data.y, -1.0 if noise_variance is None else float(noise_variance))


def first_step_t_test(path, x, response):
    """The first entry of an unweighted path tested with the noise variance
    unknown (the library's first_step_t_test): the exact selective t-test of
    the global null (no predictor matters; Gaussian errors, fixed design),
    conditioned on the first entry, its sign and the direction of the
    response orthogonal to its column. Needs no variance estimate, so it
    works with more predictors than rows. Returns a dict: predictor (name),
    predictor_index, sign, statistic (T), degrees_of_freedom, lower and
    upper (T's truncation interval; upper is inf for unit-length columns),
    p_value, and note (why a value is NaN; empty otherwise)."""
    data = _data_for(path, x, response)
    return _core.first_step_t_test(path._native, data.dense(), data.y)


def verify(x, response, *, weights=None, predictor_names=None, **options):
    """Traces the problem in double and in 50 significant digits and compares
    the paths (the library's cross_check, as `knotpath verify`). Returns a
    dict: verdict ("trustworthy", "degraded", "wrong"), the differences, the
    first difference of the events (or None) and the double path."""
    _split_options(options)
    data = _Data(x, response, weights, predictor_names)
    result = _core.verify(data.dense(), data.y, data.weights, _trace_options(data, options), data.response_name)
    result["path"] = Path(result["path"], data.from_frame)
    return result
