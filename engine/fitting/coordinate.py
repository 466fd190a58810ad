"""Lasso and elastic-net paths by cyclic coordinate descent with warm starts and strong rules.

Objective (Friedman, Hastie & Tibshirani 2010, J. Stat. Software 33(1)), for each penalty lambda:

    (1/(2n)) * ||yc - Z beta||^2 + lambda * sum_j v_j * (mix*|beta_j| + (1 - mix)/2 * beta_j^2)

with Z the columns centred and divided by their population sd, yc the centred response and
v_j >= 0 the per-column penalty factors (default 1; rescaled to sum to the number of columns,
common practice; v_j = 0 leaves a column unpenalized, as adaptive lasso and forced-in controls
need). Coefficients come back in original units: b_j = beta_j / sd_j and the intercept
ybar - sum_j b_j * mean_j.

How the path is computed
- Penalties decrease from ``penalty_max`` (every coefficient zero) down by ``ratio`` on a log
  scale; each solution warm-starts the next.
- Sequential strong rule (Tibshirani, Bien, Friedman, Hastie, Simon, Taylor & Tibshirani 2012,
  JRSS-B 74(2)): at lambda_k only columns with |z_j'r/n| >= mix*v_j*(2*lambda_k - lambda_{k-1}),
  plus every column ever active, enter the solve; afterwards the optimality (KKT) conditions are
  checked over all columns and violators are added, so the answer is exact while the work scales
  with the active set.
- The inner solve on that working set reuses scikit-learn's compiled coordinate descent
  (``sklearn.linear_model._cd_fast``; stopping rule: duality gap <= tol * ||yc||^2). When rows
  outnumber columns it runs on the standardized Gram matrix Z'Z (computed once, in row blocks,
  without a standardized copy of the data); otherwise it runs on residuals with only the working
  columns copied, and the KKT check uses X'r with the centring and scaling applied algebraically.
- Before any sweep, the exact solution of the optimality conditions on the previous active
  set (signs fixed) is tried, up to six times per penalty: columns that violate their
  condition are added, a coefficient whose sign flips is dropped; after coordinate descent
  the same exact solve "polishes" the answer. A Cholesky factor of Z_A'Z_A is grown with the
  active set; a few leaving columns stay in it as "ghosts" pinned to zero by a Schur
  complement instead of a refactorization, so most penalties cost one triangular solve and
  one gradient. For the elastic net the factor of Z_A'Z_A + n*lambda*(1-mix)*V_A is made
  once per penalty (positive definite even with more active columns than rows). Near saturation (active set above n/2), where coordinate descent crawls, the lasso
  is followed exactly between grid points (LARS-lasso homotopy, Efron et al. 2004). Every
  exact candidate is accepted only if all optimality conditions hold to 1e-10 (scale-free).
- Columns with v_j = 0 are partialled out exactly (Frisch-Waugh-Lovell) and recovered by least
  squares after each solve.

``max_kkt_violation`` (scale-free): the largest, over penalties and columns, of
|z_j'r/n - lambda*(1-mix)*v_j*beta_j - lambda*mix*v_j*sign(beta_j)| for nonzero beta_j and of
max(|z_j'r/n| - lambda*mix*v_j, 0) for zero beta_j, divided by ||Z'yc||_inf / n (the size of
the gradient at beta = 0, i.e. the lasso lambda_max). It is unchanged when y or any column is
rescaled.
"""

from __future__ import annotations

__all__ = [
    "elastic_net_path",
    "SharedCrossProducts",
    "penalty_max",
    "penalty_grid",
    "path_penalties",
    "kkt_violation",
    "normalize_penalty_factors",
    "default_ratio",
]

import os
import warnings
from collections.abc import Callable, Sequence
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field
from functools import cache, partial

import numpy as np
from scipy.linalg.blas import dtrsv as _dtrsv
from scipy.linalg.lapack import dpotrf as _dpotrf
from scipy.linalg.lapack import dpotrs as _dpotrs
from scipy.linalg.lapack import dtrtrs as _dtrtrs

from engine.blas_threads import one_blas_thread
from engine.fitting import gram_kernel
from engine.fitting.path import PenaltyPath
from engine.fitting.standardize import _BLOCK_ROWS, column_moments
from engine.progress import Progress


@cache
def _library_descent():
    """scikit-learn's compiled descent (residual and Gram forms), imported at first use: the
    library takes about 2 s to import, which a fit on the compiled Gram loop never needs."""
    from sklearn.exceptions import ConvergenceWarning
    from sklearn.linear_model._cd_fast import (
        enet_coordinate_descent,
        enet_coordinate_descent_gram,
    )

    # it warns when it stops at its sweep limit; this module records that as a note on the
    # path (and tries the exact route), so the warning is silenced for its calls only
    warnings.filterwarnings("ignore", category=ConvergenceWarning, module=__name__)
    return enet_coordinate_descent, enet_coordinate_descent_gram


# mix below this is treated like this when sizing the grid (common practice for ridge-like mixes)
_MIN_MIX_FOR_GRID = 1e-3
# a column whose training-part variance is below this share of its full-data variance is taken
# as constant on that part (exact zero is lost to rounding in the Gram downdate)
_CONSTANT_VARIANCE_SHARE = 1e-10
# elements per block of rows when a Gram matrix is shifted and scaled in place
_GRAM_BLOCK_ELEMENTS = 16384
# the residual route keeps at least this many gathered standardized columns (or p/4)
_CACHE_MIN_COLUMNS = 256


def compiled_route(n: int, p: int, mix: float) -> bool:
    """Whether a path on n rows and p columns runs compiled (gram_kernel): Gram route, mix > 0."""
    return n > p and mix > 0 and gram_kernel.AVAILABLE


def default_ratio(n: int, p: int) -> float:
    """lambda_min / lambda_max: 1e-4 when rows outnumber columns, else 1e-2 (common practice)."""
    return 1e-4 if n > p else 1e-2


def normalize_penalty_factors(penalty_factors: np.ndarray | None, p: int) -> np.ndarray:
    """Per-column penalty factors rescaled to sum to p (common practice); None gives ones."""
    if penalty_factors is None:
        return np.ones(p)
    v = np.asarray(penalty_factors, dtype=float).ravel()
    if v.shape[0] != p:
        raise ValueError(f"penalty_factors has {v.shape[0]} entries for {p} columns")
    if not np.all(np.isfinite(v)) or np.any(v < 0):
        raise ValueError("penalty factors must be finite and non-negative")
    total = v.sum()
    if total <= 0:
        raise ValueError("at least one column must be penalized (all penalty factors are 0)")
    return v * (p / total)


# --------------------------------------------------------------------------------------------
# Standardized problem data for one set of rows, in two forms


@dataclass
class _Scaling:
    """Centring and scaling of one set of rows (original units)."""

    n: int
    means: np.ndarray
    sds: np.ndarray  # 1.0 where constant
    constant: np.ndarray
    y_mean: float

    @property
    def inv_sd(self) -> np.ndarray:
        inv = 1.0 / self.sds
        inv[self.constant] = 0.0
        return inv


