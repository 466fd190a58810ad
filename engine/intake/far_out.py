"""Far-out values of a number column: Tukey's outer fences (Tukey 1977, Exploratory Data
Analysis: below Q1 - 3 IQR or above Q3 + 3 IQR, "far out").

Rare in well-behaved data; a few in one column look like a slipped decimal point or a value
typed in another unit. Quartiles are numpy's default (linear interpolation between order
statistics); a column whose quartiles coincide (mostly one value, a 0/1 column) has no spread to
judge by and gets none.
"""

from __future__ import annotations

__all__ = ["FENCE", "far_values", "beyond_fences", "screened"]

import numpy as np

from engine.intake.notes import Finding, finding_of

FENCE = 3.0  # interquartile ranges beyond the quartiles: Tukey's outer fences


def screened(notes: list[str]) -> bool:
    """Whether a column with these intake notes is looked at for far-out values: not when intake
    put in values for results beyond a limit ("<0.5" read as 0.25), whose far values are its
    own substitutes, already named, not slips."""
    return not any(finding_of(note) is Finding.LIMIT_SUBSTITUTES for note in notes)


def far_values(values: np.ndarray, fence: float = FENCE) -> np.ndarray:
    """Positions of the values beyond the fences (empty when the quartiles coincide).

    In a column without negative values a positive value must also be far out on the log
    scale: such a column (rainfall, sales of many sizes) often has a long upper tail of true
    values, while a slipped decimal point stands apart on both scales."""
    v = np.asarray(values, dtype=float)
    far = beyond_fences(v, fence)
    if len(far) and np.nanmin(v) >= 0:
        with np.errstate(divide="ignore"):
            logged = np.where(v > 0, np.log(np.where(v > 0, v, 1.0)), np.nan)
        far_logged = beyond_fences(logged, fence)
        far = far[(v[far] <= 0) | np.isin(far, far_logged)]
    return far


def beyond_fences(v: np.ndarray, fence: float) -> np.ndarray:
    finite = np.isfinite(v)
    if finite.sum() < 8:
        return np.zeros(0, dtype=int)
    q1, q3 = np.percentile(v[finite], [25, 75])
    iqr = q3 - q1
    if not iqr > 0:
        return np.zeros(0, dtype=int)
    with np.errstate(invalid="ignore"):
        return np.flatnonzero(finite & ((v < q1 - fence * iqr) | (v > q3 + fence * iqr)))
