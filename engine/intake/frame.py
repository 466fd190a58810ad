"""A table a Python user already holds (a pandas DataFrame) read as a sheet would be.

Each column's cells go through the same classification as a workbook's, so a frame and the
workbook it came from give the same kinds, levels and notes. Rows are numbered as on a sheet
whose headings are in row 1 (the frame's first row is row 2) and columns get letters A, B, ...,
so messages name cells the way they would in the saved workbook.
"""

from __future__ import annotations

__all__ = ["read_frame"]

import datetime as _dt
import math
from pathlib import Path

import numpy as np

from engine.errors import InputProblem
from engine.intake.cells import column_letter, numbered_name, repeated_headings_warning
from engine.intake.classify import classify_column
from engine.intake.table import SheetInfo, Table


def _cell(value: object) -> object:
    """One value as the cell reader would hand it over ("" for a missing one)."""
    if value is None:
        return ""
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, (int, float, np.integer, np.floating)):
        x = float(value)
        return "" if math.isnan(x) else x
    if isinstance(value, np.datetime64):
        if np.isnat(value):
            return ""
        value = value.astype("datetime64[us]").item()
    if hasattr(value, "to_pydatetime"):  # a pandas Timestamp (NaT never gets here: the caller
        # took pandas' missing markers out)
        value = value.to_pydatetime()
    if isinstance(value, _dt.datetime) and value.tzinfo is not None:
        # a time-zone-aware stamp: its wall-clock time there, as a sheet would show it (not
        # converted to UTC, which can move a date to the day before)
        value = value.replace(tzinfo=None)
    if isinstance(value, _dt.datetime | _dt.date):
        return value
    return str(value)


def read_frame(frame, name: str = "DataFrame") -> Table:
    """A pandas DataFrame (or anything with ``columns`` and ``__getitem__`` by column) as a
    Table; ``name`` stands for the sheet in messages."""
    columns = getattr(frame, "columns", None)
    if columns is None:
        raise TypeError(
            f"expected a pandas DataFrame or an intake Table (got {type(frame).__name__})"
        )
    headings = [str(c) for c in columns]
    if not headings:
        raise InputProblem(f"the table '{name}' has no columns")
    n = len(frame)
    row_numbers = np.arange(2, n + 2, dtype=np.int64)
    out = []
    taken: set[str] = set()
    renamed: list[str] = []
    for j, heading in enumerate(headings):
        # by position: a label used twice would give a table, not a column
        values = frame.iloc[:, j] if hasattr(frame, "iloc") else frame[columns[j]]
        listed = values.tolist() if hasattr(values, "tolist") else list(values)
        # pandas marks missing values its own ways (NaT, NA, NaN): one call per column
        missing = values.isna().to_numpy() if hasattr(values, "isna") else np.zeros(n, bool)
        cells = np.empty(n, dtype=object)
        cells[:] = ["" if gone else _cell(v) for v, gone in zip(listed, missing)]
        col_name = numbered_name(heading, taken)
        taken.add(col_name.casefold())
        col = classify_column(
            cells, name=col_name, heading=heading, letter=column_letter(j), row_numbers=row_numbers
        )
        if col_name != heading:  # a label used twice: said, as the sheet reader says it
            col.notes.insert(
                0, f"heading '{heading}' is also used by an earlier column; renamed '{col_name}'"
            )
            renamed.append(f"column {j + 1} '{col_name}'")
        out.append(col)
    return Table(
        source=Path(name),
        sheet=name,
        sheets=[SheetInfo(name=name, index=0, hidden=False)],
        header_row=1,
        columns=out,
        row_numbers=row_numbers,
        file_format="frame",
        warnings=[w for w in (repeated_headings_warning(renamed),) if w],
    )
