"""Decide what one column holds and convert its cells to typed values.

Rules (applied to the cells that hold something; empty cells, spreadsheet error values and
formulas saved without a result are missing from the start):

- empty: nothing at all.
- flag: every value is a yes/no token (engine.intake.cells.FLAG_TRUE / FLAG_FALSE, booleans,
  the numbers 1 and 0), and the column is not just numbers that happen to be one of 0 or 1
  (a numeric 0/1 column needs both values to count as a flag). At least 80% tokens with a
  word or boolean among them also makes a flag; the rest is treated as missing with a note.
- number: at least 80% of the values are numbers, real or written as text ("1,234.5",
  "12%" -> 0.12, "(1.5)" -> -1.5, "1 234,5" with a decimal comma). The other values are
  treated as missing and the note names up to three of their cells. A text column of codes
  with leading zeros ("007") is never read as numbers.
- date: at least 80% dates (date cells or date text); the rest missing with a note.
- otherwise text: a category when the distinct values are at most half of the values and
  at most 200 (a few labels that repeat), else an identifier (mostly unique text: codes,
  names). Numbers and dates in a text column keep the text a person would see ("12", "2021-03-04").

One pass over a column's cells in Python at most; columns of plain numbers (with or without
empty cells) take a vectorized path.
"""

from __future__ import annotations

__all__ = [
    "UNCACHED",
    "classify_column",
    "CATEGORY_MAX_SHARE",
    "CATEGORY_MAX_LEVELS",
    "DOMINANT_SHARE",
]

import datetime as dt
import re
from collections import Counter

import numpy as np

from engine.intake.cells import (
    CHECK_MARKS,
    ERROR_VALUES,
    FLAG_FALSE,
    FLAG_TRUE,
    MISSING_WORDS,
    cell_name,
    counted,
    decimal_mark_votes,
    format_plain,
    parse_number_text,
)
from engine.intake.notes import WORTH_A_WARNING, ColumnNote, Finding, finding_of
from engine.intake.table import Column, ColumnKind
from engine.intake.text_dates import MONTH_NAMES, looks_like_date, parse_date_texts

DOMINANT_SHARE = 0.8  # share of values of one kind that decides the column's kind
CATEGORY_MAX_SHARE = 0.5  # distinct labels / values at most this for a category
CATEGORY_MAX_LEVELS = 200
_CONVENTION_SAMPLE = 5000  # distinct texts looked at to choose the decimal mark of a column


class _Uncached:
    """Marks a formula cell that was saved without its result."""

    def __repr__(self) -> str:
        return "<formula without stored result>"


UNCACHED = _Uncached()

# codes of what a non-empty cell holds
_MISSING, _ERROR, _NUMBER, _BOOL, _DATE, _TEXT_NUMBER, _TEXT_FLAG, _TEXT_DATE, _TEXT, _NOFORMULA = (
    range(10)
)
# a result reported against a limit ("<0.3" below a detection limit, ">1000" above the range)
_TEXT_LIMIT = 10
# a number written with its unit ("12.5 kg", "45 min", "80 °C")
_TEXT_UNIT = 11
_CODES = 12
# day 0 of spreadsheet date serial numbers (1900 system: day 1 is 1900-01-01, counting the
# 1900-02-29 that never was, so day 0 is 1899-12-30 for every date after February 1900)
_SERIAL_EPOCH = dt.datetime(1899, 12, 30)
# what a unit written after a number looks like: letters (Latin or Greek: "µg", "Ω"), degree
# and prime signs, powers, a slash or a dot inside ("km/h", "mg/kg", "m²", "°C")
_NUMBER_AND_UNIT = re.compile(
    r"(?P<num>.*?\d)\s*(?P<unit>[A-Za-zµμΩ°º][A-Za-zµμΩ°º²³/.]{0,9}|°[A-Za-z]{1,2})"
)
# results below a detection limit are read as this share of the limit, above a limit as the
# limit (common practice for a few non-detects in lab and environmental data)
_BELOW_LIMIT_SHARE = 0.5
# a fitted column of percentages whose largest value is at most this holds shares (0.125 for
# 12.5%); above it, percentage points (see points_scale)
_SHARES_UP_TO = 1.5
# texts lab reports write for "not detected" without giving the limit
_NOT_DETECTED = frozenset(
    "<lod <dl <loq <mdl <rl nd n.d. n.d bdl bql not detected below detection limit".split()
    + ["< lod", "< dl", "< loq", "< mdl", "< rl", "not detected", "below detection limit"]
)
_ERRORS = frozenset(ERROR_VALUES)
_FLAG_VALUE = {**{t: 1.0 for t in FLAG_TRUE}, **{t: 0.0 for t in FLAG_FALSE}}
_FLAG_WORDS = {t: v for t, v in _FLAG_VALUE.items() if t not in ("1", "0")}


def _is_code(text: str) -> bool:
    s = text.strip()
    return len(s) > 1 and s[0] == "0" and s[1].isdigit()


