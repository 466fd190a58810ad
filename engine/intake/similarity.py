"""Flag numeric columns that repeat another column.

Two columns that hold the same numbers (a copy pasted twice, a value in two units) make a
fit unstable and a selection arbitrary, so intake names them. A column is a near-duplicate of
the first earlier numeric column whose values are identical on the rows where both have a
value, or whose Pearson correlation over those rows exceeds 0.9999 in absolute value.

The pairwise-complete correlations are computed for all pairs at once with matrix products
(centred data, missing values as zero with a presence mask), so the cost is one pass of BLAS
rather than a Python loop over pairs.
"""

from __future__ import annotations

__all__ = ["NEAR_DUPLICATE_CORRELATION", "mark_near_duplicates", "pairwise_correlation"]

import numpy as np
from threadpoolctl import threadpool_limits

from engine.intake.table import Column, ColumnKind

NEAR_DUPLICATE_CORRELATION = 0.9999
_MIN_COMMON_ROWS = 3


def pairwise_correlation(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Correlation of every pair of columns of `x` (n x p, NaN missing) over their common rows.

    Returns (r, n_common), both p x p; r is NaN where a column is constant on the common rows
    or fewer than 3 rows are shared. Columns are centred on their own means first; the extra
    products that missing values need are only formed for the columns that have any.
    """
    rows, p = x.shape
    present = ~np.isnan(x)
    counts = present.sum(axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        means = np.where(
            counts > 0, np.where(present, x, 0.0).sum(axis=0) / np.maximum(counts, 1), 0.0
        )
    z = np.where(present, x - means, 0.0)
    sxy = z.T @ z
    total_ss = np.einsum("ij,ij->j", z, z)
    # s[i, j]: sum of column i over rows where j is present; ss likewise for squares.
    # Where j has no gap these are column i's own totals: 0 (centred) and its sum of squares.
    n = np.minimum.outer(counts, counts).astype(np.float64)
    s = np.zeros((p, p))
    ss = np.repeat(total_ss[:, None], p, axis=1)
    gaps = np.flatnonzero(counts < rows)
    if gaps.size:
        mask = present[:, gaps].astype(np.float64)
        s[:, gaps] = z.T @ mask
        ss[:, gaps] = (z * z).T @ mask
        both = present.T.astype(np.float64) @ mask
        n[:, gaps] = both
        n[gaps, :] = both.T
    # huge values (1e200) overflow the squares: those pairs come out NaN, i.e. never flagged
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        cov = sxy - s * s.T / n
        var_i = ss - s * s / n
        var_j = var_i.T
        r = cov / (
            np.sqrt(var_i) * np.sqrt(var_j)
        )  # square roots first: no overflow of the product
    # a variance that is rounding noise next to the sum of squares: constant on those rows
    tiny = (var_i <= 1e-12 * np.maximum(ss, 1e-300)) | (var_j <= 1e-12 * np.maximum(ss.T, 1e-300))
    r[tiny | (n < _MIN_COMMON_ROWS)] = np.nan
    return r, n


def mark_near_duplicates(columns: list[Column]) -> None:
    """Set `near_duplicate_of` and a note on each numeric column that repeats an earlier one."""
    numeric = [
        c for c in columns if c.kind in (ColumnKind.NUMBER, ColumnKind.FLAG) and not c.constant
    ]
    if len(numeric) < 2:
        return
    x = np.column_stack([c.values for c in numeric]).astype(np.float64)
    # These tall, thin products are fastest on one thread; several BLAS threads on a busy
    # machine were measured 30-100x slower.
    with threadpool_limits(limits=1, user_api="blas"):
        r, _ = pairwise_correlation(x)
    for j, col in enumerate(numeric):
        for i in range(j):
            rij = r[i, j]
            if not np.isfinite(rij) or abs(rij) <= NEAR_DUPLICATE_CORRELATION:
                continue
            other = numeric[i]
            both = ~np.isnan(x[:, i]) & ~np.isnan(x[:, j])
            if np.array_equal(x[both, i], x[both, j]):
                col.notes.append(f"same values as column '{other.name}'")
            else:
                col.notes.append(
                    f"a straight-line copy of column '{other.name}' (correlation {rij:.6f})"
                )
            col.near_duplicate_of = other.name
            break
