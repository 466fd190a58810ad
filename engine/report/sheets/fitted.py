"""Fitted values and residuals of every method for the rows used, by source row number."""

from __future__ import annotations

__all__ = ["write"]

import numpy as np

from engine.report.sheets.cells import Formats, number, text


def write(book, ws, result, fm: Formats, progress=None) -> None:
    d = result.design
    models = [m for m in result.models if m.fitted is not None]
    text(ws, 0, 0, f"Fitted values and residuals (rows used from sheet '{d.sheet}')", fm.title)
    text(
        ws,
        1,
        0,
        "Source row is the row number in that sheet; residual = response - fitted.",
        fm.note,
    )
    heads = ["Source row", d.response]
    for m in models:
        heads += [f"Fitted ({m.method})", f"Residual ({m.method})"]
    for c, h in enumerate(heads):
        text(ws, 3, c, h, fm.heading)
    ws.set_column(0, 0, 11)
    ws.set_column(1, len(heads), 16)
    ws.freeze_panes(4, 1)
    rows = np.asarray(d.row_numbers)
    y = np.asarray(d.y, dtype=float)
    fits = [np.asarray(m.fitted, dtype=float) for m in models]
    write_number = ws.write_number
    n = d.n_rows
    for i in range(n):
        r = 4 + i
        write_number(r, 0, int(rows[i]))
        number(ws, r, 1, y[i])
        for t, f in enumerate(fits):
            number(ws, r, 2 + 2 * t, f[i])
            number(ws, r, 3 + 2 * t, y[i] - f[i])
        if progress is not None and i % 20000 == 0:
            progress.step(i / max(n, 1), "fitted values")
