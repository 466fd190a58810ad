"""The Tamis window: open a workbook, give columns their roles, run, explore, save.

Layout (our own): a source strip (file, sheet, header row) over a split bench. On the left the
column ledger, where roles are set on the columns themselves; on the right three pages
(Sheet preview, Run settings, Findings). A message strip under the source strip carries every
notice and error in plain words; the status bar carries progress, the current step and Stop.

All slow work (reading, running, writing) goes through one ``TaskRunner``; every failure goes
to ``_on_task_failed`` and from there through ``desktop.messages.describe_failure``.
"""

from __future__ import annotations

import html

__all__ = ["MainWindow", "OPENABLE", "OPEN_FILTER"]

from pathlib import Path
from typing import Any, cast

from PySide6.QtCore import Qt, QTimer, Signal
from PySide6.QtGui import QAction, QCloseEvent, QDragEnterEvent, QDropEvent, QKeySequence
from PySide6.QtWidgets import (
    QAbstractItemView,
    QComboBox,
    QFileDialog,
    QFrame,
    QHBoxLayout,
    QHeaderView,
    QInputDialog,
    QLabel,
    QListWidget,
    QListWidgetItem,
    QMainWindow,
    QMessageBox,
    QProgressBar,
    QPushButton,
    QSpinBox,
    QSplitter,
    QStackedWidget,
    QTableView,
    QTabWidget,
    QToolBar,
    QVBoxLayout,
    QWidget,
)

from desktop.about import about_html
from desktop.column_ledger import ColumnLedger
from desktop.elided_label import ElidedLabel, keep_tab_names_whole
from desktop.engine_calls import EngineCalls, LoadedBook, load_book
from desktop.messages import UserMessage, describe_failure, window_words
from desktop.result_view import ResultView
from desktop.roles import (
    Role,
    build_spec,
    check_roles,
    default_roles,
    roles_from_spec,
    settings_from_spec,
)
from desktop.settings_panel import SCHEME_WORDS, SettingsPanel
from desktop.settings_store import SettingsStore
from desktop.table_models import SheetPreviewModel
from desktop.theme import PROBLEM, TONE_COLOURS
from desktop.worker import TaskRunner
from engine.intake.cells import counted
from engine.intake.notes import UNREAD, finding_of
from engine.intake.workbook import SUPPORTED_SUFFIXES
from engine.methods import method_info
from engine.report.reproduce import differences
from engine.report.score_rows import ScoreOutcome, default_out
from engine.study_result import StudyResult
from engine.study_spec import StudySpec

OPENABLE = SUPPORTED_SUFFIXES
OPEN_FILTER = (
    "Workbooks and text tables (*.xlsx *.xlsm *.xls *.ods *.csv *.tsv *.txt);;All files (*)"
)
SAVE_FILTER = "Workbook (*.xlsx)"

PAGE_SHEET, PAGE_SETTINGS, PAGE_FINDINGS = range(3)


class MessageStrip(QFrame):
    """A one-line notice under the source strip, coloured by tone, with an optional action."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("strip")
        self.label = QLabel("")
        self.label.setWordWrap(True)
        self.label.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.action_button = QPushButton("")
        self.action_button.hide()
        close = QPushButton("✕")
        close.setFlat(True)
        close.setFixedWidth(28)
        close.setToolTip("Hide this message")
        close.clicked.connect(self.hide)
        lay = QHBoxLayout(self)
        lay.setContentsMargins(10, 4, 4, 4)
        lay.addWidget(self.label, 1)
        lay.addWidget(self.action_button)
        lay.addWidget(close)
        self._action = None
        self.action_button.clicked.connect(self._run_action)
        self.hide()

    def show_message(self, msg: UserMessage, action: tuple[str, Any] | None = None) -> None:
        bg, fg = TONE_COLOURS.get(msg.tone, TONE_COLOURS["info"])
        self.setStyleSheet(f"QFrame#strip {{ background: {bg}; }} QLabel {{ color: {fg}; }}")
        # the words come from the engine and the user's files ("<0.3", "R&D"): shown as
        # written, each line of the detail on a line of its own
        text = f"<b>{html.escape(msg.headline, quote=False)}</b>"
        if msg.detail:
            text += "<br>" + "<br>".join(
                html.escape(line, quote=False) for line in msg.detail.splitlines()
            )
        self.label.setText(text)
        self._action = action[1] if action else None
        self.action_button.setText(action[0] if action else "")
        self.action_button.setVisible(action is not None)
        self.show()

    def _run_action(self) -> None:
        if self._action is not None:
            act, self._action = self._action, None
            self.action_button.hide()
            act()


# notes a message lists before it only counts the rest
_NOTES_SHOWN = 3


def _listed_notes(notes: list[str], rest_in: str = "") -> str:
    """The first few notes, one per line, then how many more there are and (``rest_in``)
    where all of them can be read."""
    lines = [f"• {n[:1].upper()}{n[1:]}" for n in map(window_words, notes[:_NOTES_SHOWN])]
    if len(notes) > _NOTES_SHOWN:
        more = len(notes) - _NOTES_SHOWN
        lines.append(f"… and {more} more note{'s' if more > 1 else ''}{rest_in}")
    return "\n".join(lines)


def _unread_cells_note(table) -> str:
    """How many cells hold words where their column's values belong, in how many columns: a
    run leaves their rows out or fills them, which matters before choosing roles ("" when
    there are none). Each column's Check cell names its cells."""
    counts = [
        (c.name, getattr(n, "cells", None) or 0)
        for c in table.columns
        for n in c.notes
        if finding_of(n) in UNREAD
    ]
    cells = sum(k for _, k in counts)
    if not cells:
        return ""
    columns = sorted({name for name, _ in counts})
    where = f"'{columns[0]}'" if len(columns) == 1 else f"{len(columns)} columns"
    return (
        f"{counted(cells, 'cell')} in {where} could not be read as the column's values (their "
        "Check cells name them): a study using such a column leaves out their rows, or "
        "fills them when missing cells are filled"
    )


