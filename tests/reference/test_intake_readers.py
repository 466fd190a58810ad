"""Intake against outside readers and writers.

- Source: general-purpose reference library pandas (pandas.read_excel with engine="openpyxl")
  reads the same values from the same sheets.
- The same data written by three independent writers (openpyxl, xlsxwriter, and LibreOffice
  Calc re-saving the openpyxl file as .xlsx, .ods and .xls) read the same.
"""

from __future__ import annotations

import datetime as dt
import math
from pathlib import Path

import numpy as np
import openpyxl
import pandas as pd
import pytest
import xlsxwriter
from libreoffice import convert, make_profile, soffice

from engine.intake import ColumnKind, describe_table, read_table

HEADINGS = ["day", "store", "price", "demand", "promo", "code", "note"]
N = 30


def _rows() -> list[list]:
    """Plain data with blanks; simulated (stated as such), built from a fixed rule."""
    rows = []
    for i in range(N):
        rows.append(
            [
                dt.datetime(2022, 5, 1) + dt.timedelta(days=i),
                ["North", "South", "East"][i % 3],
                round(1.25 + 0.5 * math.sin(i), 4),
                None if i % 7 == 3 else 40 + (i * 37) % 23,
                i % 3 == 0,
                f"A-{i:04d}",
                None if i % 2 else f"batch {i // 10}",
            ]
        )
    return rows


def _title_rows() -> list[list]:
    return [["Store sales (simulated)"], ["exported for a check"], []]


def write_openpyxl(path: Path) -> Path:
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Sales"
    for r in _title_rows():
        ws.append(r)
    ws.append(HEADINGS)
    for i, r in enumerate(_rows()):
        ws.append(r)
        if i == 14:
            ws.append([])  # one blank row inside the data
        ws.cell(ws.max_row, 1).number_format = "yyyy-mm-dd"
    hidden = wb.create_sheet("Params")
    hidden.append(["key", "value"])
    hidden.append(["seed", 1])
    hidden.sheet_state = "hidden"
    wb.save(path)
    return path


def write_xlsxwriter(path: Path) -> Path:
    wb = xlsxwriter.Workbook(str(path))
    ws = wb.add_worksheet("Sales")
    date_fmt = wb.add_format({"num_format": "yyyy-mm-dd"})
    r = 0
    for row in _title_rows():
        ws.write_row(r, 0, row)
        r += 1
    ws.write_row(r, 0, HEADINGS)
    r += 1
    for i, row in enumerate(_rows()):
        for c, v in enumerate(row):
            if v is None:
                continue
            if isinstance(v, dt.datetime):
                ws.write_datetime(r, c, v, date_fmt)
            elif isinstance(v, bool):
                ws.write_boolean(r, c, v)
            else:
                ws.write(r, c, v)
        r += 1
        if i == 14:
            r += 1
    hidden = wb.add_worksheet("Params")
    hidden.write_row(0, 0, ["key", "value"])
    hidden.write_row(1, 0, ["seed", 1])
    hidden.hide()
    wb.close()
    return path


def _values(table) -> dict[str, list]:
    out = {}
    for c in table.columns:
        if c.kind == ColumnKind.DATE:
            out[c.name] = [None if np.isnat(v) else str(v)[:10] for v in c.values]
        elif c.kind in (ColumnKind.NUMBER, ColumnKind.FLAG, ColumnKind.EMPTY):
            out[c.name] = [None if np.isnan(v) else float(v) for v in c.values]
        else:
            out[c.name] = list(c.values)
    return out


def _facts(table) -> dict:
    facts = describe_table(table)
    for key in ("file", "format"):
        facts.pop(key)
    return facts


@pytest.fixture(scope="module")
def openpyxl_book(tmp_path_factory) -> Path:
    return write_openpyxl(tmp_path_factory.mktemp("writers") / "sales.xlsx")


def test_same_values_as_pandas_read_excel(openpyxl_book):
    table = read_table(openpyxl_book)
    # Source: general-purpose reference library pandas, read_excel(engine="openpyxl"); its blank
    # rows come back as all-missing rows, which we drop to compare with our skipped blank rows.
    frame = pd.read_excel(openpyxl_book, sheet_name="Sales", header=3, engine="openpyxl")
    frame = frame.dropna(how="all").reset_index(drop=True)
    assert list(frame.columns) == [c.name for c in table.columns]
    assert len(frame) == table.n_rows
    ours = _values(table)
    assert ours["day"] == [str(v)[:10] for v in frame["day"]]
    assert ours["store"] == frame["store"].tolist()
    assert np.array_equal(table.column("price").values, frame["price"].to_numpy(float))
    assert np.array_equal(
        table.column("demand").values, frame["demand"].to_numpy(float), equal_nan=True
    )
    assert ours["promo"] == [float(v) for v in frame["promo"]]
    assert ours["code"] == frame["code"].tolist()
    assert ours["note"] == [None if pd.isna(v) else v for v in frame["note"]]


