"""Merge our result sheets into a user's workbook package, part by part.

Input: the user's package (the base) and a temporary workbook holding only our sheets, built by
xlsxwriter under their final names with inline strings (constant_memory mode). Output: the base
package with

- our previous sheets (listed in the hidden defined name ``_TamisSheets``) and every part only
  they referenced (drawings, charts, comments...) removed;
- our new sheets appended at the end of the sheet list (sheet-level defined names refer to
  sheets by position, so the user's positions never move), with new sheetIds (largest + 1),
  unique relationship ids and the next free part numbers for sheets, drawings and charts;
- the cell formats they use appended to the user's styles part (see styles_merge).

Only these parts of the user's package change: xl/workbook.xml, xl/_rels/workbook.xml.rels,
[Content_Types].xml, docProps/app.xml, xl/styles.xml (when a format is new) and, only when a
previous run's sheets are removed and the calculation chain names them, xl/calcChain.xml (its
entries for the removed sheets go; Excel otherwise repairs the file). Every other entry is copied
as raw compressed bytes in its original order; new entries follow at the end.
"""

from __future__ import annotations

__all__ = [
    "MARKER_NAME",
    "merge_package",
    "read_sheet_list",
    "SheetNameTaken",
    "our_sheet_names",
    "uses_1904_dates",
]

import posixpath
import re
from collections.abc import Iterable
from dataclasses import dataclass, field
from pathlib import Path
from typing import BinaryIO, Protocol

from defusedxml import ElementTree

from engine.report.styles_merge import merge_styles
from engine.report.xml_text import (
    attrs,
    elements,
    escape_attr,
    escape_text,
    insert_before_close,
    root_prefix,
    set_attr,
    unescape,
)
from engine.report.zip_parts import ZipSource, ZipTarget

MARKER_NAME = "_TamisSheets"
_REL_NS = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
_PKG_REL_NS = "http://schemas.openxmlformats.org/package/2006/relationships"
_WORKSHEET_REL = _REL_NS + "/worksheet"
_OFFICE_DOC_REL = _REL_NS + "/officeDocument"
_CONTENT_TYPES = "[Content_Types].xml"


class SheetNameTaken(Exception):
    """A sheet of the user's has the name of one of ours and was not written by us."""

    def __init__(self, name: str) -> None:
        super().__init__(name)
        self.name = name


@dataclass
class SheetEntry:
    name: str
    sheet_id: int
    rel_id: str
    part: str  # absolute part name, e.g. "xl/worksheets/sheet1.xml"
    state: str = "visible"


@dataclass
class _Package:
    """What we need to know about one package (read with defusedxml, edited as text)."""

    src: ZipSource
    workbook_part: str
    workbook_xml: str
    rels_part: str
    rels_xml: str
    sheets: list[SheetEntry] = field(default_factory=list)
    rel_targets: dict[str, str] = field(default_factory=dict)  # workbook rel id -> part


def rels_part_of(part: str) -> str:
    folder, base = posixpath.split(part)
    return posixpath.join(folder, "_rels", base + ".rels")


def _resolve(source_part: str, target: str) -> str:
    if target.startswith("/"):
        return target.lstrip("/")
    return posixpath.normpath(posixpath.join(posixpath.dirname(source_part), target))


def _relative(source_part: str, target_part: str) -> str:
    return posixpath.relpath(target_part, posixpath.dirname(source_part) or ".")


def _decode(data: bytes) -> str:
    return data.decode("utf-8")


def _part_rels(src: ZipSource, part: str) -> list[dict[str, str]]:
    """Relationships of one part: dicts with Id, Type, Target (resolved), TargetMode."""
    rp = rels_part_of(part)
    if rp not in src:
        return []
    root = ElementTree.fromstring(src.read(rp))
    out = []
    for rel in root:
        if not rel.tag.endswith("Relationship"):
            continue
        d = dict(rel.attrib)
        if d.get("TargetMode") != "External":
            d["Target"] = _resolve(part, d["Target"])
        out.append(d)
    return out


