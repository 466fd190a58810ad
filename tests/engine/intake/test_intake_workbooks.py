"""Known answers on ugly workbooks built in the tests (facts come from the construction)."""

from __future__ import annotations

import datetime as dt
import math
import os

import numpy as np
import openpyxl
import pytest
import xlsxwriter
from intake_corpus import MESSY_ROWS, write_formula_book, write_messy_book

from engine.errors import InputProblem
from engine.intake import ColumnKind, describe_table, list_sheets, read_table


@pytest.fixture
def messy_book(tmp_path):
    path = tmp_path / "bakery demand.xlsx"
    return path, write_messy_book(path)


def test_messy_sheet_layout(messy_book):
    path, facts = messy_book
    table = read_table(path)
    # the first sheet is hidden, so the first visible one is read
    assert table.sheet == facts["sheet"]
    assert [(s.name, s.hidden) for s in table.sheets] == [("Lookup", True), ("Demand", False)]
    assert table.header_row == facts["header_row"]
    assert table.n_rows == MESSY_ROWS
    assert table.blank_rows_skipped == 1
    assert table.row_numbers.tolist() == facts["row_numbers"]


def test_messy_sheet_kinds(messy_book):
    path, _ = messy_book
    table = read_table(path)
    kinds = {c.name: c.kind for c in table.columns}
    assert kinds == {
        "week": ColumnKind.DATE,
        "store": ColumnKind.CATEGORY,
        "price": ColumnKind.NUMBER,
        "demand": ColumnKind.NUMBER,
        "promo": ColumnKind.FLAG,
        "holiday": ColumnKind.FLAG,
        "lot code": ColumnKind.IDENTIFIER,
        "comment": ColumnKind.EMPTY,
        "oven temp": ColumnKind.NUMBER,
        "oven temp (2)": ColumnKind.NUMBER,
        "price again": ColumnKind.NUMBER,
        "price cents": ColumnKind.NUMBER,
        "region": ColumnKind.CATEGORY,
    }
    assert [c.letter for c in table.columns] == list("ABCDEFGHIJKLM")


def test_numbers_stored_as_text(messy_book):
    path, facts = messy_book
    price = read_table(path).column("price")
    assert price.text_numbers == len(facts["price_texts"])
    assert price.missing == 0
    # the text cells were parsed to the numbers they spell
    wb = openpyxl.load_workbook(path)
    ws = wb["Demand"]
    for ref, text in facts["price_texts"].items():
        row = int(ref[1:])
        k = int(np.flatnonzero(read_table(path).row_numbers == row)[0])
        assert price.values[k] == pytest.approx(float(text.replace(",", "")))
        assert ws[ref].value == text
    assert any("stored as text" in n for n in price.notes)


def test_errors_and_unparseable_text(messy_book):
    path, facts = messy_book
    demand = read_table(path).column("demand")
    assert demand.errors == len(facts["demand_err"])
    assert demand.missing == len(facts["demand_err"]) + len(facts["demand_bad"])
    assert int(np.isnan(demand.values).sum()) == demand.missing
    ((ref, text),) = facts["demand_bad"].items()
    assert any(f"{ref} '{text}'" in n for n in demand.notes)
    assert any("#DIV/0!" in n and "#N/A" in n for n in demand.notes)


def test_flags_categories_identifiers(messy_book):
    path, _ = messy_book
    table = read_table(path)
    promo = table.column("promo")
    assert promo.values.tolist() == [float(i % 2) for i in range(MESSY_ROWS)]
    holiday = table.column("holiday")
    assert holiday.values.tolist() == [1.0 if i % 4 == 0 else 0.0 for i in range(MESSY_ROWS)]
    store = table.column("store")
    assert store.levels == ["East", "North", "South"]  # 8 rows each: ties are alphabetical
    assert store.distinct == 3 and store.values[0] == "North"
    region = table.column("region")
    assert region.levels == ["coast", "inland"]  # equal counts: alphabetical
    lot = table.column("lot code")
    assert lot.distinct == MESSY_ROWS and lot.levels == []


def test_dates(messy_book):
    path, _ = messy_book
    week = read_table(path).column("week")
    assert week.values.dtype == np.dtype("datetime64[ns]")
    assert week.minimum == "2023-01-02"
    assert week.maximum == str(
        np.datetime64("2023-01-02") + np.timedelta64(7 * (MESSY_ROWS - 1), "D")
    )
    assert week.distinct == MESSY_ROWS


