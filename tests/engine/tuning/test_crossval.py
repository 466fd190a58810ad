"""Cross-validation of a path: no leakage, routes that must agree, cancel."""

import numpy as np
import pytest
from sklearn.linear_model import ElasticNet, Ridge
from sparse_truth import sparse_truth_data

from engine.errors import Cancelled
from engine.fitting.coordinate import elastic_net_path
from engine.fitting.ridge import ridge_path
from engine.progress import CancelToken, Progress
from engine.tuning.crossval import cross_validate_path
from engine.tuning.folds import make_folds


def _manual_errors(X, y, parts, lam, mix, leaky=False):
    """Reference loop: fit each training part with its own standardization (or, if leaky,
    with the full data's means and sds), predict the held-out rows."""
    out = np.zeros((len(parts), lam.size))
    for k, (tr, te) in enumerate(parts):
        if not leaky:
            path = (
                ridge_path(X[tr], y[tr], penalties=lam)
                if mix == 0
                else elastic_net_path(X[tr], y[tr], mix=mix, penalties=lam, tol=1e-12)
            )
            pred = path.intercepts[None, :] + X[te] @ path.coefs.T
        else:
            # Source: scikit-learn Lasso/ElasticNet/Ridge (same objective; Ridge alpha = n*lambda)
            # fitted on columns scaled with ALL rows' sds, i.e. the leaky standardization
            Z = (X - X.mean(0)) / X.std(0)
            pred = np.zeros((te.size, lam.size))
            for j, a in enumerate(lam):
                if mix == 0:
                    m = Ridge(alpha=tr.size * a)
                else:
                    m = ElasticNet(alpha=a, l1_ratio=mix, tol=1e-12, max_iter=100_000)
                m.fit(Z[tr], y[tr])
                pred[:, j] = m.predict(Z[te])
        out[k] = np.mean((y[te][:, None] - pred) ** 2, axis=0)
    return out


@pytest.mark.parametrize("n,p,mix", [(90, 12, 1.0), (40, 70, 1.0), (90, 12, 0.5), (60, 15, 0.0)])
def test_matches_manual_fold_loop_and_differs_from_leaky_version(n, p, mix):
    # common practice: scaling is learned on the training part only; a leaky loop that
    # standardizes with all rows must give different errors (this test would catch leakage)
    X, y = sparse_truth_data(n, p)
    parts = make_folds(n, "kfold", folds=5, seed=4)
    full = ridge_path(X, y) if mix == 0 else elastic_net_path(X, y, mix=mix)
    lam = full.penalties[::9]
    curve = cross_validate_path(
        X, y, parts, mix, lam, n_selected=full.n_selected[::9], workers=1, tol=1e-12
    )
    manual = _manual_errors(X, y, parts, lam, mix)
    np.testing.assert_allclose(curve.part_errors, manual, rtol=1e-6)
    leaky = _manual_errors(X, y, parts, lam, mix, leaky=True)
    assert np.max(np.abs(leaky - manual) / manual) > 1e-3
    se = manual.std(axis=0, ddof=1) / np.sqrt(5)
    np.testing.assert_allclose(curve.se, se, rtol=1e-6)
    assert curve.index_min == int(np.argmin(manual.mean(axis=0)))


def test_gram_and_residual_routes_and_worker_counts_agree():
    X, y = sparse_truth_data(120, 30, seed=2)
    parts = make_folds(120, "kfold", folds=6, seed=1)
    lam = elastic_net_path(X, y).penalties
    kw = dict(n_selected=np.zeros(100), tol=1e-10)
    a = cross_validate_path(X, y, parts, 1.0, lam, use_gram=True, workers=1, **kw)
    b = cross_validate_path(X, y, parts, 1.0, lam, use_gram=False, workers=2, **kw)
    np.testing.assert_allclose(a.part_errors, b.part_errors, rtol=1e-6)


def test_time_parts_with_training_rows_not_the_complement():
    # "time" parts train on the past only, so training is not "all rows but the test rows"
    X, y = sparse_truth_data(100, 8, seed=3)
    parts = make_folds(100, "time", folds=5)
    lam = elastic_net_path(X, y).penalties[::10]
    curve = cross_validate_path(X, y, parts, 1.0, lam, n_selected=np.zeros(10), tol=1e-12)
    manual = _manual_errors(X, y, parts, lam, 1.0)
    np.testing.assert_allclose(curve.part_errors, manual, rtol=1e-6)