def _open_package(src: ZipSource) -> _Package:
    root_rels = ElementTree.fromstring(src.read("_rels/.rels"))
    workbook_part = None
    for rel in root_rels:
        if rel.attrib.get("Type") == _OFFICE_DOC_REL:
            workbook_part = _resolve("", rel.attrib["Target"])
    if workbook_part is None:
        raise ValueError("the package has no workbook part")
    rels_part = rels_part_of(workbook_part)
    pkg = _Package(
        src,
        workbook_part,
        _decode(src.read(workbook_part)),
        rels_part,
        _decode(src.read(rels_part)),
    )
    for rel in _part_rels(src, workbook_part):
        if rel.get("TargetMode") != "External":
            pkg.rel_targets[rel["Id"]] = rel["Target"]
    wb = ElementTree.fromstring(pkg.workbook_xml.encode("utf-8"))
    for el in wb.iter():
        if el.tag.rsplit("}", 1)[-1] == "sheet":
            rid = el.attrib.get(f"{{{_REL_NS}}}id", "")
            pkg.sheets.append(
                SheetEntry(
                    el.attrib["name"],
                    int(el.attrib["sheetId"]),
                    rid,
                    pkg.rel_targets.get(rid, ""),
                    el.attrib.get("state", "visible"),
                )
            )
    return pkg


def uses_1904_dates(path: str | Path) -> bool:
    """Whether the workbook counts its date serial numbers from 1904-01-01 (ECMA-376 Part 1,
    workbookPr date1904; older Mac workbooks) instead of from the 1900 base."""
    with ZipSource(path) as src:
        wb = ElementTree.fromstring(_open_package(src).workbook_xml.encode("utf-8"))
    for el in wb.iter():
        if el.tag.rsplit("}", 1)[-1] == "workbookPr":
            return el.attrib.get("date1904", "0").strip().lower() in ("1", "true")
    return False


def read_sheet_list(src: ZipSource) -> list[SheetEntry]:
    """The sheets of a package in workbook order (used to verify a written file)."""
    return _open_package(src).sheets


def our_sheet_names(workbook_xml: str) -> list[str]:
    """Names listed in our hidden marker name, or [] when the workbook has none."""
    p = root_prefix(workbook_xml, "workbook")
    for m in elements(workbook_xml, p + "definedName"):
        if attrs(m.group(0)).get("name") == MARKER_NAME:
            text = unescape(re.sub(r"^<[^>]*>|</[^>]*>$", "", m.group(0))).strip()
            return [n for n in text.strip('"').replace('""', '"').split(";") if n]
    return []


def _closure(src: ZipSource, parts: Iterable[str]) -> set[str]:
    """The parts plus everything reachable from them through internal relationships."""
    seen: set[str] = set()
    todo = list(parts)
    while todo:
        part = todo.pop()
        if part in seen or part not in src:
            continue
        seen.add(part)
        for rel in _part_rels(src, part):
            if rel.get("TargetMode") != "External":
                todo.append(rel["Target"])
    return seen


_NUMBERED = re.compile(r"^(.*?)(\d+)(\.[A-Za-z0-9]+)$")


def _next_name(part: str, taken: set[str]) -> str:
    m = _NUMBERED.match(part)
    if m is None:
        stem, ext, start = part.rsplit(".", 1)[0], "." + part.rsplit(".", 1)[1], 1
    else:
        stem, ext = m.group(1), m.group(3)
    used = [
        int(n.group(2))
        for n in map(_NUMBERED.match, taken)
        if n is not None and n.group(1) == stem and n.group(3) == ext
    ]
    start = max(used, default=0) + 1
    return f"{stem}{start}{ext}"


class RowAddition(Protocol):
    """Rows to splice into one of our sheets (``bulk_rows.BulkSheet``)."""

    def styles(self) -> set[int]:
        """Our cell style numbers the rows use."""
        ...

    def inject(self, xml: str, styles: dict[int, int]) -> str:
        """The sheet's XML with the rows in place, their styles renumbered by ``styles``."""
        ...


def merge_package(
    base_path: str,
    ours_path: str,
    out: BinaryIO,
    our_names: list[str],
    additions: dict[str, RowAddition] | None = None,
) -> None:
    """Write base + our sheets (replacing our previous ones) to the open binary file ``out``.

    ``additions`` maps one of our sheet names to rows spliced into its XML text last (large
    blocks of rows, see ``bulk_rows.BulkSheet``); the cell styles they use are merged with
    those of our sheets.
    """
    with ZipSource(base_path) as base, ZipSource(ours_path) as ours:
        _merge(base, ours, out, our_names, additions or {})