def test_constant_duplicate_and_near_duplicate(messy_book):
    path, _ = messy_book
    table = read_table(path)
    oven = table.column("oven temp")
    assert oven.constant and oven.distinct == 1 and oven.minimum == oven.maximum == 180
    second = table.column("oven temp (2)")
    assert second.duplicate_of == "oven temp" and second.heading == "oven temp"
    assert not second.constant
    assert table.column("price again").near_duplicate_of == "price"
    assert any("same values as column 'price'" in n for n in table.column("price again").notes)
    cents = table.column("price cents")
    assert cents.near_duplicate_of in ("price", "price again")
    assert any("straight-line copy" in n for n in cents.notes)
    assert table.column("demand").near_duplicate_of is None
    empty = table.column("comment")
    assert empty.missing == MESSY_ROWS and not empty.constant


def test_describe_counts_match_columns(messy_book):
    path, _ = messy_book
    table = read_table(path)
    facts = describe_table(table)
    for c, d in zip(table.columns, facts["columns"]):
        # invariant: reported missing equals the missing entries in the values
        if c.kind in (ColumnKind.NUMBER, ColumnKind.FLAG, ColumnKind.EMPTY):
            assert d["missing"] == int(np.isnan(c.values).sum())
        elif c.kind == ColumnKind.DATE:
            assert d["missing"] == int(np.isnat(c.values).sum())
        else:
            assert d["missing"] == sum(v is None for v in c.values)
        assert len(c.values) == table.n_rows


def test_header_row_override(messy_book):
    path, facts = messy_book
    table = read_table(path, sheet="Demand", header_row=2)
    assert table.header_row == 2
    assert table.columns[0].name == "Notes: prices in EUR; demand in loaves"
    # rows 3 (blank) and the heading row 4 come before the data; row 4 is now data
    assert table.row_numbers[0] == 4


def test_hidden_sheet_listed_and_readable_by_name(messy_book):
    path, _ = messy_book
    sheets = list_sheets(path)
    assert [(s.name, s.index, s.hidden) for s in sheets] == [
        ("Lookup", 0, True),
        ("Demand", 1, False),
    ]
    table = read_table(path, sheet="Lookup")
    assert table.sheet == "Lookup" and table.n_rows == 1
    assert table.column("code").values.tolist() == ["internal"]


def test_formulas_without_results_warn_with_cells(tmp_path):
    path = tmp_path / "scripted.xlsx"
    cells = write_formula_book(path)
    table = read_table(path)
    (warning,) = [w for w in table.warnings if "formula" in w]
    assert f"{len(cells)} formula cells" in warning
    for ref in cells[:5]:
        assert ref in warning
    assert cells[5] not in warning and "and 3 more" in warning
    total = table.column("total")
    assert total.missing == len(cells) and total.kind == ColumnKind.EMPTY


def test_error_cells_with_cached_codes(tmp_path):
    # xlsxwriter stores the formula and the given result; t="e" for error results
    path = tmp_path / "errors.xlsx"
    wb = xlsxwriter.Workbook(str(path))
    ws = wb.add_worksheet("S")
    ws.write_row(0, 0, ["ratio", "id"])
    for i in range(10):
        if i in (2, 7):
            ws.write_formula(i + 1, 0, "=1/0", None, "#DIV/0!")
        elif i == 4:
            ws.write_formula(i + 1, 0, "=NA()", None, "#N/A")
        else:
            ws.write_formula(i + 1, 0, f"={i}/2", None, i / 2)
        ws.write(i + 1, 1, f"r{i}")
    wb.close()
    table = read_table(path)
    ratio = table.column("ratio")
    assert ratio.kind == ColumnKind.NUMBER
    assert ratio.errors == 3 and ratio.missing == 3
    assert np.nansum(ratio.values) == pytest.approx(
        sum(i / 2 for i in range(10) if i not in (2, 4, 7))
    )
    assert not any("formula" in w for w in table.warnings)


def test_mostly_numbers_with_notes_naming_three_cells(tmp_path):
    path = tmp_path / "m.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["x"])
    bad = {3: "tbd", 9: "?", 12: "see note", 15: "n/a"}
    for i in range(30):
        ws.append([bad.get(i, i * 1.5)])
    wb.save(path)
    col = read_table(path).column("x")
    assert col.kind == ColumnKind.NUMBER and col.missing == 4
    note = next(n for n in col.notes if "not numbers" in n)
    assert "A5 'tbd'" in note and "A11 '?'" in note and "A14 'see note'" in note
    assert "and 1 more" in note and "A17" not in note


