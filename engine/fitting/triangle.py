"""The triangle R of a QR factorization of a tall matrix (no Q), computed in row blocks.

Least squares on many more rows than columns can run on R alone: |b - A c| and |Q'b - R c|
differ by the same amount for every c when b is appended to A as its last column. The
blocks (tall-skinny QR: the triangles of row blocks, stacked and factored again) keep each
factorization in cache: measured 0.10 s against 0.23 s for 18000 x 109 in one call, one
thread. R is unique up to the signs of its rows, which no use here depends on.
"""

from __future__ import annotations

__all__ = ["qr_triangle"]

import numpy as np

# rows per block: a few thousand rows of ~100 columns stay in the second-level cache
_BLOCK_ROWS = 2048


def qr_triangle(A: np.ndarray) -> np.ndarray:
    """R (min(n, p) x p, upper triangular) with A = QR for some Q with orthonormal columns."""
    n = A.shape[0]
    if n <= 2 * _BLOCK_ROWS:
        return _r(A)
    return _r(np.vstack([_r(A[i : i + _BLOCK_ROWS]) for i in range(0, n, _BLOCK_ROWS)]))


def _r(A: np.ndarray) -> np.ndarray:
    return np.asarray(np.linalg.qr(A, mode="r"))
