"""Saved paths, selection, the entry tests and the cross-check from Python:
the library's answers as plain objects, checked against the program, SciPy
and NumPy's LAPACK, and published reference values."""

import json

import numpy as np
import pandas as pd
import pytest
import scipy.stats

import knotpath
from conftest import data_dir, read_table


def program_at(program, *args):
    text = program("at", *args, "--csv")
    lines = [line for line in text.splitlines() if line and not line.startswith("#")][1:]
    return {name: float(v) for name, v in (line.split(",") for line in lines)}


def test_saved_paths_are_read_by_the_program_and_the_programs_by_the_module(diabetes, diabetes_file, program,
                                                                           tmp_path):
    names, x, y = diabetes
    frame = pd.DataFrame(x, columns=names)
    frame["progression"] = y
    path = knotpath.trace(frame, "progression")
    mine = tmp_path / "module.kpath"
    path.save(mine, choices={"chosen": 42.0})
    # the program answers from the module's file what the module answers
    expected = path.solution_at(42.0)
    answer = program_at(program, "--path", mine, "--choice", "chosen")
    assert answer["(intercept)"] == expected.intercept
    assert [answer[n] for n in names] == list(expected.coefficients)
    # the module reads the program's file: every knot the same bits
    theirs = tmp_path / "program.kpath"
    program("trace", diabetes_file, "--response", "progression", "--save", theirs)
    loaded = knotpath.load(theirs)
    assert loaded.response == "progression" and loaded.predictor_names == names
    for key in ("penalty", "intercept", "coefficients", "penalized_l1", "estimated_error"):
        assert np.array_equal(loaded.knots[key], path.knots[key]), key
    again = knotpath.load(mine)
    assert again.choices == {"chosen": 42.0} and np.array_equal(again.knots["coefficients"], path.knots["coefficients"])
    damaged = tmp_path / "damaged.kpath"
    damaged.write_text(mine.read_text().replace('"format_version": 1', '"format_version": 1 ', 1)[:-40])
    with pytest.raises(knotpath.SavedPathError):
        knotpath.load(damaged)


def test_cross_validation_equals_the_held_out_errors_of_the_fold_paths(diabetes):
    names, x, y = diabetes
    cv = knotpath.cross_validate(x, y, predictor_names=names, folds=5, seed=11)
    fold_of = cv["fold_of"]
    assert cv["fold_count"] == 5 and set(fold_of) == set(range(5))
    assert cv["parsimonious"]["mu"] >= cv["least_error"]["mu"]
    assert cv["path"].choices["least-error"] == cv["least_error"]["penalty"]
    # Brute force at the chosen mu: trace each fold's training rows, predict
    # its held-out rows at the same size-free penalty, average the squared
    # errors weighted by fold size (the definition of K-fold CV, Stone 1974,
    # J. R. Statist. Soc. B 36). The exact curve interpolates the same
    # quantities, so they agree to rounding: 1e-9 relative (common practice).
    for choice in ("least_error", "parsimonious"):
        mu = cv[choice]["mu"]
        errors = []
        for k in range(5):
            train, held = fold_of != k, fold_of == k
            fold_path = knotpath.trace(x[train], y[train])
            residual = y[held] - fold_path.predict(x[held], mu=mu)
            errors.append(np.mean(residual**2))
        sizes = np.array([np.sum(fold_of == k) for k in range(5)])
        brute = np.sum(sizes * np.array(errors)) / sizes.sum()
        assert cv[choice]["error"] == pytest.approx(brute, rel=1e-9)
    curve = cv["curve"]
    assert np.min(curve["error"]) >= cv["least_error"]["error"] * (1 - 1e-12)


def test_criteria_use_the_least_squares_noise_variance(diabetes):
    names, x, y = diabetes
    path = knotpath.trace(x, y, predictor_names=names)
    c = knotpath.criteria(path, x, y)
    # sigma^2 = RSS / (n - p - 1) of the full least-squares fit, here from
    # NumPy's LAPACK least squares (Mallows 1973, Technometrics 15(4)).
    design = np.column_stack([np.ones(len(y)), x])
    beta, rss, *_ = np.linalg.lstsq(design, y, rcond=None)
    sigma2 = rss[0] / (len(y) - design.shape[1])
    assert c["noise_variance_source"] == "least-squares"
    assert c["noise_variance"] == pytest.approx(sigma2, rel=1e-9)  # two QR routes: rounding only
    # Cp = RSS / sigma^2 - n + 2 d at every knot (d = nonzero + intercept; Zou,
    # Hastie & Tibshirani 2007, Ann. Statist. 35(5) for the lasso's d).
    expected = c["rss"] / c["noise_variance"] - len(y) + 2 * c["degrees_of_freedom"]
    assert np.allclose(c["mallows_cp"], expected, rtol=1e-12, atol=1e-9)
    assert c["best_cp"] == int(np.argmin(c["mallows_cp"]))
    from_path = knotpath.criteria(path)  # the path alone: its completed end is the least-squares fit
    assert from_path["noise_variance"] == pytest.approx(sigma2, rel=1e-9)


