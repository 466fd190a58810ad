"""Facts about a workbook package that the cell reader does not report.

python-calamine returns an error cell (#N/A, #DIV/0! ...) and a formula cell that was saved
without its result both as an empty cell. To count errors and to warn about formulas nobody
calculated, the sheet's own XML is read here, with defusedxml (see engine.xmlsafe). The scan
only runs when the sheet has empty cells where such cells could hide, and a quick byte search
skips the parse when the XML holds no formula and no error at all. The binary .xls format
(no XML) is read for the same facts by engine.intake.biff; formulas there always carry
their result.

Positions are 0-based (row, column) pairs.
"""

from __future__ import annotations

__all__ = ["PackageFacts", "guard_parts", "scan_sheet", "counts_from_1904"]

import posixpath
import re
import zipfile
from dataclasses import dataclass, field
from pathlib import Path

from engine.errors import InputProblem, Place
from engine.intake.biff import XlsUnreadable, scan_xls_sheet
from engine.intake.cells import column_index
from engine.xmlsafe import check_prolog, iterparse_xml, parse_xml

_MAIN = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}"
_REL = "{http://schemas.openxmlformats.org/officeDocument/2006/relationships}"
_PKG_REL = "{http://schemas.openxmlformats.org/package/2006/relationships}"
_TABLE = "{urn:oasis:names:tc:opendocument:xmlns:table:1.0}"
_OFFICE = "{urn:oasis:names:tc:opendocument:xmlns:office:1.0}"
_CALCEXT = "{urn:org:documentfoundation:names:experimental:calc:xmlns:calcext:1.0}"
_TEXT = "{urn:oasis:names:tc:opendocument:xmlns:text:1.0}"
_CELL_REF = re.compile(r"([A-Z]+)(\d+)")


@dataclass
class PackageFacts:
    errors: dict[tuple[int, int], str] = field(default_factory=dict)  # position -> "#DIV/0!"
    uncached: list[tuple[int, int]] = field(default_factory=list)  # formulas with no result
    # merged ranges (first row, first column, last row, last column), 0-based inclusive:
    # only the first cell holds the value, the others read as blanks
    merged: list[tuple[int, int, int, int]] = field(default_factory=list)
    hidden_rows: list[int] = field(default_factory=list)  # 0-based sheet rows hidden (xlsx, ods)
    hidden_cols: list[int] = field(default_factory=list)  # 0-based columns hidden (xlsx, ods)
    # why these facts could not be read, when the cells could (said as a warning)
    unread: str = ""


def guard_parts(path: Path) -> None:
    """Refuse the file if any XML part declares a document type (entity bombs and the like)."""
    place = Place(file=str(path))
    with zipfile.ZipFile(path) as zf:
        for info in zf.infolist():
            if not info.filename.endswith((".xml", ".rels")):
                continue
            with zf.open(info) as fh:
                check_prolog(fh.read(65536), info.filename, place)


def _sheet_part(zf: zipfile.ZipFile, sheet: str, place: Place) -> str | None:
    root = parse_xml(zf.read("xl/workbook.xml"), "xl/workbook.xml", place)
    rel_id = None
    for el in root.iter(f"{_MAIN}sheet"):
        if el.get("name") == sheet:
            rel_id = el.get(f"{_REL}id")
    if rel_id is None:
        return None
    rels_name = "xl/_rels/workbook.xml.rels"
    rels = parse_xml(zf.read(rels_name), rels_name, place)
    for el in rels.iter(f"{_PKG_REL}Relationship"):
        if el.get("Id") == rel_id:
            target = el.get("Target", "")
            if target.startswith("/"):
                return target.lstrip("/")
            return posixpath.normpath(posixpath.join("xl", target))
    return None


def _contains(zf: zipfile.ZipFile, part: str, needles: tuple[bytes, ...]) -> bool:
    tail = b""
    with zf.open(part) as fh:
        while chunk := fh.read(1 << 20):
            window = tail + chunk
            if any(n in window for n in needles):
                return True
            tail = chunk[-32:]
    return False


_HIDDEN = (b'hidden="1"', b'hidden="true"', b"hidden='1'", b"hidden='true'")
# OpenDocument: rows and columns folded away ("collapse") or hidden by a filter
_ODS_HIDDEN = (b'visibility="collapse"', b'visibility="filter"')
_ODS_NOT_SHOWN = ("collapse", "filter")
_MAX_HIDDEN_RUN = 100_000


def _scan_xlsx(
    zf: zipfile.ZipFile, sheet: str, place: Place, hidden_only: bool = False
) -> PackageFacts:
    facts = PackageFacts()
    part = _sheet_part(zf, sheet, place)
    if part is None or part not in zf.namelist():
        return facts
    needles = _HIDDEN if hidden_only else (b"<f", b't="e"', b"t='e'", b":f", b"mergeCell", *_HIDDEN)
    if not _contains(zf, part, needles):
        return facts
    with zf.open(part) as fh:
        for el in iterparse_xml(fh, part, place):
            tag = el.tag
            if tag == f"{_MAIN}c":
                m = _CELL_REF.fullmatch(el.get("r", ""))
                if m:
                    pos = (int(m.group(2)) - 1, column_index(m.group(1)))
                    kind = el.get("t")
                    f = el.find(f"{_MAIN}f")
                    v = el.find(f"{_MAIN}v")
                    if kind == "e" and v is not None and v.text:
                        facts.errors[pos] = v.text.strip()
                    elif f is not None and (
                        v is None or (not v.text and kind not in ("str", "inlineStr"))
                    ):
                        facts.uncached.append(pos)
                el.clear()
            elif tag == f"{_MAIN}row":
                if el.get("hidden") in ("1", "true") and el.get("r", "").isdigit():
                    facts.hidden_rows.append(int(el.get("r", "0")) - 1)
                el.clear()
            elif tag == f"{_MAIN}col":
                lo, hi = el.get("min", ""), el.get("max", "")
                if el.get("hidden") in ("1", "true") and lo.isdigit() and hi.isdigit():
                    facts.hidden_cols.extend(range(int(lo) - 1, min(int(hi), 16384)))
            elif tag == f"{_MAIN}mergeCell":
                a, _, b = el.get("ref", "").partition(":")
                ma, mb = _CELL_REF.fullmatch(a), _CELL_REF.fullmatch(b)
                if ma and mb:
                    facts.merged.append(
                        (
                            int(ma.group(2)) - 1,
                            column_index(ma.group(1)),
                            int(mb.group(2)) - 1,
                            column_index(mb.group(1)),
                        )
                    )
    return facts