def _merge(
    base: ZipSource,
    ours: ZipSource,
    out: BinaryIO,
    our_names: list[str],
    additions: dict[str, RowAddition],
) -> None:
    pkg = _open_package(base)
    mine = _open_package(ours)
    wb_xml, rels_xml = pkg.workbook_xml, pkg.rels_xml
    wp = root_prefix(wb_xml, "workbook")
    rp = root_prefix(rels_xml, "Relationships")
    ct_xml = _decode(base.read(_CONTENT_TYPES))
    cp = root_prefix(ct_xml, "Types")
    app_part = "docProps/app.xml"
    app_xml = _decode(base.read(app_part)) if app_part in base else None
    replaced: dict[str, bytes] = {}

    # 1. Our previous sheets: those named in the marker (a user's sheet of the same name that we
    #    did not write is an error, never silently replaced).
    previous = set(our_sheet_names(wb_xml))
    old = [s for s in pkg.sheets if s.name in previous and s.name in our_names]
    still_ours = [s.name for s in pkg.sheets if s.name in previous and s.name not in our_names]
    for s in pkg.sheets:
        if s.name in our_names and s.name not in previous:
            raise SheetNameTaken(s.name)
    removed_parts: set[str] = set()
    if old:
        keep_sheets = [s for s in pkg.sheets if s not in old]
        doomed = _closure(base, [s.part for s in old])
        # never delete a part another remaining part still points to
        still_used: set[str] = set()
        for name in base.names():
            if "/_rels/" in name or name.startswith("_rels/"):
                continue
            if name in doomed or name == pkg.workbook_part:
                continue
            still_used.update(
                r["Target"] for r in _part_rels(base, name) if r.get("TargetMode") != "External"
            )
        still_used.update(
            pkg.rel_targets[r] for r in pkg.rel_targets if r not in {s.rel_id for s in old}
        )
        doomed -= still_used
        removed_parts = doomed | {rels_part_of(d) for d in doomed if rels_part_of(d) in base}
        wb_xml = _remove_sheets(wb_xml, wp, pkg.sheets, old)
        rels_xml = _remove_rels(rels_xml, rp, {s.rel_id for s in old})
        ct_xml = _remove_overrides(ct_xml, cp, removed_parts)
        if app_xml is not None:
            app_xml = _app_titles(
                app_xml, [s.name for s in pkg.sheets], [s.name for s in keep_sheets]
            )
        calc = posixpath.join(posixpath.dirname(pkg.workbook_part), "calcChain.xml")
        if calc in base and calc not in removed_parts:
            new_calc = _filter_calc_chain(_decode(base.read(calc)), {s.sheet_id for s in old})
            if new_calc is not None:
                replaced[calc] = new_calc.encode("utf-8")
        pkg.sheets = keep_sheets
    else:
        wb_xml = _remove_marker(wb_xml, wp)

    # 2. New part names for our sheets and everything they reference.
    taken = {n for n in base.names() if n not in removed_parts}
    rename: dict[str, str] = {}
    order: list[str] = []
    for s in mine.sheets:
        for part in sorted(_closure(ours, [s.part]), key=lambda n: (n != s.part, n)):
            if part in rename:
                continue
            new = _next_name(part, taken)
            taken.add(new)
            rename[part] = new
            order.append(part)

    # 3. Styles: append what our sheets use, remap their s="" indices.
    used: set[int] = set()
    sheet_texts: dict[str, str] = {}
    for s in mine.sheets:
        text = _decode(ours.read(s.part))
        sheet_texts[s.part] = text
        used.update(int(v) for v in re.findall(r'<(?:c|row)\b[^>]*?\ss="(\d+)"', text))
        used.update(int(v) for v in re.findall(r'<col\b[^>]*?\sstyle="(\d+)"', text))
        if s.name in additions:
            used.update(additions[s.name].styles())
    styles_part = _styles_part(base, pkg)
    mapping: dict[int, int] = {}
    if used:
        user_styles = _decode(base.read(styles_part))
        new_styles, mapping = merge_styles(
            user_styles, _decode(ours.read(_styles_part(ours, mine))), used
        )
        if new_styles != user_styles:
            replaced[styles_part] = new_styles.encode("utf-8")

    # 4. Sheet list, relationships, content types, marker name, app properties.
    next_id = max((s.sheet_id for s in pkg.sheets), default=0) + 1
    rel_ids = set(re.findall(r'\sId="([^"]+)"', rels_xml))
    rel_num = max((int(m) for r in rel_ids for m in re.findall(r"^rId(\d+)$", r)), default=0)
    r_prefix = _ns_prefix(wb_xml, _REL_NS)
    sheet_frag, rel_frag = [], []
    for s in mine.sheets:
        rel_num += 1
        while f"rId{rel_num}" in rel_ids:
            rel_num += 1
        rid = f"rId{rel_num}"
        rel_ids.add(rid)
        decl = "" if r_prefix else f' xmlns:tmr="{_REL_NS}"'
        rattr = f"{r_prefix or 'tmr'}:id"
        sheet_frag.append(
            f'<{wp}sheet name="{escape_attr(s.name)}" sheetId="{next_id}" {rattr}="{rid}"{decl}/>'
        )
        next_id += 1
        target = _relative(pkg.workbook_part, rename[s.part])
        rel_frag.append(
            f'<{rp}Relationship Id="{rid}" Type="{_WORKSHEET_REL}" Target="{escape_attr(target)}"/>'
        )
    wb_xml = insert_before_close(wb_xml, f"{wp}sheets", "".join(sheet_frag))
    wb_xml = _add_marker(wb_xml, wp, still_ours + [s.name for s in mine.sheets])
    wb_xml = _clamp_views(wb_xml, wp, len(pkg.sheets) + len(mine.sheets))
    rels_xml = insert_before_close(rels_xml, f"{rp}Relationships", "".join(rel_frag))
    ct_xml = _add_overrides(ct_xml, cp, ours, rename)
    if app_xml is not None:
        names_now = [s.name for s in pkg.sheets]
        app_xml = _app_titles(app_xml, names_now, names_now + [s.name for s in mine.sheets])
    replaced[pkg.workbook_part] = wb_xml.encode("utf-8")
    replaced[pkg.rels_part] = rels_xml.encode("utf-8")
    replaced[_CONTENT_TYPES] = ct_xml.encode("utf-8")
    if app_xml is not None:
        replaced[app_part] = app_xml.encode("utf-8")

    # 5. Write: the user's entries in their order, then ours.
    writer = ZipTarget(out)
    for entry in base.entries:
        if entry.name in removed_parts:
            continue
        if entry.name in replaced:
            writer.add(entry.name, replaced[entry.name], like=entry)
        else:
            writer.copy(base, entry)
    part_names = {s.part: s.name for s in mine.sheets}
    for part in order:
        new = rename[part]
        if part in sheet_texts:
            text = _restyle_sheet(sheet_texts.pop(part), mapping)
            addition = additions.get(part_names[part])
            data = (addition.inject(text, mapping) if addition else text).encode("utf-8")
        else:
            data = ours.read(part)
        writer.add(new, data)
        rp_old = rels_part_of(part)
        if rp_old in ours:
            writer.add(
                rels_part_of(new),
                _retarget_rels(_decode(ours.read(rp_old)), part, new, rename).encode("utf-8"),
            )
    writer.finish()


