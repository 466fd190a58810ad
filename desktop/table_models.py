"""Qt item models over intake's Table: the sheet preview and the column ledger.

Both are ``QAbstractTableModel`` subclasses that format cells only when the view asks for
them, so a 100,000-row sheet scrolls as smoothly as a ten-row one (no widget per cell).
"""

from __future__ import annotations

__all__ = ["SheetPreviewModel", "ColumnLedgerModel", "LEDGER_HEADINGS", "format_value"]

import math
from collections.abc import Mapping

import numpy as np
from PySide6.QtCore import QAbstractTableModel, QModelIndex, QPersistentModelIndex, Qt, Signal
from PySide6.QtGui import QBrush, QColor

from desktop.roles import ROLE_HELP, Role
from desktop.theme import MUTED, PROBLEM, PROBLEM_SOFT
from engine.intake.table import Column, ColumnKind, Table

_Index = QModelIndex | QPersistentModelIndex
_DISPLAY = Qt.ItemDataRole.DisplayRole


def format_value(col: Column, i: int) -> str:
    """One cell as short text; '' for a missing value."""
    v = col.values[i]
    if col.kind is ColumnKind.DATE:
        return "" if np.isnat(v) else str(np.datetime_as_string(v, unit="D"))
    if col.kind in (ColumnKind.NUMBER, ColumnKind.FLAG) or isinstance(v, float | np.floating):
        f = float(v)
        if math.isnan(f):
            return ""
        if col.kind is ColumnKind.FLAG:
            return "yes" if f else "no"
        return f"{f:.6g}"
    return "" if v is None else str(v)


class SheetPreviewModel(QAbstractTableModel):
    """Read-only view of the table's values; row headings are the sheet's own row numbers."""

    def __init__(self, table: Table | None = None) -> None:
        super().__init__()
        self._table = table

    def set_table(self, table: Table | None) -> None:
        self.beginResetModel()
        self._table = table
        self.endResetModel()

    def rowCount(self, parent: _Index = QModelIndex()) -> int:  # noqa: B008 - Qt signature
        return 0 if self._table is None or parent.isValid() else self._table.n_rows

    def columnCount(self, parent: _Index = QModelIndex()) -> int:  # noqa: B008
        return 0 if self._table is None or parent.isValid() else len(self._table.columns)

    def data(self, index: _Index, role: int = _DISPLAY):
        if self._table is None or not index.isValid():
            return None
        col = self._table.columns[index.column()]
        if role == _DISPLAY:
            return format_value(col, index.row())
        if role == Qt.ItemDataRole.TextAlignmentRole:
            if col.kind in (ColumnKind.NUMBER, ColumnKind.FLAG):
                return int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
        return None

    def headerData(self, section: int, orientation: Qt.Orientation, role: int = _DISPLAY):
        if self._table is None:
            return None
        if orientation == Qt.Orientation.Horizontal:
            col = self._table.columns[section]
            if role == _DISPLAY:
                return f"{col.name}\n{col.letter} · {col.kind.value}"
            if role == Qt.ItemDataRole.ToolTipRole:
                return _column_tooltip(col)
        elif role == _DISPLAY:
            return str(int(self._table.row_numbers[section]))
        return None


def _column_tooltip(col: Column) -> str:
    lines = [f"{col.name} (column {col.letter}), {col.kind.value}"]
    if col.heading and col.heading != col.name:
        lines.append(f"Heading as written: '{col.heading}'")
    lines.append(f"{col.missing} missing, {col.distinct} distinct values")
    if col.minimum is not None:
        lines.append(f"From {col.minimum} to {col.maximum}")
    lines.extend(col.notes)
    return "\n".join(lines)


# the role next to the name: on a narrow screen the columns after it may need a scroll, the
# role (what the user sets) may not
LEDGER_HEADINGS = ("Column", "Role", "Log", "Cell", "Kind", "Missing", "Check")
COL_NAME, COL_ROLE, COL_LOG, COL_LETTER, COL_KIND, COL_MISSING, COL_CHECK = range(7)

LOG_HELP = (
    "Tick to use the natural log of this number column (every value must be above 0). Suits "
    "amounts that vary by factors, such as prices, sales or incomes: effects become relative, "
    "and with both the response and a column in ln the effect is an elasticity (percent per "
    "percent). A response in ln is predicted back in its own units."
)


