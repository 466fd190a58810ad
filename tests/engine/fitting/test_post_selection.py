"""Least squares after selection: coefficients and robust standard errors."""

from __future__ import annotations

import numpy as np
import pytest

from engine.errors import InputProblem
from engine.fitting.post_selection import SELECTION_CAUTION, post_lasso, robust_ols


def data(seed=0, n=80, p=6):
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, p)) * np.arange(1, p + 1)
    # heteroskedastic noise: its spread grows with the first column
    y = 1.5 + X[:, 0] - 0.5 * X[:, 2] + (1 + np.abs(X[:, 0])) * rng.normal(size=n)
    return X, y


def test_layout_over_all_columns_and_caution():
    X, y = data()
    res = post_lasso(X, y, np.array([True, False, True, False, False, False]))
    np.testing.assert_array_equal(res.selected, [0, 2])
    assert np.all(res.coefs[[1, 3, 4, 5]] == 0.0)
    assert np.all(np.isnan(res.std_errors[[1, 3, 4, 5]]))
    assert np.all(res.std_errors[[0, 2]] > 0)
    assert res.caution == SELECTION_CAUTION and "selection step" in res.caution
    # invariant: least-squares residuals are orthogonal to the intercept and the refit columns
    r = y - res.fitted
    assert abs(r.sum()) < 1e-8 * np.abs(y).sum()
    np.testing.assert_allclose(X[:, [0, 2]].T @ r, 0.0, atol=1e-8 * np.abs(X).sum())


def test_empty_selection_is_the_mean_model():
    X, y = data()
    res = post_lasso(X, y, [])
    assert res.intercept == pytest.approx(y.mean())
    assert res.r2 == pytest.approx(0.0, abs=1e-12)


def test_hc3_leverage_one_and_no_residual_df_give_nan_with_a_note():
    rng = np.random.default_rng(1)
    X = rng.normal(size=(5, 4))
    y = rng.normal(size=5)
    fit = robust_ols(X, y, cov_type="HC1")
    assert np.all(np.isnan(fit.std_errors)) and "degrees of freedom" in fit.notes[0]
    Xd = np.column_stack([rng.normal(size=12), np.eye(12)[:, 0]])  # a dummy for one row
    fit3 = robust_ols(Xd, rng.normal(size=12), cov_type="HC3")
    assert np.isnan(fit3.std_errors).all() and "leverage" in fit3.notes[0]


def test_bad_inputs():
    X, y = data()
    with pytest.raises(InputProblem, match="covariance"):
        post_lasso(X, y, [0], cov_type="HC7")
    with pytest.raises(InputProblem, match="0..5"):
        post_lasso(X, y, [9])
