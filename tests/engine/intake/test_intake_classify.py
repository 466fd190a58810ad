"""The column-kind rules at their edges (cells built directly, as the reader hands them on)."""

from __future__ import annotations

import datetime as dt

import numpy as np
import pytest

from engine.intake.classify import (
    CATEGORY_MAX_LEVELS,
    DOMINANT_SHARE,
    UNCACHED,
    classify_column,
)
from engine.intake.table import ColumnKind


def _col(cells, **kw):
    arr = np.empty(len(cells), dtype=object)
    arr[:] = cells
    rows = np.arange(2, len(cells) + 2)
    return classify_column(arr, name="c", heading="c", letter="C", row_numbers=rows, **kw)


def test_share_threshold_for_numbers():
    n = 20
    k = round(n * (1 - DOMINANT_SHARE))  # exactly at the threshold: still a number column
    col = _col([float(i) for i in range(n - k)] + ["x"] * k)
    assert col.kind == ColumnKind.NUMBER and col.missing == k
    col = _col([float(i) for i in range(n - k - 1)] + [f"x{i}" for i in range(k + 1)])
    assert col.kind in (ColumnKind.CATEGORY, ColumnKind.IDENTIFIER)
    assert col.values[0] == "0"  # numbers in a text column keep the text a person sees


def test_numbers_with_blanks_take_the_vector_path():
    col = _col([1.0, "", 3, "", 5.5])
    assert col.kind == ColumnKind.NUMBER
    assert col.missing == 2 and col.distinct == 3 and col.minimum == 1.0 and col.maximum == 5.5


def test_zero_one_numbers_are_a_flag_only_with_both_values():
    assert _col([0.0, 1.0, 1.0, 0.0]).kind == ColumnKind.FLAG
    ones = _col([1.0, 1.0, 1.0])
    assert ones.kind == ColumnKind.NUMBER and ones.constant
    yes = _col(["yes", "Yes", " YES "])
    assert yes.kind == ColumnKind.FLAG and yes.constant and yes.values.tolist() == [1.0, 1.0, 1.0]


def test_mixed_flag_tokens():
    col = _col([True, "no", "Y", "n", 1.0, "0", "FALSE", ""])
    assert col.kind == ColumnKind.FLAG
    assert col.values[:7].tolist() == [1.0, 0.0, 1.0, 0.0, 1.0, 0.0, 0.0]
    assert np.isnan(col.values[7]) and col.missing == 1


@pytest.mark.parametrize(
    "yes_no",
    [("WAHR", "FALSCH"), ("ja", "nein"), ("VRAI", "FAUX"), ("oui", "non"), ("Sí", "No"),
     ("VERDADERO", "FALSO")],
)  # fmt: skip
def test_booleans_written_by_spreadsheet_programs_in_other_languages_are_flags(yes_no):
    # common practice: a spreadsheet program set up in German, French or Spanish writes TRUE
    # and FALSE in its language into a text file (WAHR/FALSCH, VRAI/FAUX, VERDADERO/FALSO)
    yes, no = yes_no
    col = _col([yes, no, no, yes.lower(), ""])
    assert col.kind == ColumnKind.FLAG
    assert col.values[:4].tolist() == [1.0, 0.0, 0.0, 1.0] and col.missing == 1


def test_typed_placeholders_do_not_count_against_a_number_column():
    # common practice: "n/a", "-", "missing" mark an absent value; in a short column of new rows
    # (3 numbers and one "n/a": 75%, under the 80% share) they must not turn numbers into text
    col = _col([22.0, 18.0, 45.0, "n/a"])
    assert col.kind == ColumnKind.NUMBER and col.missing == 1
    assert col.values[:3].tolist() == [22.0, 18.0, 45.0] and np.isnan(col.values[3])
    dates = _col([dt.date(2024, 1, 2), dt.date(2024, 1, 3), "-", "missing", dt.date(2024, 1, 9)])
    assert dates.kind == ColumnKind.DATE and dates.missing == 2
    assert _col(["yes", "no", "unknown", "?"]).kind == ColumnKind.FLAG
    # a real word among the numbers still counts against them
    assert _col([22.0, 18.0, 45.0, "broken"]).kind != ColumnKind.NUMBER
    # in a column of labels a placeholder stays a label
    labels = _col(["red", "n/a", "blue", "red", "n/a", "blue"])
    assert labels.kind == ColumnKind.CATEGORY and "n/a" in labels.levels