def test_reading_never_modifies_the_file(messy_book):
    path, _ = messy_book
    before = (path.read_bytes(), os.stat(path).st_mtime_ns)
    read_table(path)
    list_sheets(path)
    read_table(path, sheet="Lookup", header_row=1)
    after = (path.read_bytes(), os.stat(path).st_mtime_ns)
    assert before == after


def test_leading_zero_codes_stay_text(tmp_path):
    path = tmp_path / "codes.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["postcode", "amount"])
    for i in range(12):
        ws.append([f"0{1000 + i}" if i % 2 else f"{2000 + i}", str(i)])
    wb.save(path)
    table = read_table(path)
    assert table.column("postcode").kind == ColumnKind.IDENTIFIER
    assert table.column("postcode").values[1] == "01001"
    amount = table.column("amount")
    assert amount.kind == ColumnKind.NUMBER and amount.text_numbers == 12
    assert math.isclose(float(np.sum(amount.values)), sum(range(12)))


def test_progress_reaches_the_end_and_cancel_stops(messy_book):
    from engine.errors import Cancelled
    from engine.progress import CancelToken, Progress

    path, _ = messy_book
    seen: list[float] = []
    read_table(path, progress=Progress(lambda f, w: seen.append(f)))
    assert seen[0] == 0.0 and seen[-1] == 1.0 and seen == sorted(seen)
    token = CancelToken()
    token.cancel()
    with pytest.raises(Cancelled):
        read_table(path, progress=Progress(None, token))


def test_sheet_name_is_matched_ignoring_case(messy_book):
    path, _ = messy_book
    assert read_table(path, sheet="demand").sheet == "Demand"
    with pytest.raises(InputProblem):
        read_table(path, sheet="Demand2")


def test_year_headings_under_a_title(tmp_path):
    path = tmp_path / "years.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["Sales by year"])
    ws.append([])
    ws.append(["region", 2019, 2020, 2021])
    for i in range(6):
        ws.append([f"r{i % 2}", i, i + 1.5, 2 * i])
    wb.save(path)
    table = read_table(path)
    assert table.header_row == 3
    assert [c.name for c in table.columns] == ["region", "2019", "2020", "2021"]
    assert table.column("2020").values.tolist() == [i + 1.5 for i in range(6)]


def test_columns_without_heading_are_named_by_letter(tmp_path):
    path = tmp_path / "gaps.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["a", None, "c", None])
    for i in range(5):
        ws.append([i, i * 2.5, None, None])
    wb.save(path)
    table = read_table(path)
    assert [c.name for c in table.columns] == ["a", "column B", "c"]
    assert table.column("c").kind.value == "empty"
    assert any("no heading" in w and "B" in w for w in table.warnings)


def test_macro_enabled_name_and_content_decide_the_format(tmp_path):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["a", "b"])
    ws.append([1, "x"])
    ws.append([2, "y"])
    xlsm = tmp_path / "macros.xlsm"
    wb.save(xlsm)
    table = read_table(xlsm)
    assert table.file_format == "xlsm" and table.column("a").values.tolist() == [1.0, 2.0]
    # an .xlsx package saved under an .xls name is read by its content
    renamed = tmp_path / "renamed.xls"
    renamed.write_bytes(xlsm.read_bytes())
    assert read_table(renamed).file_format == "xlsx"


def _saved_sheet(tmp_path, title, rows, name="book.xlsx", edit=None):
    """A one-sheet workbook of ``rows`` (None: an empty cell), ``edit(ws)`` applied before
    saving (merged ranges, hidden rows); returns its path."""
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = title
    for row in rows:
        ws.append(row)
    if edit is not None:
        edit(ws)
    path = tmp_path / name
    wb.save(path)
    return path


def _book_with_foot(tmp_path, foot_rows, name="foot.xlsx"):
    """Ten data rows (region, units, price) under headings, then the given foot rows."""
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Sales"
    ws.append(["region", "units", "price"])
    for i in range(10):
        ws.append(["North" if i % 2 else "South", 100 + i, 2.5 + i / 10])
    for row in foot_rows:
        ws.append(row)
    path = tmp_path / name
    wb.save(path)
    return path


def test_totals_rows_at_the_foot_are_left_out_with_a_warning(tmp_path):
    # common spreadsheet practice: a labelled totals row under the data; read as data it
    # would be one huge outlier (units 1045 against 100-109)
    path = _book_with_foot(tmp_path, [["Subtotal", 1045, None], ["Grand total:", 1045, None]])
    table = read_table(path)
    assert table.n_rows == 10 and table.row_numbers.tolist() == list(range(2, 12))
    units = next(c for c in table.columns if c.name == "units")
    assert np.nanmax(units.values) == 109
    assert any(
        "row 12 left out: it looks like a totals or summary row ('Subtotal' in cell A12)" in w
        for w in table.warnings
    )
    assert any("row 13 left out" in w and "'Grand total:'" in w for w in table.warnings)