def classify_column(
    cells: np.ndarray,
    *,
    name: str,
    heading: str,
    letter: str,
    row_numbers: np.ndarray,
    decimal: str = ".",
    day_first: bool = False,
    from_text_file: bool = False,
    serial_dates: bool = True,
    fitted_range: tuple[float, float] | None = None,
) -> Column:
    """Classify `cells` (object array, one per data row; "" empty) into a typed Column.

    ``fitted_range``: new rows read for a fitted model: the column's range in the fitted rows,
    which sets the scale of numbers written with a percent sign (see _one_percent_scale)."""
    n = len(cells)
    if cells.dtype != object:  # the caller's block path: plain floats, nothing missing
        return _number_column(
            cells.astype(np.float64, copy=False), name, heading, letter, n_missing=0
        )

    empty = cells == ""
    if not isinstance(empty, np.ndarray):  # defensive: numpy falls back to a scalar on odd input
        empty = np.array([isinstance(v, str) and v == "" for v in cells], dtype=bool)
    present_idx = np.flatnonzero(~empty)
    present = cells[present_idx]
    if present.size == 0:
        return Column(name, heading, letter, ColumnKind.EMPTY, np.full(n, np.nan), missing=n)

    types = set(map(type, present))
    if types == {str} and present.size < n:
        mark = _check_mark(present)
        if mark is not None:  # "x" or a tick beside blanks: a yes/no column
            values = np.zeros(n)
            values[present_idx] = 1.0
            col = Column(name, heading, letter, ColumnKind.FLAG, values, blank_means=0.0)
            _fill_numeric_summary(col, np.unique(values))
            col.notes.append(
                f"read as yes/no: '{mark}' = yes ({present.size} rows), a blank cell = no "
                f"({n - present.size} rows)"
            )
            return col
    if types <= {float, int}:
        values = np.full(n, np.nan)
        values[present_idx] = present.astype(np.float64)
        return _number_column(values, name, heading, letter, n_missing=int(empty.sum()))
    if from_text_file and types == {str}:
        plain = _plain_number_texts(present, decimal)
        if plain is not None:
            values = np.full(n, np.nan)
            values[present_idx] = plain
            return _number_column(values, name, heading, letter, n_missing=int(empty.sum()))

    return _classify_mixed(
        cells,
        present_idx,
        n,
        name,
        heading,
        letter,
        row_numbers,
        decimal,
        day_first,
        from_text_file,
        serial_dates,
        fitted_range,
    )


def _check_mark(texts: np.ndarray) -> str | None:
    """The one check mark every text is (ignoring case and outer spaces), or None."""
    seen = {t.strip().lower() for t in texts.tolist()}
    if len(seen) == 1 and next(iter(seen)) in CHECK_MARKS:
        return str(texts[0]).strip()
    return None


def _plain_number_texts(texts: np.ndarray, decimal: str) -> np.ndarray | None:
    """Texts that all read as plain numbers ("1.5", "-3", "2e5") converted in one call, or None.

    Anything else (grouping marks, percent, codes with a leading zero, words, "nan") goes the
    careful way. With a decimal comma, a text holding a point ("1.234" = 1234) also does.
    """
    # one scan of all texts at once instead of a Python loop over them
    joined = "\n".join(texts.tolist())
    if "_" in joined or _LEADING_ZERO.search(joined):
        return None
    if decimal == ",":
        if "." in joined:
            return None
        parts = joined.replace(",", ".").split("\n")
        if len(parts) != texts.size:  # a text held a line break: take the careful way
            return None
        texts = np.array(parts, dtype=object)
    try:
        values = texts.astype(np.float64)
    except (ValueError, TypeError, OverflowError):
        return None
    if not np.isfinite(values).all():
        return None
    return values


_LEADING_ZERO = re.compile(r"^[ +-]*0\d", re.M)
# a plain number with one decimal mark and no grouping: "7,25", "-0.5"
_ONE_DECIMAL_MARK = re.compile(r"[+-]?\d+[.,]\d+")
_KNOWN_TYPES = frozenset({str, float, int, bool, dt.datetime, dt.date, dt.timedelta})
_NAN = float("nan")
# what one cell holds: (code, number, flag value, what a person sees, date)
_Record = tuple[int, float, float, object, "dt.datetime | None"]


def _value_record(v: object) -> _Record:
    """The record of a cell that is not text."""
    t = type(v)
    if t is float or t is int:
        x = float(v)  # type: ignore[arg-type]
        return (_NUMBER, x, x if x in (0.0, 1.0) else _NAN, v, None)
    if t is bool:
        return (_BOOL, _NAN, 1.0 if v else 0.0, v, None)
    if t is dt.datetime:
        return (_DATE, _NAN, _NAN, v, v)  # type: ignore[return-value]
    if t is dt.date:
        d = dt.datetime(v.year, v.month, v.day)  # type: ignore[attr-defined]
        return (_DATE, _NAN, _NAN, v, d)
    if t is dt.timedelta:  # a duration: read in days, as the spreadsheet stores it
        return (_NUMBER, v.total_seconds() / 86400.0, _NAN, str(v), None)  # type: ignore[attr-defined]
    return (_NOFORMULA, _NAN, _NAN, "", None)


