"""What intake hands to the rest of the engine: a sheet as typed columns plus a report.

Validate once, at the edge: everything behind intake trusts these objects.
"""

from __future__ import annotations

__all__ = ["ColumnKind", "SheetInfo", "Column", "Table"]

from dataclasses import dataclass, field
from enum import Enum
from pathlib import Path

import numpy as np


class ColumnKind(str, Enum):  # noqa: UP042 (str() of a member stays "ColumnKind.X")
    """What a column holds, as intake detected it."""

    NUMBER = "number"  # float64 values, NaN where missing
    CATEGORY = "category"  # a few repeated text labels (object array of str, None missing)
    DATE = "date"  # datetime64[ns] values, NaT where missing
    FLAG = "flag"  # yes/no, true/false, 0/1: float64 0.0/1.0, NaN missing
    IDENTIFIER = "identifier"  # text that is (almost) unique per row: codes, names, ids
    EMPTY = "empty"  # no value at all

    @property
    def words(self) -> str:
        """What the column holds, in a message's words ("holds {kind.words}")."""
        return _KIND_WORDS[self.value]


_KIND_WORDS = {
    "number": "numbers",
    "category": "category labels",
    "date": "dates",
    "flag": "yes/no values",
    "identifier": "text, nearly every cell different (labels or codes, not numbers)",
    "empty": "no values",
}


@dataclass(frozen=True)
class SheetInfo:
    name: str
    index: int  # 0-based position in the workbook
    hidden: bool = False  # hidden or "very hidden"


@dataclass
class Column:
    name: str  # unique within the table (duplicated headings get " (2)", " (3)" ...)
    heading: str  # the heading exactly as written in the sheet ("" if blank)
    letter: str  # spreadsheet column letter(s), "A", "AB"; for CSV the 1-based position
    kind: ColumnKind
    values: np.ndarray  # see ColumnKind for dtype per kind; one entry per data row
    missing: int = 0  # empty cells, error cells and unparseable text, counted together
    errors: int = 0  # spreadsheet error values (#N/A, #DIV/0! ...) among `missing`
    distinct: int = 0
    minimum: float | str | None = None  # numbers and dates (ISO text for dates)
    maximum: float | str | None = None
    constant: bool = False
    duplicate_of: str | None = None  # heading also used by this earlier column
    near_duplicate_of: str | None = None  # values (almost) equal to this earlier column
    text_numbers: int = 0  # numbers that were stored as text and parsed ("1,234.5", "12%")
    levels: list[str] = field(default_factory=list)  # category levels, most frequent first
    # a check-mark column ("x" or a tick beside blanks): its blank cells mean no (0.0), so
    # they are values, not missing, wherever the column is read (fit, scoring)
    blank_means: float | None = None
    notes: list[str] = field(default_factory=list)  # per-column warnings in plain words

    @property
    def is_numeric(self) -> bool:
        return self.kind in (ColumnKind.NUMBER, ColumnKind.FLAG)

    def missing_mask(self) -> np.ndarray:
        """True where the row has no usable value (NaN, NaT, None or empty text)."""
        v = self.values
        if v.dtype.kind == "f":
            return ~np.isfinite(v)
        if v.dtype.kind == "M":
            return np.isnat(v)
        return np.array(
            [x is None or (isinstance(x, float) and x != x) or x == "" for x in v], dtype=bool
        )


@dataclass
class Table:
    source: Path
    sheet: str  # sheet name; the file stem for CSV
    sheets: list[SheetInfo]
    header_row: int  # 1-based sheet row of the headings
    columns: list[Column]
    row_numbers: np.ndarray  # int64, 1-based sheet row of each data row (blank rows skipped)
    blank_rows_skipped: int = 0
    warnings: list[str] = field(default_factory=list)
    file_format: str = "xlsx"  # xlsx, xlsm, xls, ods, csv; "frame" for a DataFrame (read_frame)
    # how a text file was read, in words: {"encoding": "utf-8", "delimiter": "';'", "decimal mark": "','"}
    reading: dict[str, str] = field(default_factory=dict)

    @property
    def n_rows(self) -> int:
        return int(self.row_numbers.shape[0])

    def column(self, name: str) -> Column:
        """The column of this name; else the one whose name matches ignoring case and spacing,
        else the one whose heading does (its sub-heading joined to the name: "y" for "y (g)"),
        else (workbooks) the one in this column letter ("F")."""
        for c in self.columns:
            if c.name == name:
                return c
        folded = " ".join(name.split()).casefold()
        loose = [c for c in self.columns if " ".join(c.name.split()).casefold() == folded]
        if len(loose) == 1:
            return loose[0]
        # a heading whose unit or sub-heading row was joined to its name ("y" for "y (g)")
        by_heading = [c for c in self.columns if " ".join(c.heading.split()).casefold() == folded]
        if len(by_heading) == 1:
            return by_heading[0]
        if name.strip().isalpha() and self.file_format != "csv":
            for c in self.columns:
                if c.letter == name.strip().upper():
                    return c
        from engine.errors import InputProblem, Place

        known = ", ".join(c.name for c in self.columns[:12])
        more = f" and {len(self.columns) - 12} more" if len(self.columns) > 12 else ""
        raise InputProblem(
            f"no column named '{name}' in sheet '{self.sheet}' (header row {self.header_row}); "
            f"columns are: {known}{more}. If the headings are in another row, give that row "
            "as the header row",
            Place(file=str(self.source), sheet=self.sheet, column=name),
        )
