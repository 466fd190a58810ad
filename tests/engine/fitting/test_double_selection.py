"""Double selection: plug-in penalty mapping, final fit, coverage on data with a known truth."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import norm

from engine.errors import InputProblem
from engine.fitting.double_selection import double_selection, plugin_lambda, plugin_lasso


def confounded(seed, n=100, m=60, alpha=0.5):
    """Simulated data with a known truth: controls drive both the focal column and the response
    with decaying coefficients 2/j^2 (correlation 0.5^|i-j| among controls); true effect alpha."""
    rng = np.random.default_rng(seed)
    C = 0.5 ** np.abs(np.subtract.outer(np.arange(m), np.arange(m)))
    W = rng.normal(size=(n, m)) @ np.linalg.cholesky(C).T
    theta = 2.0 / np.arange(1, m + 1) ** 2
    d = W @ theta + rng.normal(size=n)
    y = alpha * d + W @ theta + (1 + 0.5 * np.abs(W[:, 0])) * rng.normal(size=n)
    return y, d, W


def test_plugin_lambda_formula():
    # Source: Belloni, Chernozhukov & Hansen (2014): lambda = 2c sqrt(n) Phi^-1(1 - g/(2p)),
    # c = 1.1, g = 0.1/log(n); recomputed here with scipy's normal quantile.
    n, p = 200, 50
    g = 0.1 / np.log(n)
    assert plugin_lambda(n, p) == pytest.approx(2 * 1.1 * np.sqrt(n) * norm.ppf(1 - g / (2 * p)))


def test_plugin_lasso_solves_the_published_objective():
    # Two routes: our convention (standardized columns, rescaled factors, lambda/(2n)) vs. the
    # optimality conditions of (1/n)||u - a - Xb||^2 + (lambda/n) sum psi_j |b_j| in raw units:
    # |(2/n) x_j'r| <= (lambda/n) psi_j, with equality and matching sign where b_j != 0.
    y, d, W = confounded(1)
    fit = plugin_lasso(W, y)
    n = len(y)
    sd = W.std(axis=0)
    b = fit.std_coefs / sd
    a = y.mean() - W.mean(axis=0) @ b
    r = y - a - W @ b
    grad = 2.0 / n * ((W - W.mean(axis=0)).T @ r)
    bound = fit.bch_lambda / n * fit.loadings * sd  # psi_j in raw units = psi~_j * sd_j
    scale = np.abs(grad).max() + bound.max()
    nz = b != 0
    assert nz.any() and (~nz).any()
    assert np.all(np.abs(grad[~nz]) <= bound[~nz] + 1e-6 * scale)
    np.testing.assert_allclose(grad[nz], bound[nz] * np.sign(b[nz]), atol=1e-6 * scale)
    np.testing.assert_array_equal(fit.selected, np.flatnonzero(nz))


def test_final_fit_is_least_squares_on_the_union():
    y, d, W = confounded(2)
    res = double_selection(y, d, W)
    np.testing.assert_array_equal(
        res.controls, np.union1d(res.controls_for_response, res.controls_for_focal)
    )
    A = np.column_stack([np.ones(len(y)), d, W[:, res.controls]])
    coef = np.linalg.lstsq(A, y, rcond=None)[0]
    assert res.estimate == pytest.approx(coef[1], rel=1e-10)
    z = norm.ppf(0.975)
    assert res.ci_low == pytest.approx(res.estimate - z * res.std_error)
    focal = res.to_focal("price", [f"w{j}" for j in range(W.shape[1])])
    assert focal.controls == [f"w{j}" for j in res.controls]
    assert focal.penalty_rule == "plugin" and focal.covariance == "HC1"
    assert focal.to_json()["naive_estimate"] == pytest.approx(res.naive_estimate)


def test_cv_penalty_rule_runs_and_selects():
    y, d, W = confounded(3, n=80, m=15)
    res = double_selection(y, d, W, penalty="cv", folds=3, seed=0)
    assert res.penalty_rule == "cv" and 0 in res.controls
    assert abs(res.estimate - 0.5) < 4 * res.std_error


def coverage(reps, **kw):
    hit = naive_hit = 0
    for seed in range(reps):
        y, d, W = confounded(seed, **kw)
        res = double_selection(y, d, W)
        hit += res.ci_low <= 0.5 <= res.ci_high
        naive_hit += abs(res.naive_estimate - 0.5) <= norm.ppf(0.975) * res.naive_std_error
    return hit / reps, naive_hit / reps


def test_coverage_small():
    # Simulated data with a known truth (effect 0.5), 40 seeded replications: the double-
    # selection 95% interval covers the truth about 95% of the time; naive single selection,
    # which drops controls tied to the focal column, clearly less often.
    ds, naive = coverage(40)
    assert 0.85 <= ds <= 1.0
    assert naive <= 0.5


@pytest.mark.slow
def test_coverage_full():
    # As above with 200 replications (BCH 2014 report near-nominal coverage for this method).
    ds, naive = coverage(200)
    assert 0.90 <= ds <= 0.99
    assert naive <= 0.7


def test_refusals():
    y, d, W = confounded(0, n=30, m=5)
    with pytest.raises(InputProblem, match="penalty rule"):
        double_selection(y, d, W, penalty="guess")
    with pytest.raises(InputProblem, match="same value"):
        double_selection(y, np.ones(30), W)
    with pytest.raises(InputProblem, match="rows"):
        double_selection(y[:-1], d, W)


def test_no_control_from_the_plugin_penalty_on_few_rows_gets_a_note():
    # y is almost exactly one control; with 20 rows the plug-in penalty keeps none, which the
    # result must not present as "no controls needed" without a word
    rng = np.random.default_rng(0)
    n = 20
    a, b = rng.normal(size=n), rng.normal(size=n)
    W = np.column_stack([a, rng.normal(size=(n, 4))])
    y = 2 * a + rng.normal(0, 0.1, n)
    res = double_selection(y, b, W, penalty="plugin")
    assert res.controls.size == 0
    note = next(x for x in res.notes if x.startswith("no control was kept"))
    assert "with 20 rows" in note and "--focal-penalty cv" in note