def _fits_range(texts: list[str], mark: str, lo: float, hi: float) -> int:
    """How many of ``texts`` read with ``mark`` land within [lo, hi]."""
    got = (parse_number_text(t, mark) for t in texts)
    return sum(1 for v in got if v is not None and lo <= v <= hi)


def _text_records(
    unique: list[str], decimal: str, day_first: bool, present: list | None = None
) -> tuple[dict[str, _Record], str | None, str | None, set[str]]:
    """Records of distinct texts, a note when the day/month order of dates was a guess, and
    one saying which decimal mark was used when some texts read either way. ``present``: the
    column's cells; when the texts' votes tie, the mark that puts more of them within the
    range of the cells stored as numbers decides ("9,548" among 7,979 to 23,724 is 9548)."""
    if not unique:
        return {}, None, None, set()
    # the number in each text votes, also when written with a unit or against a limit
    # ("50.0 kg", "<0.05" say point): otherwise such a column would take the sheet's usual
    # mark, which one column of "5,40" can make a comma, reading "1.005 kg" as 1005
    sample = [_number_part(u) for u in unique[:_CONVENTION_SAMPLE]]
    point, comma = decimal_mark_votes(sample)
    conv = decimal if point == comma else ("." if point > comma else ",")
    by_range = False
    stored = np.zeros(0)
    if point and point == comma and present is not None:  # only then: a pass over the cells
        stored = np.array([float(v) for v in present if type(v) in (float, int)])
    if stored.size >= 5:
        lo, hi = float(np.min(stored)), float(np.max(stored))
        in_point, in_comma = _fits_range(sample, ".", lo, hi), _fits_range(sample, ",", lo, hi)
        if in_point != in_comma:
            conv, by_range = ("." if in_point > in_comma else ","), True
    # texts whose value depends on the mark ("1,234": 1234 or 1.234), said in the notes
    mark_note = None
    if point and comma:
        mark, other = ("comma", "point") if conv == "," else ("point", "comma")
        if by_range:
            mark_note = (
                f"read with a decimal {mark}, which puts them among the column's numbers "
                "stored as numbers"
            )
        elif point == comma:
            mark_note = ColumnNote(
                f"read with a decimal {mark} (the sheet's usual one); each of them could "
                f"also be read with a decimal {other}",
                Finding.DECIMAL_MARK_CHOSEN,
            )
        else:
            mark_note = ColumnNote(
                f"read with a decimal {mark}, as most of them are written",
                Finding.DECIMAL_MARK_CHOSEN,
            )
    date_like = [u for u in unique if looks_like_date(u)]
    parsed_dates: dict[str, dt.datetime | None] = {}
    date_note = None
    if date_like:
        got, date_note = parse_date_texts(date_like, day_first)
        parsed_dates = dict(zip(date_like, got))
    info: dict[str, _Record] = {}
    other = "," if conv == "." else "."
    other_mark: set[str] = set()  # texts that make a number only with the other mark
    for u in unique:
        s = " ".join(u.split())
        if not s:
            info[u] = (_MISSING, _NAN, _NAN, "", None)
        elif s.upper() in _ERRORS:
            info[u] = (_ERROR, _NAN, _NAN, s.upper(), None)
        elif parsed_dates.get(u) is not None:
            info[u] = (_TEXT_DATE, _NAN, _NAN, s, parsed_dates[u])
        else:
            num = None if _is_code(s) else parse_number_text(s, conv)
            if num is None and _ONE_DECIMAL_MARK.fullmatch(s) and not _is_code(s):
                # "7,25" among "8.66" and "10.5": a decimal comma, read as 7.25 (only a plain
                # number with one mark: "1,234,567" or an address "192.168.1.2" stays text)
                alt = parse_number_text(s, other)
                if alt is not None:
                    num = alt
                    other_mark.add(u)
            low = s.lower()
            limit = limit_value(s, conv) if num is None else None
            with_unit = _number_and_unit(s, conv) if num is None and limit is None else None
            if limit is not None:
                info[u] = (_TEXT_LIMIT, limit, _NAN, s, None)
            elif with_unit is not None:
                info[u] = (_TEXT_UNIT, with_unit[0], _NAN, s, None)
            elif num is not None:
                info[u] = (_TEXT_NUMBER, num, num if num in (0.0, 1.0) else _NAN, s, None)
            elif low in _FLAG_WORDS:
                info[u] = (_TEXT_FLAG, _NAN, _FLAG_WORDS[low], s, None)
            else:
                info[u] = (_TEXT, _NAN, _NAN, s, None)
    return info, date_note, mark_note, other_mark


