"""Results for .ods and .xls inputs: a new .xlsx holding the data and our sheets.

The .ods and .xls files are written by LibreOffice Calc (an independent spreadsheet program)
from an openpyxl workbook; the data sheet of our output must read back with the same values as
the input, as pandas reads them (general-purpose reference library).
"""

from __future__ import annotations

import warnings

import numpy as np
import openpyxl
import pandas as pd
import pytest
from libreoffice import convert, make_profile, soffice

from engine.intake import read_table
from engine.report import SHEET_NAMES, write_results
from engine.study import run_study
from engine.study_spec import StudySpec

pytestmark = pytest.mark.libreoffice


@pytest.fixture(scope="module")
def sources(tmp_path_factory):
    if soffice() is None:
        pytest.skip(
            "LibreOffice (soffice) is not installed: .ods/.xls inputs cannot be produced here"
        )
    folder = tmp_path_factory.mktemp("odsxls")
    rng = np.random.default_rng(4)  # simulated data with a known truth (stated as such)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Lots"
    ws.append(["yield_kg", "temp_c", "hours", "line"])
    for i in range(40):
        t, h = float(rng.normal(20, 3)), float(rng.normal(8, 1))
        ws.append(
            [
                round(2.0 * t - 1.5 * h + rng.normal(0, 0.5), 3),
                round(t, 3),
                round(h, 3),
                "AB"[i % 2],
            ]
        )
    src = folder / "lots.xlsx"
    wb.save(src)
    profile = make_profile(folder)
    ods = convert([src], "ods", folder / "ods", profile)[0]
    xls = convert([src], "xls", folder / "xls", profile)[0]
    return src, ods, xls


@pytest.mark.parametrize("kind", ["ods", "xls"])
def test_out_from_ods_and_xls_holds_the_data_and_ours(sources, kind, tmp_path):
    src, ods, xls = sources
    book = ods if kind == "ods" else xls
    spec = StudySpec(source=str(book), response="yield_kg", methods=("lasso",), folds=5)
    result = run_study(spec)
    out = write_results(result, out=tmp_path / f"from-{kind}.xlsx")
    names = openpyxl.load_workbook(out, read_only=True).sheetnames
    assert names == ["Lots", *SHEET_NAMES]
    # Source: pandas.read_excel (reference library) on the input file and on our copy
    # xlrd reads .xls for pandas too (an independent reader of the binary format)
    engine_in = "odf" if kind == "ods" else "xlrd"
    try:
        with warnings.catch_warnings():  # pandas calls its xlrd route deprecated
            warnings.simplefilter("ignore", FutureWarning)
            warnings.simplefilter("ignore", DeprecationWarning)
            expected = pd.read_excel(book, sheet_name="Lots", engine=engine_in)
    except ImportError:
        expected = pd.read_excel(
            src, sheet_name="Lots", engine="openpyxl"
        )  # values before conversion
    got = pd.read_excel(out, sheet_name="Lots", engine="openpyxl")
    pd.testing.assert_frame_equal(got, expected, check_dtype=False)
    # and our own intake reads the copy the same way it read the input
    a, b = read_table(book, sheet="Lots"), read_table(out, sheet="Lots")
    for ca, cb in zip(a.columns, b.columns):
        assert (ca.name, ca.kind) == (cb.name, cb.kind)
        if ca.is_numeric:
            np.testing.assert_allclose(ca.values, cb.values)