@pytest.mark.parametrize(
    "foot",
    [
        ["Total", 100, 2.0],  # "Total" is also a region above: a category, not a label
        ["Sum Ltd", 111, 3.1],  # a name that starts with "sum" in a row with other text below
    ],
)
def test_rows_that_only_look_like_totals_stay_data(tmp_path, foot):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["region", "units", "price", "buyer"])
    for i in range(10):
        ws.append(["Total" if i == 3 else "North", 100 + i, 2.5, f"buyer {i}"])
    ws.append(foot + ["buyer 10"])
    path = tmp_path / "data.xlsx"
    wb.save(path)
    table = read_table(path)
    assert table.n_rows == 11
    assert not any("left out" in w for w in table.warnings)


def test_summary_rows_under_a_totals_row_are_left_out_too(tmp_path):
    # common spreadsheet practice: a total and an average (and other summaries) under the data
    path = _book_with_foot(
        tmp_path, [["TOTAL", 1045, 30.0], ["Average", 104.5, 3.0], ["Std. dev.", 3.03, 0.3]]
    )
    table = read_table(path)
    assert table.n_rows == 10
    units = next(c for c in table.columns if c.name == "units")
    assert np.nanmax(units.values) == 109
    assert [w.split(":")[0] for w in table.warnings if "left out" in w] == [
        "row 12 left out",
        "row 13 left out",
        "row 14 left out",
    ]
    assert any("('Average' in cell A13)" in w for w in table.warnings)


def test_a_name_starting_with_a_summary_word_stays_data(tmp_path):
    # "Max" is a summary label only on its own: a person called Max in the last row is data
    path = _book_with_foot(tmp_path, [["Max Weber", 110, 3.5]])
    table = read_table(path)
    assert table.n_rows == 11
    assert not any("left out" in w for w in table.warnings)


def test_a_totals_line_in_a_text_file_is_left_out(tmp_path):
    lines = ["Filiale;Umsatz"] + [f"Nord;{1000 + i},5" for i in range(8)] + ["Summe;=SUMME(B2:B9)"]
    path = tmp_path / "umsatz.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    table = read_table(path)
    assert table.n_rows == 8
    assert any("row 10 left out" in w and "'Summe' in column 1" in w for w in table.warnings)


def test_the_decimal_mark_of_numbers_written_as_text_is_decided_for_the_sheet(tmp_path):
    # common practice in decimal-comma locales: a lab sheet of values exported as text. "0,325"
    # can only be a decimal comma; "1,250" reads either way and follows the sheet's other
    # numbers ("6,02": decimal comma), so it is 1.25, not 1250
    rows = [[f"6,{10 + i:02d}", f"0,{300 + 7 * i}", f"1,{250 + i * 11}"] for i in range(12)]
    path = _saved_sheet(tmp_path, "Analysen", [["pH", "Nitrat", "Leitwert"], *rows])
    table = read_table(path)
    nitrat = table.column("Nitrat")
    assert nitrat.values[0] == pytest.approx(0.3) and nitrat.maximum == pytest.approx(0.377)
    leit = table.column("Leitwert")
    assert leit.values[0] == pytest.approx(1.25) and leit.maximum == pytest.approx(1.371)
    assert any("decimal comma" in n and "could also" in n for n in leit.notes)
    # and the fit's warnings carry it too (a value that depends on the mark deserves a look)
    assert any(w.startswith("column 'Leitwert' (C): ") for w in table.warnings)


def test_one_decimal_comma_column_does_not_change_how_units_and_limits_elsewhere_read(tmp_path):
    # common practice: the decimal mark is a column's own matter. One column of "5,40" texts
    # beside columns written with points: "50.0 kg", "<0.05" and "1.005 kg" read as typed there
    # (a sheet-wide comma would drop the first two and read the last as 1005)
    rows = [
        [
            i,
            f"{5 + i / 20:.2f}".replace(".", ",") if i % 4 == 0 else 5 + i / 20,
            f"{50 + i / 10:.1f} kg" if i % 5 == 0 else 50 + i / 10,
            "<0.05" if i % 10 == 0 else 0.1 + i / 100,
            f"{1 + i / 1000:.3f} kg" if i % 5 == 0 else 1 + i / 1000,
        ]
        for i in range(40)
    ]
    path = _saved_sheet(tmp_path, "S", [["y", "ph", "mass", "lead", "small_mass"], *rows])
    table = read_table(path)
    assert table.column("ph").values[4] == pytest.approx(5.2)
    mass, lead, small = (table.column(c) for c in ("mass", "lead", "small_mass"))
    assert mass.missing == lead.missing == small.missing == 0
    assert mass.values[5] == pytest.approx(50.5)
    assert lead.values[10] == pytest.approx(0.025)  # half the limit
    assert small.values[5] == pytest.approx(1.005) and small.maximum == pytest.approx(1.039)


