"""Small text-level helpers for editing package XML without re-serializing it.

Re-serializing a part with ElementTree renames namespace prefixes (``ns0:``) and drops
declarations other programs rely on, so every edit of a user's part is a splice of text:
find an element by a regular expression, cut or insert a fragment, and leave every other byte
alone. Reading (to learn names and ids) goes through defusedxml.
"""

from __future__ import annotations

__all__ = [
    "root_prefix",
    "attrs",
    "elements",
    "set_attr",
    "insert_before_close",
    "with_prefix",
    "escape_attr",
    "escape_text",
    "unescape",
]

import html
import re
from collections.abc import Iterator

_ATTR = re.compile(r"""([\w:.-]+)\s*=\s*(?:"([^"]*)"|'([^']*)')""")


def root_prefix(xml: str, local: str) -> str:
    """The namespace prefix (with colon, or "") of the first element named ``local``."""
    m = re.search(rf"<([A-Za-z_][\w.-]*:)?{local}[\s>/]", xml)
    return (m.group(1) or "") if m else ""


def attrs(tag: str) -> dict[str, str]:
    """Attributes of an element's start tag (values unescaped)."""
    start = tag[: tag.index(">") + 1] if ">" in tag else tag
    out: dict[str, str] = {}
    for m in _ATTR.finditer(start):
        value = m.group(2) if m.group(2) is not None else m.group(3)
        out[m.group(1)] = unescape(value)
    return out


def elements(xml: str, name: str, start: int = 0, end: int | None = None) -> Iterator[re.Match]:
    """Every element ``name`` (prefix included, e.g. "x:sheet") in xml[start:end], empty or not.

    Elements of this name must not nest inside each other (true for the ones we edit).
    """
    pattern = re.compile(
        rf"<{re.escape(name)}(?=[\s/>])[^>]*?(?:/>|>.*?</{re.escape(name)}\s*>)", re.S
    )
    return pattern.finditer(xml, start, len(xml) if end is None else end)


def set_attr(tag: str, name: str, value: str) -> str:
    """Set (or add) one attribute in an element's start tag; the rest of the text is kept."""
    head_end = tag.index(">")
    head, rest = tag[:head_end], tag[head_end:]
    pat = re.compile(rf"""(\s{re.escape(name)}\s*=\s*)(?:"[^"]*"|'[^']*')""")
    if pat.search(head):
        head = pat.sub(lambda m: f'{m.group(1)}"{escape_attr(value)}"', head, count=1)
    else:
        closing = "/" if head.endswith("/") else ""
        head = head[: len(head) - len(closing)] + f' {name}="{escape_attr(value)}"' + closing
    return head + rest


def insert_before_close(xml: str, container: str, fragment: str) -> str:
    """Insert ``fragment`` just before the closing tag of ``container`` (expanding ``<c/>``)."""
    close = f"</{container}>"
    i = xml.find(close)
    if i >= 0:
        return xml[:i] + fragment + xml[i:]
    m = re.search(rf"<{re.escape(container)}(?=[\s/])[^>]*/>", xml)
    if m is None:
        raise ValueError(f"no <{container}> element")
    opened = m.group(0)[:-2].rstrip() + ">"
    return xml[: m.start()] + opened + fragment + close + xml[m.end() :]


def with_prefix(fragment: str, prefix: str) -> str:
    """Give every element tag of an unprefixed fragment the namespace prefix ``prefix``."""
    if not prefix:
        return fragment
    return re.sub(r"<(/?)([A-Za-z_])", rf"<\1{prefix}\2", fragment)


def escape_attr(value: str) -> str:
    return (
        value.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;").replace('"', "&quot;")
    )


def escape_text(value: str) -> str:
    return value.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")


def unescape(value: str) -> str:
    return html.unescape(value)