def _styles_part(src: ZipSource, pkg: _Package) -> str:
    for rel in _part_rels(src, pkg.workbook_part):
        if rel.get("Type", "").endswith("/styles"):
            return rel["Target"]
    return posixpath.join(posixpath.dirname(pkg.workbook_part), "styles.xml")


def _ns_prefix(xml: str, uri: str) -> str:
    """The prefix the root element declares for ``uri`` ("" when it declares none)."""
    m = re.search(r"<(?![?!])[^>]*>", xml)
    d = re.search(rf'xmlns:([\w.-]+)="{re.escape(uri)}"', m.group(0)) if m else None
    return d.group(1) if d else ""


def _restyle_sheet(text: str, mapping: dict[int, int]) -> str:
    text = re.sub(r'(<sheetView\b[^>]*?)\s+tabSelected="1"', r"\1", text, count=1)
    if not mapping:
        return text

    def cell(m: re.Match) -> str:
        return f'{m.group(1)}"{mapping[int(m.group(2))]}"'

    text = re.sub(r'(<(?:c|row)\b[^>]*?\ss=)"(\d+)"', cell, text)
    return re.sub(r'(<col\b[^>]*?\sstyle=)"(\d+)"', cell, text)


def _retarget_rels(xml: str, old_part: str, new_part: str, rename: dict[str, str]) -> str:
    def fix(m: re.Match) -> str:
        tag = m.group(0)
        a = attrs(tag)
        if a.get("TargetMode") == "External":
            return tag
        target = _resolve(old_part, a["Target"])
        if target in rename:
            return set_attr(tag, "Target", _relative(new_part, rename[target]))
        return tag

    return re.sub(r"<Relationship\b[^>]*/>", fix, xml)


