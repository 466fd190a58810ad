"""Which row holds the headings: layouts seen in real workbooks (common spreadsheet practice).

Each case is a small grid as the cell reader returns it ("" for an empty cell); the expected
row is the one a person reading the sheet would name.
"""

from __future__ import annotations

import pytest

from engine.intake.header import detect_header_row

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