def test_category_versus_identifier():
    labels = ["a", "b"] * 10
    assert _col(labels).kind == ColumnKind.CATEGORY
    half = [f"k{i}" for i in range(10)] * 2  # 10 distinct of 20: still a category
    assert _col(half).kind == ColumnKind.CATEGORY
    more = [f"k{i}" for i in range(11)] + [f"k{i}" for i in range(9)]
    assert _col(more).kind == ColumnKind.IDENTIFIER
    many = [f"k{i}" for i in range(CATEGORY_MAX_LEVELS + 1)] * 3
    assert _col(many).kind == ColumnKind.IDENTIFIER


def test_dates_and_date_text():
    cells = [dt.date(2020, 1, 2), dt.datetime(2020, 1, 3, 12, 0), "2020-01-05", "", "#REF!"]
    col = _col(cells)
    assert col.kind == ColumnKind.DATE and col.errors == 1 and col.missing == 2
    assert col.minimum == "2020-01-02" and col.maximum == "2020-01-05"
    assert col.values[1] == np.datetime64("2020-01-03T12:00")


def test_ambiguous_day_month_gets_a_note():
    col = _col(["01/02/2021", "03/04/2021"], day_first=True)
    assert col.minimum == "2021-02-01"
    assert any("either way" in n for n in col.notes)
    col = _col(["01/02/2021", "03/04/2021"], day_first=False)
    assert col.minimum == "2021-01-02"


def test_uncached_formulas_are_missing_not_errors():
    col = _col([1.0, UNCACHED, 2.0, UNCACHED])
    assert col.kind == ColumnKind.NUMBER and col.missing == 2 and col.errors == 0


def test_all_errors_is_empty_with_count():
    col = _col(["#N/A", "#DIV/0!", ""])
    assert col.kind == ColumnKind.EMPTY and col.errors == 2 and col.missing == 3


def test_text_numbers_not_counted_for_text_files():
    col = _col(["1", "2,5", "3"], decimal=",", from_text_file=True)
    assert col.kind == ColumnKind.NUMBER and col.text_numbers == 0
    assert col.values.tolist() == [1.0, 2.5, 3.0]


def test_durations_and_times_do_not_crash():
    col = _col([dt.timedelta(hours=12), dt.timedelta(days=1)])
    assert col.values.tolist() == pytest.approx([0.5, 1.0])
    col = _col([dt.time(8, 30), dt.time(9, 0), dt.time(8, 30), dt.time(9, 0)])
    assert col.kind == ColumnKind.CATEGORY and col.levels == ["08:30:00", "09:00:00"]


def test_fast_and_careful_number_reading_agree():
    # Two routes: the one-call conversion of plain numeric text and the cell-by-cell reader.
    from engine.intake.cells import parse_number_text
    from engine.intake.classify import _plain_number_texts

    rng = np.random.default_rng(11)
    xs = rng.normal(scale=1e4, size=500)
    for decimal in (".", ","):
        texts = [f"{x:.4f}" if decimal == "." else f"{x:.4f}".replace(".", ",") for x in xs]
        texts += ["12", "-0.5" if decimal == "." else "-0,5", "3e2", " 7 "]
        arr = np.array(texts, dtype=object)
        fast = _plain_number_texts(arr, decimal)
        assert fast is not None
        careful = [parse_number_text(t, decimal) for t in texts]
        assert fast.tolist() == careful
    # texts the quick route must hand over to the careful one
    for bad in (["1", "007"], ["1", "1_000"], ["1", "nan"], ["1", "12%"]):
        assert _plain_number_texts(np.array(bad, dtype=object), ".") is None
    assert _plain_number_texts(np.array(["1.234", "2,5"], dtype=object), ",") is None


def test_csv_style_columns_with_a_code_stay_text():
    col = _col(["0123", "4567", "0042", "9999"], from_text_file=True)
    assert col.kind == ColumnKind.IDENTIFIER and col.values[0] == "0123"


@pytest.mark.parametrize("mark", ["x", "X", " x ", "\u2713", "\u2714"])
def test_a_check_mark_beside_blanks_is_a_yes_no_column(mark):
    # common spreadsheet practice: a box ticked with "x" or a tick, left blank otherwise
    col = _col([mark, "", "", mark, ""])
    assert col.kind == ColumnKind.FLAG and col.blank_means == 0.0 and col.missing == 0
    assert col.values.tolist() == [1.0, 0.0, 0.0, 1.0, 0.0]
    assert any("a blank cell = no (3 rows)" in n for n in col.notes)


