"""Best subset: exact search against brute-force enumeration, plus its labelled approximate mode."""

from __future__ import annotations

import itertools
import threading

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from engine.errors import Cancelled, InputProblem
from engine.fitting.subset_search import best_subset, subset_rss
from engine.progress import CancelToken, Progress


def brute_force(X, y, max_size):
    """Every subset of every size, each solved by numpy least squares (test-only reference)."""
    p = X.shape[1]
    out = []
    for k in range(1, max_size + 1):
        out.append(min((subset_rss(X, y, s), s) for s in itertools.combinations(range(p), k)))
    return out


def correlated_problem(seed, n, p, rho=0.6, active=None, noise=1.0):
    rng = np.random.default_rng(seed)
    C = rho ** np.abs(np.subtract.outer(np.arange(p), np.arange(p)))
    X = rng.normal(size=(n, p)) @ np.linalg.cholesky(C).T
    beta = rng.normal(size=p)
    if active is not None:
        beta[rng.permutation(p)[active:]] = 0.0
    y = X @ beta + noise * rng.normal(size=n) + 3.0
    return X, y


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    seed=st.integers(0, 10_000),
    p=st.integers(1, 10),
    extra_rows=st.integers(2, 30),
    rho=st.floats(0.0, 0.9),
    active=st.integers(0, 10),
)
def test_equals_brute_force_enumeration(seed, p, extra_rows, rho, active):
    # Two routes: branch and bound on the cross-product matrix vs. all subsets by numpy lstsq.
    X, y = correlated_problem(seed, p + extra_rows, p, rho, active=active)
    found = best_subset(X, y)
    assert not found.approximate and found.warning is None
    reference = brute_force(X, y, len(found.subsets))
    for k, (rss, _) in enumerate(reference, start=1):
        assert found.rss[k - 1] == pytest.approx(rss, rel=1e-9, abs=1e-9 * found.tss)
        assert len(found.subsets[k - 1]) == k
        assert subset_rss(X, y, found.subsets[k - 1]) == pytest.approx(found.rss[k - 1])


@pytest.mark.parametrize("seed", [3, 4])
def test_equals_brute_force_at_fifteen_columns(seed):
    # Two routes at p = 15 (32,767 subsets enumerated); the tree must visit far fewer.
    X, y = correlated_problem(seed, 40, 15, 0.7, active=6, noise=2.0)
    found = best_subset(X, y)
    reference = brute_force(X, y, len(found.subsets))
    for k, (rss, subset) in enumerate(reference, start=1):
        assert found.rss[k - 1] == pytest.approx(rss, rel=1e-9)
        assert found.subsets[k - 1] == subset  # continuous random data: no ties
    assert found.nodes < 2**15


def test_rss_decreases_with_size_and_respects_max_size():
    # Invariant: the best RSS can only fall as the size grows; max_size caps the sizes.
    X, y = correlated_problem(7, 60, 12, 0.5, active=5)
    found = best_subset(X, y, max_size=6)
    assert len(found.subsets) == 6
    assert np.all(np.diff(found.rss) <= 1e-9)
    assert np.all(found.rss <= found.tss)
    full = best_subset(X, y)
    np.testing.assert_allclose(full.rss[:6], found.rss, rtol=1e-10)
    assert len(full.subsets) == 12


def test_default_max_size_leaves_a_residual_degree_of_freedom():
    X, y = correlated_problem(1, 8, 7)
    assert len(best_subset(X, y).subsets) == 6  # min(n - 2, p)


def test_above_exact_limit_is_labelled_approximate():
    X, y = correlated_problem(2, 80, 12, 0.5, active=4)
    approx = best_subset(X, y, exact_limit=10)
    assert approx.approximate
    assert "approximate" in approx.warning and "limit of 10" in approx.warning
    exact = best_subset(X, y)
    # the local search can only be as good as the exact optimum, never better
    assert np.all(approx.rss >= exact.rss - 1e-9 * exact.tss)
    # on a clear sparse signal the swaps find the true optimum at the true size
    assert approx.subsets[3] == exact.subsets[3]


def test_more_columns_than_rows_runs_the_approximate_search():
    rng = np.random.default_rng(5)
    X = rng.normal(size=(30, 60))
    y = X[:, [3, 17, 41]] @ np.array([3.0, -2.0, 2.5]) + 0.3 * rng.normal(size=30)
    found = best_subset(X, y, max_size=5)
    assert found.approximate and "60 candidate columns but only 30 rows" in found.warning
    assert found.subsets[2] == (3, 17, 41)


def test_dependent_columns_are_reported_not_hidden():
    rng = np.random.default_rng(6)
    X = rng.normal(size=(40, 6))
    X[:, 5] = X[:, 0] - 2 * X[:, 1]
    y = X[:, 0] + rng.normal(size=40)
    found = best_subset(X, y)
    assert found.approximate and "linear combinations" in found.warning


def test_cancel_stops_the_search_quickly():
    X, y = correlated_problem(8, 200, 34, 0.5, active=0, noise=3.0)
    token = CancelToken()
    seen = []

    def callback(fraction, words):
        seen.append(fraction)
        if len(seen) == 3:
            threading.Timer(0.05, token.cancel).start()

    with pytest.raises(Cancelled):
        best_subset(X, y, progress=Progress(callback, token))
    assert all(0.0 <= f <= 1.0 for f in seen)


def test_bad_inputs_are_refused_with_a_message():
    X, y = correlated_problem(9, 20, 3)
    with pytest.raises(InputProblem, match="rows"):
        best_subset(X, y[:-1])
    with pytest.raises(InputProblem, match="at least 1"):
        best_subset(X, y, max_size=0)
    X[0, 0] = np.nan
    with pytest.raises(InputProblem, match="missing"):
        best_subset(X, y)
