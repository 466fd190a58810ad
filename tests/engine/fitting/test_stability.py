"""Stability selection: shares over half-samples, the penalty region and the error bound."""

from __future__ import annotations

import numpy as np
import pytest

from engine.errors import InputProblem
from engine.fitting.stability import false_selection_bound, stability_selection


def sparse(seed=0, n=80, p=40):
    """Simulated data with a known truth: columns 0-3 matter, the rest are noise."""
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, p))
    return X, X[:, :4] @ np.array([2.0, -2.0, 1.5, 1.0]) + rng.normal(size=n)


def test_true_columns_are_stable_noise_is_not():
    X, y = sparse()
    res = stability_selection(X, y, runs=40, seed=1, n_penalties=25, workers=2)
    assert set(res.stable(0.9)) >= {0, 1, 2, 3}
    assert np.mean(res.shares[4:]) < 0.2
    assert len(res.stable(0.9)) <= 6
    # invariants: shares are proportions, the region ends where mean selections pass q
    assert np.all((res.share_path >= 0) & (res.share_path <= 1))
    assert np.all(res.mean_selected[: res.region] <= res.q)
    np.testing.assert_allclose(res.shares, res.share_path[: res.region].max(axis=0))
    out = res.to_result([f"c{j}" for j in range(40)], threshold=0.9)
    assert set(out.stable) >= {"c0", "c1", "c2", "c3"} and out.runs == 40
    assert out.shares["c0"] == pytest.approx(res.shares[0])


def test_same_answer_for_any_number_of_workers():
    X, y = sparse(2, n=40, p=15)
    a = stability_selection(X, y, runs=8, seed=3, n_penalties=10, workers=1)
    b = stability_selection(X, y, runs=8, seed=3, n_penalties=10, workers=2)
    np.testing.assert_array_equal(a.share_path, b.share_path)


def test_shares_equal_sklearn_lasso_on_the_same_half_samples():
    # Two routes: scikit-learn's Lasso (reference library; alpha = our lambda on columns
    # standardized within each half-sample) on the same draws (SeedSequence spawning).
    from sklearn.linear_model import Lasso

    X, y = sparse(4, n=40, p=12)
    runs = 6
    res = stability_selection(X, y, runs=runs, seed=9, n_penalties=8, workers=1)
    counts = np.zeros_like(res.share_path)
    for s in np.random.SeedSequence(9).spawn(runs):
        rows = np.sort(np.random.default_rng(s).choice(40, 20, replace=False))
        Xh, yh = X[rows], y[rows]
        Z = (Xh - Xh.mean(axis=0)) / Xh.std(axis=0)
        for i, lam in enumerate(res.penalties):
            coef = Lasso(alpha=lam, tol=1e-12, max_iter=100_000).fit(Z, yh).coef_
            counts[i] += np.abs(coef) > 1e-8
    np.testing.assert_allclose(res.share_path, counts / runs)


def test_error_bound_formula():
    # Source: Meinshausen & Buhlmann (2010), Theorem 1: E(V) <= q^2 / ((2 pi_thr - 1) p).
    assert false_selection_bound(8.0, 80, 0.9) == pytest.approx(64 / (0.8 * 80))
    assert false_selection_bound(np.sqrt(0.8 * 100), 100, 0.9) == pytest.approx(1.0)
    with pytest.raises(InputProblem, match="threshold"):
        false_selection_bound(5, 50, 0.5)


def test_refusals():
    X, y = sparse(n=10, p=5)
    with pytest.raises(InputProblem, match="runs"):
        stability_selection(X, y, runs=1)
    with pytest.raises(InputProblem, match="6 rows"):
        stability_selection(X[:5], y[:5])
