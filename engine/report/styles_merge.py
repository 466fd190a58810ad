"""Append the cell formats our sheets use to the user's styles part, as text.

Cell style indices (``s="N"``) in a sheet point into ``cellXfs`` of xl/styles.xml; each xf
points into ``numFmts``, ``fonts``, ``fills`` and ``borders`` (ECMA-376 Part 1, 18.8). Our
sheets are built in a temporary workbook whose styles part differs from the user's, so every
xf we use is rebuilt against the user's part: identical fonts, fills, borders, number formats
and xfs already present are reused (a re-run therefore adds nothing), the others are appended
at the end of their list, and the ``count`` attributes are updated. Nothing else in the part
changes, and it is never re-serialized.
"""

from __future__ import annotations

__all__ = ["merge_styles"]

import re

from engine.report.xml_text import attrs, elements, escape_attr, root_prefix, set_attr, with_prefix

_FIRST_CUSTOM_NUMFMT = 164  # ids below are built-in formats (ECMA-376 Part 1, 18.8.30)


def _children(
    xml: str, p: str, container: str, child: str
) -> tuple[list[str], tuple[int, int] | None]:
    """Child element texts of ``container`` and the span of the container's inner text."""
    m = re.search(rf"<{p}{container}(?=[\s/>])[^>]*?(/>|>(.*?)</{p}{container}\s*>)", xml, re.S)
    if m is None:
        return [], None
    if m.group(1) == "/>":
        return [], (m.start(), m.end())
    inner_start = m.start(2)
    kids = [k.group(0) for k in elements(xml, p + child, inner_start, m.end(2))]
    return kids, (m.start(), m.end())


def _canonical(fragment: str) -> str:
    return re.sub(r">\s+<", "><", fragment.strip())


class _StyleList:
    """One list of the user's styles part (fonts, fills, ...) with appended entries."""

    def __init__(self, xml: str, p: str, container: str, child: str) -> None:
        self.container, self.child, self.p = container, child, p
        self.items, self.span = _children(xml, p, container, child)
        self.known = {_canonical(t): i for i, t in enumerate(self.items)}
        self.added: list[str] = []

    def index_of(self, fragment: str) -> int:
        key = _canonical(fragment)
        if key in self.known:
            return self.known[key]
        index = len(self.items) + len(self.added)
        self.added.append(fragment)
        self.known[key] = index
        return index


def merge_styles(
    user_styles: str, our_styles: str, used_xfs: set[int]
) -> tuple[str, dict[int, int]]:
    """Return the user's styles text with our formats appended, and our xf index -> theirs."""
    p = root_prefix(user_styles, "styleSheet")
    fonts = _StyleList(user_styles, p, "fonts", "font")
    fills = _StyleList(user_styles, p, "fills", "fill")
    borders = _StyleList(user_styles, p, "borders", "border")
    xfs = _StyleList(user_styles, p, "cellXfs", "xf")
    if xfs.span is None:
        raise ValueError("the workbook's styles part has no cellXfs list")

    our_fonts, _ = _children(our_styles, "", "fonts", "font")
    our_fills, _ = _children(our_styles, "", "fills", "fill")
    our_borders, _ = _children(our_styles, "", "borders", "border")
    our_xfs, _ = _children(our_styles, "", "cellXfs", "xf")
    our_numfmts = {
        int(a["numFmtId"]): a["formatCode"]
        for a in (attrs(t) for t in _children(our_styles, "", "numFmts", "numFmt")[0])
    }
    user_numfmt_tags, numfmt_span = _children(user_styles, p, "numFmts", "numFmt")
    user_codes: dict[str, int] = {}
    for t in user_numfmt_tags:
        a = attrs(t)
        user_codes.setdefault(a.get("formatCode", ""), int(a["numFmtId"]))
    next_numfmt = max([_FIRST_CUSTOM_NUMFMT - 1, *user_codes.values()]) + 1
    new_numfmts: list[str] = []

    mapping: dict[int, int] = {}
    for i in sorted(used_xfs):
        xf = our_xfs[i]
        a = attrs(xf)
        numfmt = int(a.get("numFmtId", "0"))
        if numfmt >= _FIRST_CUSTOM_NUMFMT:
            code = our_numfmts[numfmt]
            if code not in user_codes:
                user_codes[code] = next_numfmt
                new_numfmts.append(
                    f'<numFmt numFmtId="{next_numfmt}" formatCode="{escape_attr(code)}"/>'
                )
                next_numfmt += 1
            numfmt = user_codes[code]
        rebuilt = with_prefix(xf, p)
        rebuilt = set_attr(rebuilt, "numFmtId", str(numfmt))
        rebuilt = set_attr(
            rebuilt,
            "fontId",
            str(fonts.index_of(with_prefix(our_fonts[int(a.get("fontId", "0"))], p))),
        )
        rebuilt = set_attr(
            rebuilt,
            "fillId",
            str(fills.index_of(with_prefix(our_fills[int(a.get("fillId", "0"))], p))),
        )
        rebuilt = set_attr(
            rebuilt,
            "borderId",
            str(borders.index_of(with_prefix(our_borders[int(a.get("borderId", "0"))], p))),
        )
        rebuilt = set_attr(rebuilt, "xfId", "0")
        mapping[i] = xfs.index_of(rebuilt)

    # Splice from the end of the text backwards so earlier spans stay valid.
    edits: list[tuple[tuple[int, int], str]] = []
    for lst in (fonts, fills, borders, xfs):
        if lst.added:
            if lst.span is None:
                raise ValueError(f"the workbook's styles part has no {lst.container} list")
            edits.append(
                (
                    lst.span,
                    _rebuild(
                        user_styles,
                        lst.span,
                        p,
                        lst.container,
                        len(lst.items) + len(lst.added),
                        "".join(lst.added),
                    ),
                )
            )
    if new_numfmts:
        if numfmt_span is None:
            root = re.search(rf"<{p}styleSheet(?=[\s>])[^>]*>", user_styles)
            assert root is not None
            at = root.end()
            edits.append(
                (
                    (at, at),
                    f'<{p}numFmts count="{len(new_numfmts)}">'
                    + with_prefix("".join(new_numfmts), p)
                    + f"</{p}numFmts>",
                )
            )
        else:
            edits.append(
                (
                    numfmt_span,
                    _rebuild(
                        user_styles,
                        numfmt_span,
                        p,
                        "numFmts",
                        len(user_numfmt_tags) + len(new_numfmts),
                        with_prefix("".join(new_numfmts), p),
                    ),
                )
            )
    out = user_styles
    for (start, end), text in sorted(edits, key=lambda e: e[0][0], reverse=True):
        out = out[:start] + text + out[end:]
    return out, mapping


def _rebuild(
    xml: str, span: tuple[int, int], p: str, container: str, count: int, added: str
) -> str:
    block = xml[span[0] : span[1]]
    head_end = block.index(">") + 1
    head = block[:head_end]
    if head.endswith("/>"):
        head = head[:-2].rstrip() + ">"
        body = ""
    else:
        body = block[head_end : block.rindex("</")]
    head = set_attr(head, "count", str(count))
    return head + body + added + f"</{p}{container}>"
