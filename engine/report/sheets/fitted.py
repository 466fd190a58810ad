"""Fitted values and residuals of every method for the rows used, by source row number."""

from __future__ import annotations

__all__ = ["write"]

import numpy as np

from engine.report.bulk_rows import BulkSheet
from engine.report.sheets.cells import Formats, text


def write(book, ws, result, fm: Formats, bulk: BulkSheet, progress=None) -> None:
    d = result.design
    models = [m for m in result.models if m.fitted is not None]
    text(ws, 0, 0, f"Fitted values and residuals (rows used from sheet '{d.sheet}')", fm.title)
    text(
        ws,
        1,
        0,
        "Source row is the row number in that sheet; residual = response - fitted"
        + (f", both on the ln scale of {d.response}." if d.response_log else "."),
        fm.note,
    )
    heads = ["Source row", d.response_label]
    for m in models:
        heads += [f"Fitted ({m.method})", f"Residual ({m.method})"]
    for c, h in enumerate(heads):
        text(ws, 3, c, h, fm.heading)
    ws.set_column(0, 0, 11)
    ws.set_column(1, len(heads), 16)
    ws.freeze_panes(4, 1)
    rows = np.asarray(d.row_numbers, dtype=float)
    y = np.asarray(d.y, dtype=float)
    columns = [rows, y]
    for m in models:
        f = np.asarray(m.fitted, dtype=float)
        columns += [f, y - f]
    if progress is not None:
        progress.step(0.5, "fitted values")
    bulk.add(4, 0, np.column_stack(columns))
