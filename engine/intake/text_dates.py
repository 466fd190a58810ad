"""Dates written as text, as CSV files and pasted data hold them.

Accepted shapes (common practice): ISO "2021-03-04" with an optional time "2021-03-04 13:05"
or "2021-03-04T13:05:00"; "2021/03/04"; and day-month-year or month-day-year with "/", "."
or "-" between parts and a four-digit year ("04/03/2021", "4.3.2021"). The order of day and
month is decided for the whole column: a first part above 12 means day first, a second part
above 12 means month first; when nothing decides it, `day_first` (the caller's hint) is used
and the column gets a note.

Periods, as planning and reporting sheets label rows, are read as their first day, with a
note: quarters "2024-Q3", "2024 Q3", "Q3 2024", "Q3/2024"; ISO weeks "2024-W05", "2024 W5",
"W05 2024" (the Monday, ISO 8601); months "2024-03", "2024/03", "03/2024", "Mar 2024",
"March 2024", "Mar-24", "Mär 2024" (month names in English, German, French and Spanish; a
two-digit year only after a dash or an apostrophe, "Mar 24" could be a day).
"""

from __future__ import annotations

__all__ = ["looks_like_date", "parse_date_texts", "MONTH_NAMES"]

import datetime as dt
import re

from engine.intake.notes import ColumnNote, Finding, finding_of

_ISO = re.compile(
    r"(\d{4})[-/](\d{1,2})[-/](\d{1,2})(?:[ T](\d{1,2}):(\d{2})(?::(\d{2})(?:\.(\d{1,6}))?)?)?"
)
_DMY = re.compile(r"(\d{1,2})[/.\-](\d{1,2})[/.\-](\d{4})(?: (\d{1,2}):(\d{2})(?::(\d{2}))?)?")


_QUARTER = re.compile(r"(?i)(\d{4})[ \-/]?Q([1-4])|Q([1-4])[ \-/]?(\d{4})")
_WEEK = re.compile(r"(?i)(\d{4})[ \-/]?W(\d{1,2})|W(\d{1,2})[ \-/]?(\d{4})")
_YEAR_MONTH = re.compile(r"(\d{4})[-/](\d{1,2})|(\d{1,2})[-/](\d{4})")
_NAMED_MONTH = re.compile(r"(?i)([a-zäéû]{3,9})\.?(?:[ \-/](\d{4})|[\-'\u2019](\d{2}))")

# month names and abbreviations (English, German, French, Spanish), lower case, no dot
_MONTHS: dict[str, int] = {}
for _number, _names in enumerate(
    [
        "jan january januar janv janvier ene enero",
        "feb february februar fév fev février fevrier febrero",
        "mar march märz mär maerz mars marzo",
        "apr april avr avril abr abril",
        "may mai mayo",
        "jun june juni juin junio",
        "jul july juli juil juillet julio",
        "aug august août aout ago agosto",
        "sep sept september septembre septiembre set",
        "oct october okt oktober octobre octubre",
        "nov november novembre noviembre",
        "dec december dez dezember déc décembre decembre dic diciembre",
    ],
    start=1,
):
    for _name in _names.split():
        _MONTHS[_name] = _number
# the month names and abbreviations above, lower case (a "3 Jan" is not a number with a unit)
MONTH_NAMES = frozenset(_MONTHS)


def _period(s: str) -> tuple[dt.datetime, str] | None:
    """The first day of the period ``s`` names and the kind of period, or None."""
    m = _QUARTER.fullmatch(s)
    if m:
        y, q = (m.group(1), m.group(2)) if m.group(1) else (m.group(4), m.group(3))
        return dt.datetime(int(y), 3 * int(q) - 2, 1), "quarter"
    m = _WEEK.fullmatch(s)
    if m:
        y, w = (m.group(1), m.group(2)) if m.group(1) else (m.group(4), m.group(3))
        try:
            day = dt.date.fromisocalendar(int(y), int(w), 1)
        except ValueError:
            return None
        return dt.datetime(day.year, day.month, day.day), "week"
    m = _YEAR_MONTH.fullmatch(s)
    if m:
        y, mo = (m.group(1), m.group(2)) if m.group(1) else (m.group(4), m.group(3))
        if 1 <= int(mo) <= 12:
            return dt.datetime(int(y), int(mo), 1), "month"
        return None
    m = _NAMED_MONTH.fullmatch(s)
    if m:
        mo = _MONTHS.get(m.group(1).lower())
        if mo is None:
            return None
        y = int(m.group(2)) if m.group(2) else 2000 + int(m.group(3))
        return dt.datetime(y, mo, 1), "month"
    return None


def looks_like_date(text: str) -> bool:
    s = text.strip()
    return bool(_ISO.fullmatch(s) or _DMY.fullmatch(s)) or _period(s) is not None


def _make(
    y: int, mo: int, d: int, h: str | None, mi: str | None, s: str | None, frac: str | None = None
) -> dt.datetime | None:
    try:
        micro = int((frac or "0").ljust(6, "0")) if frac else 0
        return dt.datetime(y, mo, d, int(h or 0), int(mi or 0), int(s or 0), micro)
    except ValueError:
        return None


def parse_date_texts(
    texts: list[str], day_first: bool
) -> tuple[list[dt.datetime | None], str | None]:
    """Parse each text (None where it is not a date); also return a note on an ambiguous order."""
    stripped = [t.strip() for t in texts]
    first_big = second_big = False
    for s in stripped:
        m = _DMY.fullmatch(s)
        if m:
            first_big |= int(m.group(1)) > 12
            second_big |= int(m.group(2)) > 12
    note: ColumnNote | None = None
    if first_big and not second_big:
        day_first = True
    elif second_big and not first_big:
        day_first = False
    elif not first_big and not second_big and any(_DMY.fullmatch(s) for s in stripped):
        order = "day/month/year" if day_first else "month/day/year"
        example = next(s for s in stripped if _DMY.fullmatch(s))
        note = ColumnNote(
            f"dates such as '{example}' could be read either way; read as {order}",
            Finding.DATE_ORDER_CHOSEN,
        )
    out: list[dt.datetime | None] = []
    periods: dict[str, str] = {}  # kind of period -> first text read as one
    for s in stripped:
        period = _period(s)
        if period is not None:
            out.append(period[0])
            periods.setdefault(period[1], s)
            continue
        m = _ISO.fullmatch(s)
        if m:
            y, mo, d, h, mi, sec, frac = m.groups()
            out.append(_make(int(y), int(mo), int(d), h, mi, sec, frac))
            continue
        m = _DMY.fullmatch(s)
        if m:
            a, b, y, h, mi, sec = m.groups()
            day, month = (int(a), int(b)) if day_first else (int(b), int(a))
            out.append(_make(int(y), month, day, h, mi, sec))
            continue
        out.append(None)
    if periods:
        said = ", ".join(
            f"'{text}' as the first day of its {kind}" for kind, text in periods.items()
        )
        if periods.keys() == {"week"}:
            said += " (the Monday, ISO 8601)"
        joined = "; ".join(x for x in (note, f"periods read as dates: {said}") if x)
        note = ColumnNote(joined, finding_of(note) if note else None)
    return out, note
