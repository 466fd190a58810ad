"""A validation curve: held-out error along a penalty grid or along subset sizes."""

from __future__ import annotations

__all__ = ["ValidationCurve", "choose_index"]

from dataclasses import dataclass

import numpy as np


def choose_index(
    mean_error: np.ndarray, se: np.ndarray, rule: str, simpler_first: bool = True
) -> int:
    """Index of the chosen grid point.

    "min": smallest mean error. "one-se": the simplest model whose mean error is within one
    standard error of the minimum (common practice). ``simpler_first`` says the grid runs from
    the simplest model (largest penalty, smallest size) to the most complex.
    """
    finite = np.isfinite(mean_error)
    i_min = int(np.nanargmin(np.where(finite, mean_error, np.inf)))
    if rule == "min":
        return i_min
    limit = mean_error[i_min] + (se[i_min] if np.isfinite(se[i_min]) else 0.0)
    ok = np.flatnonzero(finite & (mean_error <= limit))
    return int(ok.min() if simpler_first else ok.max())


@dataclass
class ValidationCurve:
    """Mean held-out squared error per grid point, over all validation parts.

    ``grid`` holds penalties (decreasing, simplest first) or subset sizes (increasing).
    ``se`` is the standard error of the mean over parts: std(fold errors, ddof=1)/sqrt(parts).
    """

    grid: np.ndarray  # (L,)
    grid_kind: str  # "penalty" or "size"
    mean_error: np.ndarray  # (L,)
    se: np.ndarray  # (L,)
    n_selected: np.ndarray  # (L,) count of nonzero coefficients on all rows at that point
    part_errors: np.ndarray  # (parts, L) mean squared error of each held-out part
    index_min: int
    index_one_se: int
    scheme: str = "kfold"
    parts: int = 0

    def chosen(self, rule: str) -> int:
        return self.index_min if rule == "min" else self.index_one_se