def worth_a_warning(note: str) -> bool:
    """Whether a column's note should also be one of the sheet's warnings (shown with a fit,
    not only when the sheet is inspected)."""
    return finding_of(note) in WORTH_A_WARNING


def _one_percent_scale(numbers, codes, shown, keep, cell_at, fitted=None) -> str:
    """Numbers typed with a percent sign ("28.6%", read as 0.286) beside numbers typed without
    one on the percentage scale (12.5): put them all on one scale, that of the more numerous
    kind, in place in ``numbers``, and say so ("" when the column is on one scale already).

    Both kinds must look like one quantity: the plain numbers mostly above 1 and the numbers
    written before the signs within a factor of ten of them (medians).

    ``fitted``: the (lowest, highest) value of this column in the rows a model was fitted on,
    when new rows are read for it. The scale is then the one that puts more of the values in
    that range, so a cell reads the same whatever the other new rows hold ("50%" and a plain
    0.34 both on the fitted 0-1 scale), also when every number carries the sign.
    """
    marked = np.array(
        [
            codes[k] == _TEXT_NUMBER and str(shown[k]).rstrip().endswith("%")
            for k in range(len(codes))
        ],
        dtype=bool,
    )
    plain = keep & ~marked & (codes != _TEXT_LIMIT)
    if fitted is not None and marked.any():
        return _percent_scale_of_fit(numbers, marked, plain, shown, cell_at, fitted)
    if not marked.any() or not plain.any():
        return ""
    plain_values = np.abs(numbers[plain])
    written = np.abs(numbers[marked]) * 100.0  # the number before the sign
    if np.mean(plain_values > 1.0) < 0.8:
        return ""
    typical_plain = float(np.median(plain_values))
    typical_written = float(np.median(written))
    if not typical_written > 0.0 or not 0.1 <= typical_plain / typical_written <= 10.0:
        return ""
    first_marked = int(np.flatnonzero(marked)[0])
    first_plain = int(np.flatnonzero(plain)[0])
    n_marked, n_plain = int(marked.sum()), int(plain.sum())
    example = f"{cell_at(first_marked)} '{shown[first_marked]}'"
    other = f"{cell_at(first_plain)} {format_plain(float(numbers[first_plain]))}"
    if n_plain >= n_marked:
        # the number as written before the sign (0.286 * 100 is 28.599999999999998)
        numbers[marked] = np.round(numbers[marked] * 100.0, 10)
        done = (
            f"the {n_marked} with the sign are read as the number before it "
            f"(e.g. {example} as {format_plain(float(numbers[first_marked]))})"
        )
    else:
        numbers[plain] /= 100.0
        done = (
            f"the {n_plain} without it are read as percentages "
            f"(e.g. {other} as {format_plain(float(numbers[first_plain]))})"
        )
    return (
        f"percentages written two ways: {n_marked} with a percent sign (e.g. {example}), "
        f"{n_plain} without (e.g. {other}); to put them on one scale {done}. Check the "
        "column and write it one way"
    )


def points_scale(fitted: tuple[float, float]) -> bool:
    """Whether a column fitted over this (lowest, highest) range holds percentage points (12.5
    for 12.5%) rather than shares (0.125): shares stay near or below 1."""
    return fitted[1] > _SHARES_UP_TO


def _percent_scale_of_fit(numbers, marked, plain, shown, cell_at, fitted) -> str:
    """New rows for a fitted model: numbers with a percent sign and plain ones put on the
    scale of the fitted column (see _one_percent_scale), in place in ``numbers``. The fitted
    range alone decides, so one cell reads the same beside any other new rows."""
    first = int(np.flatnonzero(marked)[0])
    if points_scale(fitted):
        numbers[marked] = np.round(numbers[marked] * 100.0, 10)
        done = "numbers written with a percent sign are read as the number before it"
    elif plain.any() and np.mean(np.abs(numbers[plain]) > 1.0) >= 0.8:
        numbers[plain] /= 100.0  # written as percentage numbers beside the signed ones
        done = "plain numbers are read as percentages, like those with the sign"
    else:
        return ""  # shares, as the cells read already
    lo, hi = fitted
    return (
        f"read on the scale the model was fitted on ({lo:.6g} to {hi:.6g}): {done} (e.g. "
        f"{cell_at(first)} '{shown[first]}' as {format_plain(float(numbers[first]))})"
    )


# words after a number that are not units: ordinals ("3rd"), times of day ("10 am"), and
# month names ("3 Jan", a date without its year)
_NOT_UNITS = frozenset("st nd rd th am pm a.m. p.m.".split()) | MONTH_NAMES


def _number_and_unit(text: str, mark: str) -> tuple[float, str] | None:
    """(number, unit) for a number written with a unit after it ("12.5 kg"), else None. A
    code starting with 0 ("007 A") is not a number, and the unit must not be a word that
    starts a sentence ("3 Main" stays text: units here are at most 10 characters, one word)."""
    m = _NUMBER_AND_UNIT.fullmatch(text)
    if m is None or _is_code(m.group("num")) or m.group("unit").lower() in _NOT_UNITS:
        return None
    value = parse_number_text(m.group("num"), mark)
    if value is None:
        return None
    return value, m.group("unit")


