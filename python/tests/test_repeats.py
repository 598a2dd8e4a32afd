"""Repeated cross-validation from Python (cross_validate(repeats=R)): the
averaged curve, each repeat's curve, the spread and the stability counts,
checked against single cross-validations, fold paths traced here and NumPy."""

import numpy as np
import pytest

import knotpath

FOLDS, SEED, REPEATS = 5, 11, 3


@pytest.fixture(scope="module")
def repeated(diabetes):
    names, x, y = diabetes
    return knotpath.cross_validate(x, y, predictor_names=names, folds=FOLDS, seed=SEED, repeats=REPEATS)


@pytest.fixture(scope="module")
def singles(diabetes):
    """The single cross-validations with seeds SEED + r, r < REPEATS: the
    library's contract is that repeat r draws its folds from seed + r."""
    names, x, y = diabetes
    return [knotpath.cross_validate(x, y, predictor_names=names, folds=FOLDS, seed=SEED + r) for r in range(REPEATS)]


def grid(cv):
    """Size-free penalties inside the curve's domain that avoid the merged
    knots: the geometric means of neighbouring knots, and the two choices."""
    knots = cv["curve"]["mu"]
    knots = knots[knots > 0]
    return np.concatenate([np.sqrt(knots[:-1] * knots[1:]), [cv["least_error"]["mu"], cv["parsimonious"]["mu"]]])


def test_one_repeat_is_the_single_cross_validation(diabetes, singles):
    names, x, y = diabetes
    once = knotpath.cross_validate(x, y, predictor_names=names, folds=FOLDS, seed=SEED, repeats=1)
    single = singles[0]
    assert once["repeats"] == 1 and once["folds_per_repeat"] == FOLDS and once["fold_count"] == FOLDS
    for choice in ("least_error", "parsimonious"):
        assert once[choice] == single[choice]
        assert once[choice]["spread"] == 0.0  # one curve has no spread (the library's definition)
    for key in ("mu", "error", "standard_error"):
        assert np.array_equal(once["curve"][key], single["curve"][key]), key
    assert np.array_equal(once["repeat_fold_of"], single["fold_of"][np.newaxis, :])
    points = once.curve_at(mu=grid(once))
    assert points["repeat_error"].shape == (1, len(points["mu"]))
    assert np.array_equal(points["repeat_error"][0], points["error"])


def test_the_repeated_curve_is_the_mean_of_the_single_runs_with_seeds_seed_plus_r(repeated, singles):
    assert repeated["repeats"] == REPEATS and repeated["folds_per_repeat"] == FOLDS
    assert repeated["fold_count"] == REPEATS * FOLDS
    for r, single in enumerate(singles):
        assert np.array_equal(repeated["repeat_fold_of"][r], single["fold_of"]), r
    mu = grid(repeated)
    points = repeated.curve_at(mu=mu)
    theirs = [single.curve_at(mu=mu) for single in singles]
    errors = np.array([t["error"] for t in theirs])
    # Each repeat's curve is the single run's: the same fold paths (same
    # training rows), summed in another order, so they agree to rounding:
    # 1e-12 relative (common practice for a few dozen sums of positive terms).
    assert np.allclose(points["repeat_error"], errors, rtol=1e-12, atol=0)
    # The averaged curve is their mean, its standard error the mean of theirs
    # (cross_validation.hpp's definition), and the spread the sample standard
    # deviation with divisor R - 1 (common practice), here from NumPy's std.
    assert np.allclose(points["error"], errors.mean(axis=0), rtol=1e-12, atol=0)
    assert np.allclose(points["standard_error"], np.mean([t["standard_error"] for t in theirs], axis=0),
                       rtol=1e-12, atol=0)
    # the spread is a difference of nearly equal errors: its rounding is
    # relative to the errors themselves (1e-12 of them)
    assert np.allclose(points["spread"], errors.std(axis=0, ddof=1), rtol=0, atol=1e-12 * errors.max())
    assert np.all(points["spread"] > 0)  # different folds give different curves on this data
    # the curve at the merged knots and at the choices is the same function
    at_knots = repeated.curve_at(mu=repeated["curve"]["mu"])
    for key in ("error", "standard_error", "spread"):
        assert np.array_equal(at_knots[key], repeated["curve"][key]), key
    for choice in ("least_error", "parsimonious"):
        chosen = repeated.curve_at(penalty=repeated[choice]["penalty"])
        assert chosen["mu"] == pytest.approx(repeated[choice]["mu"], rel=1e-14)
        assert chosen["error"] == pytest.approx(repeated[choice]["error"], rel=1e-12)
        assert chosen["spread"] == pytest.approx(repeated[choice]["spread"], rel=1e-9)
    assert repeated["least_error"]["spread"] != repeated["parsimonious"]["spread"]
    # the averaged curve's exact minimum is no higher than any point of it
    assert repeated["least_error"]["error"] <= points["error"].min() * (1 + 1e-12)


