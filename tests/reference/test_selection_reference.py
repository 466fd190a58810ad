"""Subset selection and inference after selection against published figures and reference libraries."""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from engine.fitting.stepwise import forward_stepwise
from engine.fitting.subset_search import best_subset, subset_rss

# Source: Hald (1952), Statistical Theory with Engineering Applications, Wiley; the cement heat
# data as reprinted in Draper & Smith, Applied Regression Analysis (3rd ed., Wiley 1998).
# Columns x1..x4 are percentages of four clinker compounds, y the heat evolved (calories per
# gram). Data written down from memory; verified below by published figures (from memory) and
# by the near-100% row sums of the four percentages.
HALD = np.array(
    [
        [7, 26, 6, 60, 78.5],
        [1, 29, 15, 52, 74.3],
        [11, 56, 8, 20, 104.3],
        [11, 31, 8, 47, 87.6],
        [7, 52, 6, 33, 95.9],
        [11, 55, 9, 22, 109.2],
        [3, 71, 17, 6, 102.7],
        [1, 31, 22, 44, 72.5],
        [2, 54, 18, 22, 93.1],
        [21, 47, 4, 26, 115.9],
        [1, 40, 23, 34, 83.8],
        [11, 66, 9, 12, 113.3],
        [10, 68, 8, 12, 109.4],
    ]
)


def test_hald_data_match_published_figures():
    X, y = HALD[:, :4], HALD[:, 4]
    # Source: Draper & Smith (from memory): total SS about the mean 2715.76, full-model
    # R^2 = 0.9824, best pair fit y = 52.58 + 1.468 x1 + 0.662 x2. Checked numerically here.
    tss = float(((y - y.mean()) ** 2).sum())
    assert tss == pytest.approx(2715.76, abs=0.01)
    assert 1 - subset_rss(X, y, [0, 1, 2, 3]) / tss == pytest.approx(0.9824, abs=5e-5)
    A = np.column_stack([np.ones(13), X[:, :2]])
    coef = np.linalg.lstsq(A, y, rcond=None)[0]
    np.testing.assert_allclose(coef, [52.58, 1.468, 0.662], atol=6e-3)
    # the four compound percentages add up to a little under 100% in every row (95-99)
    assert np.all((X.sum(axis=1) >= 95) & (X.sum(axis=1) <= 99))


def test_hald_best_subsets_reproduce_the_published_table():
    X, y = HALD[:, :4], HALD[:, 4]
    found = best_subset(X, y, max_size=4)
    r2 = 1 - found.rss / found.tss
    # Source: Draper & Smith, best-subsets analysis of the Hald data (from memory): best single
    # column x4 (R^2 67.5%), best pair {x1, x2} (97.9%), best triple {x1, x2, x4} (98.234%,
    # just ahead of {x1, x2, x3} at 98.228%), all four 98.24%.
    assert found.subsets == [(3,), (0, 1), (0, 1, 3), (0, 1, 2, 3)]
    np.testing.assert_allclose(r2, [0.675, 0.979, 0.9823, 0.9824], atol=6e-4)
    # second route for the same table: enumerate all 15 subsets with numpy least squares
    for k in range(1, 5):
        rss, subset = min((subset_rss(X, y, s), s) for s in itertools.combinations(range(4), k))
        assert found.subsets[k - 1] == subset
        assert found.rss[k - 1] == pytest.approx(rss, rel=1e-10)
    # the runner-up triple {x1, x2, x3} is indeed within 0.1 percentage point
    assert 1 - subset_rss(X, y, [0, 1, 2]) / found.tss == pytest.approx(0.9823, abs=2e-4)


def test_hald_forward_stepwise_entry_order():
    # Source: Draper & Smith, forward selection on the Hald data (from memory): x4 enters
    # first, then x1, then x2. Second route: the naive refit in tests/engine/fitting.
    X, y = HALD[:, :4], HALD[:, 4]
    path = forward_stepwise(X, y)
    assert list(path.order[:3]) == [3, 0, 1]
    # and the forward pair {x1, x4} (R^2 97.2%) is worse than the best pair {x1, x2}
    assert 1 - path.rss[1] / path.tss == pytest.approx(0.972, abs=6e-4)
    assert path.rss[1] > best_subset(X, y, max_size=2).rss[1]


# --- inference after selection against statsmodels -------------------------------------------


def _heteroskedastic(seed, n=120, p=8):
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, p)) @ np.triu(np.full((p, p), 0.3)) + 2.0
    y = 0.7 + X[:, 1] - X[:, 4] + (0.5 + np.abs(X[:, 1] - 2)) * rng.normal(size=n)
    return X, y