def _reads_both_ways(text: str) -> bool:
    """Whether a text is a number under both decimal marks, with different values ("8.666")."""
    a, b = parse_number_text(text, "."), parse_number_text(text, ",")
    return a is not None and b is not None and a != b


def _number_part(text: str) -> str:
    """The number written in a text with a unit after it or against a limit ("50.0 kg" and
    "<0.05" give "50.0" and "0.05"); any other text as it is."""
    s = text.strip()
    limit = _after_limit_sign(s)
    if limit is not None:
        return limit
    m = _NUMBER_AND_UNIT.fullmatch(s)
    return m.group("num") if m is not None else s


def _after_limit_sign(text: str) -> str | None:
    """What follows the sign of a result against a limit ("<=0.3" gives "0.3"); None when the
    text does not start with such a sign."""
    if text[:1] not in "<>\u2264\u2265" or len(text) < 2:
        return None
    return text[1:].lstrip("=").strip()


def _unit_of(text: str) -> str:
    m = _NUMBER_AND_UNIT.fullmatch(text)
    return m.group("unit") if m else ""


def limit_value(text: str, mark: str) -> float | None:
    """The value read for a result reported against a limit: "<0.3" (or "< 0,3", "≤0.3")
    as the share _BELOW_LIMIT_SHARE of it, ">1000" as the limit; None for anything else."""
    head = text[:1]
    rest = _after_limit_sign(text)
    if rest is None:
        return None
    if not rest or rest[0] in "<>-\u2212":
        return None
    value = parse_number_text(rest, mark)
    if value is None or not value > 0.0:
        return None
    return value * _BELOW_LIMIT_SHARE if head in "<\u2264" else value


def _number_column(
    values: np.ndarray, name: str, heading: str, letter: str, n_missing: int
) -> Column:
    ok = ~np.isnan(values)
    uniq = np.unique(values[ok])
    if uniq.size == 2 and uniq[0] == 0.0 and uniq[1] == 1.0:
        kind = ColumnKind.FLAG
    else:
        kind = ColumnKind.NUMBER
    col = Column(name, heading, letter, kind, values, missing=n_missing)
    _fill_numeric_summary(col, uniq)
    return col


def _fill_numeric_summary(col: Column, uniq: np.ndarray) -> None:
    col.distinct = int(uniq.size)
    if uniq.size:
        col.minimum = float(uniq[0])
        col.maximum = float(uniq[-1])
    col.constant = uniq.size == 1


