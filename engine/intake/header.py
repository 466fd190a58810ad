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
"""

from __future__ import annotations

__all__ = ["detect_header_row", "SCAN_ROWS"]

import math

from engine.intake.cells import ERROR_VALUES, parse_number_text
from engine.intake.text_dates import looks_like_date

SCAN_ROWS = 60


def _is_word(value: object) -> bool:
    if not isinstance(value, str):
        return False
    s = value.strip()
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
            return _above_units(rows, sample, last)
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
    """% kg g mg t m cm mm km l ml h min s ms °c c degc k pa kpa bar pct ppm ppb units pcs
    eur usd gbp chf € $ £ kwh mwh w kw v a hz db""".split()
)


def _is_unit(value: object) -> bool:
    s = str(value).strip().lower()
    return s[:1] in "([" or s in _UNITS


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
