"""Periods written as text (planning and reporting sheets label rows so) read as dates.

Each period is read as its first day; ISO weeks start on Monday (ISO 8601: week 1 of a year
is the week holding its first Thursday, so 2020-W01 starts on Monday 2019-12-30 and 2026-W53
exists while 2025-W53 does not). Python's ``date.fromisocalendar`` is the reference for weeks.
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pytest

from engine.intake.classify import classify_column
from engine.intake.table import ColumnKind
from engine.intake.text_dates import looks_like_date, parse_date_texts


@pytest.mark.parametrize(
    ("text", "first_day"),
    [
        ("2024-Q3", dt.date(2024, 7, 1)),
        ("2024 q1", dt.date(2024, 1, 1)),
        ("Q4 2023", dt.date(2023, 10, 1)),
        ("Q2/2025", dt.date(2025, 4, 1)),
        ("2020-W01", dt.date(2019, 12, 30)),  # ISO 8601: the week holding 2 January 2020
        ("2026-W53", dt.date(2026, 12, 28)),
        ("W5 2024", dt.date(2024, 1, 29)),
        ("2024-03", dt.date(2024, 3, 1)),
        ("2024/11", dt.date(2024, 11, 1)),
        ("03/2024", dt.date(2024, 3, 1)),
        ("Mar 2024", dt.date(2024, 3, 1)),
        ("September 2019", dt.date(2019, 9, 1)),
        ("Sept. 2019", dt.date(2019, 9, 1)),
        ("Mär 2024", dt.date(2024, 3, 1)),
        ("déc. 2022", dt.date(2022, 12, 1)),
        ("Jan-24", dt.date(2024, 1, 1)),
        ("Okt'21", dt.date(2021, 10, 1)),
    ],
)
def test_a_period_reads_as_its_first_day(text, first_day):
    assert looks_like_date(text)
    (got,), note = parse_date_texts([text], day_first=True)
    assert got == dt.datetime(first_day.year, first_day.month, first_day.day)
    assert note is not None and "periods read as dates" in note


def test_iso_weeks_agree_with_the_reference_library():
    # every week of several years, against Python's own ISO calendar
    for year in (2019, 2020, 2021, 2026):
        weeks = 53 if dt.date(year, 12, 28).isocalendar()[1] == 53 else 52
        texts = [f"{year}-W{w:02d}" for w in range(1, weeks + 1)]
        got, _ = parse_date_texts(texts, day_first=True)
        want = [dt.date.fromisocalendar(year, w, 1) for w in range(1, weeks + 1)]
        assert [g.date() for g in got] == want


@pytest.mark.parametrize(
    "text",
    ["2025-W53", "2024-Q5", "2024-13", "13/2024", "Mar 24", "Marx 2024", "Q3", "W12", "2024-Q"],
)
def test_what_is_not_a_period(text):
    # a week 2025 does not have, quarter 5, month 13, a two-digit year after a space (could
    # be a day: "Mar 24"), an unknown month name, a quarter or week without a year
    got, _ = parse_date_texts([text], day_first=True)
    assert got == [None]


def test_a_column_of_quarters_is_a_date_column_with_a_note():
    cells = np.empty(8, dtype=object)
    cells[:] = [f"{2022 + i // 4}-Q{i % 4 + 1}" for i in range(8)]
    col = classify_column(
        cells, name="quarter", heading="quarter", letter="A", row_numbers=np.arange(2, 10)
    )
    assert col.kind == ColumnKind.DATE
    assert col.minimum == "2022-01-01" and col.maximum == "2023-10-01"
    assert any("'2022-Q1' as the first day of its quarter" in n for n in col.notes)
