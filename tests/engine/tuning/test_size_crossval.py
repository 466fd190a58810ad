"""Choosing the subset size: the search is rerun inside each part; BIC per size."""

from __future__ import annotations

import numpy as np
import pytest

from engine.errors import InputProblem
from engine.fitting.stepwise import forward_stepwise
from engine.fitting.subset_search import best_subset
from engine.tuning.folds import make_folds
from engine.tuning.size_crossval import (
    cross_validate_sizes,
    size_bic,
    size_rows,
    subsets_by_size,
)


def sparse_problem(seed, n=80, p=10, active=3, noise=1.0):
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, p))
    beta = np.zeros(p)
    beta[:active] = [2.0, -1.5, 1.0][:active]
    return X, X @ beta + noise * rng.normal(size=n)


def test_forward_curve_equals_a_per_part_recomputation():
    # Two routes: our curve vs. an explicit loop that reruns forward stepwise on each training
    # part and scores the held-out rows with scikit-learn's LinearRegression (reference library).
    from sklearn.linear_model import LinearRegression

    X, y = sparse_problem(0)
    parts = make_folds(len(y), "kfold", 5, seed=1)
    curve = cross_validate_sizes(X, y, parts, "forward-stepwise", max_size=6, workers=1)
    expected = np.zeros((5, 7))
    for i, (tr, te) in enumerate(parts):
        path = forward_stepwise(X[tr], y[tr], max_steps=6)
        for k in range(7):
            cols = list(path.order[:k])
            if k == 0:
                pred = np.full(len(te), y[tr].mean())
            else:
                pred = LinearRegression().fit(X[tr][:, cols], y[tr]).predict(X[te][:, cols])
            expected[i, k] = np.mean((y[te] - pred) ** 2)
    np.testing.assert_allclose(curve.part_errors, expected, rtol=1e-9)
    np.testing.assert_allclose(curve.mean_error, expected.mean(axis=0), rtol=1e-9)
    # common practice: standard error of the mean over parts
    np.testing.assert_allclose(curve.se, expected.std(axis=0, ddof=1) / np.sqrt(5), rtol=1e-9)
    assert curve.grid_kind == "size" and list(curve.grid) == list(range(7))


def test_forward_curve_on_wide_data_equals_least_squares_refits_at_every_size():
    # More columns than rows, every size up to saturation, a nearly collinear pair: the held-out
    # errors from one QR factorization of the columns in their order of entry must equal a
    # fresh least-squares fit per size (scikit-learn's LinearRegression, reference library)
    from sklearn.linear_model import LinearRegression

    rng = np.random.default_rng(6)
    n, p = 45, 90
    X = rng.normal(size=(n, p))
    X[:, 9] = X[:, 8] + 1e-5 * rng.normal(size=n)
    y = 2 * X[:, 0] - X[:, 8] + 0.5 * X[:, 9] + rng.normal(size=n)
    parts = make_folds(n, "kfold", 3, seed=2)
    curve = cross_validate_sizes(X, y, parts, "forward-stepwise", workers=1)
    sizes = len(curve.grid)
    assert sizes >= 25  # up to about as many columns as training rows (30)
    for i, (tr, te) in enumerate(parts):
        path = forward_stepwise(X[tr], y[tr])
        for k in range(1, sizes):
            cols = list(path.order[:k])
            fit = LinearRegression().fit(X[tr][:, cols], y[tr])
            want = np.mean((y[te] - fit.predict(X[te][:, cols])) ** 2)
            assert curve.part_errors[i, k] == pytest.approx(want, rel=1e-6), (i, k)


def test_known_truth_size_is_chosen():
    # Simulated data with a known truth: 3 of 10 columns matter, strong signal.
    X, y = sparse_problem(2, n=120)
    parts = make_folds(len(y), "kfold", 5, seed=0)
    for search in ("best-subset", "forward-stepwise"):
        curve = cross_validate_sizes(X, y, parts, search, choose="one-se", workers=2)
        assert curve.grid[curve.chosen("one-se")] == 3
        assert 3 <= curve.grid[curve.index_min] <= 6


def test_no_leak_pure_noise_prefers_small_models():
    # Invariant: with a response unrelated to the columns, a search rerun inside each part
    # cannot make larger models look better than the mean model by much; the one-se choice is 0.
    rng = np.random.default_rng(4)
    X, y = rng.normal(size=(40, 12)), rng.normal(size=40)
    parts = make_folds(40, "kfold", 5, seed=0)
    curve = cross_validate_sizes(X, y, parts, "best-subset", max_size=8, workers=1)
    assert curve.chosen("one-se") == 0
    assert curve.mean_error[8] > curve.mean_error[0]
    # leaking version for contrast: subsets chosen on all rows look better in-sample
    leak = best_subset(X, y, max_size=8)
    assert leak.rss[7] < leak.tss


def test_bic_matches_statsmodels():
    # Source: statsmodels OLS bic = -2 llf + (k + 1) log n; ours drops the constant n(log 2pi + 1).
    import statsmodels.api as sm

    X, y = sparse_problem(5)
    found = subsets_by_size(X, y, "best-subset", max_size=5)
    ours = size_bic(found.rss, found.sizes, len(y))
    n = len(y)
    for k, s in enumerate(found.subsets):
        A = sm.add_constant(X[:, list(s)]) if s else np.ones((n, 1))
        ref = sm.OLS(y, A).fit().bic - n * (np.log(2 * np.pi) + 1)
        assert ours[k] == pytest.approx(ref, rel=1e-10)
    rows = size_rows(found.subsets, found.rss, found.rss[0], n, [f"c{j}" for j in range(10)])
    assert [r.size for r in rows] == [1, 2, 3, 4, 5]
    assert rows[2].columns == ["c0", "c1", "c2"]
    assert rows[2].r2 == pytest.approx(1 - found.rss[3] / found.rss[0])
    assert int(np.argmin(ours)) == 3  # known truth: BIC picks the 3 true columns


def test_refusals():
    X, y = sparse_problem(0, n=20)
    parts = make_folds(20, "kfold", 5, seed=0)
    with pytest.raises(InputProblem, match="search"):
        cross_validate_sizes(X, y, parts, "sideways")
    with pytest.raises(InputProblem, match="rule"):
        cross_validate_sizes(X, y, parts, "best-subset", choose="max")


@pytest.mark.parametrize("search", ["forward-stepwise", "best-subset"])
def test_many_rows_refits_equal_the_reference_library(search):
    # with many rows per column each size is refitted on the triangle of one QR factorization;
    # scikit-learn's LinearRegression on the held-out rows is the reference
    from sklearn.linear_model import LinearRegression

    X, y = sparse_problem(5, n=400, p=12)
    X[:, 4] = X[:, 3] + 1e-3 * X[:, 4]  # a nearly collinear pair
    parts = make_folds(len(y), "kfold", 4, seed=2)
    curve = cross_validate_sizes(X, y, parts, search, max_size=5, workers=1)
    for i, (tr, te) in enumerate(parts):
        found = subsets_by_size(X[tr], y[tr], search, max_size=5)
        for k, cols in enumerate(found.subsets[:6]):
            cols = list(cols)
            if k == 0:
                pred = np.full(len(te), y[tr].mean())
            else:
                pred = LinearRegression().fit(X[tr][:, cols], y[tr]).predict(X[te][:, cols])
            assert curve.part_errors[i, k] == pytest.approx(np.mean((y[te] - pred) ** 2), rel=1e-9)
