"""Findings: everything a StudyResult holds, drawn and tabled; nothing here computes statistics.

Tabs: Path (with the live cursor), Validation, Compare, Sizes, Stability, Focal effect,
Read before use. Moving the path cursor reads the coefficients at that point straight from
the engine's computed ``PenaltyPath``.
"""

from __future__ import annotations

__all__ = ["ResultView", "cursor_rows"]

from html import escape
from pathlib import Path

import numpy as np
from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (
    QAbstractItemView,
    QCheckBox,
    QComboBox,
    QFileDialog,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QPushButton,
    QSplitter,
    QTableView,
    QTabWidget,
    QTextBrowser,
    QVBoxLayout,
    QWidget,
)

from desktop.cautions import cautions_html
from desktop.charts.common import EXPORT_FILTER, export_plot
from desktop.charts.curve_chart import CurveChart
from desktop.charts.fit_chart import FitChart
from desktop.charts.focal_chart import FocalChart
from desktop.charts.path_chart import AXIS_BUDGET, AXIS_PENALTY, PathChart
from desktop.charts.share_chart import ShareChart
from desktop.elided_label import DistinctNamesDelegate, keep_tab_names_whole
from desktop.messages import as_sentence, window_words
from desktop.rows_model import RowsModel, fmt
from desktop.settings_panel import CHOICE_WORDS, SCHEME_WORDS
from desktop.theme import MUTED, PROBLEM
from engine.fitting.path import PenaltyPath
from engine.methods import method_info
from engine.study_result import ModelResult, StudyResult


def cursor_rows(path: PenaltyPath, names: list[str], i: int) -> list[list[object]]:
    """Coefficient rows at path point ``i``: nonzero columns, largest standardized effect first."""
    std = path.std_coefs[i]
    orig = path.coefs_at(i)
    nz = np.flatnonzero(std != 0)
    nz = nz[np.argsort(-np.abs(std[nz]), kind="stable")]
    return [[names[j], float(orig[j]), float(std[j])] for j in nz]


def _columns(n: int) -> str:
    return f"{n} column" + ("" if n == 1 else "s")


def _table(model: RowsModel) -> QTableView:
    v = QTableView()
    v.setModel(model)
    v.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
    v.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
    v.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
    v.setAlternatingRowColors(True)
    v.verticalHeader().setVisible(False)
    v.horizontalHeader().setStretchLastSection(True)
    v.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.Interactive)
    v.setWordWrap(False)
    v.setTabKeyNavigation(False)  # Tab leaves the table; arrows move in it
    return v


def _export_button(parent: QWidget, chart_widget, name: str) -> QPushButton:
    b = QPushButton("Save picture…")
    b.setToolTip("Write this chart as a PNG picture or an SVG drawing (choose by the file ending).")

    def go() -> None:
        path, _ = QFileDialog.getSaveFileName(parent, "Save chart", f"{name}.png", EXPORT_FILTER)
        if path:
            export_plot(chart_widget.plot, path)

    b.clicked.connect(go)
    return b