def test_entry_tests_refer_the_covariance_statistic_to_scipys_f_distribution(diabetes):
    names, x, y = diabetes
    path = knotpath.trace(x, y, predictor_names=names)
    tests = knotpath.entry_tests(path, x, y)
    entries = tests["entries"]
    assert [e["predictor"] for e in entries[:2]] == ["bmi", "s5"]
    for e in entries:
        if np.isfinite(e["covariance_statistic"]):
            # With sigma^2 estimated, the covariance statistic is referred to
            # F(2, n - p - 1) (Lockhart, Taylor, Tibshirani & Tibshirani 2014,
            # Ann. Statist. 42(2), section 5); SciPy's F distribution is the reference.
            reference = scipy.stats.f.sf(e["covariance_statistic"], 2, tests["residual_df"])
            assert e["covariance_p_value"] == pytest.approx(reference, rel=1e-6, abs=1e-15)
    # the first two entries are strongly significant on this data (Lockhart et
    # al. 2014, Table 2: p < 0.001 for bmi and s5; from memory)
    assert entries[0]["covariance_p_value"] < 1e-3 and entries[1]["covariance_p_value"] < 1e-3


def test_first_step_t_test_is_the_programs_and_scipys_truncated_t(diabetes, diabetes_file, program, tmp_path):
    names, x, y = diabetes
    path = knotpath.trace(x, y, predictor_names=names)
    f = knotpath.first_step_t_test(path, x, y)
    assert f["note"] == "" and f["predictor"] == "bmi" and f["sign"] == 1
    assert f["degrees_of_freedom"] == len(y) - 2  # d - 1 with d = n - 1 (intercept)
    # The program's select prints the same test (its JSON); it traces the
    # Gram route of this table, so the numbers agree to rounding.
    report = tmp_path / "select.json"
    program("select", diabetes_file, "--response", "progression", "--folds", "5", "--json", report)
    theirs = json.loads(report.read_text())["significance"]["first_step_unknown_variance"]
    assert theirs["predictor"] == f["predictor"] and theirs["sign"] == f["sign"]
    assert theirs["t_statistic"] == pytest.approx(f["statistic"], rel=1e-10)
    assert theirs["truncation_lower"] == pytest.approx(f["lower"], rel=1e-10)
    assert theirs["truncation_upper"] is None and f["upper"] == np.inf
    assert theirs["p_value"] == pytest.approx(f["p_value"], rel=1e-8)
    # SciPy's Student t (a general-purpose reference): P(T' >= T | T' >= L)
    # = sf(T) / sf(L) for T' ~ t_nu.
    t = scipy.stats.t(f["degrees_of_freedom"])
    assert f["p_value"] == pytest.approx(t.sf(f["statistic"]) / t.sf(f["lower"]), rel=1e-6)
    weighted = knotpath.trace(x, y, predictor_names=names, weights=np.linspace(1, 2, len(y)))
    with pytest.raises(ValueError, match="weights"):  # the unweighted data are not the path's problem
        knotpath.first_step_t_test(weighted, x, y)


def test_verify_cross_checks_the_longley_path_which_meets_nists_certified_values():
    longley_file = data_dir() / "strd" / "longley.csv"
    if not longley_file.is_file():
        pytest.skip(f"reference data absent: {longley_file} (set KNOTPATH_DATA_DIR)")
    names, values = read_table(longley_file)
    x, y = np.asfortranarray(values[:, 1:]), values[:, 0].copy()
    check = knotpath.verify(x, y, predictor_names=names[1:])
    assert check["verdict"] in ("trustworthy", "degraded") and check["same_events"]
    assert check["first_difference"] is None
    end = check["path"].solution_at(0.0)
    # NIST StRD Longley certified estimates (B1..B6); the end of a completed
    # lasso path is the least-squares fit. Longley's condition number (about
    # 1e7 after centring) leaves about 8 digits in double: 1e-6 relative.
    certified = [15.0618722713733, -0.358191792925910e-01, -2.02022980381683, -1.03322686717359,
                 -0.511041056535807e-01, 1829.15146461355]
    assert np.allclose(end.coefficients, certified, rtol=1e-6)
    assert end.intercept == pytest.approx(-3482258.63459582, rel=1e-6)
