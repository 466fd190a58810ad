"""Ridge path: every penalty from one decomposition of the standardized data.

Objective (the shared penalty convention with mix = 0):

    (1/(2n)) * ||yc - Z beta||^2 + (lambda/2) * ||beta||^2,
    so beta(lambda) = (Z'Z + n*lambda*I)^-1 Z'yc   (scikit-learn Ridge alpha = n*lambda on Z).

With the singular value decomposition Z = U D V', beta(lambda) = V diag(d/(d^2 + n*lambda)) U'yc
for every lambda at once (Hoerl & Kennard 1970, Technometrics 12(1); Hastie, Tibshirani &
Friedman, Elements of Statistical Learning, 2nd ed., sec. 3.4.1). The singular values and
vectors are taken from the symmetric eigen-decomposition of Z'Z when rows outnumber columns
(the Gram matrix is formed in row blocks, no standardized copy) and of ZZ' otherwise (formed
in column blocks); both are the SVD of Z up to rounding of order eps * d_max^2, negligible
next to n*lambda on any grid this module builds. At lambda = 0 directions with
d^2 <= p * eps * d_max^2 are dropped (minimum-norm least squares).

Default grid: lambda_max = ||Z'yc||_inf / n / 1e-3 (the lasso lambda_max divided by the 1e-3
floor used for ridge-like mixes, common practice), 100 log-spaced values down to
1e-4 * lambda_max whatever the shape (ridge never runs out of degrees of freedom, so the
n <= p shortening of the lasso grid does not apply).
"""

from __future__ import annotations

__all__ = ["ridge_path", "ridge_df", "RIDGE_RATIO"]

import numpy as np

from engine.fitting.coordinate import (
    _MIN_MIX_FOR_GRID,
    _check_penalties,
    _check_xy,
    _GramProblem,
    build_problem,
    penalty_grid,
)
from engine.fitting.path import PenaltyPath
from engine.progress import Progress

RIDGE_RATIO = 1e-4
_COLUMN_BLOCK = 2048
_BLOCK_CELLS = 1 << 19  # 4 MB of float64 per temporary block of standardized columns


def ridge_df(singular_values: np.ndarray, penalties: np.ndarray, n: int) -> np.ndarray:
    """Effective degrees of freedom: trace of the hat matrix, sum_i d_i^2 / (d_i^2 + n*lambda).

    singular_values: d of the standardized data Z (n rows); penalties: (L,). Returns (L,).
    The intercept is not counted.
    """
    d2 = np.asarray(singular_values, dtype=float) ** 2
    lam = np.atleast_1d(np.asarray(penalties, dtype=float))
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = d2[None, :] / (d2[None, :] + n * lam[:, None])
    frac = np.where(d2[None, :] > 0, frac, 0.0)
    return frac.sum(axis=1)


