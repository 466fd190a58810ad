"""Large tables written straight into our sheet XML.

xlsxwriter spends about 50 microseconds per cell; a path of 2,000 columns x 100 penalties and
fitted values or predictions for 100,000 rows are over half a million cells. The sheet modules
register such blocks here and the package merge splices their rows into the sheet's <sheetData>
(rows in order, ECMA-376 Part 1, 18.3.1.73) when it rewrites our sheet part anyway.

Two kinds of block: a numeric matrix (``add``), and columns of their own kinds (``add_columns``:
numbers, or text written as inline strings, ECMA-376 Part 1, 18.3.1.4 with t="inlineStr"),
each optionally with a cell style (an xlsxwriter format's index, ``style_index``). Numbers are
written with Python's shortest round-trip representation (exact doubles); NaN and infinities
leave the cell empty, as does a text of None.
"""

from __future__ import annotations

__all__ = ["BulkSheet", "NumberColumn", "TextColumn", "style_index"]

import math
import re
from collections.abc import Sequence
from dataclasses import dataclass, field
from xml.sax.saxutils import escape

import numpy as np
from xlsxwriter.utility import xl_col_to_name, xl_rowcol_to_cell


@dataclass
class _Block:
    first_row: int  # 0-based
    first_col: int
    values: np.ndarray  # (rows, cols) float

    @property
    def n_rows(self) -> int:
        return int(self.values.shape[0])

    @property
    def n_cols(self) -> int:
        return int(self.values.shape[1])

    def rows_xml(self, styles: dict[int, int]) -> str:  # numbers only: no style to follow
        letters = [xl_col_to_name(self.first_col + j) for j in range(self.n_cols)]
        finite = np.isfinite(self.values)
        out = []
        for i, row in enumerate(self.values.tolist()):
            r = self.first_row + i + 1
            if finite[i].all():
                cells = "".join([f'<c r="{c}{r}"><v>{v!r}</v></c>' for c, v in zip(letters, row)])
            else:
                cells = "".join(
                    [
                        f'<c r="{c}{r}"><v>{v!r}</v></c>'
                        for c, v in zip(letters, row)
                        if math.isfinite(v)
                    ]
                )
            out.append(f'<row r="{r}">{cells}</row>')
        return "".join(out)


def style_index(fmt) -> int | None:
    """The cell style index of an xlsxwriter format (None: the default style). Asking for it
    registers the format in the workbook's styles, as writing a cell with it would."""
    return None if fmt is None else int(fmt._get_xf_index())


@dataclass
class NumberColumn:
    values: np.ndarray  # (rows,) float; NaN leaves the cell empty
    style: int | None = None


@dataclass
class TextColumn:
    values: Sequence[str | None]  # None leaves the cell empty
    style: int | None = None


# characters XML 1.0 cannot hold, and an underscore that would read as such an escape: written
# as _xHHHH_ (ECMA-376 Part 1, 22.9.2.19, ST_Xstring), as spreadsheet programs read them
_NOT_XML = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff]|_(?=x[0-9A-Fa-f]{4}_)")


def _xstring(text: str) -> str:
    return escape(_NOT_XML.sub(lambda m: f"_x{ord(m.group()):04X}_", text))


@dataclass
class _Columns:
    first_row: int
    first_col: int
    columns: list[NumberColumn | TextColumn]

    @property
    def n_rows(self) -> int:
        return len(self.columns[0].values) if self.columns else 0

    @property
    def n_cols(self) -> int:
        return len(self.columns)

    def rows_xml(self, styles: dict[int, int]) -> str:
        # each column's cells as text first, then joined row by row
        per_col: list[list[str]] = []
        for j, col in enumerate(self.columns):
            letter = xl_col_to_name(self.first_col + j)
            style = "" if col.style is None else f' s="{styles.get(col.style, col.style)}"'
            cells: list[str] = []
            if isinstance(col, NumberColumn):
                vals = np.asarray(col.values, dtype=float)
                finite = np.isfinite(vals)
                # whole numbers (row numbers, counts) as integers: "12", not "12.0"
                with np.errstate(invalid="ignore"):
                    whole = finite & (vals == np.round(vals)) & (np.abs(vals) < 2**53)
                for i, (v, good, w) in enumerate(
                    zip(vals.tolist(), finite.tolist(), whole.tolist())
                ):
                    r = self.first_row + i + 1
                    shown = int(v) if w else v
                    cells.append(f'<c r="{letter}{r}"{style}><v>{shown!r}</v></c>' if good else "")
            else:
                for i, t in enumerate(col.values):
                    r = self.first_row + i + 1
                    cells.append(
                        ""
                        if t is None
                        else f'<c r="{letter}{r}"{style} t="inlineStr"><is>'
                        f'<t xml:space="preserve">{_xstring(str(t))}</t></is></c>'
                    )
            per_col.append(cells)
        out = []
        for i, row in enumerate(zip(*per_col)):
            out.append(f'<row r="{self.first_row + i + 1}">{"".join(row)}</row>')
        return "".join(out)


