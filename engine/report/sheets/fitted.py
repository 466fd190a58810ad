"""Fitted values and residuals of every method for the rows used, by source row number, then the
unusual-row measures of the scoring model's least-squares refit (engine.fitting.influence)."""

from __future__ import annotations

__all__ = ["write"]

import numpy as np

from engine.report.bulk_rows import BulkSheet, NumberColumn, TextColumn
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
    inf = result.influence
    if inf is not None:
        text(
            ws,
            2,
            len(heads),
            f"Least-squares refit of the {inf.n_coefficients - 1} columns {result.influence_method} "
            f"keeps: outlier = studentized residual beyond chance among {d.n_rows} rows "
            f"(Bonferroni, 5%); influential = Cook's distance above {inf.cooks_limit:.3g} "
            "(median of F, Cook 1977)",
            fm.note,
        )
        heads += ["Leverage", "Studentized residual", "Cook's distance", "Unusual"]
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
    cells: list[NumberColumn | TextColumn] = [NumberColumn(c) for c in columns]
    if inf is not None:
        cells += [
            NumberColumn(inf.leverage),
            NumberColumn(inf.studentized),
            NumberColumn(inf.cooks),
        ]
        cells.append(TextColumn([w or None for w in inf.flags()]))
    bulk.add_columns(4, 0, cells)