def _scan_ods(
    zf: zipfile.ZipFile, sheet: str, place: Place, hidden_only: bool = False
) -> PackageFacts:
    facts = PackageFacts()
    needles = _ODS_HIDDEN if hidden_only else (b'value-type="error"', *_ODS_HIDDEN)
    if not _contains(zf, "content.xml", needles):
        return facts
    # Walk the sheet's rows counting repeats; the element tree is built per row and cleared.
    # Columns come first in a table (their widths and visibility), then its rows.
    with zf.open("content.xml") as fh:
        row = col_at = 0
        for el in iterparse_xml(fh, "content.xml", place):
            tag = el.tag
            if tag == f"{_TABLE}table-column":
                repeat = int(el.get(f"{_TABLE}number-columns-repeated", "1"))
                if el.get(f"{_TABLE}visibility") in _ODS_NOT_SHOWN:
                    facts.hidden_cols.extend(range(col_at, min(col_at + repeat, 16384)))
                col_at += repeat
            elif tag == f"{_TABLE}table-row":
                repeat = int(el.get(f"{_TABLE}number-rows-repeated", "1"))
                if el.get(f"{_TABLE}visibility") in _ODS_NOT_SHOWN:
                    # a run of hidden rows down to the sheet's end is not data: capped
                    facts.hidden_rows.extend(range(row, row + min(repeat, _MAX_HIDDEN_RUN)))
                col = 0
                for cell in el if not hidden_only else ():
                    if cell.tag not in (f"{_TABLE}table-cell", f"{_TABLE}covered-table-cell"):
                        continue
                    cols = int(cell.get(f"{_TABLE}number-columns-repeated", "1"))
                    if cell.get(f"{_CALCEXT}value-type") == "error":
                        code = "".join(cell.itertext()).strip() or "#VALUE!"
                        for k in range(min(cols, 16384)):
                            facts.errors[(row, col + k)] = code
                    col += cols
                row += repeat
                el.clear()
            elif tag == f"{_TABLE}table":
                if el.get(f"{_TABLE}name") == sheet:
                    return facts
                facts = PackageFacts()
                row = col_at = 0
                el.clear()
    return PackageFacts()


def scan_sheet(path: Path, fmt: str, sheet: str, hidden_only: bool = False) -> PackageFacts:
    """Error cells, formulas saved without a result, (xlsx) merged ranges, and (xlsx, ods)
    hidden rows and columns in one sheet; with ``hidden_only`` just the hidden ones (a quick
    byte search first: the sheet is parsed only when it has any)."""
    place = Place(file=str(path), sheet=sheet)
    if fmt == "xls":
        return _scan_xls(path, sheet, place, hidden_only)
    try:
        with zipfile.ZipFile(path) as zf:
            if fmt in ("xlsx", "xlsm"):
                return _scan_xlsx(zf, sheet, place, hidden_only)
            if fmt == "ods":
                return _scan_ods(zf, sheet, place, hidden_only)
    except (zipfile.BadZipFile, KeyError, OSError) as exc:
        raise InputProblem(
            f"{place.describe()}: the workbook package is damaged ({exc})", place
        ) from exc
    return PackageFacts()


def _scan_xls(path: Path, sheet: str, place: Place, hidden_only: bool) -> PackageFacts:
    """The same facts from a binary .xls workbook (engine.intake.biff reads its records)."""
    try:
        found = scan_xls_sheet(path.read_bytes(), sheet, hidden_only)
    except XlsUnreadable as exc:
        # the cell reader read the sheet: carry on without these facts, and say so
        return PackageFacts(
            unread=f"{place.describe()}: its records could not be read for error cells and "
            f"hidden rows ({exc}); error cells, if any, count as missing"
        )
    return PackageFacts(
        errors=found.errors,
        merged=found.merged,
        hidden_rows=found.hidden_rows,
        hidden_cols=found.hidden_cols,
    )


def counts_from_1904(path: Path, fmt: str) -> bool:
    """Whether an .xlsx/.xlsm workbook counts date serial numbers from 1904 (ECMA-376 Part 1,
    workbookPr date1904): a plain number among dates then means another day."""
    if fmt not in ("xlsx", "xlsm"):
        return False
    try:
        with zipfile.ZipFile(path) as zf:
            head = zf.read("xl/workbook.xml")[:4096]
    except (zipfile.BadZipFile, KeyError, OSError):
        return False
    return re.search(rb"<(?:\w+:)?workbookPr\b[^>]*\bdate1904=\"(?:1|true)\"", head) is not None