def _remove_sheets(xml: str, p: str, sheets: list[SheetEntry], old: list[SheetEntry]) -> str:
    old_ids = {s.rel_id for s in old}
    out = []
    last = 0
    for m in elements(xml, p + "sheet"):
        rid = next((v for k, v in attrs(m.group(0)).items() if k.endswith(":id")), None)
        if rid in old_ids:
            out.append(xml[last : m.start()])
            last = m.end()
    xml = "".join(out) + xml[last:]
    # sheet-level names follow their sheet's position; names of removed sheets go
    new_pos: dict[int, int] = {}
    k = 0
    for i, s in enumerate(sheets):
        if s not in old:
            new_pos[i] = k
            k += 1
    xml = _edit_defined_names(xml, p, new_pos)
    return _clamp_views(xml, p, k)


def _edit_defined_names(xml: str, p: str, new_pos: dict[int, int]) -> str:
    def fix(m: re.Match) -> str:
        tag = m.group(0)
        a = attrs(tag)
        if a.get("name") == MARKER_NAME:
            return ""
        if "localSheetId" in a:
            pos = int(a["localSheetId"])
            if pos not in new_pos:
                return ""
            if new_pos[pos] != pos:
                return set_attr(tag, "localSheetId", str(new_pos[pos]))
        return tag

    xml = re.sub(
        rf"<{re.escape(p)}definedName(?=[\s/>])[^>]*?(?:/>|>.*?</{re.escape(p)}definedName\s*>)",
        fix,
        xml,
        flags=re.S,
    )
    return re.sub(
        rf"<{re.escape(p)}definedNames\s*>\s*</{re.escape(p)}definedNames\s*>|<{re.escape(p)}definedNames\s*/>",
        "",
        xml,
    )


def _remove_marker(xml: str, p: str) -> str:
    if MARKER_NAME not in xml:
        return xml
    return _edit_defined_names(xml, p, {i: i for i in range(10_000)})


def _add_marker(xml: str, p: str, names: list[str]) -> str:
    value = '"' + ";".join(names).replace('"', '""') + '"'
    frag = f'<{p}definedName name="{MARKER_NAME}" hidden="1">{escape_text(value)}</{p}definedName>'
    if re.search(rf"<{re.escape(p)}definedNames[\s>]", xml):
        return insert_before_close(xml, f"{p}definedNames", frag)
    block = f"<{p}definedNames>{frag}</{p}definedNames>"
    for after in ("externalReferences", "functionGroups", "sheets"):
        i = xml.find(f"</{p}{after}>")
        if i >= 0:
            i += len(f"</{p}{after}>")
            return xml[:i] + block + xml[i:]
    raise ValueError("the workbook part has no sheet list")


def _clamp_views(xml: str, p: str, n_sheets: int) -> str:
    """Keep activeTab/firstSheet inside the sheet list after sheets were removed."""

    def fix(m: re.Match) -> str:
        tag = m.group(0)
        a = attrs(tag)
        for key in ("activeTab", "firstSheet"):
            if key in a and int(a[key]) >= n_sheets:
                tag = set_attr(tag, key, str(max(n_sheets - 1, 0)))
        return tag

    return re.sub(rf"<{re.escape(p)}workbookView\b[^>]*>", fix, xml)


def _remove_rels(xml: str, p: str, ids: set[str]) -> str:
    return re.sub(
        rf"<{re.escape(p)}Relationship\b[^>]*/>",
        lambda m: "" if attrs(m.group(0)).get("Id") in ids else m.group(0),
        xml,
    )


def _remove_overrides(xml: str, p: str, parts: set[str]) -> str:
    names = {"/" + n for n in parts}
    return re.sub(
        rf"<{re.escape(p)}Override\b[^>]*/>",
        lambda m: "" if attrs(m.group(0)).get("PartName") in names else m.group(0),
        xml,
    )