class RidgeDecomposition:
    """Singular values of Z and what is needed to map a penalty to coefficients."""

    def __init__(self, prob, sc):
        self.n = prob.n
        self.p = prob.p
        self.q = prob.q
        self.prob = prob
        self.sc = sc
        if isinstance(prob, _GramProblem):
            d2, V = np.linalg.eigh(prob.Q)
            self.kind = "gram"
            self.V = V
            self.c = V.T @ prob.q  # V'Z'yc = d * U'yc
        else:
            K = np.zeros((prob.n, prob.n))
            for b in self._blocks():
                Zb = self._zcols(b)
                K += Zb @ Zb.T
            d2, U = np.linalg.eigh(K)
            self.kind = "kernel"
            self.U = U
            self.c = U.T @ prob.yc  # U'yc
        d2 = np.clip(d2, 0.0, None)
        cut = d2.shape[0] * np.finfo(float).eps * (d2.max() if d2.size else 0.0)
        self.d2 = np.where(d2 > cut, d2, 0.0)

    @property
    def singular_values(self) -> np.ndarray:
        return np.sqrt(self.d2)[::-1]  # largest first

    def _blocks(self):
        p = self.p
        width = max(1, min(_COLUMN_BLOCK, _BLOCK_CELLS // max(self.n, 1)))
        return [np.arange(a, min(a + width, p)) for a in range(0, p, width)]

    def _zcols(self, cols: np.ndarray) -> np.ndarray:
        pr = self.prob
        sub = pr.X[:, cols] if pr.rows is None else pr.X[np.ix_(pr.rows, cols)]
        return (sub - pr.sc.means[cols]) * pr.inv_sd[cols]

    def _shrink(self, penalties: np.ndarray, power: int) -> np.ndarray:
        nl = self.n * penalties[:, None]
        den = self.d2[None, :] + nl
        with np.errstate(divide="ignore", invalid="ignore"):
            w = np.where(self.d2[None, :] > 0, 1.0 / den, 0.0)
        return w

    def predict(
        self, penalties: np.ndarray, Zt: np.ndarray, progress: Progress | None = None
    ) -> np.ndarray:
        """Zt @ beta(lambda)' for standardized rows Zt (m, p): (m, L), without the (L, p) path."""
        lam = np.asarray(penalties, dtype=float)
        C = self._shrink(lam, 1) * self.c[None, :]
        if self.kind == "gram":
            return (Zt @ self.V) @ C.T
        out = np.zeros((Zt.shape[0], lam.shape[0]))
        for b in self._blocks():
            if progress is not None:
                progress.check()
            out += Zt[:, b] @ (C @ (self.U.T @ self._zcols(b))).T
        return out

    def std_coefs(self, penalties: np.ndarray, progress: Progress | None = None) -> np.ndarray:
        """(L, p) standardized coefficients."""
        lam = np.asarray(penalties, dtype=float)
        w = self._shrink(lam, 1)  # 1/(d^2 + n lambda)
        if self.kind == "gram":
            # beta = V diag(1/(d^2+n lam)) V'Z'yc
            return (w * self.c[None, :]) @ self.V.T
        # beta = Z'U diag(1/(d^2+n lam)) U'yc, built one column block at a time
        C = w * self.c[None, :]  # (L, n)
        out = np.empty((lam.shape[0], self.p))
        for b in self._blocks():
            if progress is not None:
                progress.check()
            out[:, b] = C @ (self.U.T @ self._zcols(b))
        return out


def _ridge_kkt(prob, B: np.ndarray, penalties: np.ndarray) -> np.ndarray:
    """Scale-free gradient size of the ridge objective at each row of B (see coordinate.py)."""
    scale = float(np.max(np.abs(prob.q), initial=0.0)) or 1.0
    out = np.zeros(B.shape[0])
    for a in range(0, B.shape[0], _KKT_BLOCK):  # a block of penalties per product
        b = min(a + _KKT_BLOCK, B.shape[0])
        g = prob.gradients(B[a:b]) - prob.n * penalties[a:b, None] * B[a:b]
        out[a:b] = np.max(np.abs(g), axis=1, initial=0.0) / scale
    return out


# penalties whose ridge optimality conditions are checked with one product (memory: 25 x p)
_KKT_BLOCK = 25


def ridge_path(
    X: np.ndarray,
    y: np.ndarray,
    penalties: np.ndarray | None = None,
    n_penalties: int = 100,
    ratio: float | None = None,
    progress: Progress | None = None,
    check_kkt: bool = True,
) -> PenaltyPath:
    """Ridge solutions along a decreasing penalty grid (PenaltyPath with mix = 0).

    X: (n, p) original units; y: (n,). penalties: explicit grid (sorted to decreasing) or the
    default grid of the module docstring (``ratio`` defaults to 1e-4). ``df`` holds the trace
    of the hat matrix at each penalty; ``max_kkt_violation`` the scale-free gradient size.
    """
    X, y = _check_xy(X, y)
    lam = _check_penalties(penalties)
    prob, sc = build_problem(X, y)
    dec = RidgeDecomposition(prob, sc)
    if lam is None:
        lam_max = float(np.max(np.abs(prob.q), initial=0.0)) / prob.n / _MIN_MIX_FOR_GRID
        lam = penalty_grid(lam_max, n_penalties, RIDGE_RATIO if ratio is None else ratio)
    if progress is not None:
        progress.step(0.5, "ridge path")
    B = dec.std_coefs(lam, progress)
    B[:, sc.constant] = 0.0
    scale = sc.inv_sd
    intercepts = sc.y_mean - B @ (scale * sc.means)
    kkt = _ridge_kkt(prob, B, lam) if check_kkt else None
    path = PenaltyPath(
        penalties=lam,
        std_coefs=B,
        column_scale=scale,
        intercepts=intercepts,
        mix=0.0,
        max_kkt_violation=None if kkt is None else float(kkt.max(initial=0.0)),
        kkt_violations=kkt,
        df=ridge_df(dec.singular_values, lam, prob.n),
    )
    path.singular_values = dec.singular_values  # type: ignore[attr-defined]
    return path