@pytest.mark.parametrize(
    "cells",
    [
        ["x", "x", "x"],  # no blank: nothing says what "no" looks like
        ["x", "", "ok"],  # another text beside the mark
        ["x", "", "y"],  # two different marks
    ],
)
def test_what_is_not_a_check_mark_column(cells):
    col = _col(cells)
    assert col.blank_means is None


def test_texts_that_read_either_way_follow_the_numbers_stored_beside_them():
    # "9,548" could be 9548 or 9.548; among numbers from 7,979 to 23,724 stored as numbers it
    # is 9548 (common practice: a person reads it by the column's other values)
    stored = [7979.0, 12000.0, 23724.0, 15000.0, 9000.0, 11000.0]
    col = _col(stored + ["9,548", "10,200"], decimal=",")
    assert col.values[-2:].tolist() == [9548.0, 10200.0]
    assert any("among the column's numbers stored as numbers" in n for n in col.notes)
    small = [1.2, 3.4, 2.2, 9.9, 5.5, 4.1]
    col = _col(small + ["9,548", "1,200"], decimal=".")
    assert col.values[-2:].tolist() == [9.548, 1.2]


def test_levels_differing_only_in_letter_case_are_read_as_one():
    # one region typed two ways (common data-entry slip): the usual spelling wins
    col = _col(["East"] * 5 + ["east"] * 2 + ["North"] * 4 + ["EAST"])
    assert col.kind == ColumnKind.CATEGORY
    assert col.levels == ["East", "North"]
    assert col.values.tolist().count("East") == 8
    assert any(
        "letter case are read as one: 'east' (2 cells) and 'EAST' (1 cell) as 'East' (5 cells)" in n
        for n in col.notes
    )
    # three spellings as common as each other: the one in mixed case names the level
    tie = _col(["NORTH"] * 3 + ["north"] * 3 + ["North"] * 3 + ["South"] * 2)
    assert tie.levels == ["North", "South"]


def test_identifiers_keep_every_spelling():
    # codes where case may matter ("ab1" and "AB1"): an identifier column is left as typed
    cells = [f"ab{i}" for i in range(20)] + ["AB1"]
    col = _col(cells)
    assert col.kind == ColumnKind.IDENTIFIER
    assert "AB1" in col.values.tolist() and "ab1" in col.values.tolist()
    assert col.distinct == 21
    assert not any("letter case" in n for n in col.notes)


def test_results_against_a_limit_read_as_half_the_limit_or_the_limit():
    # lab reports write results below a detection limit as "<0.3" and above the range as
    # ">1000"; half the limit for non-detects is common practice (substitution), the limit
    # itself above the range
    cells = [1.2, 0.8, "<0.3", 2.5, "< 0.3", 1.1, ">1000", 0.9, "\u22640.5", 1.4]
    col = _col(cells)
    assert col.kind == ColumnKind.NUMBER and col.missing == 0
    np.testing.assert_allclose(col.values, [1.2, 0.8, 0.15, 2.5, 0.15, 1.1, 1000.0, 0.9, 0.25, 1.4])
    note = next(n for n in col.notes if "detection limit" in n)
    assert "3 results below a detection limit (e.g. C4 '<0.3') read as half the limit" in note
    assert "1 result above a limit (e.g. C8 '>1000') read as the limit" in note


def test_a_limit_follows_the_decimal_mark_of_the_texts():
    col = _col(["1,5", "2,25", "<0,5", "3,0", "1,75"] * 2, decimal=",")
    assert col.kind == ColumnKind.NUMBER
    assert col.values[2] == 0.25


def test_not_detected_without_a_limit_is_missing_with_its_own_note():
    cells = [1.2, 0.8, "< LOD", 2.5, "n.d.", 1.1, 0.7, 0.9, "oops", 1.4, 1.0, 2.0] + [1.5] * 20
    col = _col(cells)
    assert col.kind == ColumnKind.NUMBER and col.missing == 3
    assert any(
        "2 results reported as not detected without a limit (C4 '< LOD', C6 'n.d.')" in n
        and "biases the fit" in n
        for n in col.notes
    )
    assert any("1 cell that is not a number treated as missing: C10 'oops'" in n for n in col.notes)


