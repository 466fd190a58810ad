"""Copy the sheets of a .csv, .xls or .ods file into a new .xlsx, as values.

Used when results are written for a source that is not an .xlsx/.xlsm package: the output then
holds the data and our sheets. Text stays text (``write_string``), numbers numbers, booleans
booleans, dates dates (in a text file, those written as ISO 8601 dates); formulas of .xls/.ods
sources arrive as their last computed values.
"""

from __future__ import annotations

__all__ = ["copy_to_xlsx", "sheet_name_for_csv"]

import datetime as _dt
import re
from pathlib import Path

import xlsxwriter

from engine.intake.delimited import read_delimited
from engine.intake.workbook import is_text_table
from engine.report.build_sheets import WORKBOOK_OPTIONS

_BAD = re.compile(r"[\[\]:*?/\\]")
_NUMBER = re.compile(r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$")


def _plain_number(value: str, decimal: str) -> float | None:
    """A field that is a plain number written with the file's decimal mark; None otherwise
    (grouped digits, units and the like stay text a person can read, as they were)."""
    plain = value.strip()
    if decimal == ",":
        if "." in plain:
            return None
        plain = plain.replace(",", ".")
    return float(plain) if _NUMBER.match(plain) else None


_ISO = re.compile(r"^\d{4}-\d{2}-\d{2}([ T]\d{2}:\d{2}(:\d{2})?)?$")
_MIDNIGHT = _dt.time(0)


def _iso_date(value: str) -> _dt.datetime | None:
    """A field written as an ISO 8601 date (or date and time): the one way of writing dates
    that reads the same everywhere; other date texts stay text, as typed."""
    plain = value.strip()
    if not _ISO.match(plain):
        return None
    try:
        when = _dt.datetime.fromisoformat(plain)
    except ValueError:
        return None
    # a spreadsheet's dates start in 1900: earlier ones stay text, as written
    return when if when.year >= 1900 else None


def sheet_name_for_csv(path: Path) -> str:
    return (_BAD.sub("_", path.stem).strip("'") or "data")[:31]


def copy_to_xlsx(source: str | Path, target: str | Path) -> None:
    source = Path(source)
    book = xlsxwriter.Workbook(str(target), WORKBOOK_OPTIONS)
    date_fmt = book.add_format({"num_format": "yyyy-mm-dd"})
    time_fmt = book.add_format({"num_format": "yyyy-mm-dd hh:mm:ss"})
    try:
        if is_text_table(source):
            ws = book.add_worksheet(sheet_name_for_csv(source))
            # decoded and split as intake read it (encoding, delimiter, decimal mark)
            text = read_delimited(source)
            for r, row in enumerate(text.rows):
                for c, value in enumerate(row):
                    if value == "":
                        continue
                    number = _plain_number(value, text.decimal)
                    when = _iso_date(value) if number is None else None
                    if number is not None:
                        ws.write_number(r, c, number)
                    elif when is not None:  # a date a spreadsheet can sort and filter
                        ws.write_datetime(
                            r, c, when, date_fmt if when.time() == _MIDNIGHT else time_fmt
                        )
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
