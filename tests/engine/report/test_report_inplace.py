"""In-place writing at the package level: the user's parts stay byte-identical.

Invariants checked against the zip archive itself (ECMA-376 Part 2 packages): every original
part keeps its exact bytes except the five parts the writer may change, original entries keep
their order, a re-run replaces our sheets without growing the file, and readers other than ours
(openpyxl) open the result without complaint.
"""

from __future__ import annotations

import re
import shutil
import warnings
import zipfile
from pathlib import Path

import openpyxl
import pytest
from rich_workbook import MACRO_BYTES, write_rich
from study_fixture import make_result

from engine.errors import WriteProblem
from engine.report import SHEET_NAMES, write_results
from engine.report.package_merge import MARKER_NAME

ALLOWED = {
    "xl/workbook.xml",
    "xl/_rels/workbook.xml.rels",
    "[Content_Types].xml",
    "docProps/app.xml",
    "xl/styles.xml",
}


def parts(path: Path) -> dict[str, bytes]:
    with zipfile.ZipFile(path) as zf:
        return {n: zf.read(n) for n in zf.namelist()}


def order(path: Path) -> list[str]:
    with zipfile.ZipFile(path) as zf:
        return zf.namelist()


def _xfs(styles: bytes) -> list[str]:
    inner = re.search(rb"<cellXfs[^>]*>(.*?)</cellXfs>", styles, re.S).group(1).decode()
    return re.findall(r"<xf\b[^>]*?(?:/>|>.*?</xf>)", inner, re.S)


@pytest.fixture(params=[".xlsx", ".xlsm"])
def rich(tmp_path, request):
    result, _ = make_result(tmp_path, name="book" + request.param, writer=write_rich)
    return result, Path(result.spec.source)


def test_in_place_keeps_every_user_part_byte_identical(rich):
    result, book = rich
    before = parts(book)
    write_results(result, in_place=True)
    after = parts(book)
    for name, data in before.items():
        assert name in after, f"part {name} disappeared"
        if name not in ALLOWED:
            assert after[name] == data, f"part {name} changed"
    # original entries keep their order; ours come after them
    new_order = order(book)
    assert new_order[: len(before)] == list(before)
    # the user's cell formats keep their positions; ours are appended
    assert _xfs(after["xl/styles.xml"])[: len(_xfs(before["xl/styles.xml"]))] == _xfs(
        before["xl/styles.xml"]
    )
    # the document properties list our sheets among the worksheets
    assert b"<vt:lpstr>TM Settings</vt:lpstr>" in after["docProps/app.xml"]
    assert b"<vt:i4>10</vt:i4>" in after["docProps/app.xml"]
    if book.suffix == ".xlsm":
        assert after["xl/vbaProject.bin"] == MACRO_BYTES
        assert b"macroEnabled" in after["[Content_Types].xml"]
    # no shared strings added by us (ours are inline), and tabSelected only on the user's sheet
    for name, data in after.items():
        if name.startswith("xl/worksheets/sheet") and name not in before:
            assert b' t="s"' not in data
            assert b"tabSelected" not in data


def test_in_place_result_reads_back_in_openpyxl(rich):
    result, book = rich
    write_results(result, in_place=True)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        wb = openpyxl.load_workbook(book, keep_vba=book.suffix == ".xlsm")
    # openpyxl drops the user's sparkline extension on load (its own limit, said in the warning);
    # anything else would be a complaint about our parts
    assert [
        str(w.message) for w in caught if "extension is not supported" not in str(w.message)
    ] == []
    assert wb.sheetnames == ["Lots", "Overview", "Lookup", *SHEET_NAMES]
    assert wb["Lookup"].sheet_state == "hidden"
    assert "AllScores" in wb.defined_names
    assert MARKER_NAME in wb.defined_names
    assert (
        "LocalAltitude" in wb["Lots"].defined_names and "LocalCodes" in wb["Overview"].defined_names
    )
    assert wb["Lots"].freeze_panes == "B2"
    assert wb["TM Summary"]["A1"].value == "Tamis study results"


def test_second_run_replaces_our_sheets_without_growing(rich):
    result, book = rich
    write_results(result, in_place=True)
    first = parts(book)
    size1 = book.stat().st_size
    write_results(result, in_place=True)
    second = parts(book)
    size2 = book.stat().st_size
    assert list(first) == list(second)  # same parts in the same order, no duplicates
    for name in (
        "xl/workbook.xml",
        "xl/_rels/workbook.xml.rels",
        "[Content_Types].xml",
        "docProps/app.xml",
        "xl/styles.xml",
    ):
        assert first[name] == second[name], name
    assert abs(size2 - size1) <= 0.002 * size1
    wb = openpyxl.load_workbook(book, read_only=True)
    assert wb.sheetnames.count("TM Summary") == 1


