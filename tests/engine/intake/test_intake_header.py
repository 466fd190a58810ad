"""Which row holds the headings: layouts seen in real workbooks (common spreadsheet practice).

Each case is a small grid as the cell reader returns it ("" for an empty cell); the expected
row is the one a person reading the sheet would name.
"""

from __future__ import annotations

import pytest

from engine.intake.header import detect_header_row, join_sub_heading, sub_heading_row

DATA = [["North", 18.4, 2.7, 93], ["South", 26.9, 0.8, 55], ["North", 5.1, 9.5, 71]]


@pytest.mark.parametrize(
    ("above", "expected"),
    [
        ([["site", "temp", "rain", "units"]], 0),  # plain
        ([["Weekly sales", "", "", ""], ["", "", "", ""], ["site", "temp", "rain", "units"]], 2),
        # group labels typed in every cell above the names
        ([["Store", "Weather", "Weather", "Outcome"], ["site", "temp", "rain", "units"]], 1),
        # a block of facts about the file above the table
        (
            [
                ["Client", "Acme Foods", "Period", "Q2"],
                ["Currency", "EUR", "Units", "kg"],
                ["", "", "", ""],
                ["site", "temp", "rain", "units"],
            ],
            3,
        ),
        # a title row of words and a version number
        ([["Q1 survey", "draft", "do not share", "2024"], ["site", "temp", "rain", "units"]], 1),
        # a units row under the names: the names are the headings
        ([["site", "temp", "rain", "units"], ["", "°C", "(mm)", "%"]], 0),
        # a full units row, compound units without brackets and no blank cell
        ([["site", "temp", "flow", "units"], ["km", "°C", "L/min", "m³/h"]], 0),
        # names above a row that completes some of them: the names' row, not the partial one
        ([["site", "temp", "temp", "units"], ["", "min", "max", ""]], 0),
    ],
)
def test_the_heading_row_is_the_one_right_above_the_data(above, expected):
    assert detect_header_row([*above, *DATA]) == expected


def test_headings_that_are_years_fall_back_to_the_first_wide_row():
    rows = [["Sales by year", "", ""], ["region", 2023, 2024], ["North", 10.0, 12.0]]
    assert detect_header_row(rows) == 1


def test_a_table_of_words_only_takes_the_first_wide_row_of_words():
    rows = [["Notes"], ["name", "colour", "size"], ["ann", "red", "big"], ["bo", "blue", "small"]]
    assert detect_header_row(rows) == 1


# a second heading row under the first (common spreadsheet practice: units, or words telling
# apart columns that share a heading); the data are DATA below it
@pytest.mark.parametrize(
    "sub",
    [
        ["", "°C", "(mm)", "%"],  # units
        ["", "list", "net", ""],  # words completing two headings
        ["", "", "", "FTE"],  # one unit over one column
    ],
)
def test_a_row_completing_the_headings_is_recognized(sub):
    rows = [["site", "temp", "rain", "units"], sub, *DATA]
    assert sub_heading_row(rows, 0)


@pytest.mark.parametrize(
    ("first", "why"),
    [
        (["North", "", "", ""], "a category level that appears again below: a data row"),
        (["East", "", "", ""], "words over a text column only: a data row of a new level"),
        (["", "n/a", "n/a", ""], "stand-ins for missing values"),
        (["", "pending", "pending", ""], "placeholders for values still to come"),
        (["", "°C", 12.5, ""], "a number in the row"),
        (["", "", "", ""], "nothing in it"),
    ],
)
def test_rows_that_do_not_complete_the_headings(first, why):
    rows = [["site", "temp", "rain", "units"], first, *DATA]
    assert not sub_heading_row(rows, 0), why


def test_a_last_row_under_the_headings_is_never_taken_for_sub_headings():
    assert not sub_heading_row([["site", "temp"], ["", "°C"]], 0)


@pytest.mark.parametrize(
    ("heading", "sub", "name"),
    [
        ("Price", "list", "Price list"),
        ("Weight", "kg", "Weight (kg)"),
        ("flow", "L/min", "flow (L/min)"),
        ("dose", "mg/kg", "dose (mg/kg)"),
        ("Rain", "(mm)", "Rain (mm)"),
        # words saying the kind of value are bracketed like units (common practice of
        # units rows), so "express" alone still names the column when new rows are scored
        ("express", "yes/no", "express (yes/no)"),
        ("quote_date", "date", "quote_date (date)"),
        ("Interest", "rate", "Interest rate"),  # a noun of the name, not a kind of value
        ("", "FTE", "FTE"),
        ("Store", "", "Store"),
    ],
)
def test_names_joined_from_heading_and_sub_heading(heading, sub, name):
    assert join_sub_heading(heading, sub) == name


def test_a_response_named_without_its_joined_unit_is_found(tmp_path):
    # a units row under the names ("g" under "y") is joined to them ("y (g)"); the response can
    # still be named as the heading row writes it
    import numpy as np
    import openpyxl

    from engine.intake import read_table
    from engine.study import run_study
    from engine.study_spec import StudySpec

    rng = np.random.default_rng(1)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["temp", "press", "flow", "y"])
    ws.append(["°C", "kPa", "L/min", "g"])
    for _ in range(40):
        t, p, f = rng.normal(size=3)
        ws.append([80 + 5 * t, 101 + 3 * p, 2 + 0.2 * f, 10 + t + p + rng.normal()])
    book = tmp_path / "runs.xlsx"
    wb.save(book)
    table = read_table(book)
    assert [c.name for c in table.columns] == ["temp (°C)", "press (kPa)", "flow (L/min)", "y (g)"]
    res = run_study(StudySpec(source=str(book), response="y", methods=("ols",), folds=5))
    assert res.design.response == "y (g)"