class _GramProblem:
    """Z'Z, Z'yc and yc'yc of the standardized rows; the solve runs on Z'Z directly."""

    def __init__(self, Q: np.ndarray, q: np.ndarray, yy: float, n: int):
        self.Q = Q
        self.q = q
        self.yy = max(float(yy), 0.0)
        self.n = n
        self.p = q.shape[0]
        self.r_norm2 = self.yy

    # Q[A][:, B] (rows, then columns) is several times faster than Q[np.ix_(A, B)]
    def gram_block(self, A: np.ndarray) -> np.ndarray:
        return self.Q[A][:, A]

    def cross_block(self, A: np.ndarray, B: np.ndarray) -> np.ndarray:
        if B.size < A.size:  # Q is symmetric: gather the fewer rows (column-major result)
            return self.Q[B][:, A].T
        return self.Q[A][:, B]

    def ztz(self, A: np.ndarray, x: np.ndarray) -> np.ndarray:
        """Z' Z_A x for x of shape (|A|,) or (|A|, k)."""
        return self.Q[A].T @ x

    def gradient(self, beta: np.ndarray) -> np.ndarray:
        """z_j' r for all columns, r = yc - Z beta."""
        nz = np.flatnonzero(beta)
        if nz.size == 0:
            return self.q.copy()
        if 4 * nz.size > self.p:  # many nonzeros: one product with Q beats copying its rows
            return self.q - self.Q @ beta
        return self.q - beta[nz] @ self.Q[nz]

    def gradients(self, B: np.ndarray) -> np.ndarray:
        """z_j' r_k for every row beta_k of B (L, p): one product for a whole path."""
        return self.q[None, :] - B @ self.Q

    def solve(self, W, gamma0, alpha, beta_l2, scale, l2_diag, tol, max_sweeps, rng):
        if W.size == self.p and scale is None and l2_diag is None:
            Qw, qw = self.Q, self.q  # the whole problem: no copy of Q
        else:
            Qw = self.Q[W][:, W]
            qw = self.q[W]
        if scale is not None:
            Qw = Qw * np.outer(scale, scale)
            qw = qw * scale
        if l2_diag is not None:
            Qw = Qw.copy() if Qw is self.Q else Qw
            Qw[np.diag_indices_from(Qw)] += l2_diag
        Qw = np.ascontiguousarray(Qw)
        w = np.ascontiguousarray(gamma0, dtype=float)
        yarr = np.array([np.sqrt(self.yy)])  # the Gram solver uses y only through ||y||^2
        w, gap, tol_abs, it = _library_descent()[1](
            w, alpha, beta_l2, Qw, np.ascontiguousarray(qw), yarr, max_sweeps, tol, rng, 0, 0, 1
        )
        return np.asarray(w), int(it), bool(gap > tol_abs)


