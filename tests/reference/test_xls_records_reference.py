"""Error cells, hidden rows and columns and merged ranges of binary .xls sheets.

Source of the files: LibreOffice Calc (an independent spreadsheet program) saving an .xlsx as
.xls (BIFF8). Reference reader: xlrd (general-purpose library from the registry), whose cell
types, row and column records and merged ranges our own record walk (engine.intake.biff) must
match cell for cell.
"""

from __future__ import annotations

from pathlib import Path

import openpyxl
import pytest
import xlrd
from libreoffice import convert, make_profile, soffice

from engine.errors import InputProblem
from engine.intake import read_table
from engine.intake.biff import scan_xls_sheet

pytestmark = pytest.mark.libreoffice


@pytest.fixture(scope="module")
def xls_book(tmp_path_factory) -> Path:
    if soffice() is None:
        pytest.fail("LibreOffice (soffice) is not installed: the .xls copy cannot be made")
    folder = tmp_path_factory.mktemp("xls")
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Kiln runs"
    ws.append(["yield", "temp", "hold", "ratio", "batch"])
    for i in range(24):
        ws.append([10.0 + i, 600.0 + 5 * i, float(i % 4), f"=B{i + 2}/C{i + 2}", f"B-{i % 3}"])
    # row 5 divides by zero (hold 0): the ratio column has errors of its own making too
    ws["A8"] = "=NA()"
    ws["B12"] = "=1/0"
    ws["C15"] = '=VALUE("oven")'
    ws.row_dimensions[20].hidden = True
    ws.column_dimensions["E"].hidden = True
    ws.merge_cells("A27:B27")
    other = wb.create_sheet("Notes")
    other.append(["text"])
    other["A3"] = "=1/0"
    src = folder / "kiln.xlsx"
    wb.save(src)
    profile = make_profile(folder)
    (xls,) = convert([src], "xls", folder / "xls", profile)
    # the same program's .xlsx copy holds the calculated results, read from its XML
    (xlsx,) = convert([src], "xlsx", folder / "xlsx", profile)
    return xls, xlsx


def _xlrd_facts(path: Path, sheet: str):
    book = xlrd.open_workbook(str(path), formatting_info=True)
    sh = book.sheet_by_name(sheet)
    errors = {
        (r, c): xlrd.error_text_from_code[sh.cell_value(r, c)]
        for r in range(sh.nrows)
        for c in range(sh.ncols)
        if sh.cell_type(r, c) == xlrd.XL_CELL_ERROR
    }
    hidden_rows = sorted(r for r, info in sh.rowinfo_map.items() if info.hidden)
    hidden_cols = sorted(c for c, info in sh.colinfo_map.items() if info.hidden)
    merged = sorted((r0, c0, r1 - 1, c1 - 1) for r0, r1, c0, c1 in sh.merged_cells)
    return errors, hidden_rows, hidden_cols, merged


@pytest.mark.parametrize("sheet", ["Kiln runs", "Notes"])
def test_record_walk_matches_xlrd(xls_book, sheet):
    xls_book, _ = xls_book
    ours = scan_xls_sheet(xls_book.read_bytes(), sheet)
    errors, hidden_rows, hidden_cols, merged = _xlrd_facts(xls_book, sheet)
    assert errors, "the copy must hold error cells for this check to mean anything"
    assert ours.errors == errors
    assert ours.hidden_rows == hidden_rows
    assert ours.hidden_cols == hidden_cols
    assert sorted(ours.merged) == merged
    if sheet == "Kiln runs":
        # the planted ones, by cell (0-based positions)
        assert errors[(7, 0)] == "#N/A" and errors[(11, 1)] == "#DIV/0!"
        assert errors[(14, 2)] == "#VALUE!"
        assert hidden_rows == [19] and hidden_cols == [4] and merged == [(26, 0, 26, 1)]


def test_read_table_counts_xls_errors_like_the_xlsx(xls_book):
    xls, xlsx = xls_book
    table = read_table(xls, sheet="Kiln runs")
    original = read_table(xlsx, sheet="Kiln runs")
    for name in ("yield", "temp", "hold", "ratio"):
        assert table.column(name).errors == original.column(name).errors
        assert table.column(name).notes == original.column(name).notes
    assert table.column("yield").errors == 1 and table.column("temp").errors == 1
    assert table.column("ratio").errors > 0  # hold 0 in every fourth run, and the planted ones
    hidden = [w for w in table.warnings if "hidden" in w]
    assert hidden == [w for w in original.warnings if "hidden" in w] and "(20)" in hidden[0]


def test_damaged_xls_records_are_named(xls_book, tmp_path):
    data = bytearray(xls_book[0].read_bytes())
    # cut the file inside its compound-document sectors: the reader must refuse, naming it
    broken = tmp_path / "kiln broken.xls"
    broken.write_bytes(bytes(data[: len(data) // 2]))
    with pytest.raises(InputProblem) as caught:
        read_table(broken, sheet="Kiln runs")
    assert "kiln broken.xls" in str(caught.value)


def test_records_that_cannot_be_read_leave_the_cells_read_and_say_so(xls_book, monkeypatch):
    # the cell reader read the sheet; when our record walk cannot, the facts it would add
    # are missing and a warning says so, rather than refusing a file that opens elsewhere
    from engine.intake import package
    from engine.intake.biff import XlsUnreadable

    def refuse(data, sheet, hidden_only=False):
        raise XlsUnreadable("a record ends past its sheet")

    monkeypatch.setattr(package, "scan_xls_sheet", refuse)
    table = read_table(xls_book[0], sheet="Kiln runs")
    assert table.column("yield").errors == 0 and table.n_rows > 20
    assert any("could not be read for error cells and hidden rows" in w for w in table.warnings)