def _classify_mixed(
    cells: np.ndarray,
    present_idx: np.ndarray,
    n: int,
    name: str,
    heading: str,
    letter: str,
    row_numbers: np.ndarray,
    decimal: str,
    day_first: bool,
    from_text_file: bool,
    serial_dates: bool = True,
    fitted_range: tuple[float, float] | None = None,
) -> Column:
    m = present_idx.size
    present = cells[present_idx].tolist()
    if any(type(v) not in _KNOWN_TYPES and v is not UNCACHED for v in present):
        # time of day and anything unforeseen: keep the text a person sees
        present = [
            v if type(v) in _KNOWN_TYPES or v is UNCACHED else format_plain(v) for v in present
        ]

    # Texts are classified once per distinct text (labels repeat a lot).
    unique = list(dict.fromkeys(v for v in present if type(v) is str))
    info, date_note, mark_note, other_mark = _text_records(unique, decimal, day_first, present)
    any_code = any(_is_code(u) for u in unique)
    records = [info[v] if type(v) is str else _value_record(v) for v in present]
    code_list, number_list, flag_list, shown, date_list = zip(*records)
    codes = np.array(code_list, dtype=np.int8)
    numbers = np.array(number_list, dtype=np.float64)
    flags = np.array(flag_list, dtype=np.float64)
    dates: list[dt.datetime | None] = list(date_list)
    error_codes: Counter[str] = Counter(
        str(shown[k]) for k in np.flatnonzero(codes == _ERROR).tolist()
    )

    counts = np.bincount(codes, minlength=_CODES)
    n_errors = int(counts[_ERROR])
    usable = m - int(counts[_MISSING] + counts[_ERROR] + counts[_NOFORMULA])
    # a typed placeholder ("n/a", "-", "missing") is not evidence against a number, date or
    # yes/no column: the shares that decide the kind leave it out (it is read as missing there)
    placeholders = {u for u in unique if info[u][0] == _TEXT and u.strip().lower() in MISSING_WORDS}
    decisive = usable
    if placeholders:
        decisive -= sum(1 for v in present if type(v) is str and v in placeholders)
    empty_cells = n - m + int(counts[_MISSING])
    notes: list[str] = []
    if n_errors:
        kinds = ", ".join(f"{c} {e}" if c > 1 else e for e, c in error_codes.most_common())
        notes.append(
            f"{n_errors} spreadsheet error value{'s' if n_errors > 1 else ''} ({kinds}) treated as missing"
        )

    def cell_at(k: int) -> str:
        return cell_name(letter, int(row_numbers[present_idx[k]]))

    n_uncached = int(counts[_NOFORMULA])
    if n_uncached:
        first_cell = cell_at(int(np.flatnonzero(codes == _NOFORMULA)[0]))
        notes.append(
            f"{n_uncached} formula cell{'s' if n_uncached > 1 else ''} without a stored result "
            f"(e.g. {first_cell}) read as missing: the file was saved without calculating them"
        )

    def unusable_note(keep: np.ndarray, what: str) -> int:
        bad = np.flatnonzero(
            ~keep
            & np.isin(
                codes,
                (_NUMBER, _BOOL, _DATE, _TEXT_NUMBER, _TEXT_FLAG, _TEXT_DATE, _TEXT, _TEXT_LIMIT),
            )
        )
        undetected = np.array(
            [str(shown[k]).lower() in _NOT_DETECTED for k in bad.tolist()], dtype=bool
        )
        if what == "numbers" and undetected.any():  # say why these matter, apart from the rest
            named = ", ".join(f"{cell_at(k)} '{_seen(shown[k])}'" for k in bad[undetected][:3])
            count = int(undetected.sum())
            notes.append(
                ColumnNote(
                    f"{count} result{'s' if count > 1 else ''} reported as not detected without "
                    f"a limit ({named}{' and more' if count > 3 else ''}) treated as missing: "
                    "these values are low, not unknown, so leaving their rows out biases the "
                    "fit; typing the limit instead (e.g. '<0.02') has them read as half of it",
                    Finding.NOT_DETECTED,
                    count,
                )
            )
            bad = bad[~undetected]
            if not bad.size:
                return count
        if bad.size:
            named = ", ".join(f"{cell_at(k)} '{_seen(shown[k])}'" for k in bad[:3])
            more = f" and {bad.size - 3} more" if bad.size > 3 else ""
            notes.append(
                ColumnNote(
                    f"{bad.size} cells that are not {what} treated as missing: {named}{more}"
                    if bad.size > 1
                    else f"1 cell that is not {_SINGULAR[what]} treated as missing: {named}",
                    Finding.UNREAD_CELLS,
                    int(bad.size),
                )
            )
        return int(bad.size) + int(undetected.sum())

    if usable == 0:
        col = Column(
            name,
            heading,
            letter,
            ColumnKind.EMPTY,
            np.full(n, np.nan),
            missing=n,
            errors=n_errors,
            notes=notes,
        )
        return col

    # numbers written with a unit count as numbers when the column uses one unit only
    units = sorted({_unit_of(u) for u in unique if info[u][0] == _TEXT_UNIT})
    one_unit = len(units) == 1
    n_numeric = int(counts[_NUMBER] + counts[_TEXT_NUMBER] + counts[_TEXT_LIMIT])
    if one_unit:
        n_numeric += int(counts[_TEXT_UNIT])
    n_words = int(counts[_BOOL] + counts[_TEXT_FLAG])
    n_flaglike = n_words + int(
        np.count_nonzero(~np.isnan(flags) & np.isin(codes, (_NUMBER, _TEXT_NUMBER)))
    )
    n_dates = int(counts[_DATE] + counts[_TEXT_DATE])
    numbers_ok = not (any_code and counts[_NUMBER] == 0)

    if n_words and n_flaglike >= _share(decisive):
        keep = ~np.isnan(flags)
        bad = unusable_note(keep, "yes/no values")
        values = np.full(n, np.nan)
        values[present_idx[keep]] = flags[keep]
        col = Column(name, heading, letter, ColumnKind.FLAG, values)
        col.missing = empty_cells + n_errors + int(counts[_NOFORMULA]) + bad
        _fill_numeric_summary(col, np.unique(flags[keep]))
    elif numbers_ok and n_numeric and n_numeric >= _share(decisive):
        keep = np.isin(
            codes, (_NUMBER, _TEXT_NUMBER, _TEXT_LIMIT) + ((_TEXT_UNIT,) if one_unit else ())
        )
        bad = unusable_note(keep, "numbers")
        with_unit = np.flatnonzero(codes == _TEXT_UNIT) if one_unit else np.zeros(0, int)
        if with_unit.size:
            k0 = int(with_unit[0])
            notes.append(
                ColumnNote(
                    f"{with_unit.size} number{'s' if with_unit.size > 1 else ''} written with "
                    f"the unit '{units[0]}' (e.g. {cell_at(k0)} '{shown[k0]}') read as "
                    f"number{'s' if with_unit.size > 1 else ''} in {units[0]}",
                    Finding.ONE_UNIT,
                )
            )
        elif len(units) > 1 and counts[_TEXT_UNIT]:
            notes.append(_several_units_note(units))
        if any(u.rstrip().endswith("%") for u in unique):
            scale_note = _one_percent_scale(numbers, codes, shown, keep, cell_at, fitted_range)
            if scale_note:
                notes.append(ColumnNote(scale_note, Finding.PERCENT_SCALES))
        limits = np.flatnonzero(codes == _TEXT_LIMIT)
        if limits.size:
            below = [k for k in limits.tolist() if str(shown[k])[:1] in "<\u2264"]
            above = [k for k in limits.tolist() if str(shown[k])[:1] not in "<\u2264"]
            said = []
            if below:
                said.append(
                    f"{len(below)} result{'s' if len(below) > 1 else ''} below a detection limit "
                    f"(e.g. {cell_at(below[0])} '{shown[below[0]]}') read as half the limit"
                )
            if above:
                said.append(
                    f"{len(above)} result{'s' if len(above) > 1 else ''} above a limit "
                    f"(e.g. {cell_at(above[0])} '{shown[above[0]]}') read as the limit"
                )
            notes.append(
                ColumnNote(
                    "; ".join(said) + " (common practice for a few such results; if they are "
                    "many, or your lab has its own rule, replace them in the sheet)",
                    Finding.LIMIT_SUBSTITUTES,
                )
            )
        values = np.full(n, np.nan)
        values[present_idx[keep]] = numbers[keep]
        uniq = np.unique(numbers[keep])
        is_flag = uniq.size == 2 and uniq[0] == 0.0 and uniq[1] == 1.0
        col = Column(
            name, heading, letter, ColumnKind.FLAG if is_flag else ColumnKind.NUMBER, values
        )
        col.missing = empty_cells + n_errors + int(counts[_NOFORMULA]) + bad
        _fill_numeric_summary(col, uniq)
        # in a text file every number is text: say which mark was chosen for those whose value
        # depends on it, with one of them (none such: nothing to say)
        ambiguous = [
            k
            for k in np.flatnonzero(keep).tolist()
            if codes[k] in (_TEXT_NUMBER, _TEXT_LIMIT, _TEXT_UNIT)
            and shown[k] not in other_mark
            and _reads_both_ways(_number_part(str(shown[k])))
        ]
        if from_text_file and mark_note and finding_of(mark_note) and ambiguous:
            first = ambiguous[0]
            notes.append(
                ColumnNote(
                    f"numbers such as {cell_at(first)} '{shown[first]}' "
                    f"({format_plain(float(numbers[first]))}) {mark_note}",
                    finding_of(mark_note),
                )
            )
        unusual = [k for k in np.flatnonzero(keep).tolist() if shown[k] in other_mark]
        if unusual:
            k0 = unusual[0]
            notes.append(
                ColumnNote(
                    f"{counted(len(unusual), 'number')} written with the other decimal mark "
                    f"(e.g. {cell_at(k0)} '{shown[k0]}') read as "
                    f"{format_plain(float(numbers[k0]))}",
                    Finding.DECIMAL_MARK_CHOSEN,
                    len(unusual),
                )
            )
        if not from_text_file and counts[_TEXT_NUMBER]:
            col.text_numbers = int(counts[_TEXT_NUMBER])
            first = int(np.flatnonzero(codes == _TEXT_NUMBER)[0])
            notes.append(
                ColumnNote(
                    f"{col.text_numbers} number{'s' if col.text_numbers > 1 else ''} stored as text "
                    f"read as number{'s' if col.text_numbers > 1 else ''} (e.g. {cell_at(first)} "
                    f"'{shown[first]}')" + (f", {mark_note}" if mark_note else ""),
                    finding_of(mark_note) if mark_note else None,
                )
            )
    elif n_dates and n_dates >= _share(decisive):
        # a plain number among dates is a date typed without its format when it lies where
        # serial numbers of dates do (10000 = 1927-05-18 to 100000 = 2173-10-14; 1900 system)
        # (serial_dates False: a workbook counting from 1904, where such a number means
        # another day; left unread there rather than guessed)
        serial = np.flatnonzero(
            np.isin(codes, (_NUMBER, _TEXT_NUMBER))
            & (numbers >= 10_000)
            & (numbers <= 100_000)
            & serial_dates
        )
        for k in serial.tolist():
            dates[k] = _SERIAL_EPOCH + dt.timedelta(days=float(numbers[k]))
            codes[k] = _DATE
        if serial.size:
            k0 = int(serial[0])
            notes.append(
                ColumnNote(
                    f"{counted(serial.size, 'number')} among the dates read as date serial "
                    f"number{'s' if serial.size > 1 else ''} (e.g. {cell_at(k0)} "
                    f"{numbers[k0]:g} as {dates[k0]:%Y-%m-%d})",
                    Finding.SERIAL_DATES,
                )
            )
        keep = np.isin(codes, (_DATE, _TEXT_DATE)) & np.array([d is not None for d in dates])
        bad = unusable_note(keep, "dates")
        values = np.full(n, np.datetime64("NaT"), dtype="datetime64[ns]")
        values[present_idx[keep]] = np.array(
            [dates[k] for k in np.flatnonzero(keep)], dtype="datetime64[ns]"
        )
        col = Column(name, heading, letter, ColumnKind.DATE, values)
        col.missing = empty_cells + n_errors + int(counts[_NOFORMULA]) + bad
        uniq = np.unique(values[present_idx[keep]])
        col.distinct = int(uniq.size)
        col.constant = uniq.size == 1
        if uniq.size:
            col.minimum = _iso(uniq[0])
            col.maximum = _iso(uniq[-1])
        if date_note and counts[_TEXT_DATE]:
            notes.append(date_note)
    else:
        keep = ~np.isin(codes, (_MISSING, _ERROR, _NOFORMULA))
        labels = np.full(n, None, dtype=object)
        kept = [_seen(shown[k]) for k in np.flatnonzero(keep).tolist()]
        tally = Counter(kept)
        spelling, merged = _case_variants(tally)
        if spelling:  # one level typed in several letter cases: read as its usual spelling
            kept = [spelling.get(label, label) for label in kept]
            tally = Counter(kept)
            notes.append(merged)
        labels[present_idx[keep]] = kept
        distinct = len(tally)
        if distinct <= CATEGORY_MAX_SHARE * usable and distinct <= CATEGORY_MAX_LEVELS:
            kind = ColumnKind.CATEGORY
        else:
            kind = ColumnKind.IDENTIFIER
            if spelling:  # identifiers keep every spelling: "ab12" and "AB12" may differ
                labels[present_idx[keep]] = [_seen(shown[k]) for k in np.flatnonzero(keep)]
                notes.remove(merged)
                distinct = len(set(labels[present_idx[keep]]))
        col = Column(name, heading, letter, kind, labels)
        col.missing = empty_cells + n_errors + int(counts[_NOFORMULA])
        col.distinct = distinct
        col.constant = distinct == 1
        if kind == ColumnKind.CATEGORY:
            col.levels = [
                label for label, _ in sorted(tally.items(), key=lambda kv: (-kv[1], kv[0]))
            ]
        if len(units) > 1 and counts[_TEXT_UNIT] >= usable / 2:
            notes.append(_several_units_note(units))
        elif n_numeric and n_numeric > decisive / 2:
            notes.append(
                ColumnNote(
                    f"{n_numeric} of {decisive} values are numbers, too few for a number column "
                    f"(needs {int(DOMINANT_SHARE * 100)}%); read as text",
                    Finding.TOO_FEW_NUMBERS,
                )
            )
    col.errors = n_errors
    col.notes = notes
    return col


