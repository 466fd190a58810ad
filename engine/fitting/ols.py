"""Ordinary least squares with an intercept, robust to collinear and ill-conditioned columns.

Method: the columns are centred (the intercept is then ybar - b'mean) and scaled to unit
length, then factored by Householder QR with column pivoting (Businger & Golub 1965,
Numer. Math. 7; Golub & Van Loan, Matrix Computations, sec. 5.4). Trailing pivots with
|R_kk| <= max(n, p) * eps * |R_11| mark columns that are exact linear combinations of the
earlier ones: they are reported in ``aliased`` and get coefficient 0 (the fit is the same as
without them). One step of iterative refinement on the residual recovers digits lost to
ill-conditioning (the NIST StRD Longley problem is matched to about 1e-12 relative).

``condition_number``: ratio of largest to smallest singular value of the centred, unit-length
columns kept in the fit (scale-free; above 1e8 about half the digits of double precision are
at risk and a warning says so).
"""

from __future__ import annotations

__all__ = ["OlsFit", "fit_ols", "ALIASED_WORDS"]

from dataclasses import dataclass, field

import numpy as np
from scipy.linalg import qr, solve_triangular

_ILL_CONDITIONED = 1e8
# how a fit's warning starts when columns were left out as exact combinations of others (the
# study names them instead, from the design's names)
ALIASED_WORDS = "columns that are exact linear combinations of the others (or constant)"


@dataclass
class OlsFit:
    coef: np.ndarray  # (p,) original units; 0 for aliased columns
    intercept: float
    fitted: np.ndarray  # (n,)
    residuals: np.ndarray  # (n,)
    rss: float
    rank: int  # columns kept (intercept not counted)
    condition_number: float
    aliased: list[int]  # column indices dropped as exact linear combinations of others
    warnings: list[str] = field(default_factory=list)

    @property
    def df_residual(self) -> int:
        return int(self.residuals.shape[0] - self.rank - 1)


def fit_ols(X: np.ndarray, y: np.ndarray) -> OlsFit:
    """Least squares of y on the columns of X plus an intercept.

    X: (n, p) original units; y: (n,). Returns coefficients in original units, rank, aliased
    columns (reported, coefficient 0) and warnings in words.
    """
    X = np.asarray(X, dtype=float)
    y = np.asarray(y, dtype=float).ravel()
    if X.ndim != 2 or X.shape[0] != y.shape[0]:
        raise ValueError(f"X {X.shape} and y {y.shape} do not match")
    n, p = X.shape
    if n == 0:
        raise ValueError("no rows to fit")
    warnings: list[str] = []
    means = X.mean(axis=0)
    y_mean = float(y.mean())
    Xc = X - means
    yc = y - y_mean
    norms = np.sqrt(np.einsum("ij,ij->j", Xc, Xc))
    coef = np.zeros(p)
    aliased: list[int] = []
    rank = 0
    cond = 1.0
    if p:
        positive = norms > 0
        scale = np.where(positive, norms, 1.0)
        A = Xc / scale
        Q, R, piv = qr(A, mode="economic", pivoting=True)
        diag = np.abs(np.diag(R))
        lead = diag[0] if diag.size else 0.0
        limit = max(n, p) * np.finfo(float).eps * lead
        rank = int(np.sum(diag > limit)) if lead > 0 else 0
        keep = piv[:rank]
        aliased = sorted(int(j) for j in piv[rank:])
        if rank:
            R1 = R[:rank, :rank]
            Q1 = Q[:, :rank]
            z = solve_triangular(R1, Q1.T @ yc)
            # one step of iterative refinement on the residual of the scaled problem
            resid = yc - A[:, keep] @ z
            z = z + solve_triangular(R1, Q1.T @ resid)
            coef[keep] = z / scale[keep]
            sv = np.linalg.svd(R1, compute_uv=False)
            cond = float(sv[0] / sv[-1]) if sv[-1] > 0 else float("inf")
        if aliased:
            warnings.append(
                f"{ALIASED_WORDS} ({len(aliased)}, at positions {aliased}) were left out"
            )
        if cond > _ILL_CONDITIONED:
            warnings.append(
                f"the columns are nearly collinear (condition number {cond:.3g}): "
                "coefficients may be unstable"
            )
    intercept = y_mean - float(coef @ means)
    fitted = intercept + X @ coef
    residuals = y - fitted
    if n <= rank + 1:
        warnings.append(
            f"{n} rows for {rank} columns and an intercept: the fit is exact, no residual "
            "degrees of freedom"
        )
    return OlsFit(
        coef=coef,
        intercept=intercept,
        fitted=fitted,
        residuals=residuals,
        rss=float(residuals @ residuals),
        rank=rank,
        condition_number=cond,
        aliased=aliased,
        warnings=warnings,
    )
