"""Column centring and scaling to unit population standard deviation.

Every penalized fit works on z_ij = (x_ij - mean_j) / sd_j with the population standard
deviation (divisor n), as in the penalty convention of Friedman, Hastie & Tibshirani (2010,
J. Stat. Software 33(1)). A column whose values are all equal has no scale: it gets sd = 1,
a zero column in Z, and is reported in the ``constant`` mask.
"""

from __future__ import annotations

__all__ = ["Standardized", "standardize", "column_moments"]

from dataclasses import dataclass

import numpy as np

# Rows per block when walking a large matrix, so temporaries stay small next to the data.
_BLOCK_ROWS = 8192
_BLOCK_CELLS = 1 << 19  # 4 MB of float64 per temporary block


@dataclass
class Standardized:
    """Standardized data Z (n, p), centred response yc (n,) and what undoes them."""

    Z: np.ndarray  # (n, p) centred columns divided by their population sd
    yc: np.ndarray | None  # (n,) response minus its mean, or None when no response was given
    means: np.ndarray  # (p,) column means, original units
    sds: np.ndarray  # (p,) population standard deviations; 1.0 where the column is constant
    y_mean: float  # mean of the response (0.0 when none was given)
    constant: np.ndarray  # (p,) bool: the column has a single value on these rows

    def to_original(self, std_coef: np.ndarray) -> tuple[np.ndarray, np.ndarray | float]:
        """Coefficients b = beta / sd and intercept ybar - b'mean; accepts (p,) or (L, p)."""
        coef = np.asarray(std_coef) / self.sds
        intercept = self.y_mean - coef @ self.means
        return coef, intercept


def column_moments(
    X: np.ndarray, rows: np.ndarray | None = None
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Means, population sds and a constant-column mask of ``X[rows]`` without copying X.

    Works in row blocks (two passes: mean, then squared deviations), so memory stays at one
    block however tall X is. A column is constant when its largest and smallest value agree
    exactly; such columns get sd = 1.
    """
    X = np.asarray(X, dtype=float)
    n_all, p = X.shape
    idx = np.arange(n_all) if rows is None else np.asarray(rows)
    n = idx.shape[0]
    if n == 0:
        raise ValueError("no rows to standardize")
    total = np.zeros(p)
    hi = np.full(p, -np.inf)
    lo = np.full(p, np.inf)
    ss = np.zeros(p)
    # blocks of about _BLOCK_CELLS cells, whole rows where that leaves at least 256 of them
    # (contiguous memory reduces several times faster than column slices), so wide data
    # stay light too
    step = min(n, _BLOCK_ROWS, max(256, _BLOCK_CELLS // p))
    width = min(p, max(1, _BLOCK_CELLS // step))
    for c0 in range(0, p, width):
        cols = slice(c0, min(c0 + width, p))
        for start in range(0, n, step):
            block = _rows(X, idx, rows is None, start, min(start + step, n), cols)
            total[cols] += block.sum(axis=0)
            np.maximum(hi[cols], block.max(axis=0), out=hi[cols])
            np.minimum(lo[cols], block.min(axis=0), out=lo[cols])
    means = total / n
    for c0 in range(0, p, width):
        cols = slice(c0, min(c0 + width, p))
        for start in range(0, n, step):
            block = _rows(X, idx, rows is None, start, min(start + step, n), cols)
            block = block - means[cols]
            ss[cols] += np.einsum("ij,ij->j", block, block)
    constant = hi == lo
    sds = np.sqrt(ss / n)
    sds[constant] = 1.0
    # a constant column's mean is its value exactly (no rounding from the sum)
    means[constant] = hi[constant]
    return means, sds, constant


def _rows(X: np.ndarray, idx: np.ndarray, all_rows: bool, a: int, b: int, cols) -> np.ndarray:
    return X[a:b, cols] if all_rows else X[idx[a:b], cols]


def standardize(X: np.ndarray, y: np.ndarray | None = None) -> Standardized:
    """Centre each column and divide by its population sd (divisor n); centre y.

    X: (n, p) float matrix; y: optional (n,) response. Returns a new Z (the input is not
    modified). Constant columns give zero columns of Z and sd = 1 (see ``constant``).
    """
    X = np.asarray(X, dtype=float)
    if X.ndim != 2:
        raise ValueError(f"X must be a 2-D matrix, got shape {X.shape}")
    means, sds, constant = column_moments(X)
    Z = (X - means) / sds
    Z[:, constant] = 0.0
    if y is None:
        return Standardized(Z, None, means, sds, 0.0, constant)
    y = np.asarray(y, dtype=float).ravel()
    if y.shape[0] != X.shape[0]:
        raise ValueError(f"y has {y.shape[0]} values but X has {X.shape[0]} rows")
    y_mean = float(y.mean())
    return Standardized(Z, y - y_mean, means, sds, y_mean, constant)
