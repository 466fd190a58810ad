"""Invariants on random cell contents: intake never crashes (only InputProblem is allowed) and
what it returns is internally consistent."""

from __future__ import annotations

import csv
import datetime as dt
import io
import tempfile
from pathlib import Path

import numpy as np
import openpyxl
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from engine.errors import InputProblem
from engine.intake import ColumnKind, read_table
from engine.intake.cells import ERROR_VALUES

_TEXT = st.text(
    alphabet=st.characters(blacklist_categories=("Cs", "Cc"), blacklist_characters="="),
    max_size=12,
)
_CELL = st.one_of(
    st.none(),
    st.integers(min_value=-(10**12), max_value=10**12),
    st.floats(allow_nan=False, allow_infinity=False, width=64),
    st.booleans(),
    _TEXT,
    st.sampled_from(ERROR_VALUES + ("yes", "no", "1,234.5", " 42 ", "12%", "(1.5)", "007", "n/a")),
    st.dates(min_value=dt.date(1901, 1, 1), max_value=dt.date(2099, 12, 31)),
)
_GRID = st.lists(st.lists(_CELL, min_size=1, max_size=6), min_size=1, max_size=12)
_SETTINGS = settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def _check(table) -> None:
    n = table.n_rows
    rows = table.row_numbers
    assert rows.dtype == np.int64 and (np.diff(rows) > 0).all() and (rows > table.header_row).all()
    names = [c.name for c in table.columns]
    assert len(set(n.casefold() for n in names)) == len(names)
    for c in table.columns:
        assert len(c.values) == n
        assert 0 <= c.errors <= c.missing <= n
        if c.kind in (ColumnKind.NUMBER, ColumnKind.FLAG, ColumnKind.EMPTY):
            assert c.values.dtype == np.float64 and int(np.isnan(c.values).sum()) == c.missing
        elif c.kind == ColumnKind.DATE:
            assert int(np.isnat(c.values).sum()) == c.missing
        else:
            assert sum(v is None for v in c.values) == c.missing
        if c.kind == ColumnKind.FLAG:
            assert set(c.values[~np.isnan(c.values)].tolist()) <= {0.0, 1.0}


@_SETTINGS
@given(_GRID, st.one_of(st.none(), st.integers(min_value=1, max_value=14)))
def test_random_workbooks_never_crash(grid, header_row):
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "random.xlsx"
        wb = openpyxl.Workbook()
        ws = wb.active
        for r, row in enumerate(grid, start=1):
            for c, value in enumerate(row, start=1):
                ws.cell(r, c, value)
        wb.save(path)
        try:
            table = read_table(path, header_row=header_row)
        except InputProblem:
            return
        _check(table)


@_SETTINGS
@given(
    st.lists(st.lists(_TEXT, min_size=1, max_size=6), min_size=1, max_size=12),
    st.sampled_from([",", ";", "\t"]),
    st.sampled_from(["utf-8", "utf-8-sig", "cp1252"]),
)
def test_random_csv_never_crashes(grid, delimiter, encoding):
    buf = io.StringIO()
    csv.writer(buf, delimiter=delimiter).writerows(grid)
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "random.csv"
        path.write_bytes(buf.getvalue().encode(encoding, errors="replace"))
        try:
            table = read_table(path)
        except InputProblem:
            return
        _check(table)


@_SETTINGS
@given(st.binary(max_size=300), st.sampled_from([".xlsx", ".xls", ".ods", ".csv", ".xlsm"]))
def test_random_bytes_give_only_input_problems(data, suffix):
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / f"junk{suffix}"
        path.write_bytes(data)
        try:
            _check(read_table(path))
        except InputProblem as exc:
            assert "junk" in exc.message