class MainWindow(QMainWindow):
    """``store`` (memory folder) and ``calls`` (engine functions) are injected."""

    book_loaded = Signal()
    study_finished = Signal()
    saved = Signal(str)
    predicted = Signal(str)  # the predictions workbook written

    def __init__(self, store: SettingsStore, calls: EngineCalls | None = None) -> None:
        super().__init__()
        self.store = store
        self.calls = calls or EngineCalls()
        self.runner = TaskRunner(self)
        self.book: LoadedBook | None = None
        self.result: StudyResult | None = None
        self.last_message: UserMessage | None = None
        self.problems: list = []
        self._readiness_before = ""
        self._changed_while_running = False  # roles or settings changed during a task
        # the validation the window chose because a column took the role it uses (undone
        # when that role goes again); None when the user's own choice stands
        self._scheme_switched_to: str | None = None
        # a saved analysis to apply once its sheet is read, and a run to start once idle
        self._pending_spec: StudySpec | None = None
        self._run_when_idle = False
        # roles, logs and interactions as last set for each (sheet, heading row) of the open
        # book: another heading row names the columns differently, and going back to one
        # tried before brings its roles back rather than the defaults
        self._layouts: dict[
            tuple[str, int], tuple[dict[str, Role], tuple[str, ...], tuple[tuple[str, str], ...]]
        ] = {}
        # the saved study being shown again, to say whether the re-run reproduces it
        self._rerun_record: Any = None
        # set by `tamis demo`: re-run a saved analysis as soon as its workbook is open
        self.show_saved_on_open = False
        self._remember_timer = QTimer(self)
        self._remember_timer.setSingleShot(True)
        self._remember_timer.setInterval(300)
        self._remember_timer.timeout.connect(self._remember)
        self._header_timer = QTimer(self)
        self._header_timer.setSingleShot(True)
        self._header_timer.setInterval(600)
        self._header_timer.timeout.connect(self._reload_with_header)

        self.setWindowTitle("Tamis")
        self.setAcceptDrops(True)
        self.resize(1360, 860)
        self._build_actions()
        self._build_body()
        self._build_status()
        self.runner.started.connect(self._on_task_started)
        self.runner.progressed.connect(self._on_task_progress)
        self.runner.succeeded.connect(self._on_task_succeeded)
        self.runner.failed.connect(self._on_task_failed)
        self.runner.finished.connect(self._on_task_finished)
        self._refresh_recent()
        self._sync_actions()

    # construction -----------------------------------------------------------------------
    def _action(self, text: str, tip: str, slot, keys=None) -> QAction:
        a = QAction(text, self)
        a.setToolTip(tip)
        a.setStatusTip(tip)
        if keys is not None:
            a.setShortcuts(keys if isinstance(keys, list) else [keys])
            shown = a.shortcut().toString(QKeySequence.SequenceFormat.NativeText)
            if shown:
                a.setToolTip(f"{tip} ({shown})")
        a.triggered.connect(slot)
        return a

    def _build_actions(self) -> None:
        std = QKeySequence.StandardKey
        self.open_action = self._action(
            "Open…", "Open a workbook or CSV file", self.choose_book, QKeySequence(std.Open)
        )
        self.run_action = self._action(
            "Run",
            "Run the study with these roles and settings",
            self.run_study,
            QKeySequence("Ctrl+R"),
        )
        self.stop_action = self._action(
            "Stop",
            "Stop the running task; nothing is written",
            self.cancel,
            QKeySequence(Qt.Key.Key_Escape),
        )
        self.save_action = self._action(
            "Save into workbook",
            "Add the result sheets to the open workbook (its own sheets stay as they are)",
            self.choose_save_in_place,
            QKeySequence(std.Save),
        )
        self.save_as_action = self._action(
            "Save as new workbook…",
            "Write the results to a new workbook file",
            self.choose_save_as,
            QKeySequence(std.SaveAs),
        )
        self.predict_action = self._action(
            "Predict new rows…",
            "Predict the rows of another workbook with this study's scoring model; the "
            "predictions go to a copy of that workbook",
            self.choose_rows_to_predict,
        )
        self.cautions_action = self._action(
            "Read before use", "What these results can and cannot tell you", self.show_cautions
        )
        self.about_action = self._action("About Tamis", "Version and components", self.show_about)
        self.quit_action = self._action("Quit", "Close Tamis", self.close, QKeySequence(std.Quit))

        tb = QToolBar("Main")
        tb.setObjectName("main-toolbar")
        tb.setMovable(False)
        tb.setToolButtonStyle(Qt.ToolButtonStyle.ToolButtonTextOnly)
        for a in (
            self.open_action,
            None,
            self.run_action,
            self.stop_action,
            None,
            self.save_action,
            self.save_as_action,
            self.predict_action,
            None,
            self.cautions_action,
        ):
            tb.addSeparator() if a is None else tb.addAction(a)
        self.addToolBar(tb)

        mb = self.menuBar()
        m = mb.addMenu("&File")
        m.addAction(self.open_action)
        self.recent_menu = m.addMenu("Open recent")
        m.addSeparator()
        m.addAction(self.save_action)
        m.addAction(self.save_as_action)
        m.addSeparator()
        m.addAction(self.quit_action)
        s = mb.addMenu("&Study")
        s.addAction(self.run_action)
        s.addAction(self.stop_action)
        s.addSeparator()
        s.addAction(self.predict_action)
        h = mb.addMenu("&Help")
        h.addAction(self.cautions_action)
        h.addAction(self.about_action)

    def _build_body(self) -> None:
        # source strip
        self.file_label = ElidedLabel("No workbook open")
        self.file_label.setObjectName("headline")
        self.sheet_box = QComboBox()
        self.sheet_box.setMinimumContentsLength(10)
        self.sheet_box.setSizeAdjustPolicy(
            QComboBox.SizeAdjustPolicy.AdjustToMinimumContentsLengthWithIcon
        )
        self.sheet_box.setToolTip("The sheet to analyse. Hidden sheets are marked.")
        self.sheet_box.activated.connect(self._on_sheet_chosen)
        self.header_spin = QSpinBox()
        self.header_spin.setRange(1, 1_000_000)
        self.header_spin.setToolTip(
            "The sheet row that holds the column headings. Tamis finds it by itself (notes above the "
            "table are skipped); change it if the guess is wrong."
        )
        self.header_spin.valueChanged.connect(self._on_header_changed)
        self.shape_label = ElidedLabel("", mode=Qt.TextElideMode.ElideRight)
        self.shape_label.setObjectName("caption")
        src = QHBoxLayout()
        src.addWidget(self.file_label, 1)
        src.addWidget(QLabel("Sheet"))
        src.addWidget(self.sheet_box)
        src.addSpacing(12)
        src.addWidget(QLabel("Headings in row"))
        src.addWidget(self.header_spin)
        src.addSpacing(12)
        src.addWidget(self.shape_label, 1)
        self.source_strip = QWidget()
        self.source_strip.setLayout(src)

        self.message = MessageStrip()

        # left: the column ledger and the readiness note
        self.ledger = ColumnLedger()
        self.ledger.model.roles_changed.connect(self._on_roles_changed)
        self.ledger.column_clicked.connect(self._on_ledger_click)
        self.readiness = QLabel("")
        self.readiness.setWordWrap(True)
        self.run_button = QPushButton("Run study")
        self.run_button.setObjectName("primary")
        self.run_button.setToolTip("Run the study (Ctrl+R)")
        self.run_button.clicked.connect(self.run_study)
        left = QWidget()
        ll = QVBoxLayout(left)
        ll.setContentsMargins(0, 0, 0, 0)
        ll.addWidget(self.ledger, 1)
        foot = QHBoxLayout()
        foot.setContentsMargins(8, 0, 8, 8)
        foot.addWidget(self.readiness, 1)
        foot.addWidget(self.run_button, 0, Qt.AlignmentFlag.AlignTop)
        ll.addLayout(foot)

        # right: pages
        self.preview_model = SheetPreviewModel()
        self.preview = QTableView()
        self.preview.setModel(self.preview_model)
        self.preview.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.preview.verticalHeader().setSectionResizeMode(QHeaderView.ResizeMode.Fixed)
        self.preview.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.Interactive)
        self.preview.horizontalHeader().setDefaultSectionSize(110)
        self.preview.setWordWrap(False)
        self.preview.setTabKeyNavigation(False)  # Tab leaves the sheet; arrows move in it
        self.settings_panel = SettingsPanel()
        self.settings_panel.changed.connect(self._on_settings_changed)
        self.results = ResultView()
        self.pages = QTabWidget()
        keep_tab_names_whole(self.pages)
        self.pages.addTab(self.preview, "Sheet")
        self.pages.addTab(self.settings_panel, "Run settings")
        self.pages.addTab(self.results, "Findings")
        self.pages.setTabToolTip(
            PAGE_SHEET, "The cells as Tamis read them (row numbers are the sheet's own)."
        )
        self.pages.setTabToolTip(
            PAGE_SETTINGS, "Methods, validation and other choices; the defaults work."
        )
        self.pages.setTabToolTip(
            PAGE_FINDINGS, "Paths, validation, comparison and cautions of the last run."
        )

        self.bench = QSplitter(Qt.Orientation.Horizontal)
        self.bench.addWidget(left)
        self.bench.addWidget(self.pages)
        self.bench.setStretchFactor(0, 2)
        self.bench.setStretchFactor(1, 3)
        self.bench.setSizes([540, 900])

        # welcome page for the empty state
        welcome = QWidget()
        welcome.setObjectName("page")
        wl = QVBoxLayout(welcome)
        wl.addStretch(1)
        hello = QLabel("Drop a workbook here, or press Ctrl+O to open one")
        hello.setObjectName("headline")
        hello.setAlignment(Qt.AlignmentFlag.AlignCenter)
        kinds = QLabel(
            "Workbooks (.xlsx, .xlsm, .xls), OpenDocument (.ods) or CSV. Your file is only read; "
            "results are written when you choose Save."
        )
        kinds.setObjectName("caption")
        kinds.setAlignment(Qt.AlignmentFlag.AlignCenter)
        kinds.setWordWrap(True)
        open_button = QPushButton("Open a workbook…")
        open_button.setObjectName("primary")
        open_button.clicked.connect(self.choose_book)
        self.recent_list = QListWidget()
        self.recent_list.setMaximumWidth(640)
        self.recent_list.setMaximumHeight(220)
        self.recent_list.setToolTip("Recently opened files; double-click to open one again.")
        self.recent_list.itemActivated.connect(
            lambda it: self.open_book(it.data(Qt.ItemDataRole.UserRole))
        )
        self.recent_title = QLabel("Recent files")
        self.recent_title.setObjectName("caption")
        row = QHBoxLayout()
        row.addStretch(1)
        row.addWidget(open_button)
        row.addStretch(1)
        wl.addWidget(hello)
        wl.addWidget(kinds)
        wl.addSpacing(12)
        wl.addLayout(row)
        wl.addSpacing(24)
        for w in (self.recent_title, self.recent_list):
            h = QHBoxLayout()
            h.addStretch(1)
            h.addWidget(w, 3)
            h.addStretch(1)
            wl.addLayout(h)
        wl.addStretch(2)

        self.stack = QStackedWidget()
        self.stack.addWidget(welcome)
        self.stack.addWidget(self.bench)

        central = QWidget()
        cl = QVBoxLayout(central)
        cl.setContentsMargins(8, 4, 8, 0)
        cl.addWidget(self.source_strip)
        cl.addWidget(self.message)
        cl.addWidget(self.stack, 1)
        self.setCentralWidget(central)
        self.source_strip.setVisible(False)

    def _build_status(self) -> None:
        self.step_label = QLabel("")
        self.progress_bar = QProgressBar()
        self.progress_bar.setRange(0, 1000)
        self.progress_bar.setTextVisible(False)
        self.progress_bar.setFixedWidth(260)
        self.stop_button = QPushButton("Stop")
        self.stop_button.setToolTip(
            "Stop the running task within a second; nothing is written (Esc)"
        )
        self.stop_button.clicked.connect(self.cancel)
        sb = self.statusBar()
        sb.addWidget(self.step_label, 1)
        sb.addPermanentWidget(self.progress_bar)
        sb.addPermanentWidget(self.stop_button)
        self.progress_bar.hide()
        self.stop_button.hide()

    # opening ----------------------------------------------------------------------------
    def choose_book(self) -> None:
        start = str(Path(self.store.recent()[0]).parent) if self.store.recent() else ""
        path, _ = QFileDialog.getOpenFileName(self, "Open a workbook", start, OPEN_FILTER)
        if path:
            self.open_book(path)

    def open_book(
        self, path: str | Path, sheet: str | None = None, header_row: int | None = None
    ) -> bool:
        """Read ``path`` in the background (remembered sheet and header row unless given)."""
        path = Path(path)
        if path.suffix.lower() not in OPENABLE:
            self._say(
                UserMessage(
                    "problem",
                    f"Tamis cannot open '{path.name}'.",
                    "Open an .xlsx, .xlsm, .xls or .ods workbook, or a .csv, .tsv or .txt table.",
                )
            )
            return False
        memory = self.store.book(path)
        same_book = self.book is not None and self.book.path == path
        if sheet is None and not same_book:
            sheet = memory.get("sheet")
            if header_row is None and isinstance(memory.get("header_row"), int):
                header_row = memory["header_row"]
        return self.runner.start(
            "open", lambda p: load_book(self.calls, path, sheet, header_row, p)
        )

    def dragEnterEvent(self, event: QDragEnterEvent) -> None:  # noqa: N802 - Qt name
        if self._dropped_path(event) is not None:
            event.acceptProposedAction()
        else:
            event.ignore()

    def dropEvent(self, event: QDropEvent) -> None:  # noqa: N802
        path = self._dropped_path(event)
        if path is not None:
            event.acceptProposedAction()
            self.open_book(path)

    @staticmethod
    def _dropped_path(event) -> Path | None:
        md = event.mimeData()
        if md is None or not md.hasUrls():
            return None
        for url in md.urls():
            if url.isLocalFile() and Path(url.toLocalFile()).suffix.lower() in OPENABLE:
                return Path(url.toLocalFile())
        return None

    def _apply_book(self, loaded: LoadedBook) -> None:
        previous = self.book
        self.book = loaded
        t = loaded.table
        self.file_label.setText(loaded.path.name)
        self.file_label.setToolTip(str(loaded.path))
        self.setWindowTitle(f"{loaded.path.name} – Tamis")
        self.sheet_box.blockSignals(True)
        self.sheet_box.clear()
        for s in loaded.sheets:
            self.sheet_box.addItem(f"{s.name}  (hidden)" if s.hidden else s.name, s.name)
            if s.hidden:
                self.sheet_box.setItemData(
                    self.sheet_box.count() - 1,
                    "This sheet is hidden in the workbook.",
                    Qt.ItemDataRole.ToolTipRole,
                )
        self.sheet_box.setCurrentIndex(max(0, self.sheet_box.findData(t.sheet)))
        self.sheet_box.setEnabled(t.file_format != "csv")
        self.sheet_box.blockSignals(False)
        self.header_spin.blockSignals(True)
        self.header_spin.setValue(t.header_row)
        self.header_spin.blockSignals(False)
        skipped = f", {t.blank_rows_skipped} blank rows skipped" if t.blank_rows_skipped else ""
        self.shape_label.setText(f"{t.n_rows:,} rows × {len(t.columns)} columns{skipped}")
        self.preview_model.set_table(t)

        memory = self.store.book(loaded.path)
        roles = default_roles(t)
        kept_logged = self.ledger.model.logged()
        kept_pairs = self.ledger.model.interactions()
        same_book = previous is not None and previous.path == loaded.path
        if same_book and previous is not None:
            self._layouts[(previous.table.sheet, previous.table.header_row)] = (
                self.ledger.model.roles(),
                kept_logged,
                kept_pairs,
            )
        else:
            self._layouts = {}
        seen_layout = self._layouts.get((t.sheet, t.header_row))
        if seen_layout is not None and self._pending_spec is None:
            kept_roles, kept_logged, kept_pairs = seen_layout
        else:
            kept_roles = self.ledger.model.roles()
        if self._pending_spec is not None:
            roles = roles_from_spec(t, self._pending_spec)
        elif same_book:  # another sheet or heading row: keep what matches
            roles.update({n: r for n, r in kept_roles.items() if n in roles})
        elif memory.get("sheet") == t.sheet and isinstance(memory.get("roles"), dict):
            for n, r in memory["roles"].items():
                if n in roles and r in {x.value for x in Role}:
                    roles[n] = Role(r)
        if self.result is not None:
            if previous is None or previous.path != loaded.path:
                self.result = None  # another file: its findings are not these
                self.results.clear()
            else:
                self.results.set_outdated(True)
        self.ledger.model.set_table(t, roles)
        led = self.ledger.model
        if self._pending_spec is not None:
            led.set_logged(self._pending_spec.log_columns, announce=False)
            led.set_interactions(self._pending_spec.interactions, announce=False)
        elif previous is not None and previous.path == loaded.path:
            led.set_logged(kept_logged, announce=False)
            led.set_interactions(kept_pairs, announce=False)
        elif memory.get("sheet") == t.sheet:
            if isinstance(memory.get("logged"), list):
                led.set_logged(memory["logged"], announce=False)
            if isinstance(memory.get("interactions"), list):
                pairs = [p for p in memory["interactions"] if isinstance(p, list) and len(p) == 2]
                led.set_interactions(pairs, announce=False)
        self.ledger.update_summary()
        if self._pending_spec is not None:
            self.settings_panel.set_values(settings_from_spec(self._pending_spec))
        elif previous is None or previous.path != loaded.path:
            if isinstance(memory.get("settings"), dict):
                self.settings_panel.set_values(memory["settings"])
        else:  # the roles may have changed with the columns: the validation follows them
            self._follow_validation_roles(self.ledger.model.roles())
        self.store.add_recent(loaded.path)
        self._refresh_recent()
        self.source_strip.setVisible(True)
        self.stack.setCurrentIndex(1)
        self._check()
        notes = list(t.warnings)
        unread = _unread_cells_note(t)
        if unread:
            notes.insert(0, unread)
        if self._pending_spec is not None:
            self._pending_spec = None
            self._rerun_record = loaded.saved_record
            self._say(
                UserMessage(
                    "info", "Showing the saved analysis again: running it with its own settings."
                )
            )
            self._run_when_idle = True  # once the open task's thread has ended
        elif loaded.saved_spec is not None and self.show_saved_on_open:
            self.show_saved_on_open = False
            self._retry_show_saved()
        elif loaded.saved_spec is not None:
            spec = loaded.saved_spec
            self._say(
                UserMessage(
                    "info",
                    "This workbook holds a saved Tamis analysis.",
                    f"Sheet '{spec.sheet or t.sheet}', response '{spec.response}', "
                    f"methods {', '.join(spec.methods)}.",
                ),
                ("Show it again", lambda: self.show_saved_analysis()),
            )
        elif notes:
            self._say(
                UserMessage(
                    "info",
                    f"Read '{t.sheet}'.",
                    _listed_notes(
                        notes,
                        ": each column's notes are in its Check cell in the column list, and "
                        "all of them under 'Read before use' once a study has run",
                    ),
                )
            )
        else:
            self.message.hide()
        self.pages.setCurrentIndex(PAGE_SHEET)
        self.book_loaded.emit()

    def _retry_show_saved(self) -> None:
        # the open task's thread is still ending; try again shortly until it is free
        if not self.show_saved_analysis():
            QTimer.singleShot(50, self._retry_show_saved)

    def show_saved_analysis(self) -> bool:
        """Re-run the analysis stored in the open results workbook, with its roles and settings."""
        if self.book is None or self.book.saved_spec is None:
            return False
        spec = self.book.saved_spec
        self._pending_spec = spec
        sheet = (
            spec.sheet
            if spec.sheet in [s.name for s in self.book.sheets]
            else self.book.table.sheet
        )
        return self.open_book(self.book.path, sheet=sheet, header_row=spec.header_row)

    def _on_sheet_chosen(self, i: int) -> None:
        if self.book is not None:
            self.open_book(self.book.path, sheet=self.sheet_box.itemData(i))

    def _on_header_changed(self, _v: int) -> None:
        self._header_timer.start()

    def _reload_with_header(self) -> None:
        if self.book is not None and self.header_spin.value() != self.book.table.header_row:
            if not self.open_book(
                self.book.path, sheet=self.book.table.sheet, header_row=self.header_spin.value()
            ):
                self._header_timer.start()  # busy: try again shortly

    # roles, settings and checks ---------------------------------------------------------
    def _on_roles_changed(self, roles: dict) -> None:
        self._follow_validation_roles(roles)
        self._check()
        self._remember_timer.start()
        self._mark_findings_outdated()

    def _follow_validation_roles(self, roles: dict) -> None:
        """A time-order or group role asks for the validation that uses it: switch to it from
        the default shuffled folds (and say so); another choice the user made stays, and the
        check then names the conflict."""
        wanted = {Role.TIME_ORDER: "time", Role.GROUP: "grouped"}
        given = [wanted[r] for r in roles.values() if r in wanted]
        scheme = self.settings_panel.values()["scheme"]
        switched = self._scheme_switched_to
        if switched and scheme == switched and switched not in given:
            # the role that asked for this validation is gone: back to the default
            self._scheme_switched_to = None
            self.settings_panel.set_values({"scheme": "kfold"})
            self._say(
                UserMessage(
                    "info",
                    f"Validation set back to '{SCHEME_WORDS['kfold']}': no column has the role "
                    "that the other validation used.",
                    "Change it under Run settings if you meant another validation.",
                )
            )
            return
        if len(given) != 1 or scheme != "kfold":
            return
        self._scheme_switched_to = given[0]
        self.settings_panel.set_values({"scheme": given[0]})
        self._say(
            UserMessage(
                "info",
                f"Validation set to '{SCHEME_WORDS[given[0]]}', which uses the column's role.",
                "Change it under Run settings if you meant another validation.",
            )
        )

    def _on_settings_changed(self) -> None:
        self._check()
        self._remember_timer.start()
        self._mark_findings_outdated()

    def _mark_findings_outdated(self) -> None:
        if self.runner.busy:
            # a change while a study runs: the findings it brings are already outdated
            self._changed_while_running = True
        elif self.result is not None:
            self.results.set_outdated(True)

    def _check(self) -> list:
        if self.book is None:
            self.problems = []
            self._sync_actions()
            return []
        values = self.settings_panel.values()
        self.problems = check_roles(
            self.book.table,
            self.ledger.model.roles(),
            values["scheme"],
            values["methods"],
            self.ledger.model.logged(),
        )
        per_column: dict[str, str] = {}
        general: list[str] = []
        for p in self.problems:
            if p.column is None:
                general.append(p.message)
            else:
                per_column.setdefault(p.column, p.message)
        self.ledger.model.set_problems(per_column)
        if general or per_column:
            first = next(iter(per_column.items()), None)
            lines = [html.escape(g) for g in general] + (
                [
                    f"{len(per_column)} column{'s' if len(per_column) > 1 else ''} "
                    f"need{'' if len(per_column) > 1 else 's'} attention; "
                    f"'{html.escape(first[0])}': {html.escape(first[1])}"
                ]
                if first
                else []
            )
            self.readiness.setText(
                f"<span style='color:{PROBLEM}'>" + "<br>".join(lines) + "</span>"
            )
        else:
            self.readiness.setText("Ready to run.")
        self._sync_actions()
        return self.problems

    def _remember(self) -> None:
        if self.book is None:
            return
        self.store.remember_book(
            self.book.path,
            sheet=self.book.table.sheet,
            header_row=self.book.table.header_row,
            roles={n: r.value for n, r in self.ledger.model.roles().items()},
            logged=list(self.ledger.model.logged()),
            interactions=[list(p) for p in self.ledger.model.interactions()],
            settings={
                k: (list(v) if isinstance(v, tuple) else v)
                for k, v in self.settings_panel.values().items()
            },
        )

    def _on_ledger_click(self, name: str) -> None:
        self.results.highlight(name)

    # running ----------------------------------------------------------------------------
    def current_spec(self) -> StudySpec:
        assert self.book is not None
        return build_spec(
            self.book.table,
            self.ledger.model.roles(),
            self.settings_panel.values(),
            header_row=self.book.table.header_row,
            logged=self.ledger.model.logged(),
            interactions=self.ledger.model.interactions(),
        )

    def run_study(self, spec_override: StudySpec | None = None) -> bool:
        if self.book is None or self.runner.busy:
            return False
        if self._check():
            first = self.problems[0]
            self._say(
                UserMessage("problem", "The study cannot run yet.", first.message, first.column)
            )
            if first.column:
                self.ledger.show_problem_row(first.column)
            return False
        try:
            spec = spec_override if isinstance(spec_override, StudySpec) else self.current_spec()
        except Exception as exc:  # noqa: BLE001 - a refused request is shown like any other failure
            self._show_failure(describe_failure(exc, "setting up the run"))
            return False
        self._remember()
        calls = self.calls
        table = self.book.table
        return self.runner.start("run", lambda p: _run_with_table(calls, spec, table, p))

    def cancel(self) -> None:
        if self.runner.busy:
            self.step_label.setText("Stopping…")
            self.runner.cancel()

    # saving -----------------------------------------------------------------------------
    def _findings_outdated(self) -> bool:
        return self.result is not None and self.results.outdated

    def _confirm_outdated_save(self) -> bool:
        """Saving findings made before later changes to roles or settings is allowed, after
        saying so: the workbook would not hold what the window now shows as set."""
        if not self._findings_outdated():
            return True
        answer = QMessageBox.question(
            self,
            "Save the last run's findings?",
            "These findings come from the last run, made before your later changes to roles or "
            "settings. The workbook would hold those findings and the settings they were made "
            "with.\n\nRun the study again first to save findings for the current settings.",
            QMessageBox.StandardButton.Save | QMessageBox.StandardButton.Cancel,
            QMessageBox.StandardButton.Cancel,
        )
        return answer == QMessageBox.StandardButton.Save

    def choose_save_in_place(self) -> None:
        if self._confirm_outdated_save():
            self.save_in_place()

    def save_in_place(self) -> bool:
        if self.result is None or self.runner.busy:
            return False
        result = self.result
        calls = self.calls
        return self.runner.start(
            "save", lambda p: calls.write_results(result, out=None, in_place=True, progress=p)
        )

    def choose_save_as(self) -> None:
        if self.result is None or self.book is None or not self._confirm_outdated_save():
            return
        suggestion = self.book.path.with_name(self.book.path.stem + " – Tamis results.xlsx")
        path, _ = QFileDialog.getSaveFileName(
            self, "Save results as a new workbook", str(suggestion), SAVE_FILTER
        )
        if path:
            self.save_as(path)

    def save_as(self, path: str | Path) -> bool:
        if self.result is None or self.runner.busy:
            return False
        result = self.result
        calls = self.calls
        out = Path(path)
        return self.runner.start(
            "save", lambda p: calls.write_results(result, out=out, in_place=False, progress=p)
        )

    # predicting new rows ----------------------------------------------------------------
    def choose_rows_to_predict(self) -> None:
        """Ask for the workbook of new rows (and its sheet, when it has several), then where
        the predictions go."""
        if self.result is None or self.runner.busy:
            return
        start = str(self.book.path.parent) if self.book is not None else ""
        path, _ = QFileDialog.getOpenFileName(
            self, "Workbook with the new rows to predict", start, OPEN_FILTER
        )
        if not path:
            return
        book = Path(path)
        sheet = None
        if book.suffix.lower() in (".xlsx", ".xlsm", ".xls", ".ods"):
            try:
                names = [s.name for s in self.calls.list_sheets(book) if not s.hidden]
            except Exception as exc:  # noqa: BLE001 - shown to the user as any failure is
                self._show_failure(describe_failure(exc, "reading the file"))
                return
            if len(names) > 1:
                sheet, ok = QInputDialog.getItem(
                    self, "Predict new rows", "Sheet holding the new rows:", names, 0, False
                )
                if not ok:
                    return
        out, _ = QFileDialog.getSaveFileName(
            self, "Save the predictions as", str(default_out(book)), SAVE_FILTER
        )
        if out:
            self.predict_rows(book, out, sheet)

    def predict_rows(self, book: str | Path, out: str | Path, sheet: str | None = None) -> bool:
        """Predict the rows of ``book`` with the study's scoring model, in the background."""
        if self.result is None or self.runner.busy:
            return False
        result, calls = self.result, self.calls
        return self.runner.start(
            "predict", lambda p: calls.score_rows(result, Path(book), Path(out), sheet, p)
        )

    # task signals (the one place outcomes arrive) ---------------------------------------
    def _on_task_started(self, label: str) -> None:
        self._changed_while_running = False
        self.message.hide()  # the last task's outcome is not this one's
        if label == "run":
            self._readiness_before = self.readiness.text()
            self.readiness.setText(_RUNNING)
        self.progress_bar.setValue(0)
        self.progress_bar.show()
        self.stop_button.show()
        self.step_label.setText(
            {
                "open": "Reading…",
                "run": "Starting the study…",
                "save": "Writing…",
                "predict": "Predicting…",
            }.get(label, "")
        )
        self._sync_actions()

    def _on_task_progress(self, fraction: float, words: str) -> None:
        self.progress_bar.setValue(int(round(fraction * 1000)))
        if words:
            self.step_label.setText(words[0].upper() + words[1:])

    def _on_task_succeeded(self, label: str, value: object) -> None:
        if label == "open":
            self._apply_book(value)  # type: ignore[arg-type]
        elif label == "run":
            result = cast(StudyResult, value)  # what the "run" task returns
            if not result.models and result.focal is None:
                self._say(
                    UserMessage(
                        "problem",
                        "No method could be fitted with these settings.",
                        _listed_notes(result.warnings) or "Choose other methods or columns.",
                    )
                )
                return
            self.result = result
            self.results.show_result(self.result)
            if self._changed_while_running:
                self.results.set_outdated(True)
            self.pages.setCurrentIndex(PAGE_FINDINGS)
            secs = getattr(value, "seconds", 0.0)
            drag = (
                "Drag the cursor on the path to see other column sets. "
                if any(m.path is not None for m in result.models)
                else ""
            )
            record, self._rerun_record = self._rerun_record, None
            audit = ""
            if record is not None:  # the saved analysis shown again: does it reproduce?
                found = differences(record, result)
                audit = (
                    "The saved results are reproduced (rows, held-out errors, kept columns). "
                    if not found
                    else "The saved results are NOT reproduced: " + "; ".join(found) + ". "
                )
            to_check = len(result.far_cells) + len(result.unusual_rows())
            check = (
                f"{to_check} {'cell or row stands' if to_check == 1 else 'cells or rows stand'} "
                "apart from the rest: see 'Rows to check' before relying on the result. "
                if to_check
                else ""
            )
            fitted = {m.method for m in result.models}
            missed = [method_info(m).title for m in result.spec.methods if m not in fitted]
            skipped = (
                f"Not fitted: {', '.join(missed)} (the reason is under 'Read before use'). "
                if missed
                else ""
            )
            self._say(
                UserMessage(
                    "info",
                    f"Study finished in {secs:.1f} s.",
                    audit
                    + skipped
                    + check
                    + drag
                    + "Read the cautions before acting on the result.",
                ),
                ("Read before use", self.show_cautions),
            )
            self.study_finished.emit()
        elif label == "save":
            older = (
                "They are the findings of the last run, made before the later changes to roles "
                "or settings. "
                if self._findings_outdated()
                else ""
            )
            self._say(
                UserMessage(
                    "info",
                    f"Results written to {Path(str(value)).name}.",
                    f"{older}Folder: {Path(str(value)).parent}",
                )
            )
            self.saved.emit(str(value))
        elif label == "predict":
            done = cast(ScoreOutcome, value)
            cautions = done.cautions()
            self._say(
                UserMessage(
                    "info",
                    f"Predicted {done.scored:,} of {done.rows:,} rows with "
                    f"{method_info(done.method).title}; "
                    f"written to {done.out.name}."
                    + (f" {done.range_note[0].upper()}{done.range_note[1:]}." if done.range_note else ""),
                    " ".join([*(c[0].upper() + c[1:] + "." for c in cautions),
                              f"Folder: {done.out.parent}"]),
                )
            )  # fmt: skip
            self.predicted.emit(str(done.out))

    def _on_task_failed(self, label: str, exc: object) -> None:
        doing = {
            "open": "reading the file",
            "run": "the run",
            "save": "saving",
            "predict": "predicting the new rows",
        }.get(label, "the task")
        self._pending_spec = None
        if label == "run":
            self._rerun_record = None
        msg = describe_failure(
            exc if isinstance(exc, BaseException) else RuntimeError(str(exc)), doing
        )
        # a column named by a failure in another workbook (the new rows) is not the open one's
        self._show_failure(msg, mark_column=label != "predict")

    def _on_task_finished(self, label: str) -> None:
        if label == "run" and self.readiness.text() == _RUNNING:
            self.readiness.setText(self._readiness_before)  # unless roles changed meanwhile
        self.progress_bar.hide()
        self.stop_button.hide()
        self.step_label.setText("")
        self._sync_actions()
        if self._run_when_idle:
            self._run_when_idle = False
            self.run_study()

    def _show_failure(self, msg: UserMessage, mark_column: bool = True) -> None:
        self._say(msg)
        if (
            mark_column
            and msg.column
            and self.book is not None
            and self.ledger.model.row_of(msg.column) >= 0
        ):
            self.ledger.model.set_problems(
                {
                    **{p.column: p.message for p in self.problems if p.column},
                    msg.column: msg.headline,
                }
            )
            self.ledger.show_problem_row(msg.column)

    def _say(self, msg: UserMessage, action: tuple[str, Any] | None = None) -> None:
        self.last_message = msg
        self.message.show_message(msg, action)

    # small things -----------------------------------------------------------------------
    def _sync_actions(self) -> None:
        busy = self.runner.busy
        has_book = self.book is not None
        ready = has_book and not self.problems
        self.run_action.setEnabled(ready and not busy)
        self.run_button.setEnabled(ready and not busy)
        self.stop_action.setEnabled(busy)
        package = self.book is not None and self.book.path.suffix.lower() in (".xlsx", ".xlsm")
        self.save_action.setEnabled(self.result is not None and not busy and package)
        self.save_action.setToolTip(
            "Add the result sheets to the open workbook (its own sheets stay as they are)"
            if package or self.book is None
            else f"Sheets can be added to .xlsx and .xlsm workbooks only; this is a "
            f"{self.book.path.suffix.lower() or 'plain'} file: use 'Save as new workbook'"
        )
        self.save_as_action.setEnabled(self.result is not None and not busy)
        self.predict_action.setEnabled(self.result is not None and not busy)
        self.open_action.setEnabled(not busy)
        self.sheet_box.setEnabled(
            not busy and self.book is not None and self.book.table.file_format != "csv"
        )
        self.header_spin.setEnabled(not busy)

    def _refresh_recent(self) -> None:
        files = self.store.recent()
        self.recent_menu.clear()
        self.recent_list.clear()
        for i, f in enumerate(files):
            a = self.recent_menu.addAction(f"&{i + 1} {Path(f).name}" if i < 9 else Path(f).name)
            a.setToolTip(f)
            a.triggered.connect(lambda _=False, p=f: self.open_book(p))
            it = QListWidgetItem(f"{Path(f).name}    —    {Path(f).parent}")
            it.setData(Qt.ItemDataRole.UserRole, f)
            self.recent_list.addItem(it)
        self.recent_menu.setEnabled(bool(files))
        self.recent_list.setVisible(bool(files))
        self.recent_title.setVisible(bool(files))

    def show_cautions(self) -> None:
        if self.book is not None:
            self.pages.setCurrentIndex(PAGE_FINDINGS)
            self.results.show_cautions()
        else:
            from desktop.cautions import cautions_html

            QMessageBox.information(self, "Read before use", cautions_html())

    def show_about(self) -> None:
        QMessageBox.about(self, "About Tamis", about_html())

    def closeEvent(self, event: QCloseEvent) -> None:  # noqa: N802
        self._remember_timer.stop()
        if self.book is not None:
            self._remember()
        self.runner.shutdown()
        super().closeEvent(event)


_RUNNING = "Running the study…"


def _run_with_table(calls: EngineCalls, spec: StudySpec, table, progress):
    """Run the study on the table already read (no second read of a large sheet) when the engine allows."""
    run = getattr(calls, "run_study_on_table", None)
    if run is not None:
        return run(spec, table, progress)
    return calls.run_study(spec, progress)
