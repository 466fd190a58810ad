"""A small read-only table model for lists of rows (comparison, sizes, coefficients, shares)."""

from __future__ import annotations

__all__ = ["RowsModel", "fmt"]

import math
from collections.abc import Sequence
from typing import Any

from PySide6.QtCore import QAbstractTableModel, QModelIndex, QPersistentModelIndex, Qt

_DISPLAY = Qt.ItemDataRole.DisplayRole


def fmt(v: Any) -> str:
    """Numbers to 4 significant digits (whole numbers with separators from 10,000 on), None/NaN
    to a dash."""
    if v is None:
        return "–"
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v) or math.isinf(v):
            return "–"
        if 1e4 <= abs(v) < 1e15:  # errors in a sheet's own units: 48,620 rather than 4.862e+04
            return f"{v:,.0f}"
        return f"{v:.4g}"
    return str(v)


class RowsModel(QAbstractTableModel):
    def __init__(self, headings: Sequence[str], tips: Sequence[str] | None = None) -> None:
        super().__init__()
        self.headings = list(headings)
        self.tips = list(tips) if tips else [""] * len(self.headings)
        self.rows: list[list[Any]] = []

    def set_rows(self, rows: Sequence[Sequence[Any]]) -> None:
        self.beginResetModel()
        self.rows = [list(r) for r in rows]
        self.endResetModel()

    def rowCount(self, parent: QModelIndex | QPersistentModelIndex = QModelIndex()) -> int:  # noqa: B008
        return 0 if parent.isValid() else len(self.rows)

    def columnCount(self, parent: QModelIndex | QPersistentModelIndex = QModelIndex()) -> int:  # noqa: B008
        return 0 if parent.isValid() else len(self.headings)

    def data(self, index, role: int = _DISPLAY):
        if not index.isValid():
            return None
        v = self.rows[index.row()][index.column()]
        if role == _DISPLAY:
            return fmt(v)
        if role == Qt.ItemDataRole.ToolTipRole and isinstance(v, str) and len(v) > 16:
            return v
        if role == Qt.ItemDataRole.UserRole:
            return v
        if (
            role == Qt.ItemDataRole.TextAlignmentRole
            and isinstance(v, int | float)
            and not isinstance(v, bool)
        ):
            return int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
        return None

    def headerData(self, section: int, orientation: Qt.Orientation, role: int = _DISPLAY):
        if orientation != Qt.Orientation.Horizontal:
            return None
        if role == _DISPLAY:
            return self.headings[section]
        if role == Qt.ItemDataRole.ToolTipRole:
            return self.tips[section] or None
        return None
