"""Ridge path: SVD formula against the normal equations; df; no exact zeros."""

import numpy as np
import pytest

from engine.fitting.ridge import ridge_df, ridge_path


def _data(n, p, seed=0):
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, p)) * rng.uniform(0.5, 4, p) + 2.0
    y = X[:, :3] @ [1.0, -2.0, 0.5] + rng.normal(size=n)
    return X, y


@pytest.mark.parametrize("n,p", [(80, 20), (25, 60)])
def test_ridge_matches_normal_equations(n, p):
    # two routes: one decomposition for the path vs solving (Z'Z + n lambda I) b = Z'yc directly
    X, y = _data(n, p)
    path = ridge_path(X, y, n_penalties=12)
    Z = (X - X.mean(0)) / X.std(0)
    yc = y - y.mean()
    for k in (0, 5, 11):
        lam = path.penalties[k]
        direct = np.linalg.solve(Z.T @ Z + n * lam * np.eye(p), Z.T @ yc)
        np.testing.assert_allclose(path.std_coefs[k], direct, rtol=1e-8, atol=1e-12)
    assert path.max_kkt_violation < 1e-10


def test_ridge_has_no_exact_zeros_and_df_decreases_with_penalty():
    # common practice: ridge shrinks but does not select; df = trace of the hat matrix
    X, y = _data(60, 10)
    path = ridge_path(X, y)
    assert np.all(path.std_coefs != 0.0)
    assert np.all(np.diff(path.df) > 0)  # penalties decrease, so df increases
    assert 0 < path.df[0] < path.df[-1] < 10


def test_ridge_df_is_trace_of_hat_matrix():
    X, y = _data(30, 5, seed=2)
    Z = (X - X.mean(0)) / X.std(0)
    d = np.linalg.svd(Z, compute_uv=False)
    lam = 0.3
    H = Z @ np.linalg.solve(Z.T @ Z + 30 * lam * np.eye(5), Z.T)
    assert ridge_df(d, [lam], 30)[0] == pytest.approx(np.trace(H), rel=1e-12)


def test_ridge_at_zero_penalty_is_least_squares():
    # common practice: lambda = 0 gives OLS when n > p
    X, y = _data(50, 6, seed=3)
    path = ridge_path(X, y, penalties=[0.0])
    A = np.column_stack([np.ones(50), X])
    sol = np.linalg.lstsq(A, y, rcond=None)[0]
    np.testing.assert_allclose(path.coefs[0], sol[1:], rtol=1e-8)
    assert path.intercepts[0] == pytest.approx(sol[0], rel=1e-8)