def test_user_sheets_after_ours_keep_their_local_names(tmp_path):
    """A sheet the user added after our sheets moves up when ours are removed; its sheet-level
    names must follow it (localSheetId is a position)."""
    result, _ = make_result(tmp_path, name="book.xlsx", writer=write_rich)
    book = Path(result.spec.source)
    write_results(result, in_place=True)
    # the user adds a sheet after ours, with a sheet-level name, at the package level
    data = parts(book)
    wbx = data["xl/workbook.xml"].decode()
    n = len(re.findall(r"<sheet ", wbx))
    wbx = wbx.replace("</sheets>", '<sheet name="Later" sheetId="99" r:id="rId99"/></sheets>')
    wbx = wbx.replace(
        "</definedNames>",
        f'<definedName name="LaterName" localSheetId="{n}">Later!$A$1</definedName></definedNames>',
    )
    data["xl/workbook.xml"] = wbx.encode()
    data["xl/_rels/workbook.xml.rels"] = data["xl/_rels/workbook.xml.rels"].replace(
        b"</Relationships>",
        b'<Relationship Id="rId99" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/worksheet" Target="worksheets/later.xml"/></Relationships>',
    )
    data["[Content_Types].xml"] = data["[Content_Types].xml"].replace(
        b"</Types>",
        b'<Override PartName="/xl/worksheets/later.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/></Types>',
    )
    data["xl/worksheets/later.xml"] = data["xl/worksheets/sheet3.xml"]
    with zipfile.ZipFile(book, "w", zipfile.ZIP_DEFLATED) as zf:
        for k, v in data.items():
            zf.writestr(k, v)
    from engine.report import fingerprint

    result.source_fingerprint = fingerprint(book)
    write_results(result, in_place=True)
    with warnings.catch_warnings():
        warnings.filterwarnings(
            "ignore", message=".*extension is not supported"
        )  # openpyxl's limit
        wb = openpyxl.load_workbook(book)
    assert wb.sheetnames == ["Lots", "Overview", "Lookup", "Later", *SHEET_NAMES]
    assert "LaterName" in wb["Later"].defined_names


def test_a_users_sheet_with_our_name_is_never_replaced(tmp_path):
    def writer(path, rows):
        import xlsxwriter

        wb = xlsxwriter.Workbook(str(path))
        ws = wb.add_worksheet("Lots")
        from study_fixture import write_rows  # noqa: F401  (headings only matter here)

        ws.write_string(0, 0, "x")
        wb.add_worksheet("TM Summary").write_string(0, 0, "mine")
        wb.close()

    result, _ = make_result(tmp_path, writer=writer)
    book = Path(result.spec.source)
    before = book.read_bytes()
    with pytest.raises(WriteProblem) as err:
        write_results(result, in_place=True)
    assert "TM Summary" in err.value.message
    assert book.read_bytes() == before


def test_out_mode_copies_the_input_and_leaves_it_alone(rich):
    result, book = rich
    before = book.read_bytes()
    out = book.with_name("results" + book.suffix)
    write_results(result, out=out)
    assert book.read_bytes() == before
    src, dst = parts(book), parts(out)
    for name, data in src.items():
        if name not in ALLOWED:
            assert dst[name] == data


def test_out_mode_from_csv_holds_the_data_and_ours(tmp_path):
    result, rows = make_result(tmp_path)
    csv = tmp_path / "lots.csv"
    lines = ["altitude,process,score"] + [
        f"{r['altitude']},{r['process']},{r['score']}" for r in rows
    ]
    csv.write_text("\n".join(lines), encoding="utf-8")
    result.spec = result.spec.replace(source=str(csv))
    out = write_results(result, out=tmp_path / "from-csv.xlsx")
    wb = openpyxl.load_workbook(out, read_only=True)
    assert wb.sheetnames == ["lots", *SHEET_NAMES]
    got = [r for r in wb["lots"].iter_rows(min_row=2, max_row=3, values_only=True)]
    assert got[0][1] == rows[0]["process"] and got[0][0] == pytest.approx(rows[0]["altitude"])


def test_out_mode_from_a_tab_separated_utf16_text_export_holds_the_same_values(tmp_path):
    # the "Unicode text" a spreadsheet program saves is tab-separated UTF-16 with a byte-order
    # mark (common practice), here with decimal commas: the copied sheet must hold the numbers
    # intake read, not text decoded as the wrong encoding
    from engine.intake import read_table

    result, rows = make_result(tmp_path)
    lines = ["altitude\tprocess\tscore"] + [
        f"{r['altitude']}\t{r['process']}\t{r['score']}".replace(".", ",") for r in rows
    ]
    text = tmp_path / "lots.txt"
    text.write_bytes(("\r\n".join(lines) + "\r\n").encode("utf-16"))
    result.spec = result.spec.replace(source=str(text))
    out = write_results(result, out=tmp_path / "from-text.xlsx")
    wb = openpyxl.load_workbook(out, read_only=True)
    assert wb.sheetnames == ["lots", *SHEET_NAMES]
    got = list(wb["lots"].iter_rows(min_row=1, max_row=3, values_only=True))
    assert got[0] == ("altitude", "process", "score")
    read = read_table(text)
    assert read.reading["delimiter"] == "tab" and read.reading["decimal mark"] == "comma"
    assert got[1][0] == pytest.approx(read.column("altitude").values[0], rel=1e-15)
    assert got[2][2] == pytest.approx(read.column("score").values[1], rel=1e-15)
    assert got[1][1] == rows[0]["process"]


def test_exactly_one_mode(tmp_path):
    from engine.errors import InputProblem

    result, _ = make_result(tmp_path)
    with pytest.raises(InputProblem):
        write_results(result)
    with pytest.raises(InputProblem):
        write_results(result, out=tmp_path / "a.xlsx", in_place=True)


def test_macro_source_needs_macro_output(tmp_path):
    from engine.errors import InputProblem

    result, _ = make_result(tmp_path, name="m.xlsm", writer=write_rich)
    with pytest.raises(InputProblem, match=r"\.xlsm"):
        write_results(result, out=tmp_path / "out.xlsx")


def test_copy_of_rich_book_is_unchanged_when_copied(tmp_path):
    """Sanity of the comparison helper: a plain file copy compares equal part by part."""
    result, _ = make_result(tmp_path, name="book.xlsx", writer=write_rich)
    book = Path(result.spec.source)
    shutil.copy(book, tmp_path / "copy.xlsx")
    assert parts(book) == parts(tmp_path / "copy.xlsx")
