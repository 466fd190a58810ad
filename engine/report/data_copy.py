"""Copy the sheets of a .csv, .xls or .ods file into a new .xlsx, as values.

Used when results are written for a source that is not an .xlsx/.xlsm package: the output then
holds the data and our sheets. Text stays text (``write_string``), numbers numbers, booleans
booleans, dates dates; formulas of .xls/.ods sources arrive as their last computed values.
"""

from __future__ import annotations

__all__ = ["copy_to_xlsx", "sheet_name_for_csv"]

import csv
import datetime as _dt
import io
import re
from pathlib import Path

import xlsxwriter

from engine.report.build_sheets import WORKBOOK_OPTIONS

_BAD = re.compile(r"[\[\]:*?/\\]")
_NUMBER = re.compile(r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$")


def sheet_name_for_csv(path: Path) -> str:
    return (_BAD.sub("_", path.stem).strip("'") or "data")[:31]


def _read_csv(path: Path) -> list[list[str]]:
    raw = path.read_bytes()
    for enc in ("utf-8-sig", "cp1252", "latin-1"):
        try:
            data = raw.decode(enc)
            break
        except UnicodeDecodeError:
            continue
    sample = data[:65536]
    try:
        dialect = csv.Sniffer().sniff(sample, delimiters=",;\t|")
    except csv.Error:
        dialect = csv.excel
    return [row for row in csv.reader(io.StringIO(data), dialect)]


def copy_to_xlsx(source: str | Path, target: str | Path) -> None:
    source = Path(source)
    book = xlsxwriter.Workbook(str(target), WORKBOOK_OPTIONS)
    date_fmt = book.add_format({"num_format": "yyyy-mm-dd"})
    time_fmt = book.add_format({"num_format": "yyyy-mm-dd hh:mm:ss"})
    try:
        if source.suffix.lower() == ".csv":
            ws = book.add_worksheet(sheet_name_for_csv(source))
            for r, row in enumerate(_read_csv(source)):
                for c, value in enumerate(row):
                    if value == "":
                        continue
                    if _NUMBER.match(value.strip()):
                        ws.write_number(r, c, float(value))
                    else:
                        ws.write_string(r, c, value)
            return
        import python_calamine as calamine

        wb = calamine.CalamineWorkbook.from_path(str(source))
        metas = getattr(wb, "sheets_metadata", None)
        for i, name in enumerate(wb.sheet_names):
            ws = book.add_worksheet(name[:31])
            if (
                metas is not None
                and i > 0
                and str(getattr(metas[i], "visible", "")).lower().endswith("hidden")
            ):
                ws.hide()
            for r, cells in enumerate(wb.get_sheet_by_name(name).to_python(skip_empty_area=False)):
                for c, v in enumerate(cells):
                    if v is None or v == "":
                        continue
                    if isinstance(v, bool):
                        ws.write_boolean(r, c, v)
                    elif isinstance(v, (int, float)):
                        ws.write_number(r, c, float(v))
                    elif isinstance(v, _dt.datetime):
                        ws.write_datetime(r, c, v, time_fmt)
                    elif isinstance(v, _dt.date):
                        ws.write_datetime(r, c, _dt.datetime(v.year, v.month, v.day), date_fmt)
                    else:
                        ws.write_string(r, c, str(v))
    finally:
        book.close()
