"""The compiled Gram-route path (engine.fitting.gram_kernel) against the interpreted route and
against outside references.

Two routes that must agree: the compiled loop and the interpreted one solve the same
objective on the same Gram matrix, so their solutions agree to the optimality level each
reaches. Known answers: scikit-learn's ElasticNet (general-purpose reference library) at the
same penalty on identically standardized data; numpy's Cholesky factorization for the
factor updates. Invariant: the optimality (KKT) conditions of the stated objective.
"""

import numpy as np
import pytest

import engine.fitting.coordinate as co
from engine.errors import Cancelled
from engine.fitting import gram_kernel
from engine.fitting.coordinate import elastic_net_path, kkt_violation
from engine.progress import CancelToken, Progress

pytestmark = pytest.mark.skipif(not gram_kernel.AVAILABLE, reason="compiled route switched off")


def _data(n, p, k=6, seed=0, rho=0.6):
    """Simulated data with a stated sparse truth (k nonzero coefficients), correlated columns."""
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, p))
    X[:, 1:] = rho * X[:, :-1] + np.sqrt(1 - rho**2) * X[:, 1:]
    X = X * rng.uniform(0.5, 4, size=p) + rng.normal(size=p) * 3
    b = np.zeros(p)
    b[:k] = rng.choice([-1, 1], size=k) * rng.uniform(0.5, 2, size=k)
    y = X @ b + rng.normal(size=n) * 2.0 + 1.0
    return X, y


def _interpreted(monkeypatch, *args, **kwargs):
    with monkeypatch.context() as m:
        m.setattr(gram_kernel, "AVAILABLE", False)
        return elastic_net_path(*args, **kwargs)


def _compiled(*args, **kwargs):
    co._LAST_COUNTERS = None
    path = elastic_net_path(*args, **kwargs)
    assert co._LAST_COUNTERS is not None, "the compiled route did not run"
    return path


@pytest.mark.parametrize("mix", [1.0, 0.5, 0.05])
@pytest.mark.parametrize("n,p", [(300, 40), (130, 100)])
def test_compiled_and_interpreted_routes_agree(monkeypatch, n, p, mix):
    X, y = _data(n, p, seed=n + p)
    fast = _compiled(X, y, mix=mix)
    slow = _interpreted(monkeypatch, X, y, mix=mix, penalties=fast.penalties)
    # both meet the optimality conditions far below a reference solver at tol 1e-8 (~5e-9)
    assert fast.max_kkt_violation < 1e-11 and slow.max_kkt_violation < 1e-9
    independent = kkt_violation(X, y, fast.std_coefs, fast.penalties, mix)
    np.testing.assert_allclose(independent, fast.kkt_violations, atol=1e-11)
    scale = np.abs(slow.std_coefs).max()
    np.testing.assert_allclose(fast.std_coefs, slow.std_coefs, atol=1e-7 * scale)
    # lasso: exactly the same zeros (the exact steps decide them, not a tolerance)
    if mix == 1.0:
        assert np.array_equal(fast.std_coefs != 0, slow.std_coefs != 0)


def test_penalty_factors_and_unpenalized_columns(monkeypatch):
    # per-column weights (adaptive lasso) and weight 0 (forced-in columns, partialled out
    # before the compiled loop) give the interpreted route's answer
    X, y = _data(200, 30, seed=3)
    w = np.random.default_rng(1).uniform(0.2, 3.0, 30)
    w[[2, 7]] = 0.0
    for mix in (1.0, 0.5):
        fast = _compiled(X, y, mix=mix, penalty_factors=w)
        slow = _interpreted(monkeypatch, X, y, mix=mix, penalty_factors=w)
        assert fast.max_kkt_violation < 1e-11
        assert np.all(fast.coefs[:, [2, 7]] != 0)  # unpenalized: in at every penalty
        scale = np.abs(slow.std_coefs).max()
        np.testing.assert_allclose(fast.std_coefs, slow.std_coefs, atol=1e-7 * scale)