class ColumnLedgerModel(QAbstractTableModel):
    """One row per column: name, letter, kind, missing count, role (editable), Log (a tick box
    for the natural log, on number columns), check.

    The Check cell shows the blocking problem for that column in the problem colour, or the
    intake notes (numbers stored as text, near duplicates ...) in a muted colour.
    ``roles_changed`` fires after any role edit or ln tick, with the full role mapping.
    """

    roles_changed = Signal(object)  # dict[str, Role]

    def __init__(self) -> None:
        super().__init__()
        self._table: Table | None = None
        self._roles: dict[str, Role] = {}
        self._problems: dict[str, str] = {}
        self._highlight: str | None = None
        self._logged: set[str] = set()
        self._interactions: list[tuple[str, str]] = []

    # state ------------------------------------------------------------------------------
    @property
    def table(self) -> Table | None:
        return self._table

    def roles(self) -> dict[str, Role]:
        return dict(self._roles)

    def set_table(self, table: Table | None, roles: Mapping[str, Role] | None = None) -> None:
        self.beginResetModel()
        self._table = table
        names = [c.name for c in table.columns] if table is not None else []
        given = roles or {}
        self._roles = {n: given.get(n, Role.IGNORE) for n in names}
        self._problems = {}
        self._logged = set()
        self._interactions = []
        self.endResetModel()

    def interactions(self) -> tuple[tuple[str, str], ...]:
        """Pairs of columns whose product the study adds (interactions; a column paired with
        itself adds its square), in the order made."""
        return tuple(self._interactions)

    def set_interactions(self, pairs, announce: bool = True) -> None:
        """Exactly these pairs (of this table's columns, each pair once); ``announce`` as for
        set_logged."""
        if self._table is None:
            return
        names = {c.name for c in self._table.columns}
        new: list[tuple[str, str]] = []
        for a, b in pairs:
            pair = (str(a), str(b))
            if {a, b} <= names and pair not in new and pair[::-1] not in new:
                new.append(pair)
        if new != self._interactions:
            self._interactions = new
            if announce:
                self.roles_changed.emit(self.roles())

    def logged(self) -> tuple[str, ...]:
        """Columns ticked for their natural log, in sheet order."""
        if self._table is None:
            return ()
        return tuple(c.name for c in self._table.columns if c.name in self._logged)

    def set_logged(self, names, announce: bool = True) -> None:
        """Tick exactly these columns (those that can be logged); ``announce``: emit
        roles_changed (not while a sheet is being loaded, as for set_table)."""
        if self._table is None:
            return
        loggable = {c.name for c in self._table.columns if c.kind is ColumnKind.NUMBER}
        new = set(names) & loggable
        if new != self._logged:
            self._logged = new
            self._emit_all(COL_LOG)
            if announce:
                self.roles_changed.emit(self.roles())

    def set_roles(self, changes: Mapping[str, Role]) -> None:
        """Change some roles (unknown names are ignored) and announce the new mapping once."""
        changed = False
        for name, role in changes.items():
            if name in self._roles and self._roles[name] is not role:
                self._roles[name] = Role(role)
                changed = True
        if changed:
            self._emit_all(COL_ROLE)
            self.roles_changed.emit(self.roles())

    def set_problems(self, problems: Mapping[str, str]) -> None:
        self._problems = dict(problems)
        self._emit_all(COL_CHECK)

    def problem(self, name: str) -> str | None:
        return self._problems.get(name)

    def name_at(self, row: int) -> str:
        assert self._table is not None
        return self._table.columns[row].name

    def row_of(self, name: str) -> int:
        assert self._table is not None
        for i, c in enumerate(self._table.columns):
            if c.name == name:
                return i
        return -1

    def _emit_all(self, column: int) -> None:
        if self._table is not None and self._table.columns:
            last = len(self._table.columns) - 1
            self.dataChanged.emit(self.index(0, column), self.index(last, column))

    # Qt model ---------------------------------------------------------------------------
    def rowCount(self, parent: _Index = QModelIndex()) -> int:  # noqa: B008
        return 0 if self._table is None or parent.isValid() else len(self._table.columns)

    def columnCount(self, parent: _Index = QModelIndex()) -> int:  # noqa: B008
        return 0 if parent.isValid() else len(LEDGER_HEADINGS)

    def headerData(self, section: int, orientation: Qt.Orientation, role: int = _DISPLAY):
        if orientation == Qt.Orientation.Horizontal:
            if role == _DISPLAY:
                return LEDGER_HEADINGS[section]
            if role == Qt.ItemDataRole.ToolTipRole:
                return _HEADING_TIPS[section]
        return None

    def flags(self, index: _Index) -> Qt.ItemFlag:
        f = super().flags(index)
        if index.isValid() and index.column() == COL_ROLE:
            f |= Qt.ItemFlag.ItemIsEditable
        if index.isValid() and index.column() == COL_LOG and self._loggable(index.row()):
            f |= Qt.ItemFlag.ItemIsUserCheckable
        return f

    def _loggable(self, row: int) -> bool:
        return self._table is not None and self._table.columns[row].kind is ColumnKind.NUMBER

    def data(self, index: _Index, role: int = _DISPLAY):
        if self._table is None or not index.isValid():
            return None
        col = self._table.columns[index.row()]
        c = index.column()
        if c == COL_LOG and role == Qt.ItemDataRole.CheckStateRole:
            if not self._loggable(index.row()):
                return None
            ticked = col.name in self._logged
            return Qt.CheckState.Checked if ticked else Qt.CheckState.Unchecked
        if c == COL_LOG and role == Qt.ItemDataRole.ToolTipRole:
            return LOG_HELP if self._loggable(index.row()) else "Only number columns can be logged."
        if role in (_DISPLAY, Qt.ItemDataRole.EditRole):
            if c == COL_NAME:
                return col.name
            if c == COL_LETTER:
                return col.letter
            if c == COL_KIND:
                return col.kind.value + (" (constant)" if col.constant else "")
            if c == COL_MISSING:
                return (
                    col.missing
                    if role == Qt.ItemDataRole.EditRole
                    else (str(col.missing) if col.missing else "")
                )
            if c == COL_ROLE:
                return self._roles[col.name].value
            if c == COL_CHECK:
                return self._problems.get(col.name) or "; ".join(col.notes)
        if role == Qt.ItemDataRole.ToolTipRole:
            if c == COL_ROLE:
                return (
                    ROLE_HELP[self._roles[col.name]]
                    + "\nDouble-click to change; applies to every selected row."
                )
            if c == COL_CHECK and (self._problems.get(col.name) or col.notes):
                return "\n".join([p for p in [self._problems.get(col.name)] if p] + list(col.notes))
            return _column_tooltip(col)
        if role == Qt.ItemDataRole.ForegroundRole:
            if c == COL_CHECK:
                return QBrush(QColor(PROBLEM if col.name in self._problems else MUTED))
            if self._roles[col.name] is Role.IGNORE and c != COL_ROLE:
                return QBrush(QColor(MUTED))
        if role == Qt.ItemDataRole.BackgroundRole and col.name in self._problems:
            return QBrush(QColor(PROBLEM_SOFT))
        if (
            role == Qt.ItemDataRole.FontRole
            and c == COL_ROLE
            and self._roles[col.name] in (Role.RESPONSE, Role.FOCAL)
        ):
            from PySide6.QtGui import QFont

            f = QFont()
            f.setBold(True)
            return f
        if role == Qt.ItemDataRole.TextAlignmentRole and c == COL_MISSING:
            return int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
        return None

    def setData(self, index: _Index, value, role: int = Qt.ItemDataRole.EditRole) -> bool:
        if self._table is None or not index.isValid():
            return False
        if index.column() == COL_LOG and role == Qt.ItemDataRole.CheckStateRole:
            if not self._loggable(index.row()):
                return False
            name = self._table.columns[index.row()].name
            ticked = Qt.CheckState(value) == Qt.CheckState.Checked
            self.set_logged(self._logged | {name} if ticked else self._logged - {name})
            return True
        if index.column() != COL_ROLE:
            return False
        try:
            new = Role(value)
        except ValueError:
            return False
        self.set_roles({self._table.columns[index.row()].name: new})
        return True


_HEADING_TIPS = (
    "The column's name as read from the header row.",
    "Where the column sits in the sheet.",
    "What the column holds, as Tamis read it: number, flag (yes/no), category, date, identifier or empty.",
    "Cells that are empty, hold an error value or text that is not a number.",
    "What the column is for in this study. Select several rows to set them together.",
    LOG_HELP,
    "Problems that stop the run (highlighted) and notes from reading the sheet.",
)
