"""Dates written as text, as CSV files and pasted data hold them.

Accepted shapes (common practice): ISO "2021-03-04" with an optional time "2021-03-04 13:05"
or "2021-03-04T13:05:00"; "2021/03/04"; and day-month-year or month-day-year with "/", "."
or "-" between parts and a four-digit year ("04/03/2021", "4.3.2021"). The order of day and
month is decided for the whole column: a first part above 12 means day first, a second part
above 12 means month first; when nothing decides it, `day_first` (the caller's hint) is used
and the column gets a note.
"""

from __future__ import annotations

__all__ = ["looks_like_date", "parse_date_texts"]

import datetime as dt
import re

_ISO = re.compile(
    r"(\d{4})[-/](\d{1,2})[-/](\d{1,2})(?:[ T](\d{1,2}):(\d{2})(?::(\d{2})(?:\.(\d{1,6}))?)?)?"
)
_DMY = re.compile(r"(\d{1,2})[/.\-](\d{1,2})[/.\-](\d{4})(?: (\d{1,2}):(\d{2})(?::(\d{2}))?)?")


def looks_like_date(text: str) -> bool:
    s = text.strip()
    return bool(_ISO.fullmatch(s) or _DMY.fullmatch(s))


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
    note = None
    if first_big and not second_big:
        day_first = True
    elif second_big and not first_big:
        day_first = False
    elif not first_big and not second_big and any(_DMY.fullmatch(s) for s in stripped):
        order = "day/month/year" if day_first else "month/day/year"
        note = f"dates such as '{next(s for s in stripped if _DMY.fullmatch(s))}' could be read either way; read as {order}"
    out: list[dt.datetime | None] = []
    for s in stripped:
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
    return out, note
