"""Error cells, hidden rows and columns, and merged ranges of one sheet of a binary .xls file.

The cell reader (python-calamine) returns an error cell of an .xls sheet as an empty cell, so
these facts are read here from the sheet's records (BIFF8, the format of .xls since 1997):
BOOLERR cells flagged as errors, FORMULA cells whose saved result is an error, the hidden flag of
ROW and COLINFO records, and MERGEDCELLS. The container (a compound document) is opened with
xlrd's reader.

Walking every record costs about a microsecond each in Python (a second for 600,000 cells), so
the walk runs only when a byte search finds something that could be one of these records with
the flag set; most sheets have none and cost a few milliseconds.
"""

from __future__ import annotations

__all__ = ["XlsFacts", "XlsUnreadable", "scan_xls_sheet"]

import re
import struct
from dataclasses import dataclass, field

# error codes of BIFF8 (the same texts the spreadsheet shows)
_ERROR_TEXT = {
    0x00: "#NULL!",
    0x07: "#DIV/0!",
    0x0F: "#VALUE!",
    0x17: "#REF!",
    0x1D: "#NAME?",
    0x24: "#NUM!",
    0x2A: "#N/A",
}
_BOF, _EOF, _BOUNDSHEET = 0x0809, 0x000A, 0x0085
_BOOLERR, _FORMULA, _ROW, _COLINFO, _MERGED = 0x0205, 0x0006, 0x0208, 0x007D, 0x00E5

# what the records look like when they carry a fact (id and size, little-endian, then fields)
_MAY_BE = (
    (re.compile(rb"\x05\x02\x08\x00(?s:.{6})(.)\x01"), lambda m: m.group(1)[0] in _ERROR_TEXT),
    (re.compile(rb"\x06\x00(?s:.{8})\x02(?s:.{5})\xff\xff"), lambda m: True),
    (re.compile(rb"\x08\x02\x10\x00(?s:.{12})(..)"), lambda m: m.group(1)[0] & 0x20),
    (re.compile(rb"\x7d\x00\x0c\x00(?s:.{8})(..)"), lambda m: m.group(1)[0] & 0x01),
    (re.compile(rb"\xe5\x00(..)(..)"), lambda m: _merged_header(m.group(1), m.group(2))),
)


def _merged_header(size: bytes, count: bytes) -> bool:
    k = int.from_bytes(count, "little")
    return k > 0 and int.from_bytes(size, "little") == 2 + 8 * k


@dataclass
class XlsFacts:
    errors: dict[tuple[int, int], str] = field(default_factory=dict)  # (row, col) -> "#N/A"
    hidden_rows: list[int] = field(default_factory=list)
    hidden_cols: list[int] = field(default_factory=list)
    merged: list[tuple[int, int, int, int]] = field(default_factory=list)  # r0, c0, r1, c1


class XlsUnreadable(Exception):
    """The container or its records are not what a BIFF8 workbook holds."""


def _workbook_stream(data: bytes) -> memoryview:
    from xlrd.compdoc import CompDoc, CompDocError

    try:
        # lenient as spreadsheet programs are: some writers leave sector chains that a strict
        # reading calls corrupt, while the records themselves are fine
        doc = CompDoc(data, logfile=_Quiet(), ignore_workbook_corruption=True)
        for name in ("Workbook", "Book"):
            mem, base, size = doc.locate_named_stream(name)
            if mem is not None:
                return memoryview(mem)[base : base + size]
    except (CompDocError, struct.error, IndexError, ValueError) as exc:
        raise XlsUnreadable(str(exc)) from exc
    raise XlsUnreadable("no workbook stream in the compound document")


class _Quiet:
    """xlrd's reader writes notes to a log file; nobody reads them here."""

    def write(self, _text: str) -> None:
        pass


def _sheet_range(stream: memoryview, sheet: str) -> tuple[int, int] | None:
    """Start and end offsets of the named sheet's substream (None: no such sheet)."""
    unpack = struct.unpack_from
    off, n = 0, len(stream)
    starts: list[tuple[str, int]] = []
    while off + 4 <= n:
        rid, size = unpack("<HH", stream, off)
        if rid == _BOUNDSHEET and size >= 8:
            pos, _vis, _kind, cch, flags = unpack("<IBBBB", stream, off + 4)
            wide = flags & 0x01
            raw = bytes(stream[off + 12 : off + 12 + (2 * cch if wide else cch)])
            starts.append((raw.decode("utf-16-le" if wide else "latin-1", "replace"), pos))
        elif rid == _EOF:
            break
        off += 4 + size
    for name, pos in starts:
        if name == sheet:
            later = sorted(p for _, p in starts if p > pos)
            return pos, (later[0] if later else n)
    return None


def scan_xls_sheet(data: bytes, sheet: str, hidden_only: bool = False) -> XlsFacts:
    """The facts of one sheet (positions 0-based); empty when the sheet is not found."""
    stream = _workbook_stream(data)
    try:
        return _scan(stream, sheet, hidden_only)
    except (struct.error, IndexError, ValueError) as exc:
        raise XlsUnreadable(f"a record ends past its sheet ({exc})") from exc


def _scan(stream: memoryview, sheet: str, hidden_only: bool) -> XlsFacts:
    facts = XlsFacts()
    span = _sheet_range(stream, sheet)
    if span is None:
        return facts
    start, end = span
    part = bytes(stream[start:end])
    checks = _MAY_BE[2:4] if hidden_only else _MAY_BE
    if not any(ok(m) for rx, ok in checks for m in rx.finditer(part)):
        return facts
    unpack = struct.unpack_from
    off, n = 0, len(part)
    while off + 4 <= n:
        rid, size = unpack("<HH", part, off)
        body = off + 4
        if rid == _ROW and size >= 16:
            if part[body + 12] & 0x20:
                facts.hidden_rows.append(unpack("<H", part, body)[0])
        elif rid == _COLINFO and size >= 10:
            first, last, _w, _xf, flags = unpack("<HHHHH", part, body)
            if flags & 0x01:
                facts.hidden_cols.extend(range(first, min(last, 255) + 1))
        elif not hidden_only and rid == _BOOLERR and size >= 8:
            row, col, _xf, value, is_error = unpack("<HHHBB", part, body)
            if is_error:
                facts.errors[(row, col)] = _ERROR_TEXT.get(value, "#ERROR")
        elif not hidden_only and rid == _FORMULA and size >= 14:
            row, col = unpack("<HH", part, body)
            if part[body + 6] == 0x02 and part[body + 12] == 0xFF and part[body + 13] == 0xFF:
                facts.errors[(row, col)] = _ERROR_TEXT.get(part[body + 8], "#ERROR")
        elif not hidden_only and rid == _MERGED and size >= 2:
            (k,) = unpack("<H", part, body)
            for i in range(min(k, (size - 2) // 8)):
                r0, r1, c0, c1 = unpack("<HHHH", part, body + 2 + 8 * i)
                facts.merged.append((r0, c0, r1, c1))
        elif rid == _EOF:
            break
        off = body + size
    facts.hidden_rows.sort()
    facts.hidden_cols = sorted(set(facts.hidden_cols))
    return facts