class ResultView(QWidget):
    """The Findings page. ``show_result(result)`` fills every tab."""

    cursor_moved = Signal(int)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.result: StudyResult | None = None
        self.current: ModelResult | None = None

        self.summary = QLabel("Run a study to see its findings here.")
        self.summary.setObjectName("headline")
        self.summary.setWordWrap(True)
        self.outdated_note = QLabel(
            f"<span style='color:{PROBLEM}'>These findings are from the last run; roles or "
            "settings have changed since. Run again to update them.</span>"
        )
        self.outdated_note.setWordWrap(True)
        self.outdated_note.hide()
        # whether the findings shown predate later changes (the note's visibility says so
        # only while this page is the one shown)
        self.outdated = False
        self.method_box = QComboBox()
        self.method_box.setToolTip("The method whose path and validation curve are drawn.")
        self.method_box.currentIndexChanged.connect(self._on_method)
        head = QHBoxLayout()
        head.addWidget(self.summary, 1)
        head.addWidget(QLabel("Method"))
        head.addWidget(self.method_box)

        self.tabs = QTabWidget()
        self.tabs.setDocumentMode(True)
        keep_tab_names_whole(self.tabs)
        self.tabs.addTab(self._build_path_tab(), "Path")
        self.tabs.addTab(self._build_curve_tab(), "Validation")
        self.tabs.addTab(self._build_compare_tab(), "Compare")
        self.tabs.addTab(self._build_sizes_tab(), "Sizes")
        self.STABILITY_TAB = self.tabs.addTab(self._build_share_tab(), "Stability")
        self.FOCAL_TAB = self.tabs.addTab(self._build_focal_tab(), "Focal effect")
        self.CHECK_TAB = self.tabs.addTab(self._build_check_tab(), "Rows to check")
        self._stale: dict = {}
        self.tabs.currentChanged.connect(self._draw_visible_tab)
        self.cautions = QTextBrowser()
        self.cautions.setOpenExternalLinks(False)
        self.cautions.setHtml(cautions_html())
        self.tabs.addTab(self.cautions, "Read before use")
        self.CAUTIONS_TAB = self.tabs.count() - 1

        lay = QVBoxLayout(self)
        lay.setContentsMargins(8, 8, 8, 8)
        lay.addLayout(head)
        lay.addWidget(self.outdated_note)
        lay.addWidget(self.tabs, 1)

    # tabs -------------------------------------------------------------------------------
    def _build_path_tab(self) -> QWidget:
        self.path_chart = PathChart()
        self.path_chart.index_changed.connect(self._on_cursor)
        self.axis_box = QComboBox()
        self.axis_box.addItem("Against the penalty", AXIS_PENALTY)
        self.axis_box.addItem("Against the budget t", AXIS_BUDGET)
        self.axis_box.setItemData(
            0,
            "Horizontal axis: the penalty on a log scale, strongest on the left.",
            Qt.ItemDataRole.ToolTipRole,
        )
        self.axis_box.setItemData(
            1,
            "Horizontal axis: the sum of absolute standardized coefficients, the 'budget' of "
            "the equivalent constrained problem. It grows as the penalty weakens.",
            Qt.ItemDataRole.ToolTipRole,
        )
        self.axis_box.setToolTip("What the horizontal axis of the path shows.")
        self.axis_box.currentIndexChanged.connect(
            lambda _i: self.path_chart.set_axis(self.axis_box.currentData())
        )
        self.back_button = QPushButton("Chosen point")
        self.back_button.setToolTip("Return the cursor to the penalty the choice rule picked.")
        self.back_button.clicked.connect(self.reset_cursor)
        bar = QHBoxLayout()
        bar.addWidget(self.axis_box)
        bar.addStretch(1)
        bar.addWidget(self.back_button)
        self.path_export = _export_button(self, self.path_chart, "tamis-path")
        bar.addWidget(self.path_export)

        self.readout = QLabel("")
        self.readout.setWordWrap(True)
        self.readout.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.coef_model = RowsModel(
            ["Column", "Coefficient", "Per SD"],
            [
                "Model column (a category level shows as column=level).",
                "Change in the response for one unit of the column, in the sheet's own units.",
                "Change in the response for one standard deviation of the column; compares columns fairly.",
            ],
        )
        self.coef_view = _table(self.coef_model)
        # names get the room and lose their middle when short of it ("promotion=...none"
        # keeps the level), or their end where the middle is what tells them apart; the
        # numbers are always shown whole
        heads = self.coef_view.horizontalHeader()
        heads.setStretchLastSection(False)
        heads.setSectionResizeMode(0, QHeaderView.ResizeMode.Stretch)
        heads.setSectionResizeMode(1, QHeaderView.ResizeMode.ResizeToContents)
        heads.setSectionResizeMode(2, QHeaderView.ResizeMode.ResizeToContents)
        self.coef_view.setTextElideMode(Qt.TextElideMode.ElideMiddle)
        self.coef_view.setItemDelegateForColumn(
            0, DistinctNamesDelegate(self.coef_model, 0, self.coef_view)
        )
        self.coef_view.clicked.connect(
            lambda idx: self.highlight(self.coef_model.rows[idx.row()][0])
        )
        hint = self.path_hint = QLabel(
            "Drag the blue line across the chart. Click a row to pick out its line."
        )
        hint.setObjectName("caption")
        hint.setWordWrap(True)
        side = QWidget()
        # room for about a dozen characters of a name beside the two numbers, in the font's
        # own size (at 1.5x "Price (EUR)" and "Promo (yes/no)" both showed as "Pr…")
        side.setMinimumWidth(max(200, self.fontMetrics().horizontalAdvance("0" * 30)))
        sl = QVBoxLayout(side)
        sl.setContentsMargins(0, 0, 0, 0)
        sl.addWidget(self.readout)
        sl.addWidget(self.coef_view, 1)
        sl.addWidget(hint)

        split = QSplitter(Qt.Orientation.Horizontal)
        left = QWidget()
        ll = QVBoxLayout(left)
        ll.setContentsMargins(0, 0, 0, 0)
        ll.addLayout(bar)
        ll.addWidget(self.path_chart, 1)
        split.addWidget(left)
        split.addWidget(side)
        split.setStretchFactor(0, 3)
        split.setStretchFactor(1, 2)
        split.setSizes([620, 340])
        return split

    def _build_curve_tab(self) -> QWidget:
        self.curve_chart = CurveChart()
        self.curve_note = QLabel("")
        self.curve_note.setWordWrap(True)
        w = QWidget()
        lay = QVBoxLayout(w)
        self.close_up_box = QCheckBox("Close-up of the lowest error")
        self.close_up_box.setToolTip(
            "Show the errors near the lowest one, where the choice is made, instead of the "
            "whole curve (whose strongest penalties have far larger errors)."
        )
        self.close_up_box.setChecked(True)
        self.curve_chart.set_close_up(True)
        self.close_up_box.toggled.connect(self.curve_chart.set_close_up)
        bar = QHBoxLayout()
        bar.addWidget(self.curve_note, 1)
        side = QVBoxLayout()
        side.addWidget(_export_button(self, self.curve_chart, "tamis-validation"))
        side.addWidget(self.close_up_box)
        bar.addLayout(side)
        lay.addLayout(bar)
        lay.addWidget(self.curve_chart, 1)
        return w

    def _build_compare_tab(self) -> QWidget:
        self.compare_model = RowsModel(
            [
                "Method",
                "Columns kept",
                "Held-out error",
                "± SE",
                "Held-out R squared",
                "Test error",
                "Test R squared",
                "R squared",
                "Penalty",
                "Chosen by",
                "Kept",
            ],
            [
                "",
                "How many columns have a nonzero coefficient.",
                "Mean squared error on rows held out during validation (lower is better).",
                "Standard error of that mean over the validation parts.",
                "Share of the response's variation predicted on held-out rows: 1 minus the "
                "held-out error over the response's variance (below 0: worse than the mean).",
                "Mean squared error on the rows held back as a final test (no fit or choice saw them).",
                "Share of the final test rows' variation the model predicts.",
                "Share of the response's variation explained, on the rows used (in-sample; flatters large models).",
                "The chosen penalty, where the method has one.",
                "The rule that picked the point.",
                "The columns kept, largest effect first.",
            ],
        )
        self.compare_view = _table(self.compare_model)
        w = QWidget()
        lay = QVBoxLayout(w)
        note = QLabel(
            "Compare held-out error or held-out R squared, not R squared: R squared on the rows "
            "used always favours more columns. Penalties are on each method's own scale (the elastic net splits "
            "its penalty, the adaptive lasso weights each column), so compare them within a "
            "method only."
        )
        note.setObjectName("caption")
        note.setWordWrap(True)
        lay.addWidget(note)
        lay.addWidget(self.compare_view, 1)
        return w

    def _build_sizes_tab(self) -> QWidget:
        self.sizes_box = QComboBox()
        self.sizes_box.setToolTip("Subset methods report the best set of each size.")
        self.sizes_box.currentIndexChanged.connect(self._fill_sizes)
        self.sizes_model = RowsModel(
            ["Size", "Held-out error", "R squared", "Residual sum of squares", "BIC", "Columns"],
            [
                "Number of columns in the set.",
                "Mean squared error on held-out rows for sets of this size (cross-validation: "
                "the size is chosen by it).",
                "In-sample share of variation explained.",
                "",
                "Bayesian information criterion (lower is better).",
                "",
            ],
        )
        self.sizes_view = _table(self.sizes_model)
        self.sizes_note = QLabel("")
        self.sizes_note.setWordWrap(True)
        w = QWidget()
        lay = QVBoxLayout(w)
        bar = QHBoxLayout()
        bar.addWidget(QLabel("Method"))
        bar.addWidget(self.sizes_box)
        bar.addWidget(self.sizes_note, 1)
        lay.addLayout(bar)
        lay.addWidget(self.sizes_view, 1)
        return w

    def _build_share_tab(self) -> QWidget:
        self.share_chart = ShareChart()
        self.share_note = QLabel("")
        self.share_note.setWordWrap(True)
        w = QWidget()
        lay = QVBoxLayout(w)
        bar = QHBoxLayout()
        bar.addWidget(self.share_note, 1)
        self.share_export = _export_button(self, self.share_chart, "tamis-stability")
        bar.addWidget(self.share_export)
        lay.addLayout(bar)
        lay.addWidget(self.share_chart, 1)
        return w

    def _build_check_tab(self) -> QWidget:
        self.check_model = RowsModel(
            [
                "Where",
                "Why",
                "Column",
                "Value",
                "Studentized residual",
                "Cook's distance",
                "Leverage",
            ],
            [
                "The cell, or the row, in the sheet read.",
                "Far-out value: beyond 3 interquartile ranges past its column's quartiles "
                "(Tukey). Outlier: a residual beyond chance among the rows used (Bonferroni, "
                "5%). Influential: leaving the row out moves the coefficients (Cook's distance "
                "above the median of F).",
                "",
                "The cell's value as the models see it (its ln for a logged column).",
                "The row's residual in units of its standard error, the row itself left out of "
                "the error variance.",
                "How far the coefficients move when the row is left out.",
                "How unusual the row's own values are (the diagonal of the hat matrix).",
            ],
        )
        self.check_view = _table(self.check_model)
        self.check_view.selectionModel().currentRowChanged.connect(self._on_check_row)
        self.check_note = QLabel("")
        self.check_note.setWordWrap(True)
        self.fit_chart = FitChart()
        split = QSplitter(Qt.Orientation.Horizontal)
        split.addWidget(self.check_view)
        split.addWidget(self.fit_chart)
        split.setSizes([520, 480])
        w = QWidget()
        lay = QVBoxLayout(w)
        bar = QHBoxLayout()
        bar.addWidget(self.check_note, 1)
        bar.addWidget(_export_button(self, self.fit_chart, "tamis-fit"))
        lay.addLayout(bar)
        lay.addWidget(split, 1)
        return w

    def _fill_check(self) -> None:
        r = self.result
        if r is None:
            return
        rows: list[list] = [
            [f.cell, "far-out value", f.column, f.value, None, None, None] for f in r.far_cells
        ]
        for row, u in r.unusual_rows():
            rows.append(
                [
                    f"row {row}",
                    ", ".join(u.reasons()),
                    None,
                    None,
                    u.studentized,
                    u.cooks,
                    u.leverage,
                ]
            )
        self.check_model.set_rows(rows)
        self.check_view.resizeColumnsToContents()
        self.tabs.setTabText(
            self.CHECK_TAB, f"Rows to check ({len(rows)})" if rows else "Rows to check"
        )
        refit = (
            f" Rows are measured in a least-squares refit of the {r.influence.n_coefficients - 1} "
            f"columns of the {method_info(r.influence_method or '').title} model (the scoring "
            "sheet's)."
            if r.influence is not None
            else " No row measures: the scoring sheet's model keeps no column, or too few rows are "
            "left beyond its columns for them to say anything."
        )
        self.check_note.setText(
            (
                "Nothing stands apart in these data."
                if not rows
                else "Cells and rows that stand apart from the rest. A slipped decimal point or a "
                "value in another unit looks like this: check them in the sheet. Leaving out a "
                "true observation only because it does not fit also misleads; whether to keep "
                "it is your review's call."
            )
            + refit
            + " The fitted-values sheet of the written workbook has the measures for every row."
        )

    def _on_check_row(self, current, _previous=None) -> None:
        """The picked cell's or row's point is ringed on the chart beside the list."""
        if self.result is None or not current.isValid():
            self.fit_chart.mark_row(None)
            return
        where = str(self.check_model.rows[current.row()][0])
        far = {f.cell: f.row for f in self.result.far_cells}
        row = far.get(where) if where in far else int(where.removeprefix("row "))
        self._fill_fit_chart_if_stale()
        self.fit_chart.mark_row(row)

    def _fill_fit_chart_if_stale(self) -> None:
        if self._stale.pop(self.CHECK_TAB, None) is not None:
            self._fill_fit_chart()

    def _fill_fit_chart(self) -> None:
        r = self.result
        if r is None:
            return
        method = r.influence_method or (r.scoring_method() if r.models else None)
        self.fit_chart.set_fit(
            r.design.y,
            r.model(method).fitted if method else None,
            r.design.row_numbers,
            [row for row, _ in r.unusual_rows()],
            f"{method_info(method).title}, the scoring sheet's model: rows used" if method else "",
            r.design.response_label,
        )

    def _build_focal_tab(self) -> QWidget:
        self.focal_text = QLabel("")
        self.focal_text.setWordWrap(True)
        self.focal_text.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.focal_chart = FocalChart()
        self.focal_export = _export_button(self, self.focal_chart, "tamis-focal")
        w = QWidget()
        lay = QVBoxLayout(w)
        bar = QHBoxLayout()
        bar.addWidget(self.focal_text, 1)
        bar.addWidget(self.focal_export, 0, Qt.AlignmentFlag.AlignTop)
        lay.addLayout(bar)
        lay.addWidget(self.focal_chart, 1)
        return w

    # filling ----------------------------------------------------------------------------
    def clear(self) -> None:
        """Forget the shown result (another file was opened): empty views, no method."""
        self.result = None
        self.current = None
        self.summary.setText("Run a study to see its findings here.")
        self.set_outdated(False)
        self.method_box.blockSignals(True)
        self.method_box.clear()
        self.method_box.blockSignals(False)
        self.path_chart.set_path(None, [], None)
        self.coef_model.set_rows([])
        self.readout.setText("")
        self.curve_chart.set_curve(None, None)
        self.curve_note.setText("")
        self.compare_model.set_rows([])
        self.sizes_box.clear()
        self._fill_sizes()
        self.share_chart.set_stability(None)
        self.focal_chart.set_focal(None)
        self._stale = {}
        self.cautions.setHtml(cautions_html())

    def set_outdated(self, outdated: bool) -> None:
        """Say under the heading that roles or settings changed since this result was made."""
        self.outdated = outdated and self.result is not None
        self.outdated_note.setVisible(self.outdated)

    def show_result(self, result: StudyResult) -> None:
        self.result = result
        d = result.design
        dropped = f", {d.rows_dropped} left out" if d.rows_dropped else ""
        if result.test_rows is not None:
            dropped += f", {len(result.test_rows)} held back as a final test"
        took = f" · fitted\u00a0in\u00a0{result.seconds:.1f}\u00a0s" if result.seconds else ""
        self.summary.setText(
            f"{d.response_label} explained by {d.n_cols} model columns · {d.n_rows} rows used{dropped}{took}"
        )
        self.set_outdated(False)
        self.method_box.blockSignals(True)
        self.method_box.clear()
        for m in result.models:
            self.method_box.addItem(method_info(m.method).title, m.method)
        first = next((i for i, m in enumerate(result.models) if m.path is not None), 0)
        self.method_box.setCurrentIndex(first)
        self.method_box.blockSignals(False)
        self._fill_compare()
        self.sizes_box.blockSignals(True)
        self.sizes_box.clear()
        for m in result.models:
            if m.by_size:
                self.sizes_box.addItem(method_info(m.method).title, m.method)
        self.sizes_box.blockSignals(False)
        self._fill_sizes()
        self._fill_check()
        # charts on hidden tabs are drawn when first shown, so the window answers at once
        self._stale = {
            self.STABILITY_TAB: self._fill_stability,
            self.FOCAL_TAB: self._fill_focal,
            self.CHECK_TAB: self._fill_fit_chart,
        }
        self._draw_visible_tab()
        notes = list(result.warnings) + list(d.warnings)
        notes += [f"Column '{c}' left out: {why}" for c, why in d.dropped_columns.items()]
        for m in result.models:  # a method's note also raised as a warning is said once
            notes += [
                f"{method_info(m.method).title}: {n}"
                for n in m.notes
                if not any(w.endswith(n) for w in notes)
            ]
        # in the window's words: options of the command line named as the window's settings
        self.cautions.setHtml(cautions_html(list(dict.fromkeys(map(window_words, notes)))))
        self._on_method()

    def _draw_visible_tab(self, *_: object) -> None:
        fill = self._stale.pop(self.tabs.currentIndex(), None)
        if fill is not None:
            fill()

    def _on_method(self, *_: object) -> None:
        if self.result is None or self.method_box.count() == 0:
            return
        m = self.result.model(self.method_box.currentData())
        self.current = m
        names = list(self.result.design.names)
        chosen = self._chosen_index(m)
        self.path_chart.set_path(m.path, names, chosen)
        self.back_button.setEnabled(m.path is not None)
        self.path_export.setEnabled(m.path is not None)
        self.path_hint.setVisible(m.path is not None)
        if m.path is None:
            self.coef_model.set_rows(
                sorted(
                    (
                        [
                            n,
                            float(m.coefficients.get(n, 0.0)),
                            float(m.std_coefficients.get(n, 0.0)),
                        ]
                        for n in m.selected
                    ),
                    key=lambda r: -abs(r[2]),
                )
            )
            self.readout.setText(
                f"<b>{method_info(m.method).title}</b> has no penalty path; "
                f"its {len(m.selected)} kept columns are listed."
            )
        else:
            self._on_cursor(self.path_chart.index)
        rule = m.choice if m.choice in ("min", "one-se") else None
        self.curve_chart.set_curve(m.curve, rule, ln_scale=self.result.design.response_log)
        if m.curve is not None:
            c = m.curve
            scheme = SCHEME_WORDS.get(c.scheme, c.scheme)
            self.curve_note.setText(
                f"{scheme}, {c.parts} held-out parts. Lowest error: {fmt(float(c.mean_error[c.index_min]))} "
                f"with {_columns(int(c.n_selected[c.index_min]))}; simplest within one standard "
                f"error: {fmt(float(c.mean_error[c.index_one_se]))} with "
                f"{_columns(int(c.n_selected[c.index_one_se]))}."
                + (f" Chosen by: {CHOICE_WORDS[rule].lower()}." if rule else "")
            )
        else:
            self.curve_note.setText("This method has no validation curve.")

    def _chosen_index(self, m: ModelResult) -> int | None:
        if m.path is None:
            return None
        if m.penalty is not None and len(m.path):
            return int(
                np.argmin(
                    np.abs(
                        np.log(np.maximum(m.path.penalties, 1e-300))
                        - np.log(max(m.penalty, 1e-300))
                    )
                )
            )
        if m.curve is not None and m.curve.grid_kind == "penalty" and m.choice in ("min", "one-se"):
            return m.curve.chosen(m.choice)
        return None

    def _on_cursor(self, i: int) -> None:
        m = self.current
        if self.result is None or m is None or m.path is None:
            return
        path = m.path
        rows = cursor_rows(path, list(self.result.design.names), i)
        self.coef_model.set_rows(rows)
        chosen = " (the chosen point)" if i == self._chosen_index(m) else ""
        self.readout.setText(
            f"<b>{_columns(len(rows))} selected</b>{chosen}<br>"
            f"penalty {fmt(float(path.penalties[i]))} · budget t {fmt(float(path.l1_budget[i]))} · "
            f"point {i + 1} of {len(path)}"
        )
        self.cursor_moved.emit(i)

    def selected_at_cursor(self) -> list[str]:
        return [r[0] for r in self.coef_model.rows]

    def reset_cursor(self) -> None:
        if self.current is not None:
            i = self._chosen_index(self.current)
            if i is not None:
                self.path_chart.set_index(i)

    def highlight(self, name: str | None) -> None:
        self.path_chart.highlight(name)
        if name:
            for r, row in enumerate(self.coef_model.rows):
                if row[0] == name:
                    self.coef_view.selectRow(r)
                    break

    def show_cautions(self) -> None:
        self.tabs.setCurrentIndex(self.CAUTIONS_TAB)

    def _fill_compare(self) -> None:
        assert self.result is not None

        scoring = self.result.scoring_method() if self.result.models else None
        rows = []
        for m in self.result.models:
            kept = sorted(m.selected, key=lambda n: -abs(m.std_coefficients.get(n, 0.0)))
            title = method_info(m.method).title + (" (approximate search)" if m.approximate else "")
            if m.method == scoring:  # what a saved workbook's scoring sheet and Predict use
                title += " · scoring sheet"
            rows.append(
                [
                    title,
                    len(m.selected),
                    m.cv_error,
                    m.cv_error_se,
                    m.cv_r2,
                    m.test_error,
                    m.test_r2,
                    m.r2,
                    m.penalty,
                    CHOICE_WORDS.get(m.choice or "", m.choice or "–"),
                    ", ".join(kept),
                ]
            )
        self.compare_model.set_rows(rows)
        tested = self.result.test_rows is not None
        for col in (5, 6):  # the final test's columns, only when rows were held back
            self.compare_view.setColumnHidden(col, not tested)
        self.compare_view.resizeColumnsToContents()

    def _fill_sizes(self, *_: object) -> None:
        if self.result is None or self.sizes_box.count() == 0:
            self.sizes_model.set_rows([])
            self.sizes_note.setText(
                "No subset method was run (tick Best subset or Forward stepwise)."
            )
            return
        m = self.result.model(self.sizes_box.currentData())
        chosen = len(m.selected)
        held_out: dict[int, float] = {}
        if m.curve is not None and m.curve.grid_kind != "penalty":
            held_out = {int(k): float(e) for k, e in zip(m.curve.grid, m.curve.mean_error)}
        self.sizes_model.set_rows(
            [
                [r.size, held_out.get(r.size), r.r2, r.rss, r.bic, ", ".join(r.columns)]
                for r in m.by_size or []
            ]
        )
        self.sizes_note.setText(
            f"The chosen size is {chosen}."
            + (" No set predicted held-out rows better than the mean alone." if chosen == 0 else "")
            + (
                " Found by an approximate search (too many columns for an exact one)."
                if m.approximate
                else ""
            )
        )
        self.sizes_view.resizeColumnsToContents()
        if chosen < len(self.sizes_model.rows):
            for r, row in enumerate(self.sizes_model.rows):
                if row[0] == chosen:
                    self.sizes_view.selectRow(r)

    def _fill_stability(self) -> None:
        assert self.result is not None
        s = self.result.stability
        self.share_chart.set_stability(s)
        self.share_chart.setVisible(s is not None)  # no empty axes when there is nothing
        self.share_export.setEnabled(s is not None)
        if s is None:
            self.share_note.setText(
                "Stability was not run. Set 'Stability half-samples' in Run settings to see "
                "how often each column is chosen when the rows change."
            )
        else:
            self.share_note.setText(
                f"Columns chosen in at least {s.threshold:.0%} of {s.runs} half-samples: "
                + (", ".join(s.stable) if s.stable else "none")
                + ". Each half-sample counts the columns among the first to enter its lasso "
                "path (about the square root of 0.8 times the number of candidates), so a "
                "column that enters later, even with a large coefficient, can show a low share: "
                "a low share is not evidence that a column does not matter."
            )

    def _fill_focal(self) -> None:
        assert self.result is not None
        f = self.result.focal
        self.focal_chart.set_focal(f)
        self.focal_chart.setVisible(f is not None)
        self.focal_export.setEnabled(f is not None)
        if f is None:
            self.focal_text.setText(
                "No focal column. Give one column the role 'focal' to estimate its own effect "
                "with controls chosen by double selection."
            )
            return
        naive = (
            ""
            if f.naive_estimate is None
            else f"<br>Choosing controls from the response equation alone would give {fmt(f.naive_estimate)}."
        )
        column = escape(f.column)  # a user's heading ("R&D", "<5 km") shown as written
        controls = escape(", ".join(f.controls))
        # what the engine said about this estimate (few groups for clustered errors ...) belongs
        # beside it, not only among the run's notes
        said = "".join(
            f"<br><span style='color:{PROBLEM}'>{escape(as_sentence(window_words(note)))}</span>"
            for note in f.notes
        )
        self.focal_text.setText(
            f"<b>Effect of {column}: {fmt(f.estimate)}</b> (standard error {fmt(f.std_error)}, "
            f"{escape(f.covariance)}); 95% interval {fmt(f.ci_low)} to {fmt(f.ci_high)}.{said}<br>"
            + (
                f"{len(f.controls)} control{'' if len(f.controls) == 1 else 's'}: {controls}."
                if f.controls
                else "No control was kept."
            )
            + f"{naive}<br>"
            f"<span style='color:{MUTED}'>Read this as the effect of {column} only if every "
            "column that drives both it and the response is among the candidates: double "
            "selection chooses controls from them, it cannot supply missing ones. Check the "
            "design with your own review practice before acting on it.</span>"
        )

    def export_current_path(self, path: Path | str) -> Path:
        return export_plot(self.path_chart.plot, path)
