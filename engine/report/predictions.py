"""Write the predictions of ``tamis score`` into a copy of the scored workbook.

The copy holds the scored book's own sheets untouched (package-level merge, as for results) plus
one sheet of ours, "TM Predictions": per data row its source row number, the values of the
columns the model uses, the prediction, its 95% range (when the model has a cross-validated
error) and a note for rows that could not be scored or lie outside the fitted range.
"""

from __future__ import annotations

__all__ = ["write_predictions"]

import datetime as _dt
import math
import tempfile
from pathlib import Path

import numpy as np
import xlsxwriter

from engine.errors import WriteProblem
from engine.report import names
from engine.report.build_sheets import WORKBOOK_OPTIONS
from engine.report.bulk_rows import BulkSheet, NumberColumn, TextColumn, style_index
from engine.report.data_copy import copy_to_xlsx
from engine.report.package_merge import SheetNameTaken, merge_package, uses_1904_dates
from engine.report.safe_write import commit
from engine.report.scoring_model import (
    DAYS_1900_TO_1904,
    EXCEL_EPOCH,
    RANGE_HIGH,
    RANGE_LOW,
    range_words,
)
from engine.report.sheets.cells import Formats, text
from engine.report.writer import verify_results_file


def _sheet(
    path: Path,
    table,
    model,
    preds: np.ndarray,
    notes: list[str],
    model_from: str,
    date1904: bool = False,
    ranges: tuple[np.ndarray, np.ndarray] | None = None,
) -> BulkSheet:
    """Write the sheet's top rows; return its data rows as a block for the package merge
    (about a hundred times faster than xlsxwriter's cell by cell for 100,000 rows)."""
    book = xlsxwriter.Workbook(str(path), {**WORKBOOK_OPTIONS, "date_1904": date1904})
    bulk = BulkSheet()
    try:
        fm = Formats(book)
        ws = book.add_worksheet(names.PREDICTIONS)
        text(ws, 0, 0, f"Predictions of {model.response}", fm.title)
        text(
            ws,
            1,
            0,
            f"Model '{model.method}' {model_from}, applied to sheet '{table.sheet}' "
            f"of '{table.source}' on {_dt.date.today().isoformat()}.",
            fm.note,
        )
        if ranges is not None:
            text(ws, 2, 0, range_words(model), fm.note)
        sources = model.sources
        heads = ["Source row", *sources, model.prediction_label]
        heads += [RANGE_LOW, RANGE_HIGH] if ranges is not None else []
        heads.append("Note")
        for c, h in enumerate(heads):
            text(ws, 3, c, h, fm.heading)
        ws.set_column(0, len(heads), 15)
        ws.freeze_panes(4, 1)
        columns: list[NumberColumn | TextColumn] = [
            NumberColumn(np.asarray(table.row_numbers, dtype=float))
        ]
        date_style = style_index(fm.date)
        for s in sources:
            # the column the model read, also when its heading differs ("temp" for "temp (°C)")
            columns.append(
                _values_column(model.column_in(table, s), table.n_rows, date_style, date1904)
            )
        size = model.typical_size  # every prediction and range end to the same decimals
        shown = style_index(fm.shown_to(size, "prediction"))
        columns.append(NumberColumn(np.asarray(preds, dtype=float), shown))
        if ranges is not None:
            end_style = style_index(fm.shown_to(size))
            columns += [NumberColumn(np.asarray(end, dtype=float), end_style) for end in ranges]
        columns.append(TextColumn([n or None for n in notes], style_index(fm.note)))
        bulk.add_columns(4, 0, columns)
    finally:
        book.close()
    return bulk


def _values_column(col, n: int, date_style: int | None, date1904: bool):
    """A source column's cells as the scored sheet holds them: numbers, dates (serial numbers
    in the workbook's date system, shown as dates) or text."""
    if col is None:
        return TextColumn([None] * n)
    values = col.values
    arr = np.asarray(values)
    if arr.dtype.kind == "M":
        days = arr.astype("datetime64[D]")
        serial = (days - np.datetime64(EXCEL_EPOCH.isoformat(), "D")).astype(float)
        serial[np.isnat(days)] = np.nan
        if date1904:
            serial = serial - DAYS_1900_TO_1904
        return NumberColumn(serial, date_style)
    if arr.dtype.kind in "fiub":
        return NumberColumn(arr.astype(float))
    # mixed cells (a category, text, numbers typed among words): each as it is
    if all(isinstance(v, (float, int, np.floating, np.integer)) or v is None for v in values):
        return NumberColumn(np.array([np.nan if v is None else float(v) for v in values]))
    return TextColumn(
        [
            None if v is None or (isinstance(v, float) and math.isnan(v)) else _plain(v)
            for v in values
        ]
    )


def _plain(v: object) -> str:
    if isinstance(v, (float, np.floating)) and float(v).is_integer():
        return str(int(v))
    return str(v)


def write_predictions(
    table,
    model,
    preds: np.ndarray,
    notes: list[str],
    book: str | Path,
    out: str | Path,
    model_from: str,
    ranges: tuple[np.ndarray, np.ndarray] | None = None,
) -> Path:
    """``ranges``: the low and high ends of each prediction's range, or None for none."""
    book, out = Path(book), Path(out)
    with tempfile.TemporaryDirectory(prefix="tamis-score-") as tmp:
        ours = Path(tmp) / "ours.xlsx"
        base = book
        if book.suffix.lower() not in (".xlsx", ".xlsm"):
            base = Path(tmp) / "data.xlsx"
            copy_to_xlsx(book, base)
        bulk = _sheet(ours, table, model, preds, notes, model_from, uses_1904_dates(base), ranges)

        def build(fh) -> None:
            try:
                merge_package(
                    str(base), str(ours), fh, [names.PREDICTIONS], {names.PREDICTIONS: bulk}
                )
            except SheetNameTaken as exc:
                raise WriteProblem(
                    f"'{book}' already has a sheet named '{exc.name}'; rename it"
                ) from None

        commit(out, build, lambda p: verify_results_file(p, (names.PREDICTIONS,)))
    return out