def test_a_label_merged_down_a_column_counts_for_every_row_of_its_range(tmp_path):
    # common spreadsheet practice: a site typed once and merged over its rows (ECMA-376 Part 1,
    # 18.3.1.55 mergeCell: only the top-left cell of a merged range holds a value)
    rows = [
        [["North", "South", "East"][i // 3] if i % 3 == 0 else None, i, 2.0 * i] for i in range(9)
    ]

    def merge(ws):
        for top in (2, 5, 8):
            ws.merge_cells(f"A{top}:A{top + 2}")

    path = _saved_sheet(tmp_path, "Trial", [["site", "dose", "response"], *rows], edit=merge)
    table = read_table(path)
    site = table.column("site")
    assert site.kind.value == "category" and site.missing == 0
    assert list(site.values) == ["North"] * 3 + ["South"] * 3 + ["East"] * 3
    assert any(
        "3 merged ranges down a column in sheet 'Trial' (A2:A4, A5:A7, A8:A10)" in w
        for w in table.warnings
    )


@pytest.mark.parametrize("with_blank", [False, True])  # both reading routes (all numbers or not)
def test_hidden_rows_and_columns_are_read_and_named(tmp_path, with_blank):
    # ECMA-376 Part 1, 18.3.1.73 row@hidden and 18.3.1.13 col@hidden: hidden, not deleted
    rows = [
        [float(i), float(i * i), None if with_blank and i == 3 else 2.0 * i + 0.5] for i in range(8)
    ]

    def hide(ws):
        ws.row_dimensions[5].hidden = True
        ws.column_dimensions["B"].hidden = True

    path = _saved_sheet(tmp_path, "Hidden", [["x1", "old_x", "y"], *rows], edit=hide)
    table = read_table(path)
    assert table.n_rows == 8 and [c.name for c in table.columns] == ["x1", "old_x", "y"]
    assert any(
        "sheet 'Hidden' has 1 hidden row (5) and 1 hidden column (B); they are read like the others"
        in w
        for w in table.warnings
    )


def test_notes_under_the_table_are_left_out(tmp_path):
    # common spreadsheet practice: a source line or a remark typed under the data
    path = _book_with_foot(
        tmp_path, [[None, None, None], ["Source: stock system, exported 2024-03-02", None, None]]
    )
    table = read_table(path)
    assert table.n_rows == 10
    assert any(
        "row 13 left out: it looks like a note row ('Source: stock system, exported "
        "2024-03-02' in cell A13)" in w
        for w in table.warnings
    )


def test_a_footer_line_of_a_text_export_is_left_out(tmp_path):
    lines = ["site,units,price,weight"] + [f"S{i},{100 + i},2.5,{i}" for i in range(8)]
    path = tmp_path / "export.csv"
    path.write_text("\n".join([*lines, "Exported rows: 8"]) + "\n", encoding="utf-8")
    table = read_table(path)
    assert table.n_rows == 8
    assert any("'Exported rows: 8' in column 1" in w for w in table.warnings)


def test_two_heading_rows_give_combined_names(tmp_path):
    # common practice in lab sheets: a measure's name merged over its statistics, and the
    # single columns' names merged down over both heading rows
    heads = [
        ["run", "Temperature", None, "Pressure", None, "purity"],
        [None, "mean", "sd", "mean", "sd", None],
    ]
    rows = [[f"R{i}", 20.0 + i, 1.0 + i / 10, 3.0 - i / 10, 0.2, 95.0 + i / 3] for i in range(6)]

    def merge(ws):
        for cells in ("B1:C1", "D1:E1", "A1:A2", "F1:F2"):
            ws.merge_cells(cells)

    path = _saved_sheet(tmp_path, "Runs", [*heads, *rows], edit=merge)
    table = read_table(path)
    assert table.header_row == 2
    assert [c.name for c in table.columns] == [
        "run", "Temperature mean", "Temperature sd", "Pressure mean", "Pressure sd", "purity",
    ]  # fmt: skip
    assert any(
        "headings of row 2 are completed with the labels of row 1" in w for w in table.warnings
    )


def test_a_stray_cell_far_below_the_table_is_left_out(tmp_path):
    rows = [[float(i), float(i % 3), 2.0 * i] for i in range(8)]

    def stray(ws):
        ws["E60"] = 7  # typed out of the way, long after the data

    path = _saved_sheet(tmp_path, "Data", [["a", "b", "y"], *rows], edit=stray)
    table = read_table(path)
    assert table.n_rows == 8 and [c.name for c in table.columns] == ["a", "b", "y"]
    assert any(
        "row 60 left out: its only value (cell E60) lies 50 blank rows below" in w
        for w in table.warnings
    )


def test_two_tables_side_by_side_are_pointed_out(tmp_path):
    rows = [[float(i), 2.0 * i, None, f"M{i}", float(i % 4)] for i in range(6)]
    path = _saved_sheet(tmp_path, "Two", [["x1", "y", None, "month", "budget"], *rows])
    table = read_table(path)
    assert [c.name for c in table.columns] == ["x1", "y", "month", "budget"]
    assert any(
        "sheet 'Two' has an empty column (C) between columns in use" in w for w in table.warnings
    )


def test_a_second_heading_row_completes_the_names_and_is_not_data(tmp_path):
    # units and words under the headings, two columns sharing the heading "Price" (common
    # spreadsheet practice); read as data the row put text into every number column
    rows = [
        ["Store panel, draft"],
        [],
        ["Store", "Price", "Price", "Staff", "Weight"],
        [None, "list", "net", "FTE", "kg"],
    ]
    rows += [[f"S{i}", 10.0 + i, 9.0 + i, 3 + i % 4, 1.5 * i] for i in range(12)]
    table = read_table(_saved_sheet(tmp_path, "Panel", rows))
    assert table.header_row == 3
    assert [c.name for c in table.columns] == [
        "Store", "Price list", "Price net", "Staff FTE", "Weight (kg)"
    ]  # fmt: skip
    assert table.row_numbers.tolist() == list(range(5, 17))
    price = table.column("Price net")
    assert price.kind == ColumnKind.NUMBER and price.missing == 0
    assert price.values[0] == 9.0
    assert any(
        "row 4 under the headings holds sub-headings or units ('list', 'net', 'FTE', 'kg')" in w
        for w in table.warnings
    )


def test_a_first_data_row_of_words_stays_data(tmp_path):
    # the first row under the headings holds only words, but its level appears again below:
    # a data row whose numbers are missing, not sub-headings
    rows = [["region", "units", "price"], ["North", None, None]]
    rows += [["North" if i % 2 else "South", 100 + i, 2.5] for i in range(10)]
    table = read_table(_saved_sheet(tmp_path, "Sales", rows))
    assert [c.name for c in table.columns] == ["region", "units", "price"]
    assert table.row_numbers.tolist()[0] == 2 and table.n_rows == 11


def test_results_against_a_limit_are_among_the_sheet_warnings(tmp_path):
    # a value read in place of "<0.3" changes the data: said with the fit, not only by inspect
    rows = [["sample", "lead", "yield"]]
    rows += [[f"A{i}", "<0.3" if i % 5 == 0 else 0.5 + i / 10, 40.0 + i] for i in range(20)]
    table = read_table(_saved_sheet(tmp_path, "Assays", rows))
    assert table.column("lead").values[0] == 0.15
    assert any(
        w.startswith("column 'lead' (B): 4 results below a detection limit (e.g. B2 '<0.3')")
        for w in table.warnings
    )


def test_headings_repeated_down_the_sheet_are_left_out(tmp_path):
    # a report printed page by page repeats its headings (and the units under them) every
    # page; read as data they made a level "Segment" and text in every number column
    head = ["Branch", "Segment", "Balance", "Tenure"]
    units = [None, None, "EUR", "months"]
    rows = [head, units]
    for i in range(30):
        if i in (10, 20):
            rows += [[], head, units]
        rows.append([f"BR{i % 4}", "SME" if i % 3 else "Retail", 100.0 + i, i + 1])
    table = read_table(_saved_sheet(tmp_path, "Export", rows))
    assert [c.name for c in table.columns] == [
        "Branch",
        "Segment",
        "Balance (EUR)",
        "Tenure (months)",
    ]
    assert table.n_rows == 30
    assert table.column("Segment").levels == ["SME", "Retail"]
    assert table.column("Balance (EUR)").missing == 0
    assert any(
        "4 rows left out (14, 15, 27, 28): they repeat the headings" in w for w in table.warnings
    )


def test_a_text_file_with_its_heading_line_repeated(tmp_path):
    # files joined one after another keep each one's heading line
    lines = ["site;temp;sales"] + [f"S{i};{10 + i};{100 + i}" for i in range(8)]
    lines += ["site;temp;sales"] + [f"S{i};{20 + i};{200 + i}" for i in range(8)]
    path = tmp_path / "joined.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    table = read_table(path)
    assert table.n_rows == 16 and table.column("temp").missing == 0
    assert any("1 row left out (10): it repeats the headings" in w for w in table.warnings)


def test_a_row_sharing_one_cell_with_its_heading_stays_data(tmp_path):
    # a level spelled like its column's heading, beside numbers: a data row
    rows = [["grade", "score", "hours"], ["grade", 71.0, 3.0]]
    rows += [["A" if i % 2 else "B", 60.0 + i, 1.0 + i] for i in range(10)]
    table = read_table(_saved_sheet(tmp_path, "Marks", rows))
    assert table.n_rows == 11 and not any("repeat the headings" in w for w in table.warnings)


def test_without_a_sheet_named_a_cover_page_is_passed_over(tmp_path):
    # a title page first: the first visible sheet holding a table (two columns, a few rows)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Cover"
    ws["A1"] = "Quarterly pricing review"
    ws["A3"] = "Prepared by: analytics"
    hidden = wb.create_sheet("Old")
    hidden.sheet_state = "hidden"
    hidden.append(["a", "b"])
    for i in range(5):
        hidden.append([i, i])
    data = wb.create_sheet("Data")
    data.append(["price", "units"])
    for i in range(6):
        data.append([2.0 + i, 100 - i])
    path = tmp_path / "cover.xlsx"
    wb.save(path)
    table = read_table(path)
    assert table.sheet == "Data" and table.n_rows == 6
    assert table.warnings[0].startswith(
        "sheet 'Data' read: the first sheet, 'Cover', holds no table"
    )
    # named explicitly, the cover is read as asked
    assert read_table(path, sheet="Cover").sheet == "Cover"


def test_a_workbook_whose_every_sheet_is_hidden_reads_the_first(tmp_path):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Only"
    ws.append(["price", "units"])
    for i in range(4):
        ws.append([1.0 + i, 10 - i])
    other = wb.create_sheet("Notes")
    other["A1"] = "see Only"
    path = tmp_path / "hidden.xlsx"
    wb.save(path)
    # hide both through the file's own markup (openpyxl refuses to hide every sheet)
    import zipfile

    with zipfile.ZipFile(path) as zf:
        parts = {n: zf.read(n) for n in zf.namelist()}
    parts["xl/workbook.xml"] = parts["xl/workbook.xml"].replace(
        b'state="visible"', b'state="hidden"'
    )
    with zipfile.ZipFile(path, "w") as zf:
        for n, data in parts.items():
            zf.writestr(n, data)
    table = read_table(path)
    assert table.sheet == "Only" and table.n_rows == 4


def test_numbers_with_their_unit_are_among_the_sheet_warnings(tmp_path):
    rows = [["batch", "weight", "yield"]]
    rows += [[f"B{i}", f"{10 + i / 4:.2f} kg", 50.0 + i] for i in range(12)]
    table = read_table(_saved_sheet(tmp_path, "Lots", rows))
    assert table.column("weight").kind == ColumnKind.NUMBER
    assert table.column("weight").values[1] == 10.25
    assert any(
        w.startswith("column 'weight' (B): 12 numbers written with the unit 'kg'")
        for w in table.warnings
    )


def test_cells_of_a_sheet_with_a_quote_in_its_name_are_named_as_references(tmp_path):
    # a formula saved without its result (openpyxl keeps none) is named by its cell, written
    # as a reference is: the sheet's name quoted, its own quote doubled
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Lab 'QC' data"
    ws.append(["y", "x", "z"])
    for i in range(12):
        ws.append([float(i), float(i % 4), f"=A{i + 2}*2"])
    path = tmp_path / "qc.xlsx"
    wb.save(path)
    table = read_table(path)
    note = next(w for w in table.warnings if "no stored result" in w)
    assert "'Lab ''QC'' data'!C2" in note


def test_a_plain_number_among_dates_is_a_date_serial_number(tmp_path):
    # a date typed or pasted without its format arrives as its serial number; openpyxl's
    # from_excel (general-purpose library) says which day a serial is in the 1900 system
    from openpyxl.utils.datetime import from_excel

    rows = [["day", "sold"]] + [
        [dt.datetime(2024, 5, 1) + dt.timedelta(days=i), 10.0 + i] for i in range(12)
    ]
    rows[5][0] = 45446.0  # no date format: the serial number alone
    rows[8][0] = 12.0  # too small to be a date of these rows: stays unusable
    table = read_table(_saved_sheet(tmp_path, "Days", rows))
    day = table.column("day")
    assert day.kind == ColumnKind.DATE
    assert str(day.values[4])[:10] == from_excel(45446).date().isoformat() == "2024-06-03"
    assert np.isnat(day.values[7])
    assert any(
        "1 number among the dates read as date serial number (e.g. A6 45446" in w
        for w in table.warnings
    )


def test_a_plain_number_among_dates_of_a_1904_workbook_is_not_guessed(tmp_path):
    # ECMA-376 Part 1, workbookPr date1904: serial numbers count from 1904-01-01 there, so
    # 45446 would be another day than in the 1900 system; the cell is named, not read
    from openpyxl.utils.datetime import CALENDAR_MAC_1904

    wb = openpyxl.Workbook()
    wb.epoch = CALENDAR_MAC_1904
    ws = wb.active
    ws.append(["day", "sold"])
    for i in range(10):
        ws.append([dt.datetime(2024, 5, 1) + dt.timedelta(days=i), float(i)])
        ws.cell(i + 2, 1).number_format = "yyyy-mm-dd"
    ws.cell(5, 1).value = 45446.0
    ws.cell(5, 1).number_format = "General"
    path = tmp_path / "mac.xlsx"
    wb.save(path)
    day = read_table(path).column("day")
    assert np.isnat(day.values[3]) and str(day.values[0])[:10] == "2024-05-01"
    assert any("not a date treated as missing: A5 '45446'" in n for n in day.notes)


@pytest.mark.parametrize(
    ("cells", "fitted", "as_batch", "for_the_model"),
    [
        # a model fitted on shares (0.1 to 0.89): "50%" is 0.5 whatever the other new rows hold
        ([50, "50%"], (0.1, 0.89), [50.0, 50.0], [0.5, 0.5]),
        (["50%"], (0.1, 0.89), [0.5], [0.5]),
        # a model fitted on percentage points (10 to 89): "50%" is 50, also alone
        (["50%"], (10.0, 89.0), [0.5], [50.0]),
        ([50, "50%"], (10.0, 89.0), [50.0, 50.0], [50.0, 50.0]),
        # the fitted range alone decides: a range from 0, and values beyond the fitted range
        (["50%", "20%"], (0.0, 100.0), [0.5, 0.2], [50.0, 20.0]),
        (["50%", 30], (0.0, 100.0), [50.0, 30.0], [50.0, 30.0]),
        (["95%"], (10.0, 89.0), [0.95], [95.0]),
        (["95%", "50%"], (10.0, 89.0), [0.95, 0.5], [95.0, 50.0]),
    ],
)
def test_new_rows_read_percentages_on_the_scale_the_model_was_fitted_on(
    tmp_path, cells, fitted, as_batch, for_the_model
):
    # common practice: a percent sign divides by 100; new rows are too few to tell a column's
    # habit, so the fitted column's range decides, and one cell reads the same in any batch
    path = _saved_sheet(tmp_path, "New", [["pct", "x"], *[[c, i] for i, c in enumerate(cells)]])
    alone = read_table(path).column("pct").values
    np.testing.assert_allclose(alone, as_batch)
    model_scale = read_table(path, fitted_ranges={"pct": fitted}).column("pct").values
    np.testing.assert_allclose(model_scale, for_the_model)


def test_a_guessed_day_month_order_is_among_the_sheets_warnings(tmp_path):
    # "02/01/2024" is 2 January or 1 February: when no date settles it (a day above 12), the
    # order is the sheet's habit, a guess that moves every date: said with the fit and when
    # new rows are scored, not only by inspect (common practice: ISO 8601 avoids it)
    rows = [[f"{1 + i % 12:02d}/{1 + i % 9:02d}/2024", float(i)] for i in range(20)]
    path = _saved_sheet(tmp_path, "S", [["when", "y"], *rows])
    table = read_table(path)
    assert table.column("when").kind.value == "date"
    assert any(
        w.startswith("column 'when' (A): dates such as '01/01/2024' could be read either way")
        for w in table.warnings
    ), table.warnings
