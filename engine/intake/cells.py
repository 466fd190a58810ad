"""What a single cell can mean: flag tokens, spreadsheet error values, numbers written as text.

These tokens are shared with the report writer (the scoring sheet turns flag text back into
0/1 with the same words), so they live here as module constants.

Matching is on the trimmed, lower-cased text of a cell. Numbers stored as text are read in one
of two conventions: decimal point ("1,234.5", "1 234.5") or decimal comma ("1.234,5",
"1 234,5"); a percent sign divides by 100 ("12%" -> 0.12), a pair of parentheses negates
("(1.5)" -> -1.5, the accounting notation), and a leading or trailing currency symbol is
ignored ("$1,200").
"""

from __future__ import annotations

__all__ = [
    "FLAG_TRUE",
    "FLAG_FALSE",
    "MISSING_WORDS",
    "CHECK_MARKS",
    "ERROR_VALUES",
    "column_letter",
    "column_index",
    "is_error_text",
    "cell_name",
    "numbered_name",
    "is_blank_text",
    "parse_number_text",
    "text_number_convention",
    "decimal_mark_votes",
    "format_heading",
    "format_plain",
]

import datetime as _dt
import math
import re

# Text a yes/no column may hold, lower case; spreadsheet booleans TRUE/FALSE and the numbers 1/0
# count too. Common practice in survey and operations workbooks. The words of the languages whose
# month names and decimal commas intake reads as well (German, French, Spanish): spreadsheet
# programs set up in those languages write their booleans so into text files (WAHR/FALSCH,
# VRAI/FAUX, VERDADERO/FALSO).
FLAG_TRUE: tuple[str, ...] = (
    "yes", "y", "true", "1", "ja", "wahr", "oui", "vrai", "sí", "si", "verdadero",
)  # fmt: skip
# marks a person ticks a box with (common spreadsheet practice); a column of one of them beside
# blank cells is a yes/no column whose blanks mean no
CHECK_MARKS: tuple[str, ...] = ("x", "\u2713", "\u2714", "\u2611", "\u221a")
# texts people type for a value that is missing (lower case; common spreadsheet practice)
MISSING_WORDS = frozenset(
    "n/a na n.a. - -- \u2013 \u2014 ? missing none null nan tbd tba tbc pending unknown".split()
)
FLAG_FALSE: tuple[str, ...] = ("no", "n", "false", "0", "nein", "falsch", "non", "faux", "falso")

# The error values spreadsheet programs show in a cell (common practice; the same seven in every
# major spreadsheet program, plus #GETTING_DATA and #SPILL!/#CALC! from newer versions).
ERROR_VALUES: tuple[str, ...] = (
    "#N/A",
    "#DIV/0!",
    "#VALUE!",
    "#REF!",
    "#NAME?",
    "#NUM!",
    "#NULL!",
    "#SPILL!",
    "#CALC!",
    "#GETTING_DATA",
)
_ERROR_SET = frozenset(ERROR_VALUES)

_SPACES = " \u00a0\u202f\u2009\t"  # ordinary, no-break, narrow no-break, thin space, tab
_CURRENCY = "$€£¥"
# ISO 4217 codes written before or after an amount ("CHF 1'200.00", "12.50 EUR")
_CURRENCY_CODES = frozenset(
    "EUR USD GBP CHF JPY CAD AUD NZD SEK NOK DKK PLN CZK HUF INR CNY ZAR BRL MXN".split()
)
# the minus sign of typeset text (U+2212), and the hyphen
_MINUS = "-\u2212"

# digit groups start with a nonzero digit: "0,325" has no thousands in it, it can only be a
# decimal comma (and "0.325" only a decimal point)
_DIGITS_POINT = re.compile(
    r"(?:[1-9]\d{0,2}(?:[,\u00a0\u202f\u2009 ']\d{3})+|\d+)(?:\.\d*)?(?:[eE][+-]?\d+)?|\.\d+(?:[eE][+-]?\d+)?"
)
_DIGITS_COMMA = re.compile(
    r"(?:[1-9]\d{0,2}(?:[.\u00a0\u202f\u2009 ']\d{3})+|\d+)(?:,\d*)?(?:[eE][+-]?\d+)?|,\d+"
)


def column_letter(index: int) -> str:
    """Spreadsheet letters of a 0-based column index: 0 -> "A", 27 -> "AB"."""
    letters = ""
    n = index + 1
    while n:
        n, rem = divmod(n - 1, 26)
        letters = chr(65 + rem) + letters
    return letters


def column_index(letters: str) -> int:
    """0-based column index of spreadsheet letters: "A" -> 0, "AB" -> 27."""
    n = 0
    for ch in letters.upper():
        n = n * 26 + (ord(ch) - 64)
    return n - 1


def numbered_name(base: str, taken: set[str]) -> str:
    """``base``, or "base (2)", "base (3)" ... when a column already has that name (compared
    ignoring letter case; ``taken`` holds the casefolded names given so far)."""
    name, n = base, 2
    while name.casefold() in taken:
        name = f"{base} ({n})"
        n += 1
    return name


