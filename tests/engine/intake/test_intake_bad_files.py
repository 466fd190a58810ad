"""Every bad input gives one InputProblem naming the file, sheet, row or cell."""

from __future__ import annotations

import json
import shutil
import zipfile

import openpyxl
import pytest
from intake_corpus import rewrite_part, write_encrypted_container

from engine.errors import InputProblem
from engine.intake import list_sheets, read_table


def _book(path, rows, title="Data", extra_sheets=()):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = title
    for r in rows:
        ws.append(r)
    for name in extra_sheets:
        wb.create_sheet(name)
    wb.save(path)
    return path


def _problem(call, *args, **kwargs) -> InputProblem:
    with pytest.raises(InputProblem) as info:
        call(*args, **kwargs)
    message = info.value.message
    assert "\n" not in message  # one sentence, one line
    return info.value


def test_missing_file(tmp_path):
    p = _problem(read_table, tmp_path / "nope.xlsx")
    assert "nope.xlsx" in p.message and "does not exist" in p.message
    assert p.place.file.endswith("nope.xlsx")


def test_unsupported_extension(tmp_path):
    path = tmp_path / "data.json"
    path.write_text(json.dumps({"a": 1}))
    p = _problem(read_table, path)
    assert ".json" in p.message and ".xlsx" in p.message


def test_text_file_renamed_xlsx(tmp_path):
    path = tmp_path / "export.xlsx"
    path.write_text("a,b\n1,2\n")
    p = _problem(read_table, path)
    assert "export.xlsx" in p.message and "plain text" in p.message and ".csv" in p.message
    _problem(list_sheets, path)


def test_web_page_named_xls(tmp_path):
    path = tmp_path / "report.xls"
    path.write_text("<html><body><table><tr><td>1</td></tr></table></body></html>")
    p = _problem(read_table, path)
    assert "report.xls" in p.message and "web-page" in p.message


def test_truncated_workbook(tmp_path):
    full = _book(tmp_path / "full.xlsx", [["a"], [1], [2]])
    data = full.read_bytes()
    cut = tmp_path / "cut.xlsx"
    cut.write_bytes(data[: len(data) // 2])
    p = _problem(read_table, cut)
    assert "cut.xlsx" in p.message and "damaged or incomplete" in p.message


def test_password_protected_workbook(tmp_path):
    path = tmp_path / "secret.xlsx"
    write_encrypted_container(path)
    p = _problem(read_table, path)
    assert "secret.xlsx" in p.message and "password" in p.message
    same_as_xls = tmp_path / "secret.xls"
    shutil.copy(path, same_as_xls)
    assert "password" in _problem(read_table, same_as_xls).message


def test_empty_file(tmp_path):
    path = tmp_path / "zero.xlsx"
    path.write_bytes(b"")
    assert "empty" in _problem(read_table, path).message
    csv_path = tmp_path / "zero.csv"
    csv_path.write_text("\n\n")
    assert "empty" in _problem(read_table, csv_path).message


def test_empty_sheet(tmp_path):
    path = _book(tmp_path / "b.xlsx", [["a", "b"], [1, 2]], extra_sheets=["Blank"])
    p = _problem(read_table, path, sheet="Blank")
    assert "sheet 'Blank'" in p.message and "empty" in p.message
    assert p.place.sheet == "Blank"


def test_heading_without_data(tmp_path):
    path = _book(tmp_path / "b.xlsx", [["Title"], [], ["a", "b", "c"]])
    p = _problem(read_table, path)
    assert "sheet 'Data'" in p.message and "row 3" in p.message and "no data rows" in p.message
    assert p.place.row == 3


def test_unknown_sheet_lists_names(tmp_path):
    path = _book(tmp_path / "b.xlsx", [["a"], [1]], extra_sheets=["Costs"])
    wb = openpyxl.load_workbook(path)
    wb["Costs"].sheet_state = "hidden"
    wb.save(path)
    p = _problem(read_table, path, sheet="Sales")
    assert "'Sales'" in p.message and "'Data'" in p.message and "'Costs' (hidden)" in p.message


@pytest.mark.parametrize("row", [0, 99])
def test_header_row_outside_sheet(tmp_path, row):
    path = _book(tmp_path / "b.xlsx", [["a"], [1]])
    p = _problem(read_table, path, header_row=row)
    assert f"header row {row}" in p.message and "sheet 'Data'" in p.message


def test_header_row_on_blank_row(tmp_path):
    path = _book(tmp_path / "b.xlsx", [["t"], [], ["a"], [1]])
    p = _problem(read_table, path, header_row=2)
    assert "row 2 is empty" in p.message


_BOMB = (
    b'<?xml version="1.0"?>\n<!DOCTYPE lolz [<!ENTITY lol "lol">'
    b'<!ENTITY lol2 "&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;">'
    b'<!ENTITY lol3 "&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;">]>\n'
)


@pytest.mark.parametrize("part", ["xl/workbook.xml", "xl/worksheets/sheet1.xml"])
def test_entity_expansion_refused(tmp_path, part):
    src = _book(tmp_path / "src.xlsx", [["a"], [1]])
    with zipfile.ZipFile(src) as z:
        body = z.read(part)
    body = body.split(b"?>", 1)[1] if body.startswith(b"<?xml") else body
    bad = tmp_path / "bomb.xlsx"
    rewrite_part(src, bad, part, _BOMB + body.replace(b"</", b"&lol3;</", 1))
    p = _problem(read_table, bad)
    assert part in p.message and "document type declaration" in p.message
    _problem(list_sheets, bad)


def test_zip_that_is_not_a_workbook(tmp_path):
    path = tmp_path / "archive.xlsx"
    with zipfile.ZipFile(path, "w") as z:
        z.writestr("readme.txt", "hello")
    assert "not a spreadsheet workbook" in _problem(read_table, path).message


def test_folder_instead_of_file(tmp_path):
    folder = tmp_path / "book.xlsx"
    folder.mkdir()
    assert "folder" in _problem(read_table, folder).message
