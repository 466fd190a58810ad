"""The column ledger: every column on its own row, with its role set right there.

Roles are edited in place (a drop-down in the Role cell); selecting several rows and choosing
a role sets them all. Quick actions cover the common starts. Problems appear in the Check
cell beside the column they concern, never in a pop-up.
"""

from __future__ import annotations

__all__ = ["ColumnLedger", "RoleDelegate"]

from PySide6.QtCore import QModelIndex, QSortFilterProxyModel, Qt, Signal
from PySide6.QtGui import QAction
from PySide6.QtWidgets import (
    QAbstractItemView,
    QComboBox,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QLineEdit,
    QMenu,
    QPushButton,
    QStyledItemDelegate,
    QTableView,
    QVBoxLayout,
    QWidget,
)

from desktop.roles import ROLE_HELP, Role, all_numeric_as_candidates
from desktop.table_models import COL_NAME, COL_ROLE, ColumnLedgerModel


class RoleDelegate(QStyledItemDelegate):
    """A role drop-down; the choice is applied to every selected row when the edited row is selected."""

    def __init__(self, ledger: ColumnLedger) -> None:
        super().__init__(ledger)
        self._ledger = ledger

    def createEditor(self, parent, option, index):  # noqa: N802 - Qt name
        box = QComboBox(parent)
        for r in Role:
            box.addItem(r.value, r.value)
            box.setItemData(box.count() - 1, ROLE_HELP[r], Qt.ItemDataRole.ToolTipRole)
        box.activated.connect(lambda _i, b=box: self.commitData.emit(b))
        return box

    def setEditorData(self, editor, index):  # noqa: N802
        editor.setCurrentIndex(max(0, editor.findData(index.data(Qt.ItemDataRole.EditRole))))

    def setModelData(self, editor, model, index):  # noqa: N802
        role = Role(editor.currentData())
        names = self._ledger.selected_names()
        this = self._ledger.name_for_view_index(index)
        if this not in names:
            names = [this]
        self._ledger.model.set_roles({n: role for n in names})