@dataclass
class BulkSheet:
    """Blocks of rows of one sheet, to be spliced into its XML after xlsxwriter wrote the rest."""

    blocks: list[_Block | _Columns] = field(default_factory=list)

    def add(self, first_row: int, first_col: int, values: np.ndarray) -> None:
        v = np.asarray(values, dtype=float)
        if v.ndim == 1:
            v = v[:, None]
        if v.size:
            self.blocks.append(_Block(first_row, first_col, v))

    def add_columns(
        self, first_row: int, first_col: int, columns: list[NumberColumn | TextColumn]
    ) -> None:
        """Columns side by side from (first_row, first_col), all of the same length."""
        lengths = {len(c.values) for c in columns}
        if len(lengths) > 1:
            raise ValueError(f"columns of different lengths {sorted(lengths)}")
        if columns and lengths.pop():
            self.blocks.append(_Columns(first_row, first_col, list(columns)))

    def styles(self) -> set[int]:
        """The cell style numbers the blocks use (for the package merge to carry over)."""
        return {
            c.style
            for b in self.blocks
            if isinstance(b, _Columns)
            for c in b.columns
            if c.style is not None
        }

    def inject(self, xml: str, styles: dict[int, int] | None = None) -> str:
        """Return the sheet XML with every block's rows in place and the dimension widened.

        ``styles``: our cell style numbers as renumbered by the merge into the user's
        workbook (empty or None: unchanged); the styles of added cells follow it.
        """
        if not self.blocks:
            return xml
        if "<sheetData/>" in xml:
            xml = xml.replace("<sheetData/>", "<sheetData></sheetData>", 1)
        start = xml.index("<sheetData>") + len("<sheetData>")
        end = xml.index("</sheetData>")
        existing = [
            (int(m.group(1)), start + m.start())
            for m in re.finditer(r'<row r="(\d+)"', xml[start:end])
        ]
        inserts: list[tuple[int, str]] = []
        for b in sorted(self.blocks, key=lambda b: b.first_row):
            first = b.first_row + 1
            last = b.first_row + b.n_rows
            clash = [r for r, _ in existing if first <= r <= last]
            if clash:
                raise ValueError(f"rows {clash[:3]} hold other cells inside a numeric block")
            at = next((pos for r, pos in existing if r > last), end)
            inserts.append((at, b.rows_xml(styles or {})))
        pieces, last_pos = [], 0
        for at, text in sorted(inserts, key=lambda t: t[0]):
            pieces.append(xml[last_pos:at])
            pieces.append(text)
            last_pos = at
        pieces.append(xml[last_pos:])
        xml = "".join(pieces)
        max_row = max(b.first_row + b.n_rows - 1 for b in self.blocks)
        max_col = max(b.first_col + b.n_cols - 1 for b in self.blocks)
        m = re.search(r'<dimension ref="([A-Z]+)(\d+)(?::([A-Z]+)(\d+))?"/>', xml)
        if m:
            from xlsxwriter.utility import xl_cell_to_rowcol

            r0, c0 = xl_cell_to_rowcol(m.group(1) + m.group(2))
            r1, c1 = xl_cell_to_rowcol((m.group(3) or m.group(1)) + (m.group(4) or m.group(2)))
            ref = f"{xl_rowcol_to_cell(min(r0, 0), min(c0, 0))}:{xl_rowcol_to_cell(max(r1, max_row), max(c1, max_col))}"
            xml = xml[: m.start()] + f'<dimension ref="{ref}"/>' + xml[m.end() :]
        return xml