def test_callable_penalty_factors_are_recomputed_per_part():
    X, y = sparse_truth_data(80, 10, seed=5)
    parts = make_folds(80, "kfold", folds=4, seed=0)
    seen = []

    def weights(Xt, yt):
        seen.append(Xt.shape[0])
        return 1.0 / (np.abs(np.corrcoef(Xt.T, yt)[-1, :-1]) + 0.05)

    lam = np.geomspace(1.0, 0.01, 8)
    cross_validate_path(X, y, parts, 1.0, lam, penalty_factors=weights, workers=1)
    # once on all rows (for the full-data path), then once on each training part of 60 rows
    assert seen == [80, 60, 60, 60, 60]


def test_cancel_between_parts():
    X, y = sparse_truth_data(80, 10)
    token = CancelToken()
    calls = []

    def cb(frac, words):
        calls.append(frac)
        if len(calls) == 2:
            token.cancel()

    with pytest.raises(Cancelled):
        cross_validate_path(
            X,
            y,
            make_folds(80, "kfold", 5),
            1.0,
            np.geomspace(1, 0.01, 20),
            progress=Progress(cb, token),
            workers=1,
            n_selected=np.zeros(20),
        )


def test_held_out_sums_route_agrees_with_one_pass_total():
    # two routes: the k-fold total as the sum of the held-out parts' cross products, and the
    # total formed in one pass over all rows; each part's standardized Gram problem must agree
    from engine.fitting.coordinate import SharedCrossProducts as _SharedSums

    X, y = sparse_truth_data(200, 8, seed=5)
    parts = make_folds(200, "kfold", folds=5, seed=2)
    summed = _SharedSums(X, y, [te for _, te in parts])
    direct = _SharedSums(X, y)
    assert len(summed.held) == 5 and not direct.held
    np.testing.assert_allclose(summed.total.G, direct.total.G, rtol=1e-12, atol=1e-9)
    for tr, te in parts:
        a, sa = summed.problem(X, y, tr, te)
        b, sb = direct.problem(X, y, tr)
        np.testing.assert_allclose(a.Q, b.Q, rtol=1e-10, atol=1e-9)
        np.testing.assert_allclose(a.q, b.q, rtol=1e-10, atol=1e-9)
        np.testing.assert_allclose(sa.sds, sb.sds, rtol=1e-12)


@pytest.mark.parametrize("mix", [1.0, 0.5])
def test_compiled_parts_on_two_threads_equal_one_after_another(mix):
    # the compiled Gram-route loop releases the interpreter lock, so its parts run on two
    # threads; the numbers must not depend on that (each part has its own state)
    from engine.tuning.crossval import _placement

    X, y = sparse_truth_data(200, 30, seed=4)
    parts = make_folds(200, "kfold", folds=5, seed=2)
    lam = elastic_net_path(X, y, mix=mix).penalties
    kw = dict(n_selected=np.zeros(lam.size), parallel="threads")
    one = cross_validate_path(X, y, parts, mix, lam, workers=1, **kw)
    two = cross_validate_path(X, y, parts, mix, lam, workers=2, **kw)
    assert np.array_equal(one.part_errors, two.part_errors)
    # placement: compiled parts stay on threads, two at once; interpreted ones one at a time
    assert _placement("auto", 2, mix, False, 100.0, compiled=True) == ("threads", 2)
    assert _placement("threads", 2, mix, False, 0.1, compiled=False) == ("threads", 1)


