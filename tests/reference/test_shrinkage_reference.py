"""Shrinkage fits and least squares against outside references.

- NIST StRD "Longley" (Longley 1967, JASA 62): certified least-squares values.
- scikit-learn 1.9 Lasso / ElasticNet / Ridge / lasso_path on the diabetes data shipped with
  scikit-learn (Efron, Hastie, Johnstone & Tibshirani 2004), identically standardized.
"""

from fractions import Fraction

import numpy as np
import pytest
import statsmodels.api as sm
from sklearn.datasets import load_diabetes
from sklearn.linear_model import ElasticNet, Lasso, Ridge, lasso_path

from engine.fitting.coordinate import elastic_net_path, kkt_violation
from engine.fitting.ols import fit_ols
from engine.fitting.ridge import ridge_path

# Source: NIST StRD Longley certified values (from memory): intercept, GNPDEFL, GNP, UNEMP,
# ARMED, POP, YEAR; residual standard deviation; R squared. Verified below by an exact
# rational-arithmetic solution of the normal equations and by statsmodels.
LONGLEY_CERTIFIED = [
    -3482258.63459582,
    15.0618722713733,
    -0.358191792925910e-01,
    -2.02022980381683,
    -1.03322686717359,
    -0.511041056535807e-01,
    1829.15146461355,
]
LONGLEY_RESIDUAL_SD = 304.854073561965
LONGLEY_R2 = 0.995479004577296


def _longley():
    d = sm.datasets.longley.load_pandas()  # Source: statsmodels ships the Longley data
    return d.exog.to_numpy(float), d.endog.to_numpy(float)


def _exact_least_squares(X, y):
    """Least squares with an intercept in exact rational arithmetic (normal equations)."""
    rows = [[Fraction(1)] + [Fraction(repr(v)) for v in r] for r in X.tolist()]
    yy = [Fraction(repr(v)) for v in y.tolist()]
    k = len(rows[0])
    A = [[sum(r[i] * r[j] for r in rows) for j in range(k)] for i in range(k)]
    b = [sum(r[i] * t for r, t in zip(rows, yy)) for i in range(k)]
    for c in range(k):  # Gauss-Jordan, exact
        piv = next(r for r in range(c, k) if A[r][c] != 0)
        A[c], A[piv], b[c], b[piv] = A[piv], A[c], b[piv], b[c]
        for r in range(k):
            if r != c and A[r][c] != 0:
                f = A[r][c] / A[c][c]
                A[r] = [a - f * ac for a, ac in zip(A[r], A[c])]
                b[r] -= f * b[c]
    return [float(b[i] / A[i][i]) for i in range(k)]


def test_certified_longley_values_are_the_exact_least_squares_solution():
    # second route for the values recalled from memory: exact arithmetic on the same data
    X, y = _longley()
    exact = _exact_least_squares(X, y)
    np.testing.assert_allclose(exact, LONGLEY_CERTIFIED, rtol=1e-13)
    # Source: statsmodels OLS as a third route (QR-free pinv; looser agreement expected)
    sm_fit = sm.OLS(y, sm.add_constant(X)).fit()
    np.testing.assert_allclose(sm_fit.params, LONGLEY_CERTIFIED, rtol=1e-7)


def test_ols_matches_nist_longley_certified_values():
    # Source: NIST StRD Longley certified values (from memory; verified in the test above)
    X, y = _longley()
    f = fit_ols(X, y)
    assert f.intercept == pytest.approx(LONGLEY_CERTIFIED[0], rel=1e-10)
    np.testing.assert_allclose(f.coef, LONGLEY_CERTIFIED[1:], rtol=1e-10)
    sd = np.sqrt(f.rss / f.df_residual)
    assert sd == pytest.approx(LONGLEY_RESIDUAL_SD, rel=1e-10)
    r2 = 1 - f.rss / np.sum((y - y.mean()) ** 2)
    assert r2 == pytest.approx(LONGLEY_R2, rel=1e-12)
    assert f.rank == 6 and f.aliased == []


def _diabetes():
    # Source: scikit-learn's shipped diabetes data (442 rows, 10 columns), unscaled version
    X, y = load_diabetes(return_X_y=True, scaled=False)
    Z = (X - X.mean(0)) / X.std(0)
    return X, y, Z, y - y.mean()


@pytest.mark.parametrize("k", [5, 30, 60, 90])
def test_lasso_matches_scikit_learn_at_the_same_penalty(k):
    # Source: scikit-learn Lasso minimizes (1/(2n))||y - Zw||^2 + alpha ||w||_1: alpha = lambda
    X, y, Z, yc = _diabetes()
    path = elastic_net_path(X, y)
    lam = path.penalties[k]
    ref = Lasso(alpha=lam, tol=1e-14, max_iter=1_000_000, fit_intercept=False).fit(Z, yc)
    np.testing.assert_allclose(path.std_coefs[k], ref.coef_, atol=1e-6 * np.abs(ref.coef_).max())
    assert np.array_equal(path.std_coefs[k] != 0, ref.coef_ != 0)


@pytest.mark.parametrize("mix", [0.2, 0.7])
def test_elastic_net_matches_scikit_learn(mix):
    # Source: scikit-learn ElasticNet: alpha = lambda, l1_ratio = mix (same objective)
    X, y, Z, yc = _diabetes()
    path = elastic_net_path(X, y, mix=mix, n_penalties=40)
    for k in (10, 25, 39):
        ref = ElasticNet(
            alpha=path.penalties[k],
            l1_ratio=mix,
            tol=1e-14,
            max_iter=1_000_000,
            fit_intercept=False,
        ).fit(Z, yc)
        np.testing.assert_allclose(
            path.std_coefs[k], ref.coef_, atol=1e-6 * np.abs(ref.coef_).max()
        )


def test_ridge_matches_scikit_learn_with_alpha_n_lambda():
    # Source: scikit-learn Ridge minimizes ||y - Zw||^2 + alpha ||w||^2, so alpha = n * lambda
    X, y, Z, yc = _diabetes()
    path = ridge_path(X, y, n_penalties=20)
    for k in range(0, 20, 4):
        ref = Ridge(alpha=442 * path.penalties[k], fit_intercept=False, solver="svd").fit(Z, yc)
        np.testing.assert_allclose(path.std_coefs[k], ref.coef_, rtol=1e-9)
        # intercept in original units: Ridge with an intercept on the raw columns agrees
        raw = Ridge(alpha=442 * path.penalties[k], solver="svd").fit(Z, y)
        assert path.intercepts[k] == pytest.approx(
            raw.intercept_ - raw.coef_ @ (X.mean(0) / X.std(0)), rel=1e-9
        )


def test_whole_lasso_path_agrees_with_scikit_learn_lasso_path_and_kkt_holds():
    # Source: scikit-learn lasso_path on the same standardized data and grid
    X, y, Z, yc = _diabetes()
    path = elastic_net_path(X, y)
    alphas, coefs, _ = lasso_path(Z, yc, alphas=path.penalties, tol=1e-13, max_iter=10**6)
    scale = np.abs(coefs).max()
    np.testing.assert_allclose(path.std_coefs, coefs.T, atol=1e-6 * scale)
    # common practice: KKT conditions of the stated objective hold at every reported solution
    viol = kkt_violation(X, y, path.std_coefs, path.penalties, 1.0)
    assert viol.max() < 1e-7
