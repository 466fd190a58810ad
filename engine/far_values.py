"""Cells far outside the rest of their column, named before anything is fitted.

A value beyond Tukey's outer fences (Tukey 1977, Exploratory Data Analysis: below Q1 - 3 IQR or
above Q3 + 3 IQR, "far out") is rare in well-behaved data. A few of them in one column look like a
slipped decimal point or a value typed in another unit, and least squares and every penalized fit
follow them; many in one column are a long tail instead, which a log scale often suits.

Quartiles are numpy's default (linear interpolation between order statistics); a column whose
quartiles coincide (mostly one value, or a 0/1 column) has no spread to judge by and is skipped.
"""

from __future__ import annotations

__all__ = ["FarValue", "FarScreen", "far_values", "screen_far_values", "FENCE"]

import math
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from engine.design import Design
from engine.intake.cells import cell_name

FENCE = 3.0  # interquartile ranges beyond the quartiles: Tukey's outer fences
_NAMED = 6  # cells named in the note; the count says how many more


@dataclass(frozen=True)
class FarValue:
    column: str  # the model column (or the response) as the models see it
    source: str  # the sheet column it comes from
    row: int  # sheet row
    cell: str  # "C12" (for CSV "row 12, column 3")
    value: float  # as the models see it (the ln for a logged column)

    def to_json(self) -> dict:
        return {"column": self.column, "cell": self.cell, "row": self.row, "value": self.value}


@dataclass(frozen=True)
class FarScreen:
    sheet: str
    cells: list[FarValue]  # isolated far-out cells, column by column
    tails: list[tuple[str, int]]  # (column, far-out values) of positive long-tailed columns

    def notes(self) -> list[str]:
        """Warnings: the isolated cells by name, then the long-tailed columns."""
        notes = []
        if self.cells:
            named = [f"'{f.column}' in {f.cell} ({f.value:.6g})" for f in self.cells[:_NAMED]]
            more = len(self.cells) - len(named)
            notes.append(
                f"Cells of sheet '{self.sheet}' far outside the rest of their column (beyond "
                f"{FENCE:g} interquartile ranges past the quartiles, Tukey's far-out values): "
                + ", ".join(named)
                + (f" and {more} more" if more else "")
                + ". A slipped decimal point or a value in another unit looks like this, and "
                "every fit follows such values; check those cells."
            )
        if self.tails:
            notes.append(
                "Number columns with many values far above or below the rest (a long tail): "
                + ", ".join(f"'{name}' ({count} rows)" for name, count in self.tails)
                + ". Their natural log (--log COLUMN) often suits such a column better; "
                "otherwise its few largest values weigh heavily in every fit."
            )
        return notes


def _isolated_limit(n: int) -> int:
    """More far-out values than this in one column read as a tail rather than slips."""
    return max(3, math.ceil(0.01 * n))


def far_values(values: np.ndarray, fence: float = FENCE) -> np.ndarray:
    """Positions of the values beyond the fences (empty when the quartiles coincide).

    In a column without negative values a positive value must also be far out on the log
    scale: such a column (rainfall, sales of many sizes) often has a long upper tail of true
    values, while a slipped decimal point stands apart on both scales."""
    v = np.asarray(values, dtype=float)
    far = _beyond_fences(v, fence)
    if len(far) and np.nanmin(v) >= 0:
        with np.errstate(divide="ignore"):
            logged = np.where(v > 0, np.log(np.where(v > 0, v, 1.0)), np.nan)
        far_logged = _beyond_fences(logged, fence)
        far = far[(v[far] <= 0) | np.isin(far, far_logged)]
    return far


def _beyond_fences(v: np.ndarray, fence: float) -> np.ndarray:
    finite = np.isfinite(v)
    if finite.sum() < 8:
        return np.zeros(0, dtype=int)
    q1, q3 = np.percentile(v[finite], [25, 75])
    iqr = q3 - q1
    if not iqr > 0:
        return np.zeros(0, dtype=int)
    with np.errstate(invalid="ignore"):
        return np.flatnonzero(finite & ((v < q1 - fence * iqr) | (v > q3 + fence * iqr)))


def screen_far_values(design: Design, letters: Mapping[str, str]) -> FarScreen:
    """Far-out cells of the response and the number candidates of ``design``: isolated ones
    by cell, and the columns with so many that they form a long tail.

    ``letters`` maps each source column to its sheet letter (for cell names)."""
    n = design.n_rows
    columns: list[tuple[str, str, bool, np.ndarray]] = [
        (design.response_label, design.response, design.response_log, design.y)
    ]
    for j, e in enumerate(design.encodings):
        if e.kind in ("number", "ln"):
            columns.append((e.name, e.source, e.kind == "ln", design.X[:, j]))
    cells: list[FarValue] = []
    tails: list[tuple[str, int]] = []
    for name, source, logged, v in columns:
        beyond = _beyond_fences(v, FENCE)
        if len(beyond) > _isolated_limit(n):
            if not logged and np.nanmin(v) > 0:
                tails.append((name, len(beyond)))
            continue
        for i in far_values(v):
            row = int(design.row_numbers[i])
            cells.append(
                FarValue(name, source, row, cell_name(letters.get(source, "?"), row), float(v[i]))
            )
    return FarScreen(design.sheet, cells, tails)
