"""Read a delimited text file (.csv) into rows of text cells.

- Encoding: a byte-order mark decides (UTF-8, UTF-16); otherwise UTF-8 if the bytes are valid
  UTF-8, else Windows-1252 (the usual Western "ANSI" encoding, a superset of Latin-1 for
  printable text), else Latin-1, which accepts any byte.
- Delimiter: the one of comma, semicolon, tab and vertical bar that splits the most of the
  first 200 records into the same number of fields (more than one).
- Decimal mark: counted over the fields that read as a number one way only: "1,5" and
  "1.234,5" vote for a decimal comma, "1.5" and "1,234.5" for a decimal point. A tie keeps
  the point, except with a semicolon delimiter, where spreadsheet programs in decimal-comma
  locales put it.
"""

from __future__ import annotations

__all__ = ["DelimitedText", "read_delimited"]

import codecs
import csv
import io
import re
from collections import Counter
from dataclasses import dataclass
from pathlib import Path

from engine.errors import InputProblem, Place

_DELIMITERS = ("\t", ";", ",", "|")
_COMMA_DECIMAL = re.compile(r"[+-]?(\d{1,3}(\.\d{3})+,\d+|\d*,(\d{1,2}|\d{4,}))%?")
_POINT_DECIMAL = re.compile(r"[+-]?(\d{1,3}(,\d{3})+\.\d+|\d*\.(\d{1,2}|\d{4,}))%?")


@dataclass
class DelimitedText:
    rows: list[list[str]]
    # fields on each line as written, before padding (an empty last field still counts)
    field_counts: list[int]
    encoding: str
    delimiter: str
    decimal: str


def _decode(data: bytes, place: Place) -> tuple[str, str]:
    if data.startswith(codecs.BOM_UTF8):
        return data[3:].decode("utf-8", errors="replace"), "utf-8 (with byte-order mark)"
    if data.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        return data.decode("utf-16", errors="replace"), "utf-16"
    if b"\x00" in data[:4096]:
        # UTF-16 without its byte-order mark: text whose every other byte is zero (ASCII
        # letters and digits), little- or big-endian by which half the zeros are in
        head = data[:4096]
        head = head[: len(head) - len(head) % 2]
        odd, even = head[1::2], head[0::2]
        for zeros, chars, codec in ((odd, even, "utf-16-le"), (even, odd, "utf-16-be")):
            if (
                len(zeros)
                and zeros.count(0) >= 0.9 * len(zeros)  # the high bytes of ASCII characters
                and chars.count(0) <= 0.01 * len(chars)  # the characters themselves
            ):
                text = data.decode(codec, errors="replace")
                if "\x00" not in text[:2048] and "\n" in text[:2048]:  # lines of text
                    return text, f"{codec} (no byte-order mark)"
        raise InputProblem(
            f"{place.describe()} does not look like text (it holds binary bytes); a text "
            "table must be plain text (UTF-8, UTF-16 or a Windows encoding)",
            place,
        )
    try:
        return data.decode("utf-8"), "utf-8"
    except UnicodeDecodeError:
        pass
    try:
        return data.decode("cp1252"), "windows-1252"
    except UnicodeDecodeError:
        return data.decode("latin-1"), "latin-1"


def _sniff_delimiter(sample: str) -> str:
    best, best_score = ",", (-1, 0)
    for order, d in enumerate(_DELIMITERS):
        try:
            reader = csv.reader(io.StringIO(sample, newline=""), delimiter=d)
            counts = [len(r) for r in reader if any(c.strip() for c in r)]
        except csv.Error:
            continue
        if not counts:
            continue
        width, freq = Counter(counts).most_common(1)[0]
        score = (freq if width > 1 else 0, -order)
        if score > best_score:
            best, best_score = d, score
    return best


# fields looked at to tell the decimal mark: rows spread over the file up to about this many
# fields (a wide export holds hundreds of thousands; the count only decides a majority)
_DECIMAL_SAMPLE = 50_000


def _sniff_decimal(rows: list[list[str]], delimiter: str) -> str:
    comma = point = 0
    fields = sum(len(r) for r in rows)
    step = max(1, -(-fields // _DECIMAL_SAMPLE))
    for row in rows[::step]:
        for field in row:
            s = field.strip().replace(" ", "").replace("\u00a0", "")
            if _COMMA_DECIMAL.fullmatch(s):
                comma += 1
            elif _POINT_DECIMAL.fullmatch(s):
                point += 1
    if comma == point:
        return "," if delimiter == ";" else "."
    return "," if comma > point else "."


def read_delimited(path: Path) -> DelimitedText:
    """Rows of text cells (all rows padded to the same width)."""
    place = Place(file=str(path))
    data = path.read_bytes()
    if not data.strip():
        raise InputProblem(f"file '{path}' is empty; it holds no table", place)
    text, encoding = _decode(data, place)
    lines = text.splitlines(keepends=True)
    delimiter = _sniff_delimiter("".join(lines[:200]))
    try:
        rows = list(csv.reader(io.StringIO(text, newline=""), delimiter=delimiter))
    except csv.Error as exc:
        raise InputProblem(
            f"file '{path}' could not be read as delimited text ({exc})", place
        ) from exc
    field_counts = [len(r) for r in rows]
    width = max(field_counts, default=0)
    # whitespace-only fields are empty cells
    rows = [[f if f.strip() else "" for f in r] + [""] * (width - len(r)) for r in rows]
    decimal = _sniff_decimal(rows[:500], delimiter)
    return DelimitedText(rows, field_counts, encoding, delimiter, decimal)
