"""Find the row that holds the column headings.

Workbooks often carry a title, a few lines of notes or a blank line above the headings. The
rule: among the first 60 rows that hold anything, the row of words nearest above the first row
holding numbers or dates (not a row of units such as "kg" or "(mm)": the row above it then);
when the data hold no numbers or dates, the first row that

- is about as wide as the table (at least half the widest row, and at least 2 cells when the
  table has 2 or more columns), and
- holds mostly words (at least 60% of its cells are text that is not a number, a date or an
  error value),

preferring a row that fills at least 80% of the widest row. When no row qualifies (headings
that are numbers, such as years) the first row that fills 80% of the widest row is used, and
failing that the first row that holds anything. The caller can always
override with an explicit header row.

A row right under the headings may complete them ("list" and "net" under two "Price"
headings, units such as "kg" or "FTE"): ``sub_heading_row`` recognizes it, so that it is
joined to the names instead of being read as a row of data with text in number columns.
"""

from __future__ import annotations

__all__ = ["detect_header_row", "sub_heading_row", "join_sub_heading", "cell_key", "SCAN_ROWS"]

import datetime as dt
import math
import re

from engine.intake.cells import ERROR_VALUES, MISSING_WORDS, parse_number_text
from engine.intake.text_dates import looks_like_date

SCAN_ROWS = 60


# a number written plainly ("-1.38", "2.5e-3"): not a word, decided without the full parse
# (a wide text file's rows hold thousands of them and the heading search reads 60 rows)
_PLAIN_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")


def _is_word(value: object) -> bool:
    if not isinstance(value, str):
        return False
    s = value.strip()
    if _PLAIN_NUMBER.fullmatch(s):
        return False
    if not s or s.upper() in ERROR_VALUES or looks_like_date(s):
        return False
    return parse_number_text(s, ".") is None and parse_number_text(s, ",") is None


def _filled(value: object) -> bool:
    return not (isinstance(value, str) and not value.strip())


def detect_header_row(rows: list[list]) -> int | None:
    """0-based index into `rows` of the heading row, or None when every row is empty."""
    sample: list[tuple[int, int, int]] = []  # (index, filled cells, word cells)
    for i, row in enumerate(rows):
        filled = sum(1 for v in row if _filled(v))
        if filled:
            words = sum(1 for v in row if _is_word(v))
            sample.append((i, filled, words))
            if len(sample) >= SCAN_ROWS:
                break
    if not sample:
        return None
    widest = max(f for _, f, _ in sample)
    need = 1 if widest < 2 else max(2, math.ceil(0.5 * widest))
    # the row of words nearest above the first row that holds numbers or dates: notes, a
    # title or group labels above the headings are words too, but never sit right on the data
    last = None
    for i, f, w in sample:
        if f < need:
            continue
        if w < f and last is not None:  # data: some cells are numbers or dates
            return _above_partial_row(rows, _above_units(rows, sample, last))
        if w >= 0.6 * f:
            last = i
    candidates = [(i, f) for i, f, w in sample if f >= need and w >= 0.6 * f]
    for i, f in candidates:
        if f >= 0.8 * widest:
            return i
    if candidates:
        return candidates[0][0]
    # headings that are numbers (years, say): the first row about as wide as the table
    for i, f, _ in sample:
        if f >= max(need, 0.8 * widest):
            return i
    return sample[0][0]


# what a row of units under the headings holds (common practice in lab and engineering sheets)
_UNITS = frozenset(
    """% kg g mg µg ug t m cm mm µm um nm km l ml µl dl h min s ms d day days wk yr °c °f c f
    degc k pa kpa mpa gpa bar mbar psi pct ppm ppb units pcs mol mmol µmol nmol eq rpm lb lbs
    oz ft in yd mi gal eur usd gbp chf € $ £ kwh mwh wh w kw mw v mv a ma hz khz db""".split()
)
# pieces of a compound unit ("L/min", "kg·m-3", "m³/h"): a base unit with an optional power
_UNIT_PIECE = re.compile(r"([^\d²³⁻-]+)(?:\^?-?[0-9]+|[²³]|⁻[¹²³])?")


# words a units row uses to say what kind of value a column holds ("express" over "yes/no"):
# put in brackets like a unit, so the name stays the heading with a remark, and new rows
# headed "express" alone are still matched to it when scored. Nouns that also make names
# with the heading ("Interest" over "rate", "Price" over "index") are left out
_KIND_WORDS = frozenset(
    "date time yes/no y/n 0/1 true/false days weeks months years hours minutes seconds".split()
)


