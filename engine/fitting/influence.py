"""Unusual rows of a least-squares fit: leverage, studentized residuals and Cook's distance.

A penalized model is judged here through the least-squares refit of the columns it keeps (with
an intercept): a row typed with a wrong unit or a slipped decimal shows up there as a large
residual or as a row that moves the coefficients on its own, whichever method chose the columns.

- leverage h_i: the diagonal of the hat matrix of [1, X];
- externally studentized residual t_i: the residual divided by its standard error with row i
  left out of the error variance (Belsley, Kuh & Welsch 1980); under the model it follows
  Student's t with n - p - 1 degrees of freedom, p the number of coefficients with the intercept;
- Cook's distance D_i (Cook 1977, Technometrics 19(1)): how far the coefficients move when row i
  is left out, in units of their joint confidence region.

A row is flagged as an *outlier* when its t_i is beyond chance among n rows (two-sided p-value
times n, the Bonferroni bound, below 0.05), and as *influential* when D_i exceeds the median of
the F distribution with p and n - p degrees of freedom (leaving it out moves the estimates to the
edge of their 50% confidence region; Cook 1977).
"""

from __future__ import annotations

__all__ = ["Influence", "UnusualRow", "influence", "MIN_RESIDUAL_DF", "OUTLIER_LEVEL"]

from dataclasses import dataclass

import numpy as np
from scipy import stats

# below this many residual degrees of freedom the measures say little (every row fits itself)
MIN_RESIDUAL_DF = 10
OUTLIER_LEVEL = 0.05  # Bonferroni-adjusted level for the outlier flag
_BLOCK_ROWS = 8192  # rows per block when forming leverages: no n x p copy of the data


@dataclass(frozen=True)
class UnusualRow:
    index: int  # position among the rows of the fit
    leverage: float
    studentized: float  # externally studentized residual (NaN where the leverage is 1)
    cooks: float
    outlier: bool
    influential: bool

    def reasons(self) -> list[str]:
        return [w for w, on in (("outlier", self.outlier), ("influential", self.influential)) if on]


@dataclass(frozen=True)
class Influence:
    """Per-row measures of one least-squares fit, with the thresholds used to flag rows."""

    leverage: np.ndarray  # (n,)
    studentized: np.ndarray  # (n,) externally studentized residuals
    cooks: np.ndarray  # (n,)
    n_coefficients: int  # p: rank of the kept columns plus the intercept
    cooks_limit: float  # median of F(p, n - p)
    outlier_p: np.ndarray  # (n,) Bonferroni-adjusted two-sided p-values, capped at 1

    def unusual(self) -> list[UnusualRow]:
        """Flagged rows, the most extreme first (outliers by |t|, then by Cook's distance)."""
        outlier, influential = self._masks()
        idx = np.flatnonzero(outlier | influential)
        rows = [
            UnusualRow(
                index=int(i),
                leverage=float(self.leverage[i]),
                studentized=float(self.studentized[i]),
                cooks=float(self.cooks[i]),
                outlier=bool(outlier[i]),
                influential=bool(influential[i]),
            )
            for i in idx
        ]
        return sorted(
            rows, key=lambda r: (not r.outlier, -abs(r.studentized) if r.outlier else -r.cooks)
        )

    def flags(self) -> list[str]:
        """One word list per row ("outlier", "influential", both or empty), for a sheet column."""
        outlier, influential = self._masks()
        return [
            ", ".join(w for w, on in (("outlier", o), ("influential", i)) if on)
            for o, i in zip(outlier.tolist(), influential.tolist())
        ]

    def _masks(self) -> tuple[np.ndarray, np.ndarray]:
        """(outlier, influential) per row, by the module's two rules (NaN counts as neither)."""
        return self.outlier_p < OUTLIER_LEVEL, self.cooks > self.cooks_limit


def influence(X: np.ndarray, y: np.ndarray) -> Influence | None:
    """Measures of the least-squares fit of y on [1, X] (X may have no columns).

    Collinear columns are allowed: the fit uses the rank of X (as a pseudo-inverse does).
    Returns None when fewer than MIN_RESIDUAL_DF residual degrees of freedom remain or the
    residuals are all zero.
    """
    X = np.asarray(X, dtype=float)
    y = np.asarray(y, dtype=float)
    n = len(y)
    if X.ndim != 2 or X.shape[0] != n:
        raise ValueError("X must be (n, k) with one row per response value")
    mean = X.mean(axis=0)
    sd = X.std(axis=0)
    sd[sd == 0] = 1.0  # a constant column carries nothing beyond the intercept; rank drops it
    yc = y - y.mean()
    # W with (Zc'Zc)^+ = W W': from the eigen-decomposition of the small k x k cross product
    W = np.zeros((X.shape[1], 0))
    if X.shape[1]:
        ZtZ = sum(Zb.T @ Zb for Zb in _blocks(X, mean, sd))
        vals, vecs = np.linalg.eigh(ZtZ)
        keep = (
            vals > vals.max() * X.shape[1] * np.finfo(float).eps * 10
            if vals.max() > 0
            else vals > 0
        )
        W = vecs[:, keep] / np.sqrt(vals[keep])
    rank = W.shape[1]
    p = rank + 1
    df_resid = n - p
    if df_resid < MIN_RESIDUAL_DF:
        return None
    leverage = np.empty(n)
    resid = np.empty(n)
    coef = W @ (W.T @ _cross(X, mean, sd, yc)) if rank else np.zeros(0)
    for a, Zb in zip(range(0, n, _BLOCK_ROWS), _blocks(X, mean, sd)):
        G = Zb @ W
        leverage[a : a + _BLOCK_ROWS] = 1.0 / n + np.einsum("ij,ij->i", G, G)
        resid[a : a + _BLOCK_ROWS] = yc[a : a + _BLOCK_ROWS] - (Zb @ coef if rank else 0.0)
    sse = float(resid @ resid)
    if not sse > 0:
        return None
    s2 = sse / df_resid
    one_minus_h = 1.0 - leverage
    fits_itself = one_minus_h < 1e-10
    safe = np.where(fits_itself, 1.0, one_minus_h)
    internal = resid / np.sqrt(s2 * safe)
    # leave-one-out error variance: (SSE - e_i^2 / (1 - h_i)) / (n - p - 1)
    loo_s2 = (sse - resid**2 / safe) / (df_resid - 1)
    studentized = resid / np.sqrt(np.maximum(loo_s2, np.finfo(float).tiny) * safe)
    cooks = internal**2 * leverage / (p * safe)
    studentized[fits_itself] = np.nan
    cooks[fits_itself] = np.nan
    p_two_sided = 2.0 * stats.t.sf(np.abs(studentized), df_resid - 1)
    outlier_p = np.minimum(p_two_sided * n, 1.0)
    outlier_p[fits_itself] = 1.0
    return Influence(
        leverage=leverage,
        studentized=studentized,
        cooks=cooks,
        n_coefficients=p,
        cooks_limit=float(stats.f.ppf(0.5, p, df_resid)),
        outlier_p=outlier_p,
    )


def _cross(X: np.ndarray, mean: np.ndarray, sd: np.ndarray, yc: np.ndarray) -> np.ndarray:
    """Zc' yc without forming Zc: (X - mean)/sd against centred y (yc sums to zero)."""
    return (X.T @ yc) / sd


def _blocks(X: np.ndarray, mean: np.ndarray, sd: np.ndarray):
    """The centred and scaled columns, a block of rows at a time."""
    for a in range(0, X.shape[0], _BLOCK_ROWS):
        yield (X[a : a + _BLOCK_ROWS] - mean) / sd