def test_activity_counts_the_fold_paths_traced_here(diabetes, repeated):
    names, x, y = diabetes
    fold_of = repeated["repeat_fold_of"]
    mus = [repeated["least_error"]["mu"] * 1.01, repeated["parsimonious"]["mu"] * 0.99,
           0.5 * repeated["least_error"]["mu"]]
    # Trace every fold's training rows here and read the coefficients at the
    # fold's own penalty for mu (Path.coefficients_at(mu=...): the same
    # size-free axis): the count of nonzero ones is the definition of the
    # counts (Meinshausen & Buhlmann 2010, JRSS B 72(4), the selection
    # frequency over resamples; here the resamples are the folds).
    fold_paths = [knotpath.trace(x[fold_of[r] != k], y[fold_of[r] != k], predictor_names=names)
                  for r in range(REPEATS) for k in range(FOLDS)]
    for mu in mus:
        activity = repeated.activity_at(mu=mu)
        counted = sum((p.coefficients_at(mu=mu) != 0).astype(int) for p in fold_paths)
        assert activity["fold_paths"] == REPEATS * FOLDS
        assert activity["predictor"] == names
        assert np.array_equal(activity["active_in_folds"], counted), mu
        assert np.array_equal(activity["fraction"], counted / (REPEATS * FOLDS))
        full = repeated["path"].coefficients_at(mu=mu) != 0
        assert np.array_equal(activity["active_in_full_path"], full), mu
    # at least one predictor is in some folds but not all at these penalties
    # (otherwise the counts above could not tell a fold from another)
    partial = [repeated.activity_at(mu=mu)["active_in_folds"] for mu in mus]
    assert any(np.any((a > 0) & (a < REPEATS * FOLDS)) for a in partial)
    # by penalty: the same counts as at its size-free penalty
    by_penalty = repeated.activity_at(penalty=repeated["least_error"]["penalty"])
    assert np.array_equal(by_penalty["active_in_folds"],
                          repeated.activity_at(mu=repeated["least_error"]["mu"])["active_in_folds"])


def test_repeats_are_refused_with_the_librarys_message(diabetes):
    names, x, y = diabetes
    with pytest.raises(ValueError, match=r"option 'repeats': must be >= 1 \(got 0\)"):
        knotpath.cross_validate(x, y, folds=FOLDS, repeats=0)
    with pytest.raises(knotpath.InvalidOption, match=r"option 'repeats': must be >= 1 \(got -3\)"):
        knotpath.cross_validate(x, y, folds=FOLDS, repeats=-3)
    with pytest.raises(ValueError, match="option 'repeats': needs folds drawn from the seed; leave-one-out gives"):
        knotpath.cross_validate(x, y, leave_one_out=True, repeats=2)
    with pytest.raises(ValueError, match=r"option 'repeats': needs folds drawn from the seed; a fold column \(fold_of\) gives"):
        knotpath.cross_validate(x, y, fold_of=np.arange(len(y)) % 4, repeats=2)
    # one repeat stays allowed with the user's folds
    given = knotpath.cross_validate(x, y, fold_of=np.arange(len(y)) % 4, repeats=1)
    assert given["repeats"] == 1 and given["fold_count"] == 4


def test_queries_outside_the_curve_are_refused(diabetes):
    names, x, y = diabetes
    cv = knotpath.cross_validate(x, y, folds=FOLDS, seed=SEED, repeats=2, max_knots=4)
    assert cv["mu_low"] > 0  # the fold paths stopped early: the curve ends above 0
    with pytest.raises(knotpath.InvalidQuery, match="below the cross-validation curve's domain"):
        cv.curve_at(mu=cv["mu_low"] / 2)
    with pytest.raises(knotpath.InvalidQuery, match="below the cross-validation curve's domain"):
        cv.activity_at(mu=cv["mu_low"] / 2)
    with pytest.raises(knotpath.InvalidQuery, match="exactly one of penalty or mu"):
        cv.curve_at(penalty=1.0, mu=1.0)
    with pytest.raises(knotpath.InvalidQuery, match="one point"):
        cv.activity_at(mu=[1.0, 2.0])