@pytest.mark.parametrize("mix", [1.0, 0.5])
def test_against_scikit_learn_at_the_same_penalty(mix):
    # Source: scikit-learn ElasticNet (general-purpose reference library), objective
    # (1/2n)||y - Zb||^2 + alpha*l1_ratio*|b|_1 + alpha*(1-l1_ratio)/2*||b||^2, on the same
    # standardized data: alpha = lambda, l1_ratio = mix
    from sklearn.linear_model import ElasticNet

    X, y = _data(250, 35, seed=5)
    Z = (X - X.mean(0)) / X.std(0)
    path = _compiled(X, y, mix=mix, n_penalties=30)
    for k in (5, 15, 29):
        ref = ElasticNet(alpha=path.penalties[k], l1_ratio=mix, tol=1e-12, max_iter=100000)
        ref.fit(Z, y - y.mean())
        np.testing.assert_allclose(path.std_coefs[k], ref.coef_, atol=1e-7)


def test_nearly_dependent_columns_and_a_constant_column(monkeypatch):
    # a column that is almost a combination of others (the factor refuses it) and one that
    # is constant: the answer still meets the optimality conditions and matches the
    # interpreted route
    X, y = _data(150, 20, seed=8)
    X[:, 5] = X[:, 3] - 2 * X[:, 4] + 1e-9 * np.random.default_rng(2).normal(size=150)
    X[:, 9] = 7.0
    fast = elastic_net_path(X, y, mix=1.0)
    slow = _interpreted(monkeypatch, X, y, mix=1.0, penalties=fast.penalties)
    assert fast.max_kkt_violation < 1e-9
    assert np.all(fast.coefs[:, 9] == 0)
    fitted_fast = X @ fast.coefs.T + fast.intercepts
    fitted_slow = X @ slow.coefs.T + slow.intercepts
    np.testing.assert_allclose(fitted_fast, fitted_slow, atol=1e-6 * np.abs(y).max())


def test_a_penalty_the_loop_cannot_settle_goes_to_the_interpreted_route(monkeypatch):
    # the compiled loop reports a penalty it could not settle half-way along the path: the
    # whole path then comes from the interpreted route, nothing of the partial one is kept
    X, y = _data(200, 25, seed=9)
    real = gram_kernel.gram_path_chunk
    calls = []

    def fails_at_40(*args):
        calls.append(args[4])
        status, k = real(*args[:5], min(args[5], 40), *args[6:])
        return (gram_kernel.FAILED, k) if k == 40 else (status, k)

    monkeypatch.setattr(gram_kernel, "gram_path_chunk", fails_at_40)
    co._LAST_COUNTERS = None
    fallen_back = elastic_net_path(X, y, mix=0.5)
    assert calls and co._LAST_COUNTERS is None  # the compiled loop ran and gave up
    slow = _interpreted(monkeypatch, X, y, mix=0.5, penalties=fallen_back.penalties)
    np.testing.assert_array_equal(fallen_back.std_coefs, slow.std_coefs)
    assert fallen_back.max_kkt_violation < 1e-9


def test_cancel_stops_the_compiled_path():
    X, y = _data(300, 40, seed=10)
    token = CancelToken()
    token.cancel()
    with pytest.raises(Cancelled):
        elastic_net_path(X, y, progress=Progress(cancel=token))


