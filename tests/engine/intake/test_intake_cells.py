"""Single cells: numbers written as text, column letters, flag and error tokens."""

from __future__ import annotations

import pytest
from hypothesis import given
from hypothesis import strategies as st
from openpyxl.utils import column_index_from_string, get_column_letter

from engine.intake.cells import (
    ERROR_VALUES,
    FLAG_FALSE,
    FLAG_TRUE,
    column_index,
    column_letter,
    format_plain,
    parse_number_text,
    text_number_convention,
)


@pytest.mark.parametrize(
    ("text", "decimal", "expected"),
    [
        ("1,234.5", ".", 1234.5),
        (" 42 ", ".", 42.0),
        ("12%", ".", 0.12),
        ("(1.5)", ".", -1.5),
        ("-3", ".", -3.0),
        ("+3", ".", 3.0),
        ("1e3", ".", 1000.0),
        (".5", ".", 0.5),
        ("$1,200", ".", 1200.0),
        ("-$5", ".", -5.0),
        ("12 €", ".", 12.0),
        ("1 234,5", ",", 1234.5),
        ("1.234,5", ",", 1234.5),
        ("1\u00a0234,5", ",", 1234.5),
        ("0,75", ",", 0.75),
        ("12,5%", ",", 0.125),
        ("1'234.5", ".", 1234.5),
        ("0.5", ".", 0.5),
        ("0", ".", 0.0),
        ("\u22123.2", ".", -3.2),  # the typeset minus sign (Unicode U+2212)
        ("1.234,50-", ",", -1234.5),  # a trailing minus, as accounting exports write it
        ("(12-)", ".", 12.0),  # parentheses and a trailing minus: two negations
        ("CHF 1'200.00", ".", 1200.0),  # ISO 4217 currency codes before or after
        ("12,50 EUR", ",", 12.5),
        ("0,325", ",", 0.325),  # three decimals after a zero: only a decimal comma reads it
        ("-0.747", ".", -0.747),
    ],
)
def test_numbers_written_as_text(text, decimal, expected):
    # Source: common practice in spreadsheet number formats (grouping marks, percent,
    # accounting parentheses or a trailing minus for negatives); ISO 4217 for the
    # three-letter currency codes; Unicode U+2212 MINUS SIGN.
    assert parse_number_text(text, decimal) == pytest.approx(expected)


@pytest.mark.parametrize(
    ("text", "decimal"),
    [
        ("abc", "."),
        ("", "."),
        ("12,34.5", "."),  # grouping must come in threes
        ("1,5", "."),
        ("1.5", ","),
        ("0,325", "."),  # a digit group never starts with a lone zero: not 325
        ("0.325", ","),
        ("01,234", "."),
        ("007", "."),  # a code with a leading zero
        ("01234", ","),
        ("inf", "."),
        ("nan", "."),
        ("1e999", "."),
        ("--1", "."),
        ("1 2", "."),
        ("%", "."),
        ("()", "."),
        ("#N/A", "."),
        ("-", "."),
        ("12-3", "."),  # a range or a code, not a negative number
        ("2024-01", "."),
        ("12 USDX", "."),
        ("EUR12", "."),  # a code needs its space
    ],
)
def test_texts_that_are_not_numbers(text, decimal):
    assert parse_number_text(text, decimal) is None


@given(st.floats(allow_nan=False, allow_infinity=False, min_value=-1e12, max_value=1e12))
def test_written_numbers_read_back(x):
    # Two routes agree: Python's own formatting (with grouping) and our reading.
    assert parse_number_text(f"{x:,.6f}", ".") == pytest.approx(round(x, 6), rel=1e-12, abs=1e-6)
    comma_text = f"{x:,.6f}".replace(",", " ").replace(".", ",")
    assert parse_number_text(comma_text, ",") == pytest.approx(round(x, 6), rel=1e-12, abs=1e-6)
    assert parse_number_text(repr(x), ".") == x


def test_decimal_convention_of_a_column():
    assert text_number_convention(["1,5", "2,25", "3"]) == ","
    assert text_number_convention(["1,234.5", "2.5"]) == "."
    assert text_number_convention(["12", "13"], default=",") == ","  # nothing decides


@given(st.integers(min_value=0, max_value=16383))
def test_column_letters_match_reference(index):
    # Source: general-purpose reference library openpyxl (openpyxl.utils column helpers).
    assert column_letter(index) == get_column_letter(index + 1)
    assert column_index(column_letter(index)) == column_index_from_string(column_letter(index)) - 1


def test_known_column_letters():
    # Source: common practice (A..Z, then AA; the last column of a modern sheet is XFD).
    assert [column_letter(i) for i in (0, 25, 26, 27, 701, 702, 16383)] == [
        "A",
        "Z",
        "AA",
        "AB",
        "ZZ",
        "AAA",
        "XFD",
    ]


def test_tokens():
    assert set(FLAG_TRUE).isdisjoint(FLAG_FALSE)
    assert all(t == t.lower().strip() for t in FLAG_TRUE + FLAG_FALSE)
    # Source: common practice; the seven classic spreadsheet error values.
    assert {"#N/A", "#DIV/0!", "#VALUE!", "#REF!", "#NAME?", "#NUM!", "#NULL!"} <= set(ERROR_VALUES)


def test_format_plain():
    import datetime as dt

    assert format_plain(12.0) == "12"
    assert format_plain(0.1) == "0.1"
    assert format_plain(True) == "TRUE"
    assert format_plain(dt.datetime(2021, 3, 4)) == "2021-03-04"
    assert format_plain(dt.datetime(2021, 3, 4, 5, 6)) == "2021-03-04 05:06:00"