@pytest.mark.parametrize(
    "cells",
    [
        ["<18", "18-25", "26-40", "41-65", ">65"] * 4,  # age bands: a category
        ["<0", "<-3", "<>", "<<1", "> -2"] * 4,  # no positive limit: text
    ],
)
def test_texts_that_only_start_like_a_limit_stay_text(cells):
    col = _col(cells)
    assert col.kind in (ColumnKind.CATEGORY, ColumnKind.IDENTIFIER)
    assert col.values[0] == cells[0]


def test_percentages_written_two_ways_follow_the_more_numerous_kind():
    # "28.6%" is read as 0.286, as a spreadsheet reads it; beside plain 12.5-style
    # percentages that would mix two scales in one column
    col = _col(["28.6%", 12.5, 14.0, "9%", 22.1, 30.0, 7.5, 18.2])
    assert col.kind == ColumnKind.NUMBER
    np.testing.assert_array_equal(col.values, [28.6, 12.5, 14.0, 9.0, 22.1, 30.0, 7.5, 18.2])
    assert any(
        "percentages written two ways: 2 with a percent sign (e.g. C2 '28.6%'), 6 without" in n
        and "read as the number before it (e.g. C2 '28.6%' as 28.6)" in n
        for n in col.notes
    )
    # the other way round: most carry the sign, the plain ones become fractions too
    col = _col(["28.6%", "12.5%", "14%", 9.0, "22.1%", "30%"])
    np.testing.assert_allclose(col.values, [0.286, 0.125, 0.14, 0.09, 0.221, 0.30])
    assert any(
        "the 1 without it are read as percentages (e.g. C5 9 as 0.09)" in n for n in col.notes
    )


@pytest.mark.parametrize(
    "cells",
    [
        ["28.6%", 0.125, 0.14, "9%", 0.221],  # fractions beside the signs: one scale already
        ["28.6%", 1250.0, 1400.0, "9%", 2210.0],  # other quantities: not percentages
        ["28.6%", "12.5%", "9%"],  # every one with its sign
    ],
)
def test_one_percent_scale_is_left_alone(cells):
    col = _col(cells)
    assert not any("percentages written two ways" in n for n in col.notes)
    assert col.values[0] == pytest.approx(0.286)


def test_numbers_written_with_one_unit_are_numbers():
    # lab and quality sheets write the unit into every cell ("12.5 kg", "45 min", "80 °C")
    col = _col(["12.5 kg", "13 kg", "9.75kg", "11 kg", 10.0])
    assert col.kind == ColumnKind.NUMBER and col.missing == 0
    np.testing.assert_array_equal(col.values, [12.5, 13.0, 9.75, 11.0, 10.0])
    assert any(
        "4 numbers written with the unit 'kg' (e.g. C2 '12.5 kg') read as numbers in kg" in n
        for n in col.notes
    )
    temp = _col(["80,5 °C", "79 °C", "81,25 °C", "78 °C"], decimal=",")
    np.testing.assert_array_equal(temp.values, [80.5, 79.0, 81.25, 78.0])
    rate = _col(["1.2 km/h", "3 km/h", "0.5 km/h"])
    assert rate.kind == ColumnKind.NUMBER and rate.values[1] == 3.0


def test_numbers_in_several_units_stay_text_with_a_note():
    col = _col(["12 kg", "1200 g", "13 kg", "900 g", "2 kg", "1.5 kg"])
    assert col.kind in (ColumnKind.CATEGORY, ColumnKind.IDENTIFIER)
    assert any("numbers written with different units ('g', 'kg')" in n for n in col.notes)


@pytest.mark.parametrize(
    "cells",
    [
        ["3 Jan", "17 Feb", "2 Mar", "9 Jan"],  # dates without a year
        ["1st", "2nd", "3rd", "4th", "1st"],  # ordinals
        ["10 am", "3 pm", "11 am", "2 pm"],  # times of day
        ["007 A", "012 A", "003 A", "044 A"],  # codes with a leading zero
        ["12 Main St", "3 High St", "7 Mill Rd", "9 Elm Rd"],  # addresses
    ],
)
def test_what_only_looks_like_a_number_and_a_unit_stays_text(cells):
    col = _col(cells)
    assert col.kind in (ColumnKind.CATEGORY, ColumnKind.IDENTIFIER)
    assert col.values[0] == cells[0]
    assert not any("units" in n or "unit '" in n for n in col.notes)
