"""A Table as plain data (str, int, float, bool, None, lists, dicts): what `tamis inspect`
prints, as text or as one JSON document. NaN never appears (it is not valid JSON)."""

from __future__ import annotations

__all__ = ["describe_table", "describe_column"]

import math
from typing import Any

from engine.intake.table import Column, Table


def _plain(value: Any) -> Any:
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def describe_column(col: Column) -> dict[str, Any]:
    return {
        "letter": col.letter,
        "name": col.name,
        "heading": col.heading,
        "kind": col.kind.value,
        "missing": int(col.missing),
        "errors": int(col.errors),
        "distinct": int(col.distinct),
        "min": _plain(col.minimum),
        "max": _plain(col.maximum),
        "constant": bool(col.constant),
        "duplicate_of": col.duplicate_of,
        "near_duplicate_of": col.near_duplicate_of,
        "text_numbers": int(col.text_numbers),
        "levels": list(col.levels),
        "notes": list(col.notes),
    }


def describe_table(table: Table) -> dict[str, Any]:
    """Every fact intake found about `table`, JSON-ready."""
    return {
        "file": str(table.source),
        "format": table.file_format,
        "sheet": table.sheet,
        "sheets": [{"name": s.name, "index": s.index, "hidden": s.hidden} for s in table.sheets],
        "header_row": table.header_row,
        "rows": table.n_rows,
        "first_row": int(table.row_numbers[0]) if table.n_rows else None,
        "last_row": int(table.row_numbers[-1]) if table.n_rows else None,
        "blank_rows_skipped": table.blank_rows_skipped,
        "columns": [describe_column(c) for c in table.columns],
        "warnings": list(table.warnings),
        "reading": dict(table.reading),
    }