def test_factor_updates_match_a_fresh_cholesky_factorization():
    # Source: numpy.linalg.cholesky (LAPACK) of the same submatrix and numpy's solve; the factor
    # is grown by bordering, shrunk by Givens rotations and refactored at a shift in a random
    # sequence, and the forward-solved right-hand sides carried along (R'^-1 q_A and
    # R'^-1 (v*s)_A) must equal fresh triangular solves with the changed factor
    rng = np.random.default_rng(4)
    p = 30
    A = rng.normal(size=(80, p))
    Q = np.ascontiguousarray(A.T @ A)
    q = rng.normal(size=p) * 10
    v = rng.uniform(0.5, 2.0, p)
    sgn = rng.choice([-1.0, 1.0], size=p)
    R = np.zeros((p, p))
    order = np.zeros(p, dtype=np.int64)
    pos = np.full(p, -1, dtype=np.int64)
    st = np.zeros(6, dtype=np.int64)
    fs = np.array([0.0, 0.0])
    scratch = gram_kernel.new_scratch(p)
    appended = {1: 0, 2: 0, 5: 0}  # bordering routes: one column, a few, many
    carried = 0
    for step in range(300):
        k = int(st[0])
        if k and (rng.random() < 0.35 or k >= p - 8):
            gram_kernel._factor_delete(R, order, pos, st, int(rng.integers(k)), scratch.fwd)
        elif step % 50 == 49:
            assert gram_kernel._refactor(Q, R, order, st, fs, v, float(rng.uniform(0, 5)))
            # as the kernel does when it next needs them: forward solves with the new factor
            S, Rk = order[:k], np.triu(R[:k, :k])
            scratch.fwd[0, :k] = np.linalg.solve(Rk.T, q[S])
            scratch.fwd[1, :k] = np.linalg.solve(Rk.T, v[S] * sgn[S])
        elif step % 3 == 0 and p - k >= 2:  # several columns bordered at once
            free = np.flatnonzero(pos < 0)
            cols = rng.choice(free, size=int(rng.integers(2, min(9, free.size) + 1)), replace=False)
            appended[2 if cols.size <= gram_kernel._VECTOR_SOLVES_UP_TO else 5] += 1
            assert gram_kernel._append(
                Q, q, R, order, pos, st, fs, v, sgn, cols.astype(np.int64), cols.size, scratch
            )
        else:
            j = int(rng.choice(np.flatnonzero(pos < 0)))
            appended[1] += 1
            assert gram_kernel._append(
                Q, q, R, order, pos, st, fs, v, sgn, np.array([j]), 1, scratch
            )
        k = int(st[0])
        S = order[:k]
        assert np.all(pos[S] == np.arange(k)) and np.count_nonzero(pos >= 0) == k
        target = Q[np.ix_(S, S)] + np.diag(fs[0] * v[S])
        Rk = np.triu(R[:k, :k])
        np.testing.assert_allclose(Rk.T @ Rk, target, rtol=1e-10, atol=1e-9 * Q.max())
        if k:
            np.testing.assert_allclose(
                np.abs(np.diag(Rk)), np.diag(np.linalg.cholesky(target)), rtol=1e-8
            )
        b = rng.normal(size=k)
        x = np.empty(k)
        gram_kernel._factor_solve(R, k, b, x)
        np.testing.assert_allclose(target @ x, b, atol=1e-9 * max(1.0, np.abs(b).max()))
        if k:
            carried += 1
            for row, rhs in ((0, q[S]), (1, v[S] * sgn[S])):
                np.testing.assert_allclose(
                    Rk.T @ scratch.fwd[row, :k], rhs, atol=1e-9 * np.abs(rhs).max()
                )
    assert min(appended.values()) > 5 and carried > 250


def test_refactoring_a_new_set_matches_a_fresh_cholesky_factorization():
    # Source: numpy.linalg.cholesky of the new set's shifted submatrix. _refactor_set keeps the
    # factored columns that stay (in their order), adds the entering ones after them and
    # factors at the new shift; a dependent entering column empties the factor and says so
    rng = np.random.default_rng(7)
    p = 25
    A = rng.normal(size=(60, p))
    A[:, 24] = A[:, 3] - 2.0 * A[:, 5]  # dependent on columns 3 and 5
    Q = np.ascontiguousarray(A.T @ A)
    v = rng.uniform(0.5, 2.0, p)
    R = np.zeros((p, p))
    order = np.zeros(p, dtype=np.int64)
    pos = np.full(p, -1, dtype=np.int64)
    st = np.zeros(6, dtype=np.int64)
    fs = np.array([0.0, 0.0])
    members = np.zeros(p, dtype=np.bool_)
    members[[9, 3, 5, 17, 1]] = True
    assert gram_kernel._refactor_set(Q, R, order, pos, st, fs, v, members, 0.5)
    members[[3, 17]] = False
    members[[20, 2]] = True
    assert gram_kernel._refactor_set(Q, R, order, pos, st, fs, v, members, 0.25)
    k = int(st[0])
    S = order[:k]
    assert list(S) == [1, 5, 9, 2, 20] and fs[0] == 0.25
    assert np.all(pos[S] == np.arange(k)) and np.count_nonzero(pos >= 0) == k
    target = Q[np.ix_(S, S)] + np.diag(0.25 * v[S])
    Rk = np.triu(R[:k, :k])
    np.testing.assert_allclose(Rk.T @ Rk, target, rtol=1e-10, atol=1e-9 * Q.max())
    # at shift 0 the set {3, 5, 24} is singular: refused, nothing left factored
    members[:] = False
    members[[3, 5, 24]] = True
    assert not gram_kernel._refactor_set(Q, R, order, pos, st, fs, v, members, 0.0)
    assert st[0] == 0 and np.all(pos < 0)


