"""Reading XML from user files without trusting it.

Workbook packages (.xlsx, .xlsm, .ods) are zip files of XML parts. A hostile part can declare
entities that expand to gigabytes ("billion laughs") or pull in outside files. Every XML parse
in the engine goes through defusedxml with document type declarations forbidden: the Office Open
XML and OpenDocument formats never need one, so any declaration is refused with an InputProblem.
"""

from __future__ import annotations

__all__ = ["parse_xml", "iterparse_xml", "check_prolog", "XML_REFUSED"]

import re
import xml.etree.ElementTree as _std_et
from collections.abc import Iterator
from typing import IO, Any

import defusedxml
import defusedxml.ElementTree as safe_et

from engine.errors import InputProblem, Place

XML_REFUSED = (
    "contains an XML document type declaration (entity definitions), which workbooks never "
    "need; Tamis refuses to read it for safety. Re-save the file from a spreadsheet program"
)

_PROLOG_ITEM = re.compile(rb"\s*(<\?.*?\?>|<!--.*?-->)", re.S)


def _refused(part: str, place: Place) -> InputProblem:
    where = place.describe()
    return InputProblem(f"{where}: the part '{part}' {XML_REFUSED}", place)


def _damaged(part: str, place: Place, detail: str) -> InputProblem:
    where = place.describe()
    return InputProblem(
        f"{where}: the part '{part}' is not well-formed XML ({detail}); the file looks damaged. "
        "Re-save it from a spreadsheet program",
        place,
    )


def check_prolog(head: bytes, part: str, place: Place) -> None:
    """Refuse a part whose prolog (the text before the first element) declares a DOCTYPE.

    `head` is the start of the part; 64 KB is plenty, and a prolog that runs longer than
    that is itself refused as suspicious.
    """
    pos = 0
    if head.startswith(b"\xef\xbb\xbf"):
        pos = 3
    while True:
        m = _PROLOG_ITEM.match(head, pos)
        if not m:
            break
        pos = m.end()
    rest = head[pos:].lstrip()
    if rest.startswith(b"<!"):
        raise _refused(part, place)
    if not rest and len(head) >= 65536:
        raise _refused(part, place)


def parse_xml(data: bytes, part: str, place: Place) -> Any:
    """Parse a whole (small) part; return its root element."""
    try:
        return safe_et.fromstring(data, forbid_dtd=True)
    except defusedxml.DefusedXmlException as exc:
        raise _refused(part, place) from exc
    except _std_et.ParseError as exc:
        raise _damaged(part, place, str(exc)) from exc


def iterparse_xml(stream: IO[bytes], part: str, place: Place) -> Iterator[Any]:
    """Yield elements of a (large) part as their end tags are read; the caller clears them."""
    try:
        for _event, elem in safe_et.iterparse(stream, events=("end",), forbid_dtd=True):
            yield elem
    except defusedxml.DefusedXmlException as exc:
        raise _refused(part, place) from exc
    except _std_et.ParseError as exc:
        raise _damaged(part, place, str(exc)) from exc