class _ResidualProblem:
    """Rows of X (not copied) with algebraic centring/scaling; solves on copied working columns."""

    def __init__(self, X: np.ndarray, rows: np.ndarray | None, sc: _Scaling, yc: np.ndarray):
        self.X = X
        self.rows = rows
        self.sc = sc
        self.inv_sd = sc.inv_sd
        self.yc = yc
        self.n = sc.n
        self.p = X.shape[1]
        self._r_full = np.zeros(X.shape[0]) if rows is not None else None
        self._cache_key: bytes | None = None
        self._cache_cols: np.ndarray | None = None
        # standardized columns already gathered, kept in one column-major buffer (bounded)
        self._slot = np.full(self.p, -1, dtype=np.intp)
        self._buf = np.empty((self.n, 0), order="F")
        self._used = 0
        self._cap = max(_CACHE_MIN_COLUMNS, self.p // 4)
        self.r = yc.copy()
        self.r_norm2 = float(yc @ yc)
        self.q = self._xt(self.yc)

    def _xt(self, r: np.ndarray) -> np.ndarray:
        """Z' r = ((X_rows - mean)' r) / sd without forming Z; r (n,) or (n, k)."""
        if self.rows is None:
            xr = self.X.T @ r
        elif r.ndim == 1:
            assert self._r_full is not None  # made with the rows
            self._r_full[self.rows] = r
            xr = self.X.T @ self._r_full
        else:
            full = np.zeros((self.X.shape[0], r.shape[1]))
            full[self.rows] = r
            xr = self.X.T @ full
        if r.ndim == 1:
            return (xr - self.sc.means * r.sum()) * self.inv_sd
        return (xr - np.outer(self.sc.means, r.sum(axis=0))) * self.inv_sd[:, None]

    def columns(self, W: np.ndarray) -> np.ndarray:
        """Standardized working columns as a column-major array (what the solver reads)."""
        key = W.tobytes()
        if key == self._cache_key and self._cache_cols is not None:
            return self._cache_cols
        Zw = np.asfortranarray(self._zcols(W))
        self._cache_key, self._cache_cols = key, Zw
        return Zw

    def gram_block(self, A: np.ndarray) -> np.ndarray:
        Za = self._zcols(A)
        return Za.T @ Za

    def cross_block(self, A: np.ndarray, B: np.ndarray) -> np.ndarray:
        return self._zcols(A).T @ self._zcols(B)

    def ztz(self, A: np.ndarray, x: np.ndarray) -> np.ndarray:
        """Z' Z_A x for x of shape (|A|,) or (|A|, k)."""
        return self._xt(self._zcols(A) @ x)

    def _gather(self, A: np.ndarray) -> np.ndarray:
        # columns first, then rows: cheaper than X[np.ix_(rows, A)] (and than rows first)
        sub = self.X[:, A] if self.rows is None else self.X[:, A][self.rows]
        return (sub - self.sc.means[A]) * self.inv_sd[A]

    def _zcols(self, A: np.ndarray) -> np.ndarray:
        """Z[:, A]; columns seen before come from the buffer instead of another gather."""
        miss = A[self._slot[A] < 0]
        if miss.size:
            need = self._used + miss.size
            if need > self._cap:
                return self._gather(A)
            if need > self._buf.shape[1]:
                grown = np.empty(
                    (self.n, min(self._cap, max(need, 2 * self._buf.shape[1]))), order="F"
                )
                grown[:, : self._used] = self._buf[:, : self._used]
                self._buf = grown
            self._buf[:, self._used : need] = self._gather(miss)
            self._slot[miss] = np.arange(self._used, need)
            self._used = need
        return self._buf[:, self._slot[A]]

    def gradient(self, beta: np.ndarray) -> np.ndarray:
        nz = np.flatnonzero(beta)
        if nz.size == 0:
            self.r = self.yc.copy()
        else:
            self.r = self.yc - self._zcols(nz) @ beta[nz]
        self.r_norm2 = float(self.r @ self.r)
        return self._xt(self.r)

    def gradients(self, B: np.ndarray) -> np.ndarray:
        """z_j' r_k for every row beta_k of B (L, p), by products with X (no standardized copy)."""
        Bs = B * self.inv_sd  # (L, p) coefficients of the original columns
        fitted = self.X @ Bs.T  # (all rows, L)
        if self.rows is not None:
            fitted = fitted[self.rows]
        R = self.yc[:, None] - (fitted - Bs @ self.sc.means)
        return self._xt(R).T

    def solve(self, W, gamma0, alpha, beta_l2, scale, l2_diag, tol, max_sweeps, rng):
        Zw = self.columns(W)
        y = self.yc
        if scale is not None:
            Zw = np.asfortranarray(Zw * scale)
        if l2_diag is not None:
            # per-column ridge weights: augment with rows sqrt(b_j) e_j (and zero responses)
            Zw = np.asfortranarray(np.vstack([Zw, np.diag(np.sqrt(l2_diag))]))
            y = np.concatenate([y, np.zeros(W.size)])
        w = np.ascontiguousarray(gamma0, dtype=float)
        w, gap, tol_abs, it = _library_descent()[0](
            w, alpha, beta_l2, Zw, np.ascontiguousarray(y), max_sweeps, tol, rng, 0, 0, 1
        )
        return np.asarray(w), int(it), bool(gap > tol_abs)


class _DenseProblem(_ResidualProblem):
    """A residual problem on an already standardized dense matrix (used after partialling out)."""

    def __init__(self, Z: np.ndarray, yc: np.ndarray):
        p = Z.shape[1]
        sc = _Scaling(Z.shape[0], np.zeros(p), np.ones(p), np.zeros(p, bool), 0.0)
        super().__init__(Z, None, sc, yc)


# --------------------------------------------------------------------------------------------
# Building the standardized problem for a set of rows


@dataclass
class CrossProducts:
    """Sums over a set of rows of the data centred at fixed reference values (m0, ybar0).

    G = sum (x-m0)(x-m0)', s = sum (x-m0), xy = sum (x-m0)(y-ybar0), sy = sum (y-ybar0),
    yy = sum (y-ybar0)^2. Training parts are full sums minus held-out sums; the shift to the
    part's own means is applied algebraically (no copy of the training rows).
    """

    n: int
    G: np.ndarray
    s: np.ndarray
    xy: np.ndarray
    sy: float
    yy: float

    @staticmethod
    def total_of(pieces: Sequence[CrossProducts]) -> CrossProducts:
        """The sum of cross products over disjoint row sets (one new p x p array)."""
        G = pieces[0].G.copy()
        for cp in pieces[1:]:
            G += cp.G
        return CrossProducts(
            sum(cp.n for cp in pieces),
            G,
            np.sum([cp.s for cp in pieces], axis=0),
            np.sum([cp.xy for cp in pieces], axis=0),
            float(sum(cp.sy for cp in pieces)),
            float(sum(cp.yy for cp in pieces)),
        )

    def minus(self, other: CrossProducts, gram: bool = True) -> CrossProducts:
        """The difference; with gram False its G is still ``self.G`` (for ``gram_problem``'s
        ``less``, which subtracts ``other.G`` while standardizing: no p x p temporary)."""
        return CrossProducts(
            self.n - other.n,
            self.G - other.G if gram else self.G,
            self.s - other.s,
            self.xy - other.xy,
            self.sy - other.sy,
            self.yy - other.yy,
        )


def cross_products(
    X: np.ndarray, y: np.ndarray, m0: np.ndarray, ybar0: float, rows: np.ndarray | None = None
) -> CrossProducts:
    """Centred cross products of ``X[rows]`` in row blocks (memory: one block)."""
    p = X.shape[1]
    idx = None if rows is None else np.asarray(rows)
    n = X.shape[0] if idx is None else idx.shape[0]
    G = None
    s = np.zeros(p)
    xy = np.zeros(p)
    sy = 0.0
    yy = 0.0
    for a in range(0, max(n, 1), _BLOCK_ROWS):
        b = min(a + _BLOCK_ROWS, n)
        if idx is None:
            xb, yb = X[a:b] - m0, y[a:b] - ybar0
        else:
            xb, yb = X[idx[a:b]] - m0, y[idx[a:b]] - ybar0
        if G is None:  # the first block's product is the sum so far: no p x p temporary
            G = xb.T @ xb
        else:
            G += xb.T @ xb
        s += xb.sum(axis=0)
        xy += xb.T @ yb
        sy += float(yb.sum())
        yy += float(yb @ yb)
    assert G is not None  # the loop runs at least once (one empty block when n = 0)
    return CrossProducts(n, G, s, xy, sy, yy)


def gram_problem(
    cp: CrossProducts,
    m0: np.ndarray,
    ybar0: float,
    constant: np.ndarray | None = None,
    reference_var: np.ndarray | None = None,
    overwrite: bool = False,
    less: np.ndarray | None = None,
) -> tuple[_GramProblem, _Scaling]:
    """Standardized Gram problem of the rows summarized in ``cp``.

    constant: columns known to be constant (exact test); reference_var: full-data variances, to
    spot columns that are constant on these rows only (variance share below 1e-10).
    overwrite: ``cp.G`` may become the problem's Z'Z (saves two p x p temporaries per part).
    less: cross products to subtract from ``cp.G`` first (a training part: all rows minus the
    held-out ones; ``cp`` from ``minus(..., gram=False)``), done in the same pass.
    """
    n = cp.n
    d = cp.s / n  # mean of these rows minus m0
    e = cp.sy / n
    cxy = cp.xy - n * d * e
    yy = cp.yy - n * e * e
    p = cp.G.shape[0]
    diagonal = np.diag(cp.G) if less is None else np.diag(cp.G) - np.diag(less)
    var = (diagonal - (d * d) * n) / n  # the diagonal of the shifted C, as below
    const = np.zeros(var.shape[0], bool) if constant is None else constant.copy()
    if reference_var is not None:
        const |= var <= _CONSTANT_VARIANCE_SHARE * reference_var
    const |= var <= 0
    sds = np.sqrt(np.where(const, 1.0, var))
    inv = np.where(const, 0.0, 1.0 / sds)
    Q = cp.G if overwrite and less is None else np.empty((p, p))
    if gram_kernel.AVAILABLE:
        subtract = less is not None
        gram_kernel.standardize_gram(
            cp.G, less if subtract else cp.G, subtract, d, n, inv, const, Q
        )
    else:
        if less is not None:
            np.subtract(cp.G, less, out=Q)
        elif Q is not cp.G:
            Q[...] = cp.G
        # C - n d d' then scaled by inv_i inv_j, a block of rows at a time: small temporaries
        # (whole p x p ones cost more in fresh memory pages than in arithmetic); every element
        # is (d_i d_j) n and inv_i inv_j, symmetric to the last bit
        step = max(1, _GRAM_BLOCK_ELEMENTS // max(p, 1))
        for a in range(0, p, step):
            rows = slice(a, min(a + step, p))
            shift = np.multiply.outer(d[rows], d)
            shift *= n
            Q[rows] -= shift
            Q[rows] *= np.multiply.outer(inv[rows], inv)
        np.fill_diagonal(Q, np.where(const, 0.0, n))  # exact n on the diagonal of Z'Z
    q = cxy * inv
    sc = _Scaling(n, m0 + d, sds, const, ybar0 + e)
    return _GramProblem(Q, q, yy, n), sc


# the cross products of all rows are summed over row ranges (or held-out parts) on this many
# threads with one BLAS thread each: measured here, right after threaded work, the library's
# own threading took 6-21 ms (median 12) for the 1000 x 500 product that two such threads
# made in 4-7 ms
_SUM_THREADS = max(1, min(os.cpu_count() or 1, 4))
_MIN_ROWS_PER_THREAD = 256


class SharedCrossProducts:
    """Centred cross products of all rows, computed once for the fit on all rows and every
    validation part (Gram route, rows outnumber columns).

    When the held-out parts partition the rows (k-fold) and their cross products together
    take no more memory than the data (parts * p <= n), those are formed first and summed
    to the total: one pass over the rows instead of two.
    """

    def __init__(self, X: np.ndarray, y: np.ndarray, tests: Sequence[np.ndarray] = ()):
        self.m0, sds, self.constant = column_moments(X)
        self.sds = sds
        self.ref_var = np.where(self.constant, 0.0, sds**2)
        self.ybar0 = float(y.mean())
        n, p = X.shape
        self.held: dict[bytes, CrossProducts] = {}
        m0, ybar0 = self.m0, self.ybar0
        threads = min(_SUM_THREADS, max(1, n // _MIN_ROWS_PER_THREAD))
        by_part = bool(tests) and len(tests) * p <= n and _partition(tests, n)
        pieces: list[Callable[[], CrossProducts]]
        if by_part:
            pieces = [partial(cross_products, X, y, m0, ybar0, te) for te in tests]
        else:  # the rows in as many contiguous ranges as threads
            cuts = np.linspace(0, n, threads + 1).astype(int)
            pieces = [
                partial(cross_products, X[a:b], y[a:b], m0, ybar0)
                for a, b in zip(cuts[:-1], cuts[1:])
            ]
        if threads == 1:  # one piece at a time, the library free to thread each product
            held = [piece() for piece in pieces]
        else:
            with one_blas_thread(), ThreadPoolExecutor(threads) as pool:
                held = list(pool.map(lambda piece: piece(), pieces))
        if by_part:
            self.held = {te.tobytes(): cp for te, cp in zip(tests, held)}
        self.total = CrossProducts.total_of(held)

    def full_problem(self) -> tuple[_GramProblem, _Scaling]:
        """The standardized problem of all rows (what ``build_problem`` makes, without a pass)."""
        prob, sc = gram_problem(self.total, self.m0, self.ybar0, self.constant)
        sc.sds = np.where(self.constant, 1.0, self.sds)  # the two-pass sds, as build_problem
        return prob, sc

    def problem(self, X, y, train: np.ndarray, test: np.ndarray | None = None):
        n = X.shape[0]
        outside = None if test is None else self.held.get(test.tobytes())
        if outside is None or outside.n + train.shape[0] != n:
            if 2 * train.shape[0] <= n:  # fewer rows in training than outside: sum them
                cp = cross_products(X, y, self.m0, self.ybar0, train)
                # a fresh sum, this call's own: its G becomes the problem's
                return gram_problem(
                    cp, self.m0, self.ybar0, self.constant, self.ref_var, overwrite=True
                )
            mask = np.ones(n, bool)
            mask[train] = False
            outside = cross_products(X, y, self.m0, self.ybar0, np.flatnonzero(mask))
        cp = self.total.minus(outside, gram=False)  # the total's G stays untouched
        return gram_problem(cp, self.m0, self.ybar0, self.constant, self.ref_var, less=outside.G)


def _partition(tests: Sequence[np.ndarray], n: int) -> bool:
    """True when the index sets are disjoint and together cover 0..n-1."""
    if sum(te.shape[0] for te in tests) != n:
        return False
    seen = np.zeros(n, bool)
    for te in tests:
        if te.size and (te.min() < 0 or te.max() >= n):
            return False
        seen[te] = True
    return bool(seen.all())


def _residual_problem(X, y, rows, sc: _Scaling | None = None):
    if sc is None:
        means, sds, constant = column_moments(X, rows)
        ysub = y if rows is None else y[rows]
        sc = _Scaling(ysub.shape[0], means, sds, constant, float(ysub.mean()))
    ysub = y if rows is None else y[rows]
    return _ResidualProblem(X, rows, sc, ysub - sc.y_mean), sc


def build_problem(X, y, rows=None, use_gram: bool | None = None):
    """The standardized problem of ``X[rows], y[rows]`` and its scaling (Gram when n > p)."""
    n = X.shape[0] if rows is None else len(rows)
    p = X.shape[1]
    if use_gram is None:
        use_gram = n > p
    if not use_gram:
        return _residual_problem(X, y, rows)
    means, sds, constant = column_moments(X, rows)
    ysub = y if rows is None else y[rows]
    ybar = float(ysub.mean())
    cp = cross_products(X, y, means, ybar, rows)
    prob, sc = gram_problem(cp, means, ybar, constant=constant, overwrite=True)
    sc.sds = np.where(constant, 1.0, sds)  # the two-pass sds (identical up to rounding)
    return prob, sc


# --------------------------------------------------------------------------------------------
# Unpenalized columns: partial them out exactly


class _Partialled:
    """The penalized columns with the unpenalized ones projected out (Frisch-Waugh-Lovell)."""

    def __init__(self, prob, free: np.ndarray):
        self.free = free
        self.pen = np.flatnonzero(~free)
        U = np.flatnonzero(free)
        self.U = U
        self.inner: _GramProblem | _DenseProblem
        if isinstance(prob, _GramProblem):
            Quu = prob.Q[np.ix_(U, U)]
            self.M = np.linalg.pinv(Quu)
            self.A = prob.Q[np.ix_(U, self.pen)]
            qu = prob.q[U]
            Qpp = prob.Q[np.ix_(self.pen, self.pen)] - self.A.T @ self.M @ self.A
            qp = prob.q[self.pen] - self.A.T @ (self.M @ qu)
            yy = prob.yy - qu @ self.M @ qu
            self.inner = _GramProblem(Qpp, qp, yy, prob.n)
        else:
            Zu = prob.columns(U).copy()
            Zp = prob.columns(self.pen).copy() if self.pen.size else np.zeros((prob.n, 0))
            self.M = np.linalg.pinv(Zu.T @ Zu)
            self.A = Zu.T @ Zp
            qu = Zu.T @ prob.yc
            Zt = Zp - Zu @ (self.M @ self.A)
            yt = prob.yc - Zu @ (self.M @ qu)
            self.inner = _DenseProblem(Zt, yt)
        self.qu = qu

    def full_beta(self, beta_pen: np.ndarray, p: int) -> np.ndarray:
        beta = np.zeros(p)
        beta[self.pen] = beta_pen
        beta[self.U] = self.M @ (self.qu - self.A @ beta_pen)
        return beta


# --------------------------------------------------------------------------------------------
# The path


@dataclass
class _PathOut:
    std_coefs: np.ndarray | None  # None when the solutions went to a sink
    n_iter: np.ndarray
    kkt: np.ndarray  # (L,) scale-free violation at each penalty
    notes: list[str] = field(default_factory=list)


def _lambda_max_of(g0: np.ndarray, n: int, mix: float, v: np.ndarray) -> float:
    pen = v > 0
    if not np.any(pen):
        return 0.0
    return float(np.max(np.abs(g0[pen]) / v[pen]) / n / max(mix, _MIN_MIX_FOR_GRID))


def _violation(g, beta, lam, mix, v, n):
    """Per-column KKT violation of the n-scaled conditions (divide by n for the objective)."""
    l1 = n * lam * mix * v
    smooth = g - n * lam * (1.0 - mix) * v * beta
    nz = beta != 0
    out = np.maximum(np.abs(smooth) - l1, 0.0)
    out[nz] = np.abs(smooth[nz] - l1[nz] * np.sign(beta[nz]))
    return out


# an exact active-set solution is accepted when no condition is off by more than this share
# of ||Z'yc||_inf (rounding level; anything looser is left to coordinate descent)
_EXACT_ACCEPT = 1e-10
# after coordinate descent and polish, a penalty whose optimality conditions are still off
# by more than this share of ||Z'yc||_inf gets one more descent with the tolerance multiplied
# by _RETRY_TOL_FACTOR (rare: seen with as many active columns as the rank of the rows)
_RETRY_VIOLATION = 1e-9
_RETRY_TOL_FACTOR = 1e-4
# elastic net, Gram route: with k active columns the exact step costs a k^3/3 factorization,
# a descent sweep about k^2 scalar updates, which run about 4 times slower per operation here;
# so the exact step is skipped when k > 3 * 4 * (sweeps the last descent took), starting from
# an expectation of 30 sweeps. Descent alone then runs to a duality gap of 1e-10 ||yc||^2
# (KKT about 1e-11 instead of 1e-15; scikit-learn's default is 1e-4).
_FACTOR_VS_SWEEP = 12
_EXPECTED_SWEEPS = 30
_DESCENT_ONLY_TOL = 1e-10
# tries per penalty of the exact solution with columns added as they violate their condition
_EXACT_TRIES = 6


# leaving columns kept in a Cholesky factor as ghosts: at most 4 or 1/_GHOST_SHARE of its columns
_GHOST_SHARE = 16


def _cholesky_solve(LT: np.ndarray, rhs: np.ndarray) -> np.ndarray:
    """Solve L L' x = rhs given LT = L' (upper, column-major).

    For one right-hand side two triangular solves (BLAS dtrsv) measured 2.5-3x faster here than
    LAPACK's dpotrs, which the path calls thousands of times.
    """
    if rhs.ndim == 1:
        return _dtrsv(LT, _dtrsv(LT, rhs, lower=0, trans=1), lower=0, trans=0)
    return _dpotrs(LT, rhs, lower=0)[0]


class _GrowingCholesky:
    """Cholesky factor L L' = Z_S'Z_S of an ordered column set S, grown one column at a time.

    Columns that leave the active set may stay in S as "ghosts" (a few, see _GHOST_SHARE): the
    solve then pins their coefficients to zero through the Schur complement of the ghost
    block, which costs two triangular solves per ghost (kept while the factor stays) instead
    of refactoring the columns after the first leaving one.
    """

    def __init__(self, prob, diag_weights: np.ndarray | None = None):
        self.prob = prob
        self.order = np.zeros(0, dtype=np.intp)
        self.L = np.zeros((0, 0))
        self.pos = np.full(prob.p, -1, dtype=np.intp)  # position in ``order``, -1 if absent
        # elastic net: the factored matrix is Z_S'Z_S + shift * diag(diag_weights[S]); a new
        # shift starts a new factor, columns added for the same shift only border it
        self.diag_weights = diag_weights
        self.shift = 0.0
        self._ghost_key: tuple | None = None
        self._ghost: tuple | None = None
        self._version = 0  # changes with the factor (keys the ghost cache)
        self._fitted: tuple | None = None

    def _reset(self) -> None:
        self._version += 1
        self.pos[self.order] = -1
        self.order = np.zeros(0, dtype=np.intp)
        self.L = np.zeros((0, 0))

    def _block(self, A: np.ndarray) -> np.ndarray:
        C = self.prob.gram_block(A)
        if self.shift != 0.0:
            assert self.diag_weights is not None  # only the shifted factor gets a shift
            C[np.diag_indices_from(C)] += self.shift * self.diag_weights[A]
        return C

    def fit(self, A: np.ndarray, shift: float = 0.0) -> bool:
        if shift != self.shift:
            self._reset()
            self.shift = shift
        if A.size == self.order.size and np.all(self.pos[A] >= 0):
            return True  # same set: nothing to do
        key = A.tobytes()
        if self._fitted == (self._version, key):
            return True  # the set just fitted (with ghosts)
        ok = self._fit(A)
        self._fitted = (self._version, key) if ok else None
        return ok

    def _fit(self, A: np.ndarray) -> bool:
        member = np.zeros(self.prob.p, bool)
        member[A] = True
        gone = np.flatnonzero(~member[self.order])
        # ghosts only well below rank n (always on the Gram route, where p < n): near
        # saturation they make the factor ill-conditioned
        few = gone.size <= max(4, self.order.size // _GHOST_SHARE)
        room = isinstance(self.prob, _GramProblem) or 2 * self.order.size < self.prob.n
        if gone.size and not (few and room):
            # too many ghosts: keep the factor of the prefix before the first leaving column
            cut = int(gone[0])
            suffix = self.order[cut:][member[self.order[cut:]]]
            self.pos[self.order[cut:]] = -1
            self.order, self.L = self.order[:cut], self.L[:cut, :cut].copy()
            self._version += 1
            fresh = A[self.pos[A] < 0]
            fresh = fresh[~np.isin(fresh, suffix)]
            new_a = np.concatenate([suffix, fresh]).astype(np.intp)
        else:
            new_a = A[self.pos[A] < 0]
        if new_a.size == 0:
            return True
        if self._border(new_a):
            return True
        if gone.size:  # a ghost may make the set dependent: start afresh without ghosts
            self._reset()
            return self._border(A)
        return False

    def _border(self, new_a: np.ndarray) -> bool:
        """Append columns ``new_a`` to the factor (bordering); False and reset if dependent."""
        old = self.order
        C = self._block(new_a)
        diag_ref = np.diag(C).copy()
        k0, k1 = old.size, new_a.size
        L = np.zeros((k0 + k1, k0 + k1))
        L[:k0, :k0] = self.L
        if k0:
            B = self.prob.cross_block(old, new_a)
            L21, info = _dtrtrs(self.L.T, B, lower=0, trans=1)  # solves L X = B
            if info != 0:
                self._reset()
                return False
            L21 = L21.T
            C = C - L21 @ L21.T
            L[k0:, :k0] = L21
        L22, info = _dpotrf(C, lower=1, clean=1)
        if info != 0 or np.any(np.diag(L22) ** 2 <= 1e-10 * diag_ref):
            self._reset()
            return False  # (numerically) dependent columns
        L[k0:, k0:] = L22
        self.order = np.concatenate([old, new_a])
        self.pos[self.order] = np.arange(self.order.size)
        self.L = L
        self._version += 1
        return True

    def solve(self, A: np.ndarray, rhs: np.ndarray) -> np.ndarray:
        """Solve Z_A'Z_A x = rhs (rhs (|A|,) or (|A|, k)); A must be the factored set."""
        idx = self.pos[A]
        k = self.order.size
        r = np.zeros((k,) + rhs.shape[1:])
        r[idx] = rhs
        LT = self.L.T  # L' is column-major: no copy for LAPACK
        x = _cholesky_solve(LT, r)
        if idx.size < k:
            # ghosts D: x = u - H_.D (H_DD)^-1 u_D with H = (Z_S'Z_S)^-1 makes x_D = 0
            ghost = np.ones(k, bool)
            ghost[idx] = False
            gi = np.flatnonzero(ghost)
            key = (self._version, gi.tobytes())
            if key != self._ghost_key:  # H_.D and (H_DD)^-1, kept while factor and D stay
                E = np.zeros((k, gi.size))
                E[gi, np.arange(gi.size)] = 1.0
                H, _ = _dpotrs(LT, E, lower=0)
                self._ghost = (H, np.linalg.inv(H[gi]))
                self._ghost_key = key
            assert self._ghost is not None
            H, Hdd_inv = self._ghost
            x = x - H @ (Hdd_inv @ x[gi])
        return x[idx]


# largest number of breakpoints followed between two grid penalties before giving up
_HOMOTOPY_EVENTS = 400
_USE_HOMOTOPY = True  # switch for comparisons in benchmarks


class _LassoHomotopy:
    """Exact lasso solutions between two penalties by following the piecewise-linear path.

    On an interval where the active set A and signs s do not change, the conditions
    Z_A'Z_A beta_A = Z_A'yc - n*lambda*V_A s give beta_A = u - n*lambda*w and the gradient of
    every column g_j = a_j + n*lambda*c_j, both linear in lambda; the next breakpoint is where
    an inactive |g_j| reaches n*lambda*v_j (the column enters) or an active coefficient
    reaches 0 (it leaves). This is least angle regression with the lasso modification (Efron,
    Hastie, Johnstone & Tibshirani 2004, Ann. Stat. 32(2); Osborne, Presnell & Turlach 2000,
    IMA J. Numer. Anal. 20(3)), used here only between neighbouring grid penalties and only
    when it stays well conditioned; otherwise the caller falls back to coordinate descent.
    """

    def __init__(self, prob, v: np.ndarray, chol: _GrowingCholesky):
        self.prob = prob
        self.v = v
        self.n = prob.n
        self.chol = chol

    def run(self, beta: np.ndarray, lam_from: float, lam_to: float):
        prob, v, n = self.prob, self.v, self.n
        p = beta.shape[0]
        A = np.flatnonzero(beta)
        s = np.sign(beta[A])
        lam = lam_from
        for _ in range(_HOMOTOPY_EVENTS):
            if A.size >= n - 1:
                return None
            if A.size == 0:
                ratio_in = np.abs(prob.q) / (n * v)
                j = int(np.argmax(ratio_in))
                lam_e = float(ratio_in[j])
                if lam_e <= lam_to:
                    return np.zeros(p), prob.q.copy()
                A = np.array([j])
                s = np.array([np.sign(prob.q[j])])
                lam = min(lam, lam_e)
                continue
            if not self.chol.fit(A):
                return None
            sol = self.chol.solve(A, np.column_stack([prob.q[A], v[A] * s]))
            u, w = sol[:, 0], sol[:, 1]
            zz = prob.ztz(A, sol)
            a = prob.q - zz[:, 0]
            c = zz[:, 1]
            inactive = np.ones(p, bool)
            inactive[A] = False
            upper = lam * (1.0 - 1e-12)
            with np.errstate(divide="ignore", invalid="ignore"):
                cand = np.concatenate(
                    [a / (n * (v - c)), a / (n * (-v - c))]
                )  # entering with sign + / -
                cand = np.where(np.concatenate([inactive, inactive]), cand, -np.inf)
                leave = np.where(w != 0, u / (n * w), -np.inf)
            cand = np.where((cand > lam_to) & (cand < upper), cand, -np.inf)
            leave = np.where((leave > lam_to) & (leave < upper), leave, -np.inf)
            i_in = int(np.argmax(cand))
            i_out = int(np.argmax(leave))
            lam_in, lam_out = cand[i_in], leave[i_out]
            if not np.isfinite(lam_in) and not np.isfinite(lam_out):
                out = np.zeros(p)
                out[A] = u - n * lam_to * w
                g = a + n * lam_to * c
                return out, g
            if lam_in >= lam_out:
                j = i_in % p
                lam = float(lam_in)
                sign_j = 1.0 if i_in < p else -1.0
                order = np.argsort(np.append(A, j), kind="stable")
                A = np.append(A, j)[order]
                s = np.append(s, sign_j)[order]
            else:
                lam = float(lam_out)
                keep = np.arange(A.size) != i_out
                A, s = A[keep], s[keep]
        return None


class _ActiveSetSolver:
    """Exact solution for a given active set A and signs s (the optimality conditions solved
    as linear equations): beta_A = (Z_A'Z_A + n*lambda*(1-mix)*V_A)^-1 (Z_A'yc - n*lambda*mix*V_A s).

    Valid only if the signs come out as assumed and every inactive column satisfies its
    condition; both are checked, so it never replaces a correct answer by a wrong one. The
    factorization is kept while the active set stays the same, so along a fine grid most
    penalties cost one triangular solve and one gradient.
    """

    def __init__(self, prob, mix: float, v: np.ndarray):
        self.prob = prob
        self.mix = mix
        self.v = v
        self.n = prob.n
        self._chol = _GrowingCholesky(prob)
        self._shifted = _GrowingCholesky(prob, v) if mix < 1.0 else None

    def _solve(self, A: np.ndarray, sA: np.ndarray, lam: float) -> np.ndarray | None:
        if A.size >= self.n and self.mix == 1.0:  # rank < n: no unique lasso solution
            return None
        n, mix, v = self.n, self.mix, self.v
        rhs = self.prob.q[A] - n * lam * mix * v[A] * sA
        # lasso: Z_A'Z_A does not change with lambda; its Cholesky factor grows column by
        # column with the active set and is partly refactored only when a column leaves.
        # Elastic net: Z_A'Z_A + n*lambda*(1-mix)*V_A is factored once per penalty and only
        # bordered when the tries of that penalty add columns (it is positive definite even
        # with more active columns than rows).
        if mix == 1.0:
            if not self._chol.fit(A):
                return None
            return self._chol.solve(A, rhs)
        shift = n * lam * (1.0 - mix)
        assert self._shifted is not None  # made when mix < 1
        if not self._shifted.fit(A, shift):
            return None
        return self._shifted.solve(A, rhs)

    def _candidate(self, A, sA, lam):
        bA = self._solve(A, sA, lam)
        if bA is None or not np.all(np.isfinite(bA)) or np.any(np.sign(bA) != sA):
            return None
        beta = np.zeros(self.prob.p)
        beta[A] = bA
        return beta, self.prob.gradient(beta)

    def try_exact(self, beta_prev: np.ndarray, lam: float, accept_abs: float):
        l1 = self.n * lam * self.mix * self.v
        A = np.flatnonzero(beta_prev)
        sA = np.sign(beta_prev[A])
        for _ in range(_EXACT_TRIES):
            bA = self._solve(A, sA, lam)
            if bA is None or not np.all(np.isfinite(bA)):
                return None
            flipped = np.sign(bA) != sA
            if np.any(flipped):
                # a coefficient crossed zero: guess that it leaves and try again
                A, sA = A[~flipped], sA[~flipped]
                continue
            beta = np.zeros(self.prob.p)
            beta[A] = bA
            g = self.prob.gradient(beta)
            excess = np.abs(g) - l1
            excess[A] = -np.inf
            bad = np.flatnonzero(excess > accept_abs)
            if bad.size == 0:
                return beta, g
            order = np.argsort(A.tolist() + bad.tolist(), kind="stable")
            A = np.concatenate([A, bad])[order]
            sA = np.concatenate([sA, np.sign(g[bad])])[order]
        return None

    def polish(self, beta: np.ndarray, g: np.ndarray, lam: float):
        A = np.flatnonzero(beta)
        cand = self._candidate(A, np.sign(beta[A]), lam)
        if cand is None:
            return None
        b2, g2 = cand
        n, mix, v = self.n, self.mix, self.v
        before = np.max(_violation(g, beta, lam, mix, v, n), initial=0.0)
        after = np.max(_violation(g2, b2, lam, mix, v, n), initial=0.0)
        return (b2, g2) if after <= before else None


def solve_path(
    prob,
    penalties: np.ndarray,
    mix: float,
    v: np.ndarray,
    tol: float = 1e-7,
    max_sweeps: int = 10000,
    progress: Progress | None = None,
    kkt_scale: float | None = None,
    use_homotopy: bool = True,
    sink=None,
    report_steps: bool = False,
) -> _PathOut:
    """Standardized coefficients along decreasing ``penalties`` for a prepared problem.

    sink: optional callable (k, beta) receiving each solution instead of storing the (L, p)
    array (cross-validation only needs held-out predictions); std_coefs is then None.
    """
    p = prob.p
    free = v == 0
    if np.any(free):
        part = _Partialled(prob, free)
        inner_sink = None if sink is None else (lambda k, b: sink(k, part.full_beta(b, p)))
        sub = solve_path(
            part.inner,
            penalties,
            mix,
            v[part.pen],
            tol,
            max_sweeps,
            progress,
            kkt_scale=kkt_scale if kkt_scale is not None else _g_scale(prob),
            use_homotopy=use_homotopy,
            sink=inner_sink,
            report_steps=report_steps,
        )
        if sink is not None:
            return sub
        assert sub.std_coefs is not None
        full = np.vstack([part.full_beta(b, p) for b in sub.std_coefs])
        return _PathOut(full, sub.n_iter, sub.kkt, sub.notes)

    n = prob.n
    L = penalties.shape[0]
    scale_den = kkt_scale if kkt_scale is not None else _g_scale(prob)
    compiled_kind = isinstance(prob, _GramProblem) and mix > 0  # what the compiled loop solves
    if compiled_kind and gram_kernel.AVAILABLE:
        compiled = _compiled_path(
            prob, penalties, mix, v, tol, max_sweeps, progress, scale_den, sink, report_steps
        )
        if compiled is not None:
            return compiled
        # a penalty the compiled loop could not settle: the interpreted route (with its
        # path-following fallback) does the whole path again
    out = np.zeros((L, p)) if sink is None else None
    iters = np.zeros(L, dtype=int)
    kkt = np.zeros(L)
    notes: list[str] = []
    if compiled_kind and gram_kernel.DISABLED_BECAUSE:
        notes.append(
            "the compiled fitting loop could not run here "
            f"({gram_kernel.DISABLED_BECAUSE}); the slower interpreted loop gave these results"
        )
    accept_abs = _EXACT_ACCEPT * scale_den
    rng = np.random.RandomState(0)  # only seeds the unused random-order option
    direct = _ActiveSetSolver(prob, mix, v) if mix > 0 else None
    gram_route = isinstance(prob, _GramProblem)
    use_homotopy = use_homotopy and _USE_HOMOTOPY
    homotopy = (
        _LassoHomotopy(prob, v, direct._chol)
        if direct is not None and mix == 1.0 and use_homotopy
        else None
    )

    def descend(beta, strong, lam, tol_now):
        """Coordinate descent on the strong set, grown by the columns that violate their
        condition outside it; returns beta, gradient, sweeps, whether it hit the limit."""
        strong = strong.copy()
        sweeps = 0
        unconverged_any = False
        while True:
            W = np.flatnonzero(strong)
            if gram_route and 2 * W.size > p:  # most columns: solve the whole problem
                strong[:] = True
                W = np.arange(p)
            beta_new = np.zeros(p)
            if W.size:
                vw = v[W]
                scale = None if uniform and v[0] == 1.0 else 1.0 / vw
                alpha = n * lam * mix
                l2 = n * lam * (1.0 - mix)
                l2_diag = None
                beta_l2 = l2
                if uniform:
                    beta_l2 = l2 / v[0]
                elif l2 > 0:
                    l2_diag, beta_l2 = l2 / vw, 0.0
                gamma0 = beta[W] * vw
                gam, it, unconverged = prob.solve(
                    W, gamma0, alpha, beta_l2, scale, l2_diag, tol_now, max_sweeps, rng
                )
                sweeps += it
                unconverged_any = unconverged_any or unconverged
                if unconverged:
                    notes.append(
                        f"coordinate descent stopped at {max_sweeps} sweeps before "
                        f"converging at penalty {lam:.4g}"
                    )
                beta_new[W] = gam / vw
            beta = beta_new
            g = prob.gradient(beta)
            if mix == 0:
                break
            outside = ~strong & (np.abs(g) > l1w * lam)
            if not outside.any():
                break
            strong |= outside
        return beta, g, sweeps, unconverged_any

    shifted_factor = mix < 1.0 and direct is not None and gram_route
    descent_sweeps = _EXPECTED_SWEEPS
    beta = np.zeros(p)
    g = prob.q.copy()
    ever = np.zeros(p, bool)
    l1w = n * mix * v  # per unit of lambda
    uniform = bool(np.all(v == v[0]))
    prev = max(_lambda_max_of(g, n, mix, v), float(penalties[0]) if L else 0.0)
    for k in range(L):
        if progress is not None:
            if report_steps:
                progress.step(k / L, f"penalty {k + 1} of {L}")
            else:
                progress.check()
        lam = float(penalties[k])
        total_it = 0
        # 1. the exact solution on the previous active set (plus entering columns), if its
        #    signs and every optimality condition hold, is the answer without any sweep
        exact = None
        beta_prev = beta
        # elastic net on the Gram route: its exact step refactors a k x k matrix at every
        # penalty; when that costs more than the descent is expected to (sweeps seen at the
        # last descent-only penalty), descend to a tight tolerance instead
        descent_only = False
        if shifted_factor and np.any(beta):
            k_now = int(np.count_nonzero(beta))
            descent_only = k_now > _FACTOR_VS_SWEEP * descent_sweeps
        if direct is not None and np.any(beta) and not descent_only:
            exact = direct.try_exact(beta, lam, accept_abs)
        # near saturation (active set above half the rows) coordinate descent crawls: follow
        # the exact piecewise-linear lasso path from the previous solution instead
        if exact is None and homotopy is not None and np.count_nonzero(beta) >= n // 2:
            exact = _checked(homotopy.run(beta, prev, lam), lam, mix, v, n, accept_abs)
        if exact is not None:
            beta, g = exact
        else:
            if mix > 0:
                strong = ever | (np.abs(g) >= l1w * (2.0 * lam - prev))
            else:
                strong = np.ones(p, bool)
            beta, g, it, unconverged_here = descend(
                beta, strong, lam, min(tol, _DESCENT_ONLY_TOL) if descent_only else tol
            )
            total_it += it
            if descent_only:
                descent_sweeps = max(it, 1)
            # 2. polish: the exact solution on the active set coordinate descent found
            if direct is not None and np.any(beta) and not descent_only:
                polished = direct.polish(beta, g, lam)
                if polished is not None:
                    beta, g = polished
            # 3. coordinate descent hit its sweep limit: try the exact path-following route
            if unconverged_here and homotopy is not None:
                alt = _checked(homotopy.run(beta_prev, prev, lam), lam, mix, v, n, accept_abs)
                if alt is not None:
                    beta, g = alt
                    notes.pop()
                    unconverged_here = False
            # 4. still short of the optimality conditions (the polish failed, e.g. with as
            #    many active columns as the rank of the rows): descend once more, tighter
            if (
                mix > 0
                and not unconverged_here
                and np.max(_violation(g, beta, lam, mix, v, n), initial=0.0)
                > _RETRY_VIOLATION * scale_den
            ):
                beta, g, it, _ = descend(beta, beta != 0, lam, tol * _RETRY_TOL_FACTOR)
                total_it += it
        ever |= beta != 0
        if out is not None:
            out[k] = beta
        else:
            assert sink is not None
            sink(k, beta)
        iters[k] = total_it
        kkt[k] = float(np.max(_violation(g, beta, lam, mix, v, n), initial=0.0)) / scale_den
        prev = lam
    return _PathOut(out, iters, kkt, notes)


_LAST_COUNTERS = None  # counters of the last compiled path (for benchmarks and checks)


def _compiled_path(prob, penalties, mix, v, tol, max_sweeps, progress, scale_den, sink, steps):
    """``solve_path`` on a Gram problem by the compiled loop (gram_kernel); None if it gave up."""
    p, n, L = prob.p, prob.n, penalties.shape[0]
    q = np.ascontiguousarray(prob.q, dtype=float)
    Q = np.ascontiguousarray(prob.Q)
    v = np.ascontiguousarray(v, dtype=float)
    lams = np.ascontiguousarray(penalties, dtype=float)
    B = np.zeros((L, p))
    iters = np.zeros(L, dtype=np.int64)
    kkt = np.zeros(L)
    beta, g, g_before, ever = np.zeros(p), q.copy(), q.copy(), np.zeros(p, bool)
    order, pos = np.zeros(p, dtype=np.int64), np.full(p, -1, dtype=np.int64)
    R, sgn, sizes = np.empty((p, p)), np.zeros(p), np.zeros(6, dtype=np.int64)
    scratch = gram_kernel.new_scratch(p)
    # [shift of the factor, previous penalty]
    shifts = np.array([0.0, max(_lambda_max_of(q, n, mix, v), float(lams[0]) if L else 0.0)])
    # progress and cancel are looked at between chunks of about a twentieth of the path
    chunk = L if progress is None else max(1, -(-L // 20))
    for k0 in range(0, L, chunk):
        k1 = min(L, k0 + chunk)
        if progress is not None:
            if steps:
                progress.step(k0 / L, f"penalty {k0 + 1} of {L}")
            else:
                progress.check()
        try:
            status, _ = gram_kernel.gram_path_chunk(
                Q, q, float(n), lams, k0, k1, float(mix), v, _EXACT_ACCEPT * scale_den,
                tol * scale_den, _RETRY_VIOLATION * scale_den, _RETRY_TOL_FACTOR,
                int(max_sweeps), beta, g, g_before, ever, order, pos, R, sgn, sizes, shifts, B,
                iters, kkt, scratch,
            )  # fmt: skip
        except Exception as exc:  # its machine code could not be made or loaded on this machine
            gram_kernel.disable(f"{type(exc).__name__}: {exc}")
            return None
        if status != gram_kernel.OK:
            return None
    global _LAST_COUNTERS
    _LAST_COUNTERS = sizes.copy()
    if sink is not None:
        for k in range(L):
            sink(k, B[k])
        B = None
    return _PathOut(B, iters.astype(int), kkt / scale_den, [])


def warm_compiled_path() -> None:
    """Load (or, on a new installation, compile) the compiled path loop ahead of a fit.

    The first call in a process loads the cached machine code (about 0.3 s here); after a
    change to gram_kernel.py, or on a new machine, it compiles it (15-20 s). The window calls
    this while the user is still choosing columns. A tiny made-up problem drives it through
    the same argument types as a real fit.
    """
    if not gram_kernel.AVAILABLE:
        return
    rng = np.random.default_rng(0)
    X = rng.normal(size=(12, 3))
    y = X @ np.array([1.0, -1.0, 0.0]) + rng.normal(size=12)
    prob, _ = build_problem(X, y)
    v = np.ones(3)
    lam = penalty_grid(_lambda_max_of(prob.q, prob.n, 0.5, v), 3, 0.01)
    solve_path(prob, lam, 0.5, v)


def _checked(res, lam, mix, v, n, accept_abs):
    """``res`` (beta, gradient) if it satisfies every optimality condition, else None."""
    if res is None:
        return None
    viol = np.max(_violation(res[1], res[0], lam, mix, v, n), initial=0.0)
    return res if viol <= accept_abs else None


def _g_scale(prob) -> float:
    s = float(np.max(np.abs(prob.q), initial=0.0))
    return s if s > 0 else 1.0


def penalty_grid(lam_max: float, n_penalties: int, ratio: float) -> np.ndarray:
    """``n_penalties`` log-spaced penalties from ``lam_max`` down to ``ratio * lam_max``."""
    if n_penalties < 1:
        raise ValueError("n_penalties must be at least 1")
    if lam_max <= 0:  # constant response (or nothing penalized): every solution is zero
        return np.zeros(n_penalties)
    return np.geomspace(lam_max, lam_max * ratio, n_penalties)


def _check_xy(X, y):
    X = np.asarray(X, dtype=float)
    y = np.asarray(y, dtype=float).ravel()
    if X.ndim != 2:
        raise ValueError(f"X must be a 2-D matrix, got shape {X.shape}")
    if y.shape[0] != X.shape[0]:
        raise ValueError(f"y has {y.shape[0]} values but X has {X.shape[0]} rows")
    if not (np.all(np.isfinite(X)) and np.all(np.isfinite(y))):
        raise ValueError("X and y must be finite (intake drops or reports missing values)")
    return X, y


def penalty_max(
    X: np.ndarray, y: np.ndarray, mix: float = 1.0, penalty_factors: np.ndarray | None = None
) -> float:
    """Smallest penalty at which every penalized coefficient is zero.

    lambda_max = max_j |z_j'yc| / (n * v_j) / max(mix, 1e-3) over penalized columns, with the
    unpenalized columns (v_j = 0) partialled out first. For mix < 1e-3 (ridge-like) the 1e-3
    floor is common practice so that the grid stays finite.
    """
    X, y = _check_xy(X, y)
    v = normalize_penalty_factors(penalty_factors, X.shape[1])
    prob, _ = build_problem(X, y)
    return _problem_lambda_max(prob, mix, v)


def _problem_lambda_max(prob, mix, v) -> float:
    free = v == 0
    if np.any(free):
        part = _Partialled(prob, free)
        return _lambda_max_of(part.inner.q, prob.n, mix, v[part.pen])
    return _lambda_max_of(prob.q, prob.n, mix, v)


def _default_grid(prob, sc: _Scaling, mix, v, n_penalties, ratio) -> np.ndarray:
    ratio = default_ratio(sc.n, prob.p) if ratio is None else float(ratio)
    return penalty_grid(_problem_lambda_max(prob, mix, v), n_penalties, ratio)


def path_penalties(
    X: np.ndarray,
    y: np.ndarray,
    mix: float = 1.0,
    n_penalties: int = 100,
    ratio: float | None = None,
    penalty_factors: np.ndarray | None = None,
    shared: SharedCrossProducts | None = None,
) -> np.ndarray:
    """The grid ``elastic_net_path`` makes when given none (same arguments; for mix = 0 only
    with penalty factors, since plain ridge has its own grid), so that the validation parts
    can start on it beside the fit on all rows."""
    X, y = _check_xy(X, y)
    v = normalize_penalty_factors(penalty_factors, X.shape[1])
    prob, sc = shared.full_problem() if shared is not None else build_problem(X, y)
    return _default_grid(prob, sc, mix, v, n_penalties, ratio)


def _path_from(
    prob, sc: _Scaling, mix, penalties, n_penalties, ratio, v, tol, max_sweeps, progress
) -> PenaltyPath:
    if penalties is None:
        penalties = _default_grid(prob, sc, mix, v, n_penalties, ratio)
    res = solve_path(prob, penalties, mix, v, tol, max_sweeps, progress, report_steps=True)
    if progress is not None:
        progress.step(1.0, "path done")
    scale = sc.inv_sd  # 0 for constant columns
    assert res.std_coefs is not None  # no sink: the path is kept
    intercepts = sc.y_mean - res.std_coefs @ (scale * sc.means)
    path = PenaltyPath(
        penalties=penalties,
        std_coefs=res.std_coefs,
        column_scale=scale,
        intercepts=intercepts,
        mix=float(mix),
        n_iter=res.n_iter,
        max_kkt_violation=float(np.max(res.kkt, initial=0.0)),
        kkt_violations=res.kkt,
        notes=sorted(set(res.notes)),
    )
    return path


def _check_penalties(penalties) -> np.ndarray | None:
    if penalties is None:
        return None
    lam = np.asarray(penalties, dtype=float).ravel()
    if lam.size == 0 or not np.all(np.isfinite(lam)) or np.any(lam < 0):
        raise ValueError("penalties must be a non-empty list of finite non-negative numbers")
    return np.sort(lam)[::-1].copy()


def elastic_net_path(
    X: np.ndarray,
    y: np.ndarray,
    mix: float = 1.0,
    penalties: np.ndarray | None = None,
    n_penalties: int = 100,
    ratio: float | None = None,
    penalty_factors: np.ndarray | None = None,
    tol: float = 1e-7,
    max_sweeps: int = 10000,
    progress: Progress | None = None,
    use_gram: bool | None = None,
    shared: SharedCrossProducts | None = None,
) -> PenaltyPath:
    """Lasso (mix = 1) / elastic-net (0 < mix < 1) solutions along a decreasing penalty grid.

    X: (n, p) candidate columns, original units; y: (n,) response. penalties: explicit grid
    (sorted to decreasing); otherwise ``n_penalties`` log-spaced values from
    ``penalty_max`` down by ``ratio`` (default 1e-4 when n > p, else 1e-2, common practice).
    penalty_factors: (p,) non-negative weights v_j (0 = unpenalized), rescaled to sum to p.
    tol: duality-gap tolerance of each inner solve, relative to ||yc||^2. use_gram: force the
    Gram (True) or residual (False) route; default Gram when n > p. shared: cross products of
    X, y already formed for a cross-validation (the Gram problem is then taken from them).
    Returns a PenaltyPath (coefficients in both unit systems, sweeps per penalty,
    ``max_kkt_violation`` as defined in the module docstring). mix = 0 without penalty factors
    is handed to ``ridge_path`` (one SVD gives the whole path).
    """
    X, y = _check_xy(X, y)
    if not 0.0 <= mix <= 1.0:
        raise ValueError(f"mix must lie in [0, 1], got {mix}")
    lam = _check_penalties(penalties)
    if mix == 0 and penalty_factors is None:
        from engine.fitting.ridge import ridge_path

        return ridge_path(
            X, y, penalties=lam, n_penalties=n_penalties, ratio=ratio, progress=progress
        )
    v = normalize_penalty_factors(penalty_factors, X.shape[1])
    if shared is not None and use_gram is not False:
        prob, sc = shared.full_problem()
    else:
        prob, sc = build_problem(X, y, use_gram=use_gram)
    # the path itself is many small linear-algebra calls: one BLAS thread avoids contention
    with one_blas_thread():
        return _path_from(prob, sc, mix, lam, n_penalties, ratio, v, tol, max_sweeps, progress)


def kkt_violation(
    X: np.ndarray,
    y: np.ndarray,
    std_coefs: np.ndarray,
    penalties: np.ndarray,
    mix: float,
    penalty_factors: np.ndarray | None = None,
) -> np.ndarray:
    """Scale-free KKT violation (module docstring) of given standardized solutions, per penalty.

    An independent check written directly from the objective, on an explicit standardized copy
    of the data; used by tests and the benchmark to score any solver's output.
    """
    from engine.fitting.standardize import standardize

    X, y = _check_xy(X, y)
    st = standardize(X, y)
    n = X.shape[0]
    v = normalize_penalty_factors(penalty_factors, X.shape[1])
    scale = float(np.max(np.abs(st.Z.T @ st.yc))) or 1.0
    B = np.atleast_2d(std_coefs)
    lams = np.atleast_1d(np.asarray(penalties, dtype=float))
    out = np.zeros(B.shape[0])
    for k in range(B.shape[0]):
        g = st.Z.T @ (st.yc - st.Z @ B[k])
        out[k] = float(np.max(_violation(g, B[k], lams[k], mix, v, n), initial=0.0)) / scale
    return out