class ColumnLedger(QWidget):
    """Filter box, quick actions, role buttons for the selection, and the ledger table."""

    column_clicked = Signal(str)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.model = ColumnLedgerModel()
        self.proxy = QSortFilterProxyModel(self)
        self.proxy.setSourceModel(self.model)
        self.proxy.setFilterKeyColumn(COL_NAME)
        self.proxy.setFilterCaseSensitivity(Qt.CaseSensitivity.CaseInsensitive)

        title = QLabel("Columns")
        title.setObjectName("headline")
        self.summary = QLabel("")
        self.summary.setObjectName("caption")

        self.filter = QLineEdit()
        self.filter.setPlaceholderText("Find a column…")
        self.filter.setClearButtonEnabled(True)
        self.filter.setToolTip("Show only columns whose name contains this text.")
        self.filter.textChanged.connect(self.proxy.setFilterFixedString)

        self.numeric_button = QPushButton("Numbers → candidates")
        self.numeric_button.setToolTip(
            "Make every numeric column a candidate, except the ones with another role."
        )
        self.numeric_button.clicked.connect(self.all_numeric_as_candidates)
        self.none_button = QPushButton("Clear roles")
        self.none_button.setToolTip("Set every column to 'ignore' and start again.")
        self.none_button.clicked.connect(self.clear_roles)
        self.pair_button = QPushButton("Interact")
        self.pair_button.setToolTip(
            "Select two candidate columns, then let them act together: the study also tries "
            "their product (for a category, one per level), e.g. a price effect that differs by "
            "promotion. With one number column selected it adds its square (a curved effect). "
            "Click again with the same selection to remove it."
        )
        self.pair_button.clicked.connect(self.toggle_interaction_of_selected)

        self.set_role_box = QComboBox()
        self.set_role_box.addItem("Set role…", None)
        for r in Role:
            self.set_role_box.addItem(r.value, r.value)
            self.set_role_box.setItemData(
                self.set_role_box.count() - 1, ROLE_HELP[r], Qt.ItemDataRole.ToolTipRole
            )
        self.set_role_box.setToolTip(
            "Give every selected column the same role (Ctrl- or Shift-click to select several)."
        )
        self.set_role_box.activated.connect(self._on_set_role_box)

        self.view = QTableView()
        self.view.setModel(self.proxy)
        self.view.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.view.setSelectionMode(QAbstractItemView.SelectionMode.ExtendedSelection)
        self.view.setEditTriggers(
            QAbstractItemView.EditTrigger.DoubleClicked
            | QAbstractItemView.EditTrigger.SelectedClicked
            | QAbstractItemView.EditTrigger.EditKeyPressed
        )
        self.view.setItemDelegateForColumn(COL_ROLE, RoleDelegate(self))
        self.view.setAlternatingRowColors(True)
        self.view.setSortingEnabled(False)
        self.view.verticalHeader().setVisible(False)
        # Tab moves on to the next control (arrow keys move between cells): a list of hundreds
        # of columns would otherwise hold the keyboard for thousands of presses
        self.view.setTabKeyNavigation(False)
        self.view.verticalHeader().setSectionResizeMode(QHeaderView.ResizeMode.Fixed)
        h = self.view.horizontalHeader()
        h.setSectionResizeMode(QHeaderView.ResizeMode.Interactive)
        h.setStretchLastSection(True)
        self.view.setWordWrap(False)
        self.view.setContextMenuPolicy(Qt.ContextMenuPolicy.CustomContextMenu)
        self.view.customContextMenuRequested.connect(self._context_menu)
        self.view.clicked.connect(self._on_clicked)

        # two short rows rather than one long one: the ledger must fit beside the findings
        # on a 1280-pixel screen
        find = QHBoxLayout()
        find.addWidget(self.filter, 1)
        find.addWidget(self.set_role_box)
        actions = QHBoxLayout()
        actions.addWidget(self.numeric_button)
        actions.addWidget(self.none_button)
        actions.addWidget(self.pair_button)
        actions.addStretch(1)
        self.summary.setWordWrap(True)

        lay = QVBoxLayout(self)
        lay.setContentsMargins(6, 6, 6, 6)
        lay.addWidget(title)
        lay.addWidget(self.summary)
        lay.addLayout(find)
        lay.addLayout(actions)
        lay.addWidget(self.view, 1)
        self.model.roles_changed.connect(self.update_summary)
        self.model.modelReset.connect(self._after_reset)

    # selection helpers ------------------------------------------------------------------
    def name_for_view_index(self, index: QModelIndex) -> str:
        return self.model.name_at(self.proxy.mapToSource(index).row())

    def selected_names(self) -> list[str]:
        rows = {self.proxy.mapToSource(i).row() for i in self.view.selectionModel().selectedRows()}
        return [self.model.name_at(r) for r in sorted(rows)]

    def select_names(self, names: list[str]) -> None:
        sel = self.view.selectionModel()
        sel.clearSelection()
        for n in names:
            r = self.model.row_of(n)
            if r >= 0:
                idx = self.proxy.mapFromSource(self.model.index(r, COL_NAME))
                sel.select(idx, sel.SelectionFlag.Select | sel.SelectionFlag.Rows)

    def set_role_of_selected(self, role: Role) -> None:
        self.model.set_roles({n: role for n in self.selected_names()})

    def toggle_interaction_of_selected(self) -> bool:
        """Add the interaction of the two selected columns (of one selected column: its
        square), or remove it if it is there; False when the selection is not one or two."""
        names = self.selected_names()
        if len(names) not in (1, 2):
            self.summary.setText(
                "Select two columns to make them interact, or one number column for its square."
            )
            return False
        a, b = names if len(names) == 2 else (names[0], names[0])
        pairs = list(self.model.interactions())
        same = [p for p in pairs if set(p) == {a, b}]
        self.model.set_interactions(
            [p for p in pairs if p not in same] if same else [*pairs, (a, b)]
        )
        self.update_summary(self.model.roles())
        return True

    # quick actions ----------------------------------------------------------------------
    def all_numeric_as_candidates(self) -> None:
        if self.model.table is not None:
            self.model.set_roles(all_numeric_as_candidates(self.model.table, self.model.roles()))

    def clear_roles(self) -> None:
        self.model.set_roles({n: Role.IGNORE for n in self.model.roles()})

    def show_problem_row(self, name: str) -> None:
        r = self.model.row_of(name)
        if r >= 0:
            self.filter.clear()
            self.view.scrollTo(self.proxy.mapFromSource(self.model.index(r, COL_NAME)))
            self.view.horizontalScrollBar().setValue(0)

    # slots ------------------------------------------------------------------------------
    def _on_set_role_box(self, i: int) -> None:
        value = self.set_role_box.itemData(i)
        self.set_role_box.setCurrentIndex(0)
        if value is not None:
            self.set_role_of_selected(Role(value))

    def _context_menu(self, pos) -> None:
        if not self.selected_names():
            return
        menu = QMenu(self)
        for r in Role:
            act = QAction(f"Set role: {r.value}", menu)
            act.setToolTip(ROLE_HELP[r])
            act.triggered.connect(lambda _=False, role=r: self.set_role_of_selected(role))
            menu.addAction(act)
        selected = self.selected_names()
        if len(selected) in (1, 2):
            there = any(set(p) == set(selected) for p in self.model.interactions())
            menu.addSeparator()
            if len(selected) == 2:
                words = ("Remove the interaction of " if there else "Let interact: ") + " × ".join(
                    selected
                )
            else:
                words = ("Remove the square of " if there else "Add the square of ") + selected[0]
            act = QAction(words, menu)
            act.triggered.connect(lambda _=False: self.toggle_interaction_of_selected())
            menu.addAction(act)
        menu.exec(self.view.viewport().mapToGlobal(pos))

    def _on_clicked(self, index: QModelIndex) -> None:
        self.column_clicked.emit(self.name_for_view_index(index))

    def _after_reset(self) -> None:
        self.view.resizeColumnsToContents()
        for col, cap in ((COL_NAME, 260), (COL_ROLE, 120)):
            self.view.setColumnWidth(col, min(max(self.view.columnWidth(col), 90), cap))
        self.update_summary(self.model.roles())

    def update_summary(self, roles: dict | None = None) -> None:
        """The line under the title: counts, the response and the interactions."""
        roles = self.model.roles() if roles is None else roles
        n_cand = sum(1 for r in roles.values() if r is Role.CANDIDATE)
        resp = [n for n, r in roles.items() if r is Role.RESPONSE]
        text = f"{len(roles)} columns · {n_cand} candidates"
        if resp:
            text += f" · response {resp[0]}"
        pairs = self.model.interactions()
        if pairs:
            text += " · interactions: " + ", ".join(
                f"{a}²" if a == b else f"{a} × {b}" for a, b in pairs
            )
        self.summary.setText(text if roles else "")
