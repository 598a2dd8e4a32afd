"""Tracing from Python: the same numbers as the knotpath program, bit for
bit; names from DataFrames; the caller's arrays read in place and never
changed; the library's errors as ValueErrors."""

import csv
import io
import os
import subprocess
import sys
import textwrap

import numpy as np
import pandas as pd
import pytest
import scipy.sparse

import knotpath
from conftest import read_table


def program_knot_table(program, table_file, tmp_path, *options):
    out = tmp_path / "knots.csv"
    program("trace", table_file, "--response", "progression", "--knots", out, *options)
    with open(out, newline="") as f:
        return list(csv.DictReader(f))


def assert_same_knots(path, rows, names):
    """Every cell of the program's knot table equals the module's value
    exactly: the program prints 17 significant digits, which read back to
    the same double (IEEE 754-2008, 5.12.2), so == compares the bits."""
    k = path.knots
    assert len(rows) == len(k["step"])
    for i, row in enumerate(rows):
        assert int(row["step"]) == k["step"][i]
        assert row["event"] == k["event"][i]
        assert row["predictor"] == k["predictor"][i]
        assert int(row["active"]) == k["active_count"][i]
        for column, key in (("penalty", "penalty"), ("mu", "mu"), ("l1_norm", "penalized_l1"),
                            ("r_squared", "r_squared"), ("intercept", "intercept")):
            assert float(row[column]) == k[key][i], (i, column)
        for j, name in enumerate(names):
            assert float(row[name]) == k["coefficients"][i, j], (i, name)


def test_knot_coefficients_are_built_on_first_use_and_equal_the_solutions_there(diabetes):
    """Path.knots holds the dense knots x p coefficient table only once it
    is read (on a wide path it can outweigh the design); the other columns,
    the key list and `in` do not build it. Its rows are the exact solutions
    at the knots' penalties."""
    names, x, y = diabetes
    path = knotpath.trace(x, y, predictor_names=names)
    k = path.knots
    assert list(k) == ["step", "penalty", "mu", "event", "predictor", "predictor_index", "active_count",
                       "penalized_l1", "plain_l1", "r_squared", "intercept", "rss", "estimated_error",
                       "suspect", "coefficients"]
    assert len(k["penalty"]) == len(k["step"]) and "coefficients" in k and "nothing" not in k
    assert "coefficients" not in k._values  # white box: not built yet
    beta = k["coefficients"]
    assert beta is k["coefficients"] and not beta.flags.writeable
    assert beta.shape == (len(k["step"]), len(names))
    at_knots = path.coefficients_at(penalty=k["penalty"])
    assert np.array_equal(beta, at_knots)
    with pytest.raises(KeyError):
        k["nothing"]


def test_diabetes_path_equals_the_programs_knot_table_bit_for_bit(diabetes, diabetes_file, program, tmp_path):
    names, x, y = diabetes
    rows = program_knot_table(program, diabetes_file, tmp_path)
    assert_same_knots(knotpath.trace(x, y, predictor_names=names), rows, names)
    frame = pd.DataFrame(np.column_stack([x, y]), columns=names + ["progression"])
    assert_same_knots(knotpath.trace(frame, "progression"), rows, names)
    # The published events on these data (Efron, Hastie, Johnstone &
    # Tibshirani 2004, Ann. Statist. 32(2), section 3.1 and Figure 1): the
    # lasso takes 12 steps, s3 leaving at step 11 and re-entering at step 12.
    knots = knotpath.trace(frame, "progression").knots
    assert list(zip(knots["event"][1:-1], knots["predictor"][1:-1])) == [
        ("enter", n) for n in ("bmi", "s5", "bp", "s3", "sex", "s6", "s1", "s4", "s2", "age")
    ] + [("leave", "s3"), ("enter", "s3")]


def test_diabetes_least_angle_and_stopping_rules_equal_the_program(diabetes, diabetes_file, program, tmp_path):
    names, x, y = diabetes
    rows = program_knot_table(program, diabetes_file, tmp_path, "--variant", "least-angle", "--max-knots", "6",
                              "--unpenalized", "sex", "--ridge", "0.5")
    path = knotpath.trace(x, y, predictor_names=names, variant="least-angle", max_knots=6, unpenalized=["sex"],
                          ridge=0.5)
    assert path.stop_reason == "stop-max-knots"
    assert_same_knots(path, rows, names)


