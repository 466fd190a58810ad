"""The design matrix: from an intake table and chosen roles to a float matrix, response and encodings.

Placeholder contract; the builder ``build_design`` lands with the study module.
"""

from __future__ import annotations

__all__ = ["Encoding", "Design"]

from dataclasses import dataclass, field

import numpy as np


@dataclass(frozen=True)
class Encoding:
    """How one model column is computed from one source column (also drives scoring formulas).

    kind:
      "number"   the cell value itself
      "flag"     1.0 for a yes/true/1 cell, 0.0 for no/false/0 (tokens in engine.intake.cells)
      "level"    1.0 when the cell's text equals ``level``, else 0.0 (one-hot against a reference)
      "trend"    days since ``origin`` (ISO date) for a date column
      "month"    1.0 when the date's month number equals int(level)
      "weekday"  1.0 when the date's ISO weekday (1=Monday) equals int(level)
      "missing"  1.0 when the source cell is missing, else 0.0 (missing policy "fill")
    ``fill``: the value used for a missing source cell (median on the rows used) under policy
    "fill"; None under policy "drop".
    """

    name: str
    source: str
    letter: str
    kind: str
    level: str | None = None
    fill: float | None = None
    origin: str | None = None
    reference: str | None = None  # the reference level left out, for "level" encodings


@dataclass
class Design:
    source: str
    sheet: str
    header_row: int
    response: str
    names: list[str]  # model columns, in order
    encodings: list[Encoding]  # one per model column, same order
    X: np.ndarray  # (n, p) float64
    y: np.ndarray  # (n,) float64
    row_numbers: np.ndarray  # (n,) 1-based sheet row of each row used
    means: np.ndarray  # (p,) column means on the rows used
    sds: np.ndarray  # (p,) population standard deviations (divisor n) on the rows used
    rows_dropped: int = 0
    drop_reasons: dict[str, int] = field(default_factory=dict)  # reason -> rows
    groups: np.ndarray | None = None  # (n,) group labels for grouped folds
    order: np.ndarray | None = None  # (n,) float time order for blocked folds
    focal_index: int | None = None  # index into names of the focal column
    dropped_columns: dict[str, str] = field(default_factory=dict)  # column -> why it was left out
    category_levels: dict[str, list[str]] = field(default_factory=dict)  # source -> all levels, reference first
    warnings: list[str] = field(default_factory=list)

    @property
    def n_rows(self) -> int:
        return int(self.X.shape[0])

    @property
    def n_cols(self) -> int:
        return int(self.X.shape[1])

    @property
    def y_mean(self) -> float:
        return float(self.y.mean())
