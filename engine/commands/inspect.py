"""`tamis inspect BOOK [--sheet NAME] [--header-row N] [--json]`: what intake sees in a sheet.

Prints the file, its sheets (hidden ones marked), the heading row, the row counts and one
line per column (letter, name, kind, missing, errors, distinct, min, max, notes), or with
--json exactly one JSON document holding the same facts (engine.intake.describe_table).
Input problems are raised as engine.errors.InputProblem for the command-line error boundary.
"""

from __future__ import annotations

__all__ = ["run", "render_text"]

import json
from typing import Any

from engine.intake import describe_table, read_table

_NAME_WIDTH = 32


def _short(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, float):
        return f"{value:.6g}"
    return str(value)


def _clip(text: str, width: int) -> str:
    return text if len(text) <= width else text[: width - 1] + "…"


def render_text(facts: dict[str, Any]) -> str:
    """The facts of describe_table as an aligned plain-text report."""
    sheets = ", ".join(s["name"] + (" (hidden)" if s["hidden"] else "") for s in facts["sheets"])
    rows_line = f"{facts['rows']}"
    if facts["rows"]:
        rows_line += f" (sheet rows {facts['first_row']}-{facts['last_row']}"
        rows_line += f", {facts['blank_rows_skipped']} blank skipped)"
    head = [
        ("file", f"{facts['file']} ({facts['format']})"),
        ("sheets", sheets),
        ("sheet", facts["sheet"]),
        ("header row", str(facts["header_row"])),
        ("data rows", rows_line),
        ("columns", str(len(facts["columns"]))),
    ]
    for key, value in facts.get("reading", {}).items():
        head.append((key, value))
    key_width = max(len(k) for k, _ in head)
    lines = [f"{k.ljust(key_width)}  {v}" for k, v in head]
    lines.append("")

    titles = ("col", "name", "kind", "missing", "errors", "distinct", "min", "max", "notes")
    table = []
    for c in facts["columns"]:
        notes = list(c["notes"])
        if c["constant"]:
            notes.insert(0, "constant")
        if c["kind"] == "category" and c["levels"]:
            shown = ", ".join(c["levels"][:4]) + (" ..." if len(c["levels"]) > 4 else "")
            notes.insert(0, f"levels: {shown}")
        table.append(
            (
                c["letter"],
                _clip(c["name"], _NAME_WIDTH),
                c["kind"],
                str(c["missing"]),
                str(c["errors"]),
                str(c["distinct"]),
                _short(c["min"]),
                _short(c["max"]),
                "; ".join(notes),
            )
        )
    widths = [max([len(t)] + [len(r[i]) for r in table]) for i, t in enumerate(titles)]
    numeric = {3, 4, 5}

    def fmt(row: tuple[str, ...]) -> str:
        cells = [
            (v.rjust(widths[i]) if i in numeric else v.ljust(widths[i])) if i < len(row) - 1 else v
            for i, v in enumerate(row)
        ]
        return "  ".join(cells).rstrip()

    lines.append(fmt(titles))
    lines.extend(fmt(r) for r in table)
    if facts["warnings"]:
        lines.append("")
        lines.append("warnings:")
        lines.extend(f"  - {w}" for w in facts["warnings"])
    return "\n".join(lines) + "\n"


def run(args: Any, ctx: Any) -> int:
    """Read the sheet named by `args` and print its report to ctx.stdout; return 0."""
    table = read_table(args.book, sheet=args.sheet, header_row=args.header_row)
    facts = describe_table(table)
    if args.json:
        ctx.stdout.write(json.dumps(facts, ensure_ascii=False, allow_nan=False) + "\n")
    else:
        ctx.stdout.write(render_text(facts))
    return 0
