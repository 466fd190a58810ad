"""Adaptive lasso: weights from the first fit, the weighted path, recovery of a known truth."""

from __future__ import annotations

import numpy as np
import pytest

from engine.errors import InputProblem
from engine.fitting.adaptive import (
    AdaptiveWeights,
    adaptive_lasso,
    adaptive_weights,
    initial_estimate,
)
from engine.fitting.coordinate import elastic_net_path
from engine.tuning.crossval import cross_validate_path
from engine.tuning.folds import make_folds

# Source: Zou (2006), JASA 101(476), section 2 (from memory): four columns with correlations
# rho1 = -0.39 among the first three and rho2 = 0.23 with the fourth, beta = (5.6, 5.6, 5.6, 0).
# The lasso is not sign-consistent there because the irrepresentable quantity
# |C21 C11^-1 sign(beta1)| exceeds 1; checked numerically in the test.
R1, R2 = -0.39, 0.23
ZOU_C = np.array([[1, R1, R1, R2], [R1, 1, R1, R2], [R1, R1, 1, R2], [R2, R2, R2, 1.0]])
ZOU_BETA = np.array([5.6, 5.6, 5.6, 0.0])


def zou_sample(seed, n):
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, 4)) @ np.linalg.cholesky(ZOU_C).T
    return X, X @ ZOU_BETA + 3.0 * rng.normal(size=n)


def recovers(path, truth):
    return any(np.array_equal(path.std_coefs[i] != 0, truth) for i in range(len(path)))


def test_ols_weights_equal_statsmodels_on_standardized_columns():
    # Source: statsmodels OLS (reference library) on columns scaled by their population sd.
    import statsmodels.api as sm

    rng = np.random.default_rng(0)
    X = rng.normal(size=(100, 5)) * [1, 10, 0.1, 3, 7]
    y = X @ np.array([1.0, 0.05, 4.0, 0.0, 0.2]) + rng.normal(size=100)
    Z = (X - X.mean(axis=0)) / X.std(axis=0)
    ref = sm.OLS(y, sm.add_constant(Z)).fit().params[1:]
    beta, used = initial_estimate(X, y, "auto")  # n >= 2p: least squares
    assert used == "ols"
    np.testing.assert_allclose(beta, ref, rtol=1e-9)
    np.testing.assert_allclose(adaptive_weights(X, y, gamma=2.0), 1 / np.abs(ref) ** 2, rtol=1e-9)


def test_ridge_first_fit_minimizes_gcv():
    # Two routes: the chosen ridge fit vs. GCV computed directly from the hat matrix
    # H = Z (Z'Z + n lambda I)^-1 Z' (Golub, Heath & Wahba 1979) on the same penalty grid.
    from engine.fitting.ridge import ridge_path

    rng = np.random.default_rng(1)
    n, p = 30, 50
    X = rng.normal(size=(n, p))
    y = X[:, :3] @ np.array([2.0, -1.0, 1.0]) + rng.normal(size=n)
    beta, used = initial_estimate(X, y, "auto")
    assert used == "ridge"
    Z = (X - X.mean(axis=0)) / X.std(axis=0)
    yc = y - y.mean()
    grid = ridge_path(X, y, n_penalties=60, check_kkt=False).penalties
    gcv = []
    for lam in grid:
        H = Z @ np.linalg.solve(Z.T @ Z + n * lam * np.eye(p), Z.T)
        r = yc - H @ yc
        gcv.append(n * (r @ r) / (n - np.trace(H) - 1) ** 2)
    lam = grid[int(np.argmin(gcv))]
    direct = np.linalg.solve(Z.T @ Z + n * lam * np.eye(p), Z.T @ yc)
    np.testing.assert_allclose(beta, direct, rtol=1e-6, atol=1e-10)


