"""Lasso / elastic-net path: optimality at every point, zeros, routes that must agree."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from engine.errors import Cancelled
from engine.fitting.coordinate import elastic_net_path, kkt_violation, penalty_max
from engine.fitting.ols import fit_ols
from engine.progress import CancelToken, Progress


def _data(n, p, k=5, seed=0, noise=1.0):
    """Simulated data with a known sparse truth (stated as such): k nonzero coefficients."""
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, p)) * rng.uniform(0.5, 5, size=p) + rng.normal(size=p) * 3
    b = np.zeros(p)
    b[:k] = rng.choice([-1, 1], size=k) * rng.uniform(1, 3, size=k)
    y = X @ b + noise * rng.normal(size=n) + 4.0
    return X, y, b


@pytest.mark.parametrize("n,p", [(120, 30), (40, 150)])
@pytest.mark.parametrize("mix", [1.0, 0.4])
def test_kkt_holds_at_every_point_of_the_path(n, p, mix):
    # common practice: optimality (KKT) conditions of the stated objective, checked by an
    # independent function on an explicit standardized copy of the data
    X, y, _ = _data(n, p)
    path = elastic_net_path(X, y, mix=mix)
    viol = kkt_violation(X, y, path.std_coefs, path.penalties, mix)
    assert viol.max() < 1e-6
    np.testing.assert_allclose(viol, path.kkt_violations, atol=1e-9)
    assert path.penalties.shape == (100,) and np.all(np.diff(path.penalties) < 0)


def test_at_penalty_max_all_zero_and_prediction_is_the_mean():
    # common practice: lambda_max = max_j |z_j'yc| / n is the smallest all-zero penalty
    X, y, _ = _data(80, 20)
    lam = penalty_max(X, y)
    path = elastic_net_path(X, y, penalties=[lam * 1.5, lam, lam * 0.98])
    assert np.all(path.coefs[:2] == 0.0)
    np.testing.assert_allclose(path.intercepts[:2], y.mean(), rtol=1e-13)
    assert path.n_selected[2] >= 1  # just below lambda_max something enters
    Z = (X - X.mean(0)) / X.std(0)
    assert lam == pytest.approx(np.max(np.abs(Z.T @ (y - y.mean()))) / 80, rel=1e-12)


def test_elastic_net_penalty_max_uses_mix_floor():
    X, y, _ = _data(60, 10)
    assert penalty_max(X, y, mix=0.5) == pytest.approx(penalty_max(X, y) / 0.5, rel=1e-12)
    assert penalty_max(X, y, mix=0.0) == pytest.approx(penalty_max(X, y) / 1e-3, rel=1e-12)


def test_penalty_zero_gives_ols_when_rows_outnumber_columns():
    # common practice: the lasso at lambda = 0 is least squares (n > p)
    X, y, _ = _data(100, 8)
    path = elastic_net_path(X, y, penalties=[0.0])
    ols = fit_ols(X, y)
    np.testing.assert_allclose(path.coefs[0], ols.coef, rtol=1e-7, atol=1e-10)
    assert path.intercepts[0] == pytest.approx(ols.intercept, rel=1e-8)


def test_lasso_gives_exact_zeros():
    # common practice: the l1 penalty sets coefficients exactly to zero
    X, y, _ = _data(100, 40)
    path = elastic_net_path(X, y, n_penalties=30)
    assert np.any(path.std_coefs[5:25] == 0.0, axis=1).all()


@pytest.mark.parametrize("mix", [1.0, 0.6])
def test_gram_and_residual_routes_agree(mix):
    X, y, _ = _data(90, 25, seed=3)
    a = elastic_net_path(X, y, mix=mix, use_gram=True)
    b = elastic_net_path(X, y, mix=mix, use_gram=False)
    np.testing.assert_allclose(a.std_coefs, b.std_coefs, atol=1e-6)


def test_original_units_reproduce_standardized_predictions():
    X, y, _ = _data(50, 12, seed=4)
    path = elastic_net_path(X, y, n_penalties=10)
    Z = (X - X.mean(0)) / X.std(0)
    for k in range(10):
        np.testing.assert_allclose(
            path.intercepts[k] + X @ path.coefs[k], y.mean() + Z @ path.std_coefs[k], rtol=1e-10
        )


def test_penalty_factors_zero_leaves_column_unpenalized_and_equals_rescaling():
    X, y, _ = _data(80, 15, seed=5)
    v = np.ones(15)
    v[3] = 0.0  # forced in
    path = elastic_net_path(X, y, penalty_factors=v, n_penalties=20)
    assert np.all(path.std_coefs[:, 3] != 0.0)  # in the model even at lambda_max
    viol = kkt_violation(X, y, path.std_coefs, path.penalties, 1.0, penalty_factors=v)
    assert viol.max() < 1e-6
    # a weight w on column j is the same problem as column j divided by w (lasso); factors
    # are rescaled to sum to p, so compare on the same normalized weights
    w = np.linspace(0.5, 2.0, 15)
    wn = w * 15 / w.sum()
    pa = elastic_net_path(X, y, penalty_factors=w, penalties=[0.3, 0.1, 0.03])
    viol = kkt_violation(X, y, pa.std_coefs, pa.penalties, 1.0, penalty_factors=wn)
    assert viol.max() < 1e-6


def test_enet_with_unequal_factors_satisfies_kkt_on_both_routes():
    X, y, _ = _data(70, 20, seed=6)
    w = np.linspace(0.2, 3.0, 20)
    for gram in (True, False):
        path = elastic_net_path(X, y, mix=0.5, penalty_factors=w, n_penalties=15, use_gram=gram)
        viol = kkt_violation(X, y, path.std_coefs, path.penalties, 0.5, penalty_factors=w)
        assert viol.max() < 1e-6


def test_constant_column_stays_zero():
    X, y, _ = _data(50, 6, seed=7)
    X[:, 2] = 5.0
    path = elastic_net_path(X, y, n_penalties=20)
    assert np.all(path.coefs[:, 2] == 0.0)


def test_progress_moves_from_zero_to_one_along_the_path():
    X, y, _ = _data(60, 20)
    seen = []
    elastic_net_path(X, y, n_penalties=10, progress=Progress(lambda f, w: seen.append(f)))
    assert seen[0] == 0.0 and seen[-1] == 1.0 and len(seen) == 11
    assert np.all(np.diff(seen) > 0)


def test_cancel_stops_the_path():
    X, y, _ = _data(60, 20)
    token = CancelToken()
    token.cancel()
    with pytest.raises(Cancelled):
        elastic_net_path(X, y, progress=Progress(cancel=token))


@settings(max_examples=15, deadline=None)
@given(seed=st.integers(0, 10_000))
def test_lasso_recovers_sparse_truth_with_more_columns_than_rows(seed):
    # Simulated known truth (stated as such): n = 100 rows, p = 300 columns, 4 true columns
    # with |b| in [2, 3], unit noise, independent standard normal columns. Tolerance stated:
    # at the penalty 2 * sigma * sqrt(2 log(p) / n) (a standard choice of theory-guided scale)
    # the selected set contains every true column and at most 4 false ones.
    rng = np.random.default_rng(seed)
    n, p = 100, 300
    X = rng.normal(size=(n, p))
    b = np.zeros(p)
    b[:4] = rng.choice([-1, 1], 4) * rng.uniform(2, 3, 4)
    y = X @ b + rng.normal(size=n)
    lam = 2.0 * np.sqrt(2 * np.log(p) / n)
    path = elastic_net_path(X, y, penalties=[lam])
    sel = set(np.flatnonzero(path.coefs[0]).tolist())
    assert {0, 1, 2, 3} <= sel
    assert len(sel - {0, 1, 2, 3}) <= 4


def test_elastic_net_descent_only_steps_meet_the_optimality_conditions(monkeypatch):
    # force the route large active sets take in the interpreted loop (descent to a 1e-10 gap
    # instead of the exact step): the answer must still satisfy the optimality conditions
    # well below the 1e-8 a reference solver reaches at tol 1e-8, and agree with the exact route
    import engine.fitting.coordinate as co
    from engine.fitting import gram_kernel

    monkeypatch.setattr(gram_kernel, "AVAILABLE", False)
    X, y, _ = _data(300, 40, seed=11)
    exact = elastic_net_path(X, y, mix=0.5)
    monkeypatch.setattr(co, "_FACTOR_VS_SWEEP", 0)
    descent = elastic_net_path(X, y, mix=0.5, penalties=exact.penalties)
    assert descent.max_kkt_violation < 1e-9
    assert exact.max_kkt_violation < 1e-13
    np.testing.assert_allclose(descent.coefs, exact.coefs, atol=1e-6 * np.abs(exact.coefs).max())


def test_tighter_retry_keeps_the_answer(monkeypatch):
    # force the extra, tighter descent after every descent-plus-polish step: it must not move
    # an answer that already satisfies the optimality conditions
    import engine.fitting.coordinate as co

    X, y, _ = _data(40, 120, seed=12)
    plain = elastic_net_path(X, y, mix=1.0, tol=1e-9)
    monkeypatch.setattr(co, "_RETRY_VIOLATION", -1.0)
    retried = elastic_net_path(X, y, mix=1.0, tol=1e-9, penalties=plain.penalties)
    assert retried.max_kkt_violation <= max(plain.max_kkt_violation, 1e-12) * 10
    np.testing.assert_allclose(retried.coefs, plain.coefs, atol=1e-7 * np.abs(plain.coefs).max())


@pytest.mark.parametrize("mix", [1.0, 0.5])
def test_shared_cross_products_give_the_same_path(mix):
    # the path on all rows from cross products formed for a validation equals the path from
    # its own pass over the data (same algebra, rounding only)
    from engine.tuning.crossval import shared_cross_products
    from engine.tuning.folds import make_folds

    X, y, _ = _data(200, 15, seed=13)
    parts = make_folds(200, "kfold", folds=5, seed=0)
    shared = shared_cross_products(X, y, parts)
    assert shared is not None and shared.held
    own = elastic_net_path(X, y, mix=mix)
    reused = elastic_net_path(X, y, mix=mix, penalties=own.penalties, shared=shared)
    np.testing.assert_allclose(reused.coefs, own.coefs, rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(reused.intercepts, own.intercepts, rtol=1e-12)
    # with no more rows than columns there is no Gram route, hence nothing to share
    assert shared_cross_products(X[:12], y[:12], make_folds(12, "kfold", folds=3)) is None


@pytest.mark.parametrize("n,p", [(80, 12), (30, 60)])
def test_batched_gradients_equal_one_at_a_time(n, p):
    # the ridge optimality check uses one product for a block of penalties; it must equal the
    # gradient computed for each coefficient vector alone (Gram and residual routes, and the
    # residual route on a subset of rows as in a validation part)
    from engine.fitting.coordinate import build_problem

    X, y, _ = _data(n, p, seed=14)
    B = np.random.default_rng(0).normal(size=(7, p))
    rows = np.arange(0, n, 2)
    for prob, _sc in (build_problem(X, y), build_problem(X, y, rows=rows, use_gram=False)):
        batched = prob.gradients(B)
        single = np.array([prob.gradient(b) for b in B])
        np.testing.assert_allclose(batched, single, rtol=1e-10, atol=1e-9 * np.abs(single).max())