@pytest.mark.parametrize("cov_type", ["HC1", "HC3"])
def test_post_lasso_standard_errors_equal_statsmodels(cov_type):
    # Source: statsmodels OLS(...).fit(cov_type="HC1"/"HC3") (reference library), same columns.
    import statsmodels.api as sm

    from engine.fitting.post_selection import post_lasso

    X, y = _heteroskedastic(3)
    cols = [1, 4, 6]
    ours = post_lasso(X, y, cols, cov_type=cov_type)
    ref = sm.OLS(y, sm.add_constant(X[:, cols])).fit(cov_type=cov_type)
    np.testing.assert_allclose(ours.intercept, ref.params[0], rtol=1e-10)
    np.testing.assert_allclose(ours.coefs[cols], ref.params[1:], rtol=1e-10)
    np.testing.assert_allclose(ours.intercept_se, ref.bse[0], rtol=1e-9)
    np.testing.assert_allclose(ours.std_errors[cols], ref.bse[1:], rtol=1e-9)
    np.testing.assert_allclose(ours.fit.covariance, ref.cov_params(), rtol=1e-9, atol=1e-14)
    np.testing.assert_allclose(ours.r2, ref.rsquared, rtol=1e-10)


@pytest.mark.parametrize("cov_type", ["HC1", "HC3"])
def test_double_selection_standard_error_equals_statsmodels(cov_type):
    # Source: statsmodels OLS with cov_type="HC1"/"HC3" (reference library) on the focal column
    # plus the union of selected controls.
    import statsmodels.api as sm

    from engine.fitting.double_selection import double_selection

    rng = np.random.default_rng(11)
    n, m = 150, 30
    W = rng.normal(size=(n, m))
    d = W[:, 0] + 0.5 * W[:, 3] + rng.normal(size=n)
    y = 0.8 * d + W[:, 0] - W[:, 5] + (1 + np.abs(W[:, 1])) * rng.normal(size=n)
    res = double_selection(y, d, W, cov_type=cov_type)
    assert res.controls.size > 0
    ref = sm.OLS(y, sm.add_constant(np.column_stack([d, W[:, res.controls]]))).fit(
        cov_type=cov_type
    )
    assert res.estimate == pytest.approx(ref.params[1], rel=1e-10)
    assert res.std_error == pytest.approx(ref.bse[1], rel=1e-9)
    lo, hi = ref.conf_int(alpha=0.05)[1]  # normal-based interval under a robust covariance
    assert res.ci_low == pytest.approx(lo, rel=1e-9)
    assert res.ci_high == pytest.approx(hi, rel=1e-9)


def _grouped(seed, n=240, m=30, n_groups=60):
    """Simulated rows in groups with a shared shock per group (stated as simulated)."""
    rng = np.random.default_rng(seed)
    g = rng.integers(0, n_groups, n)
    W = rng.normal(size=(n, m)) + rng.normal(size=(n_groups, m))[g]
    d = W[:, 0] + 0.5 * W[:, 3] + rng.normal(size=n_groups)[g] + rng.normal(size=n)
    y = 0.8 * d + W[:, 0] - W[:, 5] + 1.5 * rng.normal(size=n_groups)[g] + rng.normal(size=n)
    return y, d, W, g


def test_clustered_standard_errors_equal_statsmodels():
    # Source: statsmodels OLS(...).fit(cov_type="cluster") (reference library; its default
    # small-sample factor G/(G-1) * (n-1)/(n-k) is CR1), for least squares after selection and
    # for double selection with a group column
    import statsmodels.api as sm

    from engine.fitting.double_selection import double_selection
    from engine.fitting.post_selection import post_lasso

    y, d, W, g = _grouped(5)
    cols = [0, 3, 5]
    ours = post_lasso(W, y, cols, cov_type="CR1", groups=g)
    ref = sm.OLS(y, sm.add_constant(W[:, cols])).fit(cov_type="cluster", cov_kwds={"groups": g})
    np.testing.assert_allclose(ours.coefs[cols], ref.params[1:], rtol=1e-10)
    np.testing.assert_allclose(ours.fit.covariance, ref.cov_params(), rtol=1e-9, atol=1e-14)
    res = double_selection(y, d, W, groups=g)
    assert res.covariance == "CR1" and res.controls.size > 0
    X = sm.add_constant(np.column_stack([d, W[:, res.controls]]))
    ref = sm.OLS(y, X).fit(cov_type="cluster", cov_kwds={"groups": g})
    assert res.estimate == pytest.approx(ref.params[1], rel=1e-10)
    assert res.std_error == pytest.approx(ref.bse[1], rel=1e-9)
    # shocks shared within groups by the focal column and the errors make the clustered error
    # larger than the row-wise one
    rowwise = double_selection(y, d, W)
    assert res.std_error > rowwise.std_error
    assert not any("rough" in note for note in res.notes)  # 60 groups: no few-groups warning
    few = double_selection(y, d, W, groups=g % 12)
    assert any("12 groups" in note and "rough" in note for note in few.notes)
