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

from engine.blas_threads import one_blas_thread
from engine.intake.table import Column, ColumnKind

NEAR_DUPLICATE_CORRELATION = 0.9999
_MIN_COMMON_ROWS = 3


def pairwise_correlation(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Correlation of every pair of columns of `x` (n x p, NaN missing) over their common rows.

    Returns (r, n_common), both p x p; r is NaN where a column is constant on the common rows
    or fewer than 3 rows are shared. Columns are centred on their own means first; the extra
    products that missing values need are only formed for the columns that have any.
    """
    centred = _Centred(x)
    every = np.arange(x.shape[1])
    return centred.correlation(every, every)


class _Centred:
    """Columns centred on their own means, missing values as zero, with a presence mask."""

    def __init__(self, x: np.ndarray):
        self.rows = x.shape[0]
        self.present = ~np.isnan(x)
        self.counts = self.present.sum(axis=0)
        # columns of huge values (1e300) overflow to inf here and come out NaN, unflagged
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            means = np.where(
                self.counts > 0,
                np.where(self.present, x, 0.0).sum(axis=0) / np.maximum(self.counts, 1),
                0.0,
            )
            self.z = np.where(self.present, x - means, 0.0)
            self.total_ss = np.einsum("ij,ij->j", self.z, self.z)

    def _over_rows_of(self, a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """s[i, j], ss[i, j]: sum and sum of squares of column a[i] over the rows where column
        b[j] has a value. Where b[j] has no gap these are a[i]'s own totals: 0 (centred) and
        its sum of squares."""
        s = np.zeros((a.size, b.size))
        ss = np.repeat(self.total_ss[a][:, None], b.size, axis=1)
        gaps = np.flatnonzero(self.counts[b] < self.rows)
        if gaps.size:
            mask = self.present[:, b[gaps]].astype(np.float64)
            za = self.z[:, a]
            with np.errstate(over="ignore", invalid="ignore"):  # huge values: see correlation
                s[:, gaps] = za.T @ mask
                ss[:, gaps] = (za * za).T @ mask
        return s, ss

    def correlation(self, a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Pairwise-complete correlation (and common rows) of columns a[i] with columns b[j]."""
        with np.errstate(over="ignore", invalid="ignore"):  # huge values: NaN pairs below
            sxy = self.z[:, a].T @ self.z[:, b]
        if (self.counts[a] < self.rows).any() or (self.counts[b] < self.rows).any():
            n = self.present[:, a].T.astype(np.float64) @ self.present[:, b].astype(np.float64)
        else:
            n = np.full((a.size, b.size), float(self.rows))
        s_ab, ss_ab = self._over_rows_of(a, b)
        s_ba, ss_ba = self._over_rows_of(b, a)
        # huge values (1e200) overflow the squares: those pairs come out NaN, never flagged
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            cov = sxy - s_ab * s_ba.T / n
            var_a = ss_ab - s_ab * s_ab / n
            var_b = (ss_ba - s_ba * s_ba / n.T).T
            r = cov / (np.sqrt(var_a) * np.sqrt(var_b))  # roots first: no overflow
        # a variance that is rounding noise next to the sum of squares: constant on those rows
        tiny = (var_a <= 1e-12 * np.maximum(ss_ab, 1e-300)) | (
            var_b <= 1e-12 * np.maximum(ss_ba.T, 1e-300)
        )
        r[tiny | (n < _MIN_COMMON_ROWS)] = np.nan
        return r, n


# columns compared at a time with all earlier ones (memory: a few rows-by-this and
# this-by-columns arrays, not columns-by-columns)
_BLOCK_COLUMNS = 512


def mark_near_duplicates(columns: list[Column]) -> None:
    """Set `near_duplicate_of` and a note on each numeric column that repeats an earlier one."""
    numeric = [
        c for c in columns if c.kind in (ColumnKind.NUMBER, ColumnKind.FLAG) and not c.constant
    ]
    if len(numeric) < 2:
        return
    x = np.column_stack([c.values for c in numeric]).astype(np.float64)
    p = x.shape[1]
    # These tall, thin products are fastest on one thread; several BLAS threads on a busy
    # machine were measured 30-100x slower.
    with one_blas_thread():
        centred = _Centred(x)
        for j0 in range(0, p, _BLOCK_COLUMNS):
            block = np.arange(j0, min(p, j0 + _BLOCK_COLUMNS))
            earlier = np.arange(block[-1] + 1)
            r, _ = centred.correlation(earlier, block)  # r[i, j - j0]
            with np.errstate(invalid="ignore"):
                close = np.abs(r) > NEAR_DUPLICATE_CORRELATION  # NaN: never
            close &= earlier[:, None] < block[None, :]
            for jj in np.flatnonzero(close.any(axis=0)).tolist():
                i = int(np.argmax(close[:, jj]))  # the first earlier column
                _note_repeat(numeric[block[jj]], numeric[i], x, i, int(block[jj]), r[i, jj])


def _note_repeat(col: Column, other: Column, x: np.ndarray, i: int, j: int, rij: float) -> None:
    both = ~np.isnan(x[:, i]) & ~np.isnan(x[:, j])
    if np.array_equal(x[both, i], x[both, j]):
        col.notes.append(f"same values as column '{other.name}'")
    else:
        col.notes.append(f"a straight-line copy of column '{other.name}' (correlation {rij:.6f})")
    col.near_duplicate_of = other.name
