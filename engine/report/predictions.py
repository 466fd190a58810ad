"""Write the predictions of ``tamis score`` into a copy of the scored workbook.

The copy holds the scored book's own sheets untouched (package-level merge, as for results) plus
one sheet of ours, "TM Predictions": per data row its source row number, the values of the
columns the model uses, the prediction and a note for rows that could not be scored.
"""

from __future__ import annotations

__all__ = ["write_predictions"]

import datetime as _dt
import tempfile
from pathlib import Path

import numpy as np
import xlsxwriter

from engine.errors import WriteProblem
from engine.report import names
from engine.report.build_sheets import WORKBOOK_OPTIONS
from engine.report.data_copy import copy_to_xlsx
from engine.report.package_merge import SheetNameTaken, merge_package
from engine.report.safe_write import commit
from engine.report.sheets.cells import Formats, number, text
from engine.report.writer import verify_results_file


def _sheet(
    path: Path, table, model, preds: np.ndarray, notes: list[str], results_book: str
) -> None:
    book = xlsxwriter.Workbook(str(path), WORKBOOK_OPTIONS)
    try:
        fm = Formats(book)
        ws = book.add_worksheet(names.PREDICTIONS)
        text(ws, 0, 0, f"Predictions of {model.response}", fm.title)
        text(
            ws,
            1,
            0,
            f"Model '{model.method}' from '{results_book}', applied to sheet '{table.sheet}' "
            f"of '{table.source}' on {_dt.date.today().isoformat()}.",
            fm.note,
        )
        sources = model.sources
        heads = ["Source row", *sources, model.prediction_label, "Note"]
        for c, h in enumerate(heads):
            text(ws, 3, c, h, fm.heading)
        cols = {c.name: c for c in table.columns}
        ws.set_column(0, len(heads), 15)
        ws.freeze_panes(4, 1)
        for i in range(table.n_rows):
            r = 4 + i
            ws.write_number(r, 0, int(table.row_numbers[i]))
            for c, s in enumerate(sources, start=1):
                col = cols.get(s)
                if col is None:
                    continue
                v = col.values[i]
                if isinstance(v, np.datetime64):
                    if not np.isnat(v):
                        ws.write_datetime(
                            r, c, v.astype("datetime64[ms]").astype(_dt.datetime), fm.date
                        )
                elif isinstance(v, (float, np.floating, int, np.integer)):
                    number(ws, r, c, float(v))
                elif v is not None:
                    text(ws, r, c, v)
            number(ws, r, len(sources) + 1, float(preds[i]), fm.prediction)
            if notes[i]:
                text(ws, r, len(sources) + 2, notes[i], fm.note)
    finally:
        book.close()


def write_predictions(
    table,
    model,
    preds: np.ndarray,
    notes: list[str],
    book: str | Path,
    out: str | Path,
    results_book: str,
) -> Path:
    book, out = Path(book), Path(out)
    with tempfile.TemporaryDirectory(prefix="tamis-score-") as tmp:
        ours = Path(tmp) / "ours.xlsx"
        _sheet(ours, table, model, preds, notes, results_book)
        base = book
        if book.suffix.lower() not in (".xlsx", ".xlsm"):
            base = Path(tmp) / "data.xlsx"
            copy_to_xlsx(book, base)

        def build(fh) -> None:
            try:
                merge_package(str(base), str(ours), fh, [names.PREDICTIONS])
            except SheetNameTaken as exc:
                raise WriteProblem(
                    f"'{book}' already has a sheet named '{exc.name}'; rename it"
                ) from None

        commit(out, build, lambda p: verify_results_file(p, (names.PREDICTIONS,)))
    return out