def _is_unit(value: object) -> bool:
    s = str(value).strip().lower()
    if s[:1] in "([" or s in _UNITS:
        return True
    pieces = [p for p in re.split(r"[/·*]| per ", s) if p]
    if not pieces or len(pieces) > 3:
        return False
    for piece in pieces:
        m = _UNIT_PIECE.fullmatch(piece.strip())
        if m is None or m.group(1) not in _UNITS:
            return False
    return True


def _above_units(rows: list[list], sample: list[tuple[int, int, int]], i: int) -> int:
    """``i``, or the row of words right above it when row ``i`` only holds units ("kg",
    "(mm)"): the names are there, the units row then reads as a row of text in the data."""
    k = next(t for t, (j, _, _) in enumerate(sample) if j == i)
    cells = [v for v in rows[i] if _filled(v)]
    if k > 0 and cells and all(_is_unit(v) for v in cells):
        j, f, w = sample[k - 1]
        if j == i - 1 and w >= 0.6 * f and f >= len(cells):
            return j
    return i


def _above_partial_row(rows: list[list], i: int) -> int:
    """``i``, or the row right above it when that one names every column row ``i`` fills and
    row ``i`` leaves some of them blank, completing the others ("list" and "net" under two
    "Price" headings): the names are above, row ``i`` holds sub-headings. (Group labels over
    the names, "Weather" over "temp" and "rain", leave blanks above, not below.)"""
    if i == 0:
        return i
    upper, lower = rows[i - 1], rows[i]
    named = [j for j, v in enumerate(upper) if _is_word(v)]
    under = [j for j, v in enumerate(lower) if _filled(v) and v is not None]
    if (
        len(named) >= 2
        and set(under) <= set(named)
        and len(under) < len(named)
        and sub_heading_row(rows, i - 1)
    ):
        return i - 1
    return i


# rows below the headings looked at to tell number columns from text ones
_SUB_SCAN_ROWS = 200


def _is_value(value: object) -> bool:
    """A number or a date, typed or written as text (or a yes/no cell)."""
    if isinstance(value, (bool, int, float, dt.date, dt.datetime)):
        return True
    if not isinstance(value, str):
        return False
    s = value.strip()
    numbers = parse_number_text(s, ".") is not None or parse_number_text(s, ",") is not None
    return numbers or looks_like_date(s)


def sub_heading_row(rows: list[list], h: int) -> bool:
    """Whether row ``h + 1`` completes the headings of row ``h`` (sub-headings or units).

    It must hold only words (no number, date, error value or stand-in for a missing value),
    none of which appears again in its column further down (so not a category level or an
    identifier of a data row), at least one of them over a column whose cells below are
    numbers or dates; and data rows must follow.
    """
    if h + 2 >= len(rows):
        return False
    row = rows[h + 1]
    words = [j for j, value in enumerate(row) if _filled(value) and value is not None]
    for j in words:  # a data row fails here at its first number: the cheap test first
        if not _is_word(row[j]) or str(row[j]).strip().casefold() in MISSING_WORDS:
            return False
    # copies of the headings and of this row further down (a report repeating them on every
    # page) are not data: they say nothing about the columns. Whole rows are compared only
    # where the first cells agree (a wide sheet has thousands of cells per row)
    copies = {_row_key(rows[h]), _row_key(row)}
    starts = {key[0] for key in copies if key}

    def copy_of_headings(r: list) -> bool:
        return bool(r) and cell_key(r[0]) in starts and _row_key(r) in copies

    below = [r for r in rows[h + 2 : h + 2 + _SUB_SCAN_ROWS] if not copy_of_headings(r)]
    over_numbers = False
    for j in words:
        key = str(row[j]).strip().casefold()
        column = [r[j] for r in below if j < len(r) and _filled(r[j]) and r[j] is not None]
        if any(isinstance(x, str) and x.strip().casefold() == key for x in column):
            return False
        if column and sum(_is_value(x) for x in column) >= 0.8 * len(column):
            over_numbers = True
    return bool(words) and over_numbers


def cell_key(value: object) -> str:
    """A cell's text, spaces and letter case aside ("" for an empty cell)."""
    return "" if value is None else " ".join(str(value).split()).casefold()


def _row_key(row: list) -> tuple[str, ...]:
    """A row's texts, spaces and letter case aside, without trailing blanks."""
    texts = [cell_key(v) for v in row]
    while texts and not texts[-1]:
        texts.pop()
    return tuple(texts)


def join_sub_heading(heading: str, sub: str) -> str:
    """The name of a column from its heading and the sub-heading under it: "Price list",
    "Weight (kg)" for a unit, the sub-heading alone under a blank heading."""
    sub = sub.strip()
    if not sub:
        return heading
    if not heading:
        return sub
    if (_is_unit(sub) or sub.lower() in _KIND_WORDS) and sub[:1] not in "([":
        return f"{heading} ({sub})"
    return f"{heading} {sub}"