def program_point(program, table_file, kind, value):
    """The program's answer of `knotpath at` (intercept first) as doubles."""
    text = program("at", table_file, "--response", "progression", f"--{kind}", repr(value), "--csv")
    lines = [line for line in text.splitlines() if line and not line.startswith("#")][1:]
    return {name: float(v) for name, v in (line.split(",") for line in lines)}


def test_coefficients_at_random_penalties_equal_the_programs_answers(diabetes, diabetes_file, program):
    names, x, y = diabetes
    path = knotpath.trace(x, y, predictor_names=names)
    rng = np.random.default_rng(20261204)
    penalties = rng.uniform(0.0, 1.1 * path.lambda_max, size=4)
    mus = rng.uniform(0.0, path.mu_of(path.lambda_max), size=2)
    many = path.solution_at(penalties)  # vectorised: one row per point
    for i, penalty in enumerate(penalties):
        expected = program_point(program, diabetes_file, "penalty", float(penalty))
        # repr() prints the shortest text that reads back to the same double,
        # so the program answers exactly this penalty.
        assert many.intercept[i] == expected["(intercept)"]
        assert list(many.coefficients[i]) == [expected[n] for n in names]
        one = path.solution_at(float(penalty))
        assert one.intercept == expected["(intercept)"] and list(one.coefficients) == list(many.coefficients[i])
    for mu in mus:
        expected = program_point(program, diabetes_file, "mu", float(mu))
        assert list(path.coefficients_at(mu=float(mu))) == [expected[n] for n in names]
    expected = program_point(program, diabetes_file, "relative-budget", 0.5)
    assert list(path.coefficients_at(relative_budget=0.5)) == [expected[n] for n in names]


def test_dataframe_names_flow_into_every_output(diabetes):
    names, x, y = diabetes
    frame = pd.DataFrame(x, columns=names)
    frame["progression"] = y
    frame["visit_weight"] = 1.0
    path = knotpath.trace(frame, "progression", weights="visit_weight", unpenalized=["sex"],
                          sign_constraints={"s5": "nonnegative"})
    assert path.predictor_names == names and path.response == "progression"
    table = path.knot_table()
    assert list(table.columns[9:]) == names
    assert set(table["predictor"]) - {""} <= set(names)
    beta = path.coefficients_at(penalty=50.0)
    assert isinstance(beta, pd.Series) and list(beta.index) == names
    block = path.coefficients_at(mu=[1.0, 0.1])
    assert list(block.columns) == names and list(block.index) == [1.0, 0.1]
    # new rows by name, in another column order: the same predictions
    shuffled = frame[names[::-1]].head(5)
    fitted = path.predict(shuffled, penalty=50.0)
    assert list(fitted.index) == list(shuffled.index)
    assert np.array_equal(fitted.to_numpy(), path.predict(x[:5], penalty=50.0))
    audit = path.audit()
    assert "progression" in audit and "bmi" in audit
    assert path.options["unpenalized"] == [names.index("sex")]


def test_a_sparse_matrix_traces_the_same_path_as_its_dense_form():
    rng = np.random.default_rng(7)
    dense = rng.standard_normal((60, 15)) * (rng.random((60, 15)) < 0.3)
    y = dense @ rng.standard_normal(15) + rng.standard_normal(60)
    sparse = scipy.sparse.csc_matrix(dense)
    before = (sparse.data.copy(), sparse.indices.copy(), sparse.indptr.copy())
    a = knotpath.trace(sparse, y)
    b = knotpath.trace(dense, y, storage="dense")
    assert list(a.knots["event"]) == list(b.knots["event"])
    # Sparse and dense designs centre in different orders of summation
    # (implicit centring): they agree to rounding, 1e-9 relative (common practice).
    assert np.allclose(a.knots["penalty"], b.knots["penalty"], rtol=1e-9, atol=1e-12)
    assert all(np.array_equal(u, v) for u, v in zip(before, (sparse.data, sparse.indices, sparse.indptr)))
    assert list(knotpath.trace(scipy.sparse.csr_matrix(dense), y).knots["penalty"]) == list(a.knots["penalty"])


