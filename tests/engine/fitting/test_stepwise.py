"""Forward stepwise: the QR-updated sequence against a naive refit-everything implementation."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from engine.fitting.stepwise import forward_stepwise
from engine.fitting.subset_search import subset_rss


def naive_forward(X, y, steps):
    """Refit every candidate model with numpy lstsq at every step (test-only reference)."""
    chosen: list[int] = []
    rss = []
    for _ in range(steps):
        trials = [(subset_rss(X, y, chosen + [j]), j) for j in range(X.shape[1]) if j not in chosen]
        r, j = min(trials)
        chosen.append(j)
        rss.append(r)
    return chosen, rss


@settings(max_examples=30, deadline=None)
@given(seed=st.integers(0, 10_000), n=st.integers(5, 40), p=st.integers(1, 25))
def test_equals_naive_refits(seed, n, p):
    # Two routes: Gram-Schmidt updates vs. a fresh least-squares fit of every candidate model.
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, p)) + 0.5 * rng.normal(size=(n, 1))
    y = X @ rng.normal(size=p) + rng.normal(size=n)
    path = forward_stepwise(X, y)
    steps = min(n - 1, p)
    assert len(path.order) == steps
    order, rss = naive_forward(X, y, steps)
    # the last steps may fit the data exactly; compare the order while the RSS is clearly > 0
    clear = np.asarray(rss) > 1e-8 * path.tss
    assert list(path.order[clear]) == list(np.asarray(order)[clear])
    np.testing.assert_allclose(path.rss, rss, rtol=1e-7, atol=1e-9 * path.tss)


def test_more_columns_than_rows_and_max_steps():
    rng = np.random.default_rng(0)
    X = rng.normal(size=(20, 50))
    y = 2 * X[:, 7] - X[:, 30] + 0.1 * rng.normal(size=20)
    path = forward_stepwise(X, y)
    assert len(path.order) == 19  # n - 1 after the intercept
    assert list(path.order[:2]) == [7, 30]
    assert path.rss[-1] == pytest.approx(0.0, abs=1e-8 * path.tss)  # saturated
    short = forward_stepwise(X, y, max_steps=4)
    np.testing.assert_array_equal(short.order, path.order[:4])
    assert short.subset(2) == (7, 30)


def test_collinear_columns_stop_with_a_note():
    rng = np.random.default_rng(1)
    X = rng.normal(size=(30, 3))
    X = np.column_stack([X, X[:, 0] + X[:, 1], np.full(30, 4.0)])
    y = X[:, 0] + rng.normal(size=30)
    path = forward_stepwise(X, y)
    assert len(path.order) == 3 and path.note and "combination" in path.note
    assert 4 not in path.order  # the constant column never enters


def test_many_rows_run_on_the_qr_triangle_with_the_same_steps(monkeypatch):
    # with n >= 2p the steps run on the triangle of a QR factorization; forced back onto the
    # rows they must choose the same columns with the same RSS (nearly collinear pair included)
    import engine.fitting.stepwise as stepwise

    rng = np.random.default_rng(3)
    n, p = 600, 30
    X = rng.normal(size=(n, p)) * rng.uniform(0.1, 1e3, p) + rng.normal(0, 50, p)
    X[:, 1] = X[:, 0] + 1e-4 * X[:, 0].std() * rng.normal(size=n)
    y = X[:, 0] / X[:, 0].std() - 0.5 * X[:, 5] / X[:, 5].std() + rng.normal(size=n)
    reduced = forward_stepwise(X, y)
    monkeypatch.setattr(stepwise, "_REDUCE_ROWS_PER_COLUMN", 10**9)
    rows = forward_stepwise(X, y)
    assert list(reduced.order) == list(rows.order)
    np.testing.assert_allclose(reduced.rss, rows.rss, rtol=1e-9)
    assert reduced.tss == rows.tss and reduced.note == rows.note


def test_exact_ties_go_to_the_lower_column_and_near_copies_keep_their_exact_gain():
    # Two routes again (naive refits). Column 5 = 3 + 4: once 5 has entered, 3 and 4 keep
    # opposite remainders and lower the RSS exactly alike, and the documented rule takes the
    # lower index (4 can then never enter: it is 5 - 3). Column 7 is column 6
    # plus 1e-4 of noise: after 6 enters, 7's remaining length is 1e-8 of its own, the range
    # where lengths updated by subtraction are taken afresh.
    rng = np.random.default_rng(12)
    n, p = 40, 60
    X = rng.normal(size=(n, p))
    X[:, 5] = X[:, 3] + X[:, 4]
    X[:, 7] = X[:, 6] + 1e-4 * rng.normal(size=n)
    y = 3 * X[:, 4] + 2 * X[:, 3] + 1.5 * X[:, 6] + 0.8 * X[:, 7] + 0.2 * rng.normal(size=n)
    path = forward_stepwise(X, y)
    order, rss = naive_forward(X, y, 8)
    assert list(path.order[:8]) == order
    np.testing.assert_allclose(path.rss[:8], rss, rtol=1e-7)
    assert path.order[0] == 5 and 3 in path.order[:8] and 4 not in path.order
