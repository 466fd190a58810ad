"""Cells far outside the rest of their column (engine.intake.far_out, Tukey's outer fences), in
the response and the number candidates of a design, named before anything is fitted.

A few in one column look like slips, and least squares and every penalized fit follow them; many
in one column are a long tail instead, which a log scale often suits.
"""

from __future__ import annotations

__all__ = ["FarValue", "FarScreen", "screen_far_values"]

import math
from collections.abc import Collection, Mapping
from dataclasses import dataclass

import numpy as np

from engine.design import Design
from engine.intake.cells import cell_name
from engine.intake.far_out import FENCE, beyond_fences, far_values

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


def screen_far_values(
    design: Design, letters: Mapping[str, str], skip: Collection[str] = ()
) -> FarScreen:
    """Far-out cells of the response and the number candidates of ``design``: isolated ones
    by cell, and the columns with so many that they form a long tail.

    ``letters`` maps each source column to its sheet letter (for cell names); ``skip``: source
    columns not to look at (values intake put in for results beyond a limit)."""
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
        if source in skip:
            continue
        beyond = beyond_fences(v, FENCE)
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
