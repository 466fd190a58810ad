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

from engine.intake.table import Column, ColumnKind

NEAR_DUPLICATE_CORRELATION = 0.9999
_MIN_COMMON_ROWS = 3


def pairwise_correlation(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Correlation of every pair of columns of `x` (n x p, NaN missing) over their common rows.

    Returns (r, n_common), both p x p; r is NaN where a column is constant on the common rows
    or fewer than 3 rows are shared.
    """
    present = ~np.isnan(x)
    m = present.astype(np.float64)
    means = np.nanmean(np.where(present, x, np.nan), axis=0)
    z = np.where(present, x - means, 0.0)
    n = m.T @ m
    s = (
        z.T @ m
    )  # s[i, j]: sum of column i over rows where j is present (and i, since z=0 elsewhere)
    ss = (z * z).T @ m
    sxy = z.T @ z
    with np.errstate(invalid="ignore", divide="ignore"):
        cov = sxy - s * s.T / n
        var_i = ss - s * s / n
        var_j = var_i.T
        r = cov / np.sqrt(var_i * var_j)
    # variance near zero relative to the sum of squares is rounding noise: the column is constant there
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
                    f"almost the same as column '{other.name}' (correlation {rij:.6f})"
                )
            col.near_duplicate_of = other.name
            break
