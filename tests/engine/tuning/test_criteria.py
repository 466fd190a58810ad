"""Information criteria along a path."""

import numpy as np
import pytest
import statsmodels.api as sm

from engine.fitting.coordinate import elastic_net_path
from engine.tuning.criteria import ebic_gamma, path_criteria, path_rss


def test_aic_bic_differ_from_statsmodels_by_a_constant_for_ols_fits():
    # Source: statsmodels OLS aic/bic (Gaussian log-likelihood with 1 + p parameters). Ours
    # profile out the variance and drop constants: differences are n(1 + log 2pi) + 2 (AIC)
    # and n(1 + log 2pi) + log n (BIC), the same for every model, so the choice is the same.
    rng = np.random.default_rng(0)
    n = 60
    X = rng.normal(size=(n, 4))
    y = X[:, 0] - X[:, 1] + rng.normal(size=n)
    rss, df, aics, bics = [], [], [], []
    for k in range(1, 5):
        r = sm.OLS(y, sm.add_constant(X[:, :k])).fit()
        rss.append(r.ssr)
        df.append(k)
        aics.append(r.aic)
        bics.append(r.bic)
    c = path_criteria(np.array(rss), np.array(df), n, 4)
    const = n * (1 + np.log(2 * np.pi))
    np.testing.assert_allclose(np.array(aics) - c.aic, const + 2, rtol=1e-10)
    np.testing.assert_allclose(np.array(bics) - c.bic, const + np.log(n), rtol=1e-10)


def test_ebic_penalizes_more_than_bic_when_columns_are_many():
    c = path_criteria(np.array([10.0, 8.0]), np.array([1.0, 3.0]), 50, 1000)
    assert ebic_gamma(50, 1000) == pytest.approx(1 - np.log(50) / (2 * np.log(1000)))
    assert np.all(c.ebic > c.bic)
    # df = 0: no model-space term
    c0 = path_criteria(np.array([5.0]), np.array([0.0]), 50, 1000)
    assert c0.ebic[0] == pytest.approx(c0.bic[0])


def test_path_rss_matches_direct_residuals():
    rng = np.random.default_rng(1)
    X = rng.normal(size=(40, 6))
    y = X[:, 0] + rng.normal(size=40)
    path = elastic_net_path(X, y, n_penalties=5)
    rss = path_rss(X, y, path)
    for k in range(5):
        r = y - path.intercepts[k] - X @ path.coefs[k]
        assert rss[k] == pytest.approx(r @ r, rel=1e-12)
    assert rss[0] == pytest.approx(((y - y.mean()) ** 2).sum(), rel=1e-12)