def repeated_headings_warning(renamed: list[str], named: int = 5) -> str:
    """The table's warning about columns read under a numbered name because their heading was
    used before (``renamed``: each such column as "D 'price (2)'"); "" when none was."""
    if not renamed:
        return ""
    shown = ", ".join(renamed[:named]) + (" ..." if len(renamed) > named else "")
    one = len(renamed) == 1
    return (
        f"{len(renamed)} {'column repeats' if one else 'columns repeat'} an earlier heading and "
        f"{'is' if one else 'are'} read under a numbered name ({shown}); a name alone means the "
        "first column with that heading"
    )


def cell_name(letter: str, row: int) -> str:
    """A cell reference for messages: "C12" for a workbook; "row 12, column 3" for CSV."""
    if letter.isdigit():
        return f"row {row}, column {letter}"
    return f"{letter}{row}"


def is_error_text(text: str) -> bool:
    return text.strip().upper() in _ERROR_SET


def is_blank_text(text: str) -> bool:
    return not text.strip(_SPACES)


def _strip_decorations(text: str) -> tuple[str, float, bool] | None:
    """Remove sign marks, percent and currency; return (digits part, scale, negative)."""
    s = text.strip(_SPACES)
    if not s:
        return None
    negative = False
    scale = 1.0
    if s[0] == "(" and s[-1] == ")":
        negative = True
        s = s[1:-1].strip(_SPACES)
    if s.endswith("%"):
        scale = 0.01
        s = s[:-1].rstrip(_SPACES)
    if s and s[0] in _CURRENCY:
        s = s[1:].lstrip(_SPACES)
    elif s and s[-1] in _CURRENCY:
        s = s[:-1].rstrip(_SPACES)
    elif s[:3] in _CURRENCY_CODES and s[3:4] in _SPACES:
        s = s[3:].lstrip(_SPACES)
    elif s[-3:] in _CURRENCY_CODES and s[-4:-3] in _SPACES:
        s = s[:-3].rstrip(_SPACES)
    if s and s[0] in "+" + _MINUS:
        if s[0] != "+":
            negative = not negative
        s = s[1:].lstrip(_SPACES)
        if s and s[0] in _CURRENCY:  # "-$5"
            s = s[1:]
    elif len(s) > 1 and s[-1] in _MINUS and s[-2].isdigit():
        # a trailing minus, as accounting systems export negative amounts ("1.234,50-")
        negative = not negative
        s = s[:-1]
    if not s:
        return None
    return s, scale, negative


def parse_number_text(text: str, decimal: str = ".") -> float | None:
    """The number a text cell spells, or None. `decimal` is "." or ",".

    A leading zero followed by more digits ("007", "01234") is a code, not a number.
    """
    parts = _strip_decorations(text)
    if parts is None:
        return None
    s, scale, negative = parts
    pattern = _DIGITS_POINT if decimal == "." else _DIGITS_COMMA
    if not pattern.fullmatch(s):
        return None
    if len(s) > 1 and s[0] == "0" and s[1].isdigit():
        return None
    if decimal == ".":
        plain = s.translate(str.maketrans("", "", ",\u00a0\u202f\u2009 '"))
    else:
        plain = s.translate(str.maketrans("", "", ".\u00a0\u202f\u2009 '")).replace(",", ".")
    try:
        value = float(plain)
    except ValueError:
        return None
    if not math.isfinite(value):
        return None
    value *= scale
    return -value if negative else value


def decimal_mark_votes(texts: list[str]) -> tuple[int, int]:
    """How many of `texts` read as a number only, or differently, with a decimal point, and
    how many with a decimal comma ("1,234" votes for both; "12" for neither)."""
    point = comma = 0
    for t in texts:
        a = parse_number_text(t, ".")
        b = parse_number_text(t, ",")
        if a is not None and (b is None or a != b):
            point += 1
        if b is not None and (a is None or a != b):
            comma += 1
    return point, comma


def text_number_convention(texts: list[str], default: str = ".") -> str:
    """The decimal mark ("." or ",") under which more of `texts` read as numbers.

    Texts that read the same way under both (e.g. "12") do not count; ties keep `default`.
    """
    point, comma = decimal_mark_votes(texts)
    if point == comma:
        return default
    return "." if point > comma else ","


def format_plain(value: object) -> str:
    """A cell value as the short text a person would type: 12.0 -> "12", dates in ISO."""
    if isinstance(value, bool):
        return "TRUE" if value else "FALSE"
    if isinstance(value, float):
        if value.is_integer() and abs(value) < 1e15:
            return str(int(value))
        return repr(value)
    if isinstance(value, _dt.datetime):
        if value.time() == _dt.time(0):
            return value.date().isoformat()
        return value.isoformat(sep=" ")
    if isinstance(value, _dt.date | _dt.time):
        return value.isoformat()
    return str(value).strip()


def counted(n: int, word: str) -> str:
    """ "1 row", "3 rows": a count with its noun."""
    return f"{n} {word}{'s' if n != 1 else ''}"


def format_heading(value: object) -> str:
    """A heading cell as text ("" for an empty cell)."""
    if value is None:
        return ""
    return " ".join(format_plain(value).split())
