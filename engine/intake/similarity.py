"""Flag numeric columns that repeat another column.

Two columns that hold the same numbers (a copy pasted twice, a value in two units) make a
fit unstable and a selection arbitrary, so intake names them. A column is a near-duplicate of
the first earlier numeric column whose values are identical on the rows where both have a
value, or whose Pearson correlation over those rows exceeds 0.9999 in absolute value.

The pairwise-complete correlations are computed for all pairs at once with matrix products
(centred data, missing values as zero with a presence mask), so the cost is one pass of BLAS
rather than a Python loop over pairs. That pass grows with the square of the columns (a
300 x 12000 sheet took 11 s), so pairs of columns without gaps, the usual wide case, are first
screened: two such columns with |r| > 0.9999 have unit-length centred vectors u, v with
|u -+ v| < sqrt(2 (1 - 0.9999)) = d, so on any fixed direction g their projections differ by a
normal variable of spread at most d |g| / sqrt(n) for g of independent standard normal
entries. Projections on eight such directions that differ by more than 8 spreads on any one
(chance for a true pair: below 1e-15 per direction, the normal tail) rule a pair out; the few
pairs left are computed exactly.
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


# the screen of columns without gaps (module docstring): directions, and the spreads allowed
_DIRECTIONS = 8
_SPREADS = 8.0
# below this many gap-free columns the exact pass is as quick as the screen
_SCREEN_FROM = 1024


def mark_near_duplicates(columns: list[Column]) -> None:
    """Set `near_duplicate_of` and a note on each numeric column that repeats an earlier one."""
    numeric = [
        c for c in columns if c.kind in (ColumnKind.NUMBER, ColumnKind.FLAG) and not c.constant
    ]
    if len(numeric) < 2:
        return
    x = np.column_stack([c.values for c in numeric]).astype(np.float64)
    p = x.shape[1]
    first: dict[int, tuple[int, float]] = {}  # column -> (first earlier repeat, its r)

    def found(i: int, j: int, r: float) -> None:
        if i < j and (j not in first or i < first[j][0]):
            first[j] = (i, r)

    # These tall, thin products are fastest on one thread; several BLAS threads on a busy
    # machine were measured 30-100x slower.
    with one_blas_thread():
        centred = _Centred(x)
        whole = np.flatnonzero(centred.counts == centred.rows)
        screened = whole if whole.size >= _SCREEN_FROM else np.zeros(0, dtype=np.int64)
        exact = np.setdiff1d(np.arange(p), screened)  # every pair with one of these: exactly
        for j0 in range(0, exact.size, _BLOCK_COLUMNS):
            block = exact[j0 : j0 + _BLOCK_COLUMNS]
            # earlier columns, and the screened ones wherever they are (the screen leaves out
            # every pair with a gap column)
            others = np.union1d(np.arange(block.max() + 1), screened)
            corr, _ = centred.correlation(others, block)  # corr[i, jj]
            with np.errstate(invalid="ignore"):
                close = np.abs(corr) > NEAR_DUPLICATE_CORRELATION  # NaN: never
            for i, jj in zip(*np.nonzero(close)):
                a, b = sorted((int(others[i]), int(block[jj])))
                found(a, b, float(corr[i, jj]))
        for i, j, rij in _screened_pairs(centred, screened):
            found(i, j, rij)
    for j, (i, rij) in sorted(first.items()):
        _note_repeat(numeric[j], numeric[i], x, i, j, rij)


def _screened_pairs(centred: _Centred, cols: np.ndarray) -> list[tuple[int, int, float]]:
    """Pairs (i < j, r) of gap-free columns with |r| above the threshold, found by the
    projection screen (module docstring) and then computed exactly (r = u'v)."""
    if cols.size < 2:
        return []
    n = centred.rows
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        unit = centred.z[:, cols] / np.sqrt(centred.total_ss[cols])
    ok = np.isfinite(unit).all(axis=0)  # huge values: never flagged, as in the exact pass
    cols, unit = cols[ok], unit[:, ok]
    # fixed directions: the same sheet gives the same answer every time
    g = np.random.default_rng(0).standard_normal((n, _DIRECTIONS))
    proj = unit.T @ g  # (k, directions)
    d = np.sqrt(2.0 * (1.0 - NEAR_DUPLICATE_CORRELATION))
    tol = _SPREADS * d * np.linalg.norm(g, axis=0) / np.sqrt(n)
    # a mirror (r near -1) is a copy of the flipped column: flip every column to a positive
    # first projection, and keep both signs of those too close to zero to tell
    sign = np.where(proj[:, 0] < 0, -1.0, 1.0)
    both = np.flatnonzero(np.abs(proj[:, 0]) <= tol[0])
    owner = np.concatenate([np.arange(cols.size), both])
    points = np.concatenate([proj * sign[:, None], -proj[both] * sign[both, None]])
    order = np.argsort(points[:, 0], kind="stable")
    owner, points = owner[order], points[order]
    found: set[tuple[int, int]] = set()
    for step in range(1, owner.size):  # neighbours within tol on the first direction
        near = points[step:, 0] - points[:-step, 0] <= tol[0]
        if not near.any():
            break
        idx = np.flatnonzero(near)
        a, b = owner[idx], owner[idx + step]
        keep = (a != b) & np.all(np.abs(points[idx] - points[idx + step]) <= tol, axis=1)
        found.update(zip(np.minimum(a, b)[keep].tolist(), np.maximum(a, b)[keep].tolist()))
    if not found:
        return []
    a, b = (np.array(v, dtype=np.int64) for v in zip(*sorted(found)))
    r = np.einsum("ij,ij->j", unit[:, a], unit[:, b])
    close = np.abs(r) > NEAR_DUPLICATE_CORRELATION
    return [
        (int(cols[i]), int(cols[j]), float(rij)) for i, j, rij in zip(a[close], b[close], r[close])
    ]


def _note_repeat(col: Column, other: Column, x: np.ndarray, i: int, j: int, rij: float) -> None:
    both = ~np.isnan(x[:, i]) & ~np.isnan(x[:, j])
    if np.array_equal(x[both, i], x[both, j]):
        col.notes.append(f"same values as column '{other.name}'")
    else:
        col.notes.append(f"a straight-line copy of column '{other.name}' (correlation {rij:.6f})")
    col.near_duplicate_of = other.name