def test_c_ordered_arrays_and_other_dtypes_trace_the_same_path(diabetes):
    names, x, y = diabetes
    reference = knotpath.trace(x, y).knots["penalty"]
    assert np.array_equal(knotpath.trace(np.ascontiguousarray(x), y).knots["penalty"], reference)
    assert np.array_equal(knotpath.trace(x.astype(np.float32).astype(np.float64), y).knots["step"],
                          knotpath.trace(x.astype(np.float32), y).knots["step"])


PEAK_SCRIPT = textwrap.dedent("""
    import sys
    import numpy as np
    import knotpath

    def status(field):  # kB, from Linux's /proc/self/status
        with open("/proc/self/status") as f:
            return next(int(line.split()[1]) for line in f if line.startswith(field + ":"))

    n, p, order = int(sys.argv[1]), int(sys.argv[2]), sys.argv[3]
    rng = np.random.default_rng(3)
    # Made in place in the asked order (no temporary of the array's size).
    x = rng.standard_normal((p, n)).T if order == "F" else rng.standard_normal((n, p))
    y = x[:, :5].sum(axis=1) + rng.standard_normal(n)
    with open("/proc/self/clear_refs", "w") as f:
        f.write("5")  # resets the peak (VmHWM) to the present resident size (Linux >= 4.0)
    base = status("VmRSS")
    path = knotpath.trace(x, y, max_active=10)
    print((status("VmHWM") - base) * 1024 / x.nbytes)
""")


def peak_growth(order, tmp_path):
    """Peak resident memory added by one trace, as a share of the array's bytes."""
    script = tmp_path / "peak.py"
    script.write_text(PEAK_SCRIPT)
    done = subprocess.run([sys.executable, str(script), "400", "15000", order], capture_output=True, text=True,
                          env=dict(os.environ))
    assert done.returncode == 0, done.stderr
    return float(done.stdout)


def test_a_fortran_ordered_array_is_not_copied(tmp_path):
    # A wide design (400 x 15000, 48 MB) takes the library's view storage,
    # which reads the caller's column-major memory: the trace adds a few
    # vectors of length p and n, not a copy. Through a C-ordered array the
    # view needs its one column-major copy, which shows (the control).
    growth = peak_growth("F", tmp_path)
    assert growth < 0.2, growth
    assert peak_growth("C", tmp_path) > 0.8


def test_bad_input_raises_value_errors_and_leaves_the_callers_arrays_untouched():
    rng = np.random.default_rng(11)
    x = np.asfortranarray(rng.standard_normal((30, 4)))
    y = rng.standard_normal(30)
    x[3, 2] = np.nan
    x_before, y_before = x.copy(order="A"), y.copy()
    with pytest.raises(knotpath.InvalidData, match="row 3, column 2"):
        knotpath.trace(x, y)
    x[3, 2] = 0.5
    x_before[3, 2] = 0.5
    with pytest.raises(ValueError, match="option 'ridge'"):
        knotpath.trace(x, y, ridge=-1.0)
    with pytest.raises(knotpath.InvalidOption, match="variant"):
        knotpath.trace(x, y, variant="sideways")
    with pytest.raises(knotpath.InvalidOption, match="colour"):
        knotpath.trace(x, y, colour="blue")
    weights = np.ones(30)
    weights[7] = -1.0
    with pytest.raises(knotpath.InvalidData, match="weight"):
        knotpath.trace(x, y, weights=weights)
    with pytest.raises(ValueError):
        knotpath.trace(x, y[:-1])
    path = knotpath.trace(x, y)
    with pytest.raises(knotpath.InvalidQuery, match="penalty must be >= 0"):
        path.coefficients_at(penalty=-1.0)
    with pytest.raises(knotpath.InvalidQuery, match="columns"):
        path.predict(np.ones((2, 3)), penalty=1.0)
    assert issubclass(knotpath.InvalidData, ValueError) and issubclass(knotpath.InvalidQuery, ValueError)
    assert np.array_equal(x, x_before) and x.flags.f_contiguous and np.array_equal(y, y_before)
    assert weights[7] == -1.0 and x.flags.writeable