@pytest.mark.parametrize("mix,workers", [(1.0, 2), (0.5, 2), (1.0, 1), (0.0, 2)])
def test_fit_beside_the_parts_equals_fit_then_validation(mix, workers):
    # the fit on all rows as one more task beside the parts (two threads), or before them (one
    # worker), must give the same path and curve as the two calls one after the other, on the
    # grid elastic_net_path makes itself; its progress must only move forward
    from engine.fitting.coordinate import path_penalties
    from engine.tuning.crossval import fit_and_validate

    X, y = sparse_truth_data(150, 20, seed=6)
    parts = make_folds(150, "kfold", folds=5, seed=3)
    if mix == 0:
        lam = ridge_path(X, y).penalties
    else:
        lam = path_penalties(X, y, mix, n_penalties=40)
        assert np.array_equal(lam, elastic_net_path(X, y, mix=mix, n_penalties=40).penalties)
    before = (
        elastic_net_path(X, y, mix=mix, penalties=lam) if mix else ridge_path(X, y, penalties=lam)
    )
    curve_before = cross_validate_path(
        X, y, parts, mix, lam, workers=workers, n_selected=before.n_selected
    )
    seen, calls = [], []

    def fit_all(progress):
        calls.append(progress)
        if mix == 0:
            return ridge_path(X, y, penalties=lam, progress=progress)
        return elastic_net_path(X, y, mix=mix, penalties=lam, progress=progress)

    path, curve = fit_and_validate(
        fit_all,
        X,
        y,
        parts,
        mix,
        lam,
        workers=workers,
        progress=Progress(lambda f, w: seen.append(f)),
    )
    assert len(calls) == 1
    np.testing.assert_array_equal(path.coefs, before.coefs)
    np.testing.assert_array_equal(curve.part_errors, curve_before.part_errors)
    np.testing.assert_array_equal(curve.n_selected, before.n_selected)
    assert curve.index_min == curve_before.index_min
    assert seen == sorted(seen) and seen[-1] == pytest.approx(1.0)


def test_fit_beside_the_parts_is_cancelled_with_them():
    # the fit on all rows gets a progress that shares the user's cancel: cancelled once the
    # first part is done, it stops (and the whole call with it)
    import time

    from engine.tuning.crossval import fit_and_validate

    X, y = sparse_truth_data(120, 15, seed=2)
    token = CancelToken()
    lam = np.geomspace(1, 0.01, 20)

    def cb(frac, words):
        if frac > 0:
            token.cancel()

    def fit_all(progress):
        deadline = time.monotonic() + 10.0
        while time.monotonic() < deadline:
            progress.check()
            time.sleep(0.001)
        raise AssertionError("the cancel did not reach the fit on all rows")

    with pytest.raises(Cancelled):
        fit_and_validate(
            fit_all,
            X,
            y,
            make_folds(120, "kfold", 4),
            1.0,
            lam,
            workers=2,
            progress=Progress(cb, token),
        )
    assert token.cancelled


def test_cross_products_summed_over_row_ranges_on_threads_match_numpy():
    # Source: numpy's product of the centred data. The total is summed from row ranges made
    # side by side on threads (and, for k-fold parts, from the held-out parts' products)
    from engine.fitting import coordinate as co

    X, y = sparse_truth_data(1300, 20, seed=9)
    X = X + 1000.0  # far from zero: the centring at the reference must keep the digits
    m0 = X.mean(axis=0)
    Xc, yc = X - m0, y - y.mean()
    for tests in ([], [te for _, te in make_folds(1300, "kfold", folds=5, seed=1)]):
        shared = co.SharedCrossProducts(X, y, tests)
        assert bool(shared.held) == bool(tests)
        np.testing.assert_allclose(shared.total.G, Xc.T @ Xc, rtol=1e-12, atol=1e-9)
        np.testing.assert_allclose(shared.total.xy, Xc.T @ yc, rtol=1e-12, atol=1e-9)
        assert shared.total.n == 1300
    assert co._SUM_THREADS >= 1


def test_cross_products_over_several_row_blocks_match_numpy():
    # Source: numpy's product of the centred data. Taller than one block of rows, so the
    # first block's product starts the sum and the next ones are added to it
    from engine.fitting import coordinate as co
    from engine.fitting.standardize import _BLOCK_ROWS

    n = _BLOCK_ROWS + 777
    X, y = sparse_truth_data(n, 6, seed=4)
    m0, ybar0 = X.mean(axis=0), float(y.mean())
    rows = np.arange(0, n, 3)[::-1]  # a subset, out of order
    for idx in (None, rows):
        Xs, ys = (X, y) if idx is None else (X[idx], y[idx])
        cp = co.cross_products(X, y, m0, ybar0, idx)
        Xc, yc = Xs - m0, ys - ybar0
        assert cp.n == Xs.shape[0]
        np.testing.assert_allclose(cp.G, Xc.T @ Xc, rtol=1e-12, atol=1e-9)
        np.testing.assert_allclose(cp.xy, Xc.T @ yc, rtol=1e-12, atol=1e-9)
        np.testing.assert_allclose(cp.s, Xc.sum(axis=0), rtol=1e-10, atol=1e-8)
        assert cp.yy == pytest.approx(float(yc @ yc), rel=1e-12)