def _add_overrides(xml: str, p: str, ours: ZipSource, rename: dict[str, str]) -> str:
    ct = ElementTree.fromstring(ours.read(_CONTENT_TYPES))
    overrides, defaults = {}, {}
    for el in ct:
        tag = el.tag.rsplit("}", 1)[-1]
        if tag == "Override":
            overrides[el.attrib["PartName"].lstrip("/")] = el.attrib["ContentType"]
        elif tag == "Default":
            defaults[el.attrib["Extension"].lower()] = el.attrib["ContentType"]
    user_defaults = {
        attrs(m.group(0)).get("Extension", "").lower()
        for m in re.finditer(rf"<{re.escape(p)}Default\b[^>]*/>", xml)
    }
    frags = []
    for old, new in rename.items():
        if old in overrides:
            frags.append(
                f'<{p}Override PartName="/{escape_attr(new)}" ContentType="{overrides[old]}"/>'
            )
        else:
            ext = old.rsplit(".", 1)[-1].lower()
            if ext not in user_defaults and ext in defaults:
                frags.insert(0, f'<{p}Default Extension="{ext}" ContentType="{defaults[ext]}"/>')
                user_defaults.add(ext)
    return insert_before_close(xml, f"{p}Types", "".join(frags))


def _filter_calc_chain(xml: str, sheet_ids: set[int]) -> str | None:
    """Drop calculation-chain cells of removed sheets; None when nothing refers to them.

    In calcChain.xml an omitted ``i`` means "same sheet as the previous cell" (ECMA-376 Part 1,
    18.6.1), so kept cells are written with an explicit ``i``.
    """
    p = root_prefix(xml, "calcChain")
    current = None
    changed = False
    pieces = []
    last = 0
    for m in re.finditer(rf"<{re.escape(p)}c\b[^>]*/>", xml):
        a = attrs(m.group(0))
        if "i" in a:
            current = int(a["i"])
        pieces.append(xml[last : m.start()])
        last = m.end()
        if current in sheet_ids:
            changed = True
            continue
        tag = m.group(0)
        if "i" not in a and current is not None:
            tag = set_attr(tag, "i", str(current))
        pieces.append(tag)
    if not changed:
        return None
    return "".join(pieces) + xml[last:]


def _app_titles(xml: str, before: list[str], after: list[str]) -> str:
    """Rewrite the worksheet titles in docProps/app.xml; unchanged if its layout is unfamiliar."""
    try:
        hp = re.search(
            r"<HeadingPairs>\s*<vt:vector\b[^>]*>(.*?)</vt:vector>\s*</HeadingPairs>", xml, re.S
        )
        tp = re.search(
            r"<TitlesOfParts>\s*(<vt:vector\b[^>]*>)(.*?)</vt:vector>\s*</TitlesOfParts>", xml, re.S
        )
        if hp is None or tp is None:
            return xml
        pairs = re.findall(
            r"<vt:variant>\s*<vt:lpstr>(.*?)</vt:lpstr>\s*</vt:variant>\s*"
            r"<vt:variant>\s*<vt:i4>(\d+)</vt:i4>\s*</vt:variant>",
            hp.group(1),
            re.S,
        )
        titles = re.findall(r"<vt:lpstr>(.*?)</vt:lpstr>", tp.group(2), re.S)
        if sum(int(c) for _, c in pairs) != len(titles):
            return xml
        start = 0
        for g, (label, count) in enumerate(pairs):
            n = int(count)
            group = [unescape(t) for t in titles[start : start + n]]
            if group == before:
                new_titles = titles[:start] + [escape_text(t) for t in after] + titles[start + n :]
                new_pairs = list(pairs)
                new_pairs[g] = (label, str(len(after)))
                hp_inner = "".join(
                    f"<vt:variant><vt:lpstr>{lab}</vt:lpstr></vt:variant>"
                    f"<vt:variant><vt:i4>{c}</vt:i4></vt:variant>"
                    for lab, c in new_pairs
                )
                head = set_attr(tp.group(1), "size", str(len(new_titles)))
                tp_new = (
                    "<TitlesOfParts>"
                    + head
                    + "".join(f"<vt:lpstr>{t}</vt:lpstr>" for t in new_titles)
                    + "</vt:vector></TitlesOfParts>"
                )
                hp_old = hp.group(0)
                hp_head = re.search(r"<vt:vector\b[^>]*>", hp_old)
                assert hp_head is not None
                hp_new = (
                    "<HeadingPairs>" + hp_head.group(0) + hp_inner + "</vt:vector></HeadingPairs>"
                )
                return (
                    xml[: hp.start()]
                    + hp_new
                    + xml[hp.end() : tp.start()]
                    + tp_new
                    + xml[tp.end() :]
                )
            start += n
        return xml
    except (ValueError, AttributeError):
        return xml