_SINGULAR = {"numbers": "a number", "dates": "a date", "yes/no values": "a yes/no value"}


def _several_units_note(units: list[str]) -> ColumnNote:
    shown = ", ".join(f"'{u}'" for u in units[:5]) + (" ..." if len(units) > 5 else "")
    return ColumnNote(
        f"numbers written with different units ({shown}) are not read as numbers: write the "
        "column in one unit (or the unit in its heading and numbers in the cells)",
        Finding.SEVERAL_UNITS,
    )


def _case_variants(tally: Counter) -> tuple[dict[str, str], str]:
    """Labels that differ only in letter case ("East", "east", "EAST"): each variant mapped to
    the most frequent spelling of its group (on a tie, one in mixed case, "North" rather than
    "NORTH" or "north", then the first in sort order), and a note
    saying which were joined; ({}, "") when there are none."""
    groups: dict[str, list[str]] = {}
    for label in tally:
        groups.setdefault(label.casefold(), []).append(label)
    spelling: dict[str, str] = {}
    joined = []
    for variants in groups.values():
        if len(variants) < 2:
            continue
        variants.sort(key=lambda v: (-tally[v], v in (v.upper(), v.lower()), v))
        usual = variants[0]
        for v in variants[1:]:
            spelling[v] = usual
        joined.append(
            " and ".join(f"'{v}' ({counted(tally[v], 'cell')})" for v in variants[1:])
            + f" as '{usual}' ({counted(tally[usual], 'cell')})"
        )
    if not spelling:
        return {}, ""
    shown = "; ".join(joined[:5]) + (f"; and {len(joined) - 5} more" if len(joined) > 5 else "")
    return spelling, ColumnNote(
        f"levels that differ only in letter case are read as one: {shown}", Finding.CASE_VARIANTS
    )


def _seen(value: object) -> str:
    """The text a person sees in the cell."""
    return value if type(value) is str else format_plain(value)


def _share(usable: int) -> float:
    """How many values of one kind decide the column (with slack for float rounding)."""
    return DOMINANT_SHARE * usable - 1e-9


def _iso(value: np.datetime64) -> str:
    text = str(np.datetime_as_string(value, unit="s"))
    return text[:10] if text.endswith("T00:00:00") else text.replace("T", " ")