def test_path_equals_sklearn_lasso_on_reweighted_columns():
    # Two routes (Zou 2006, section 3.5): the weighted lasso equals a plain lasso on the
    # standardized columns divided by the rescaled weights v, with beta = gamma / v; the plain
    # lasso is scikit-learn's Lasso (reference library; same (1/(2n)) objective, alpha = lambda).
    from sklearn.linear_model import Lasso

    X, y = zou_sample(3, 200)
    res = adaptive_lasso(X, y, n_penalties=30)
    v = res.weights * 4 / res.weights.sum()
    Zw = (X - X.mean(axis=0)) / X.std(axis=0) / v
    for i in (5, 15, 29):
        lam = res.path.penalties[i]
        ref = Lasso(alpha=lam, tol=1e-12, max_iter=100_000).fit(Zw, y).coef_ / v
        np.testing.assert_allclose(res.path.std_coefs[i], ref, atol=1e-5 * np.abs(ref).max())


def test_adaptive_recovers_the_true_set_more_often_than_lasso():
    # Simulated data with a known truth (Zou's design above), 20 seeded replications, n = 400:
    # share of replications in which some penalty on the path selects exactly {1, 2, 3}.
    irrepresentable = abs(ZOU_C[3, :3] @ np.linalg.solve(ZOU_C[:3, :3], np.ones(3)))
    assert irrepresentable > 1  # the lasso's condition fails (checks the recalled design)
    truth = ZOU_BETA != 0
    lasso_hits = adaptive_hits = 0
    for seed in range(20):
        X, y = zou_sample(seed, 400)
        lasso_hits += recovers(elastic_net_path(X, y, n_penalties=60), truth)
        adaptive_hits += recovers(adaptive_lasso(X, y, n_penalties=60).path, truth)
    assert adaptive_hits >= 18
    assert lasso_hits <= adaptive_hits - 6


@pytest.mark.slow
def test_adaptive_beats_lasso_with_penalty_chosen_by_validation():
    # Simulated data with a known truth (Zou 2006, model 1, from memory: beta = (3, 1.5, 0, 0,
    # 2, 0, 0, 0), correlation 0.5^|i-j|, noise sd 3), n = 60, 100 replications; penalty by
    # 5-fold validation with the weights recomputed inside each part.
    p = 8
    beta = np.array([3, 1.5, 0, 0, 2, 0, 0, 0.0])
    L = np.linalg.cholesky(0.5 ** np.abs(np.subtract.outer(np.arange(p), np.arange(p))))
    hits = {"lasso": 0, "adaptive": 0}
    for seed in range(100):
        rng = np.random.default_rng(seed)
        X = rng.normal(size=(60, p)) @ L.T
        y = X @ beta + 3 * rng.normal(size=60)
        parts = make_folds(60, "kfold", 5, seed)
        lp = elastic_net_path(X, y)
        ad = adaptive_lasso(X, y)
        c1 = cross_validate_path(
            X, y, parts, 1.0, lp.penalties, workers=1, n_selected=lp.n_selected
        )
        c2 = cross_validate_path(
            X,
            y,
            parts,
            1.0,
            ad.path.penalties,
            penalty_factors=AdaptiveWeights(),
            workers=1,
            n_selected=ad.path.n_selected,
        )
        hits["lasso"] += np.array_equal(lp.std_coefs[c1.index_min] != 0, beta != 0)
        hits["adaptive"] += np.array_equal(ad.path.std_coefs[c2.index_min] != 0, beta != 0)
    assert hits["adaptive"] > hits["lasso"]


def test_weights_callable_is_recomputed_on_each_part():
    X, y = zou_sample(5, 100)
    calls = []

    class Recording(AdaptiveWeights):
        def __call__(self, Xp, yp):
            calls.append(Xp.shape[0])
            return super().__call__(Xp, yp)

    parts = make_folds(100, "kfold", 4, seed=0)
    cross_validate_path(X, y, parts, 1.0, None, penalty_factors=Recording(), workers=1)
    assert sorted(calls) == [75, 75, 75, 75, 100]  # each training part, plus the full data once


def test_refusals():
    X, y = zou_sample(0, 20)
    with pytest.raises(InputProblem, match="gamma"):
        adaptive_lasso(X, y, gamma=0)
    with pytest.raises(InputProblem, match="initial fit"):
        initial_estimate(X, y, "lasso")
    with pytest.raises(InputProblem, match="ridge first fit"):
        initial_estimate(np.random.default_rng(0).normal(size=(5, 8)), np.ones(5), "ols")
