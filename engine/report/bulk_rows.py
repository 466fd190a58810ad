"""Large numeric tables written straight into our sheet XML.

xlsxwriter spends about 50 microseconds per cell; a path of 2,000 columns x 100 penalties and
fitted values for 100,000 rows are over half a million cells. Those blocks hold numbers only, so
the sheet modules register them here and the package merge splices their rows into the sheet's
<sheetData> (rows in order, ECMA-376 Part 1, 18.3.1.73) when it rewrites our sheet part anyway.
Values are written with Python's shortest round-trip representation (exact doubles); NaN and
infinities leave the cell empty.
"""

from __future__ import annotations

__all__ = ["BulkSheet"]

import math
import re
from dataclasses import dataclass, field

import numpy as np
from xlsxwriter.utility import xl_col_to_name, xl_rowcol_to_cell


@dataclass
class _Block:
    first_row: int  # 0-based
    first_col: int
    values: np.ndarray  # (rows, cols) float


@dataclass
class BulkSheet:
    """Numeric blocks of one sheet, to be spliced into its XML after xlsxwriter wrote the rest."""

    blocks: list[_Block] = field(default_factory=list)

    def add(self, first_row: int, first_col: int, values: np.ndarray) -> None:
        v = np.asarray(values, dtype=float)
        if v.ndim == 1:
            v = v[:, None]
        if v.size:
            self.blocks.append(_Block(first_row, first_col, v))

    def _rows_xml(self, b: _Block) -> str:
        letters = [xl_col_to_name(b.first_col + j) for j in range(b.values.shape[1])]
        finite = np.isfinite(b.values)
        out = []
        for i, row in enumerate(b.values.tolist()):
            r = b.first_row + i + 1
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

    def inject(self, xml: str) -> str:
        """Return the sheet XML with every block's rows in place and the dimension widened."""
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
            last = b.first_row + b.values.shape[0]
            clash = [r for r, _ in existing if first <= r <= last]
            if clash:
                raise ValueError(f"rows {clash[:3]} hold other cells inside a numeric block")
            at = next((pos for r, pos in existing if r > last), end)
            inserts.append((at, self._rows_xml(b)))
        pieces, last_pos = [], 0
        for at, text in sorted(inserts, key=lambda t: t[0]):
            pieces.append(xml[last_pos:at])
            pieces.append(text)
            last_pos = at
        pieces.append(xml[last_pos:])
        xml = "".join(pieces)
        max_row = max(b.first_row + b.values.shape[0] - 1 for b in self.blocks)
        max_col = max(b.first_col + b.values.shape[1] - 1 for b in self.blocks)
        m = re.search(r'<dimension ref="([A-Z]+)(\d+)(?::([A-Z]+)(\d+))?"/>', xml)
        if m:
            from xlsxwriter.utility import xl_cell_to_rowcol

            r0, c0 = xl_cell_to_rowcol(m.group(1) + m.group(2))
            r1, c1 = xl_cell_to_rowcol((m.group(3) or m.group(1)) + (m.group(4) or m.group(2)))
            ref = f"{xl_rowcol_to_cell(min(r0, 0), min(c0, 0))}:{xl_rowcol_to_cell(max(r1, max_row), max(c1, max_col))}"
            xml = xml[: m.start()] + f'<dimension ref="{ref}"/>' + xml[m.end() :]
        return xml