def test_the_start_product_follows_from_a_known_one():
    # Source: numpy's matrix product Z'Z x of the same vectors. Conjugate gradients start from
    # a product carried from an earlier vector u (full = Z'Z u), corrected on the columns
    # where the start differs; with too many differences nothing may change (the plain
    # product is made instead), and without a known product the answer is "unknown"
    rng = np.random.default_rng(7)
    p = 40
    A = rng.normal(size=(90, p))
    Q = np.ascontiguousarray(A.T @ A)
    outcomes = set()
    for _ in range(60):
        k = int(rng.integers(4, p))
        order = rng.permutation(p)[:k].astype(np.int64)
        pos = np.full(p, -1, dtype=np.int64)
        pos[order] = np.arange(k)
        x = rng.normal(size=k)
        x_full = np.zeros(p)
        x_full[order] = x
        u = x_full.copy()
        changed = rng.choice(p, size=int(rng.integers(0, p // 2)), replace=False)
        u[changed] = rng.normal(size=changed.size) * (rng.random(changed.size) < 0.8)
        full = Q @ u
        before = full.copy()
        ok = np.array([1], dtype=np.int64)
        differ = int(np.count_nonzero(u != x_full))
        known = gram_kernel._product_of_start(Q, pos, k, x, u, ok, full)
        assert known == (differ <= k // 2)
        outcomes.add(known)
        if known:
            np.testing.assert_allclose(full, Q @ x_full, rtol=1e-10, atol=1e-9 * np.abs(Q).max())
            np.testing.assert_array_equal(u, x_full)
        else:
            np.testing.assert_array_equal(full, before)
    assert outcomes == {True, False}
    ok[0] = 0
    assert not gram_kernel._product_of_start(Q, pos, k, x, x_full.copy(), ok, full)


def test_warm_up_prepares_the_signature_real_fits_use():
    # the window warms the compiled loop at launch; a real fit must then find its machine code
    # ready (same argument types), not compile another version
    co.warm_compiled_path()
    before = set(gram_kernel.gram_path_chunk.signatures)
    assert before
    X, y = _data(60, 8, seed=11)
    _compiled(X, y, mix=0.7, n_penalties=5)
    assert set(gram_kernel.gram_path_chunk.signatures) == before


def test_a_dependent_column_in_a_block_leaves_the_factor_unchanged():
    # common practice: a column that is a combination of others has no Cholesky pivot left
    rng = np.random.default_rng(6)
    A = rng.normal(size=(40, 6))
    A = np.column_stack([A, A[:, 1] - A[:, 2]])  # column 6 depends on columns 1 and 2
    Q = np.ascontiguousarray(A.T @ A)
    p = 7
    R, order = np.zeros((p, p)), np.zeros(p, dtype=np.int64)
    pos, st, fs, v = (
        np.full(p, -1, dtype=np.int64),
        np.zeros(6, dtype=np.int64),
        np.zeros(2),
        np.ones(p),
    )
    block = np.empty((p, p))
    assert gram_kernel._factor_append(Q, R, order, pos, st, fs, v, np.array([0, 1]), 2, block)
    before = (R.copy(), order.copy(), pos.copy(), int(st[0]))
    assert not gram_kernel._factor_append(
        Q, R, order, pos, st, fs, v, np.array([2, 6, 3]), 3, block
    )
    assert int(st[0]) == before[3] and np.array_equal(pos, before[2])
    assert np.array_equal(R[:2, :2], before[0][:2, :2])


def test_repeated_and_zero_penalties(monkeypatch):
    # a grid the user typed may repeat a penalty and end at 0 (least squares, common practice:
    # the lasso at penalty 0 is OLS when rows outnumber columns)
    X, y = _data(120, 10, seed=12)
    lam = [0.5, 0.5, 0.2, 0.2, 0.2, 0.05, 0.0]
    fast = _compiled(X, y, mix=1.0, penalties=lam)
    slow = _interpreted(monkeypatch, X, y, mix=1.0, penalties=lam)
    np.testing.assert_allclose(fast.coefs, slow.coefs, rtol=1e-9, atol=1e-12)
    ols = np.linalg.lstsq(np.column_stack([np.ones(120), X]), y, rcond=None)[0]
    np.testing.assert_allclose(fast.coefs[-1], ols[1:], rtol=1e-9)
    assert np.array_equal(fast.coefs[0], fast.coefs[1])


def test_a_loop_that_cannot_be_built_leaves_the_interpreted_route_and_a_note(monkeypatch):
    # e.g. numba's code generator failing on an unusual machine: the fit must still come out,
    # from the interpreted loop, and say so
    def cannot_build(*args):
        raise RuntimeError("no code generator for this processor")

    monkeypatch.setattr(gram_kernel, "gram_path_chunk", cannot_build)
    monkeypatch.setattr(gram_kernel, "AVAILABLE", True)
    monkeypatch.setattr(gram_kernel, "DISABLED_BECAUSE", "")
    X, y = _data(150, 12, seed=13)
    path = elastic_net_path(X, y, mix=1.0, n_penalties=20)
    assert gram_kernel.AVAILABLE is False
    assert any("no code generator" in note for note in path.notes)
    assert path.max_kkt_violation < 1e-9
    slow = _interpreted(monkeypatch, X, y, mix=1.0, penalties=path.penalties)
    np.testing.assert_array_equal(path.std_coefs, slow.std_coefs)


@pytest.mark.parametrize("overwrite", [False, True])
def test_part_standardization_compiled_matches_numpy_to_the_bit(monkeypatch, overwrite):
    """A training part's standardized Gram, made in one compiled pass, is bit for bit the
    numpy route's (same operations, same order), and equals Z'Z of the training rows
    standardized directly with numpy (their own means and population sds, common practice)."""
    X, y = _data(240, 30, seed=5)
    X[:, 7] = 2.5  # constant everywhere
    X[:200, 9] = -1.0  # constant on the training rows only
    train, test = np.arange(200), np.arange(200, 240)
    shared = co.SharedCrossProducts(X, y, [test])
    assert not shared.held  # the held-out rows do not cover the data: the subtraction route

    def build(available):
        with monkeypatch.context() as m:
            m.setattr(gram_kernel, "AVAILABLE", available)
            if overwrite:  # a fresh sum of the training rows, standardized in place
                cp = co.cross_products(X, y, shared.m0, shared.ybar0, train)
                return co.gram_problem(
                    cp, shared.m0, shared.ybar0, shared.constant, shared.ref_var, overwrite=True
                )
            return shared.problem(X, y, train, test)

    (fast, sc_fast), (slow, sc_slow) = build(True), build(False)
    assert np.array_equal(fast.Q, slow.Q) and np.array_equal(fast.q, slow.q)
    assert np.array_equal(sc_fast.inv_sd, sc_slow.inv_sd)
    Xt = X[train]
    sd = Xt.std(0)
    keep = sd > 1e-8 * np.abs(Xt).max(0).clip(1)
    Z = np.where(keep, (Xt - Xt.mean(0)) / np.where(keep, sd, 1.0), 0.0)
    np.testing.assert_allclose(fast.Q, Z.T @ Z, atol=1e-9 * Xt.shape[0])
    assert fast.Q[7, 7] == 0.0 and fast.Q[9, 9] == 0.0 and fast.Q[0, 0] == Xt.shape[0]
