"""OLS: rank deficiency reported, not silently wrong; two routes agree."""

import numpy as np

from engine.fitting.ols import fit_ols


def test_exactly_collinear_column_is_aliased_and_fit_matches_reduced_model():
    rng = np.random.default_rng(4)
    X = rng.normal(size=(40, 3))
    X = np.column_stack([X, X[:, 0] - 2 * X[:, 1]])  # column 3 is a combination of 0 and 1
    y = X[:, :3] @ [1.0, 2.0, -1.0] + rng.normal(size=40)
    f = fit_ols(X, y)
    assert f.rank == 3
    assert len(f.aliased) == 1
    assert f.coef[f.aliased[0]] == 0.0
    assert any("linear combinations" in w for w in f.warnings)
    # Source: numpy.linalg.lstsq on the reduced design (the same column space) as second route
    kept = [j for j in range(4) if j not in f.aliased]
    A = np.column_stack([np.ones(40), X[:, kept]])
    sol = np.linalg.lstsq(A, y, rcond=None)[0]
    np.testing.assert_allclose(f.fitted, A @ sol, rtol=1e-10)


def test_constant_column_is_aliased_with_the_intercept():
    rng = np.random.default_rng(5)
    X = np.column_stack([rng.normal(size=20), np.full(20, 7.0)])
    y = 3 + 2 * X[:, 0] + rng.normal(size=20)
    f = fit_ols(X, y)
    assert f.aliased == [1] and f.coef[1] == 0.0


def test_residuals_orthogonal_to_columns_and_sum_to_zero():
    # invariant of least squares with an intercept (normal equations)
    rng = np.random.default_rng(6)
    X = rng.normal(size=(60, 5)) * [1, 100, 0.01, 1, 1e3]
    y = rng.normal(size=60)
    f = fit_ols(X, y)
    assert abs(f.residuals.sum()) < 1e-10
    np.testing.assert_allclose((X - X.mean(0)).T @ f.residuals, 0.0, atol=1e-8)
    assert f.rss == float(f.residuals @ f.residuals)