def _write_messy(path: Path) -> Path:
    import sys

    sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "engine" / "intake"))
    try:
        from intake_corpus import write_messy_book
    finally:
        sys.path.pop(0)
    write_messy_book(path)
    return path


@pytest.fixture(scope="module")
def messy_book(tmp_path_factory) -> Path:
    return _write_messy(tmp_path_factory.mktemp("messy") / "messy.xlsx")


def test_messy_sheet_numbers_match_pandas(messy_book):
    path = messy_book
    table = read_table(path)
    frame = pd.read_excel(path, sheet_name="Demand", header=3, engine="openpyxl")
    frame = frame.dropna(how="all").reset_index(drop=True)
    # Source: general-purpose reference library pandas. Where pandas sees a real number, we must
    # read the same number (pandas leaves text such as "1,234.50" as text, we parse it).
    for name in ("price", "demand", "price cents"):
        theirs = frame[name].tolist()
        ours = table.column(name).values
        for k, v in enumerate(theirs):
            if isinstance(v, int | float) and not pd.isna(v):
                assert ours[k] == pytest.approx(float(v))
    # pandas names the repeated heading "oven temp.1"; the values are the same column
    assert (
        table.column("oven temp (2)").values.tolist() == frame["oven temp.1"].astype(float).tolist()
    )


def test_xlsxwriter_and_openpyxl_files_read_the_same(openpyxl_book, tmp_path):
    other = write_xlsxwriter(tmp_path / "sales-xw.xlsx")
    a, b = read_table(openpyxl_book), read_table(other)
    assert _facts(a) == _facts(b)
    assert _values(a) == _values(b)
    assert a.row_numbers.tolist() == b.row_numbers.tolist()


@pytest.fixture(scope="module")
def libreoffice_copies(openpyxl_book, messy_book, tmp_path_factory) -> dict[str, list[Path]]:
    if soffice() is None:
        pytest.skip(
            "LibreOffice (soffice) is not installed: the cross-writer checks against "
            "LibreOffice Calc DID NOT RUN"
        )
    work = tmp_path_factory.mktemp("lo")
    profile = make_profile(work)
    out = {}
    for fmt in ("xlsx", "ods", "xls"):
        out[fmt] = convert([openpyxl_book, messy_book], fmt, work / fmt, profile)
    return out


@pytest.mark.libreoffice
@pytest.mark.parametrize("fmt", ["xlsx", "ods", "xls"])
def test_libreoffice_copies_read_the_same(openpyxl_book, libreoffice_copies, fmt):
    original = read_table(openpyxl_book)
    copy = read_table(libreoffice_copies[fmt][0])
    assert copy.file_format == fmt
    assert [(s.name, s.hidden) for s in copy.sheets] == [("Sales", False), ("Params", True)]
    assert _facts(copy) == _facts(original)
    assert _values(copy) == _values(original)
    assert copy.row_numbers.tolist() == original.row_numbers.tolist()


@pytest.mark.libreoffice
@pytest.mark.parametrize("fmt", ["xlsx", "ods", "xls"])
def test_libreoffice_copies_of_the_messy_sheet(messy_book, libreoffice_copies, fmt):
    original = read_table(messy_book)
    copy = read_table(libreoffice_copies[fmt][1])
    # error cells too: in the .xls copy they are read from its binary records (xlrd), in the
    # others from the XML; the same counts and notes either way
    theirs, ours = _facts(copy), _facts(original)
    assert sum(c["errors"] for c in ours["columns"]) > 0
    assert theirs == ours
    assert _values(copy) == _values(original)


@pytest.mark.libreoffice
@pytest.mark.parametrize("fmt", ["ods", "xls"])
def test_hidden_rows_and_columns_are_said_for_an_ods_or_xls_copy_too(tmp_path, fmt):
    # LibreOffice Calc saves rows and columns hidden in an .xlsx as table:visibility="collapse"
    # in its .ods copy (OpenDocument 1.2, 19.763) and as hidden flags of the ROW and COLINFO
    # records in its .xls copy: the same warning for all three files
    if soffice() is None:
        pytest.fail(f"LibreOffice (soffice) is not installed: the .{fmt} copy cannot be made")
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Runs"
    ws.append(["y", "a", "b", "c"])
    for i in range(20):
        ws.append([float(i), float(i % 3), float(i % 5), float(i % 7)])
    ws.row_dimensions[6].hidden = True
    ws.column_dimensions["C"].hidden = True
    book = tmp_path / "runs.xlsx"
    wb.save(book)
    (copy,) = convert([book], fmt, tmp_path / fmt, make_profile(tmp_path))

    def hidden_words(path):
        return [w for w in read_table(path).warnings if "hidden" in w]

    want = hidden_words(book)
    assert want and "1 hidden row (6)" in want[0] and "1 hidden column (C)" in want[0]
    assert hidden_words(copy) == want
