"""The engine functions the window calls, gathered in one injectable object.

The window never imports engine modules that do work at start-up; it calls these, on a worker
thread, through ``desktop.worker.TaskRunner``. Tests may pass an object with the same methods.
"""

from __future__ import annotations

import threading

__all__ = ["EngineCalls", "LoadedBook", "load_book"]

from dataclasses import dataclass
from pathlib import Path
from typing import Any

from engine.errors import Cancelled, InputProblem
from engine.intake.table import SheetInfo, Table
from engine.intake.workbook import is_text_table
from engine.progress import Progress
from engine.study_spec import StudySpec


class EngineCalls:
    """Thin forwarding to ``engine.intake``, ``engine.study`` and ``engine.report`` (imported lazily)."""

    def list_sheets(self, path: Path) -> list[SheetInfo]:
        from engine.intake import list_sheets

        return list_sheets(path)

    def read_table(
        self, path: Path, sheet: str | None, header_row: int | None, progress: Progress
    ) -> Table:
        from engine.intake import read_table

        return read_table(path, sheet=sheet, header_row=header_row, progress=progress)

    def run_study(self, spec: StudySpec, progress: Progress) -> Any:
        if not _warmed:
            progress.step(0.0, "loading the fitting code (first run after start only)")
        from engine.study import run_study

        _warm_up_engine()
        return run_study(spec, progress)

    def run_study_on_table(self, spec: StudySpec, table: Table, progress: Progress) -> Any:
        """Run on the table the window already read (same file, sheet and header row as ``spec``)."""
        if not _warmed:  # a run started right after launch: say what the first seconds do
            progress.step(0.0, "loading the fitting code (first run after start only)")
        from engine.study import run_study

        _warm_up_engine()
        return run_study(spec, progress, table=table)

    def write_results(
        self, result: Any, *, out: Path | None, in_place: bool, progress: Progress
    ) -> Path:
        from engine.report import write_results
        from engine.report.safe_write import refuse_to_replace_users_file

        if out is not None:  # the save dialog's "replace?" is easily said yes to: as on the
            refuse_to_replace_users_file(out)  # command line, only our own outputs are replaced
        return write_results(result, out=out, in_place=in_place, progress=progress)

    def score_rows(
        self, result: Any, book: Path, out: Path, sheet: str | None, progress: Progress
    ) -> Any:
        """Predict the rows of ``book`` with the model a study's scoring sheet would hold."""
        from engine.report import ScoringModel, score_rows

        model = ScoringModel.from_result(result)
        d = result.design
        said = f"from the study of '{Path(d.source).name}' (sheet '{d.sheet}') in the window"
        return score_rows(
            book, model, out=out, sheet=sheet, model_from=said, progress=progress
        )  # fmt: skip

    def load_settings(self, path: Path) -> Any:
        """The saved study of a results workbook (``SettingsRecord``: its ``.spec`` and what
        the saved run found, to check a re-run against)."""
        from engine.report.settings_reader import load_settings

        return load_settings(path)


@dataclass
class LoadedBook:
    path: Path
    sheets: list[SheetInfo]
    table: Table
    saved_spec: StudySpec | None  # the analysis stored in a results workbook, if any
    saved_record: Any = None  # all of its settings sheet (engine SettingsRecord), if any


def load_book(
    calls: EngineCalls, path: Path, sheet: str | None, header_row: int | None, progress: Progress
) -> LoadedBook:
    """Sheets, the chosen sheet as a table, and a saved analysis if the workbook holds one."""
    progress.step(0.0, "looking at the sheets")
    sheets = calls.list_sheets(path)
    saved = record = None
    if not is_text_table(path):
        try:
            record = calls.load_settings(path)
            saved = record.spec
        except (InputProblem, ImportError, KeyError, ValueError, OSError):
            saved = record = None  # an ordinary workbook: no settings sheet of ours
        except Cancelled:
            raise
    names = [s.name for s in sheets]
    if sheet not in names:
        sheet = saved.sheet if saved is not None and saved.sheet in names else None
        header_row = saved.header_row if saved is not None and sheet is not None else None
    progress.step(0.1, "reading the sheet")
    table = calls.read_table(path, sheet, header_row, progress.part(0.1, 1.0, "reading the sheet"))
    return LoadedBook(path, sheets, table, saved, record)


_warm_lock = threading.Lock()
_warmed = False


def warm_up_in_background() -> None:
    """Start the engine warm-up on a daemon thread while the window waits for the user."""
    threading.Thread(target=_warm_up_engine, name="tamis-warm-up", daemon=True).start()


def stop_background_work() -> None:
    """End the engine's worker processes before the program leaves."""
    from engine.tuning.parts import stop_worker_processes

    stop_worker_processes()


def _warm_up_engine() -> None:
    """Import the fitting modules once, then move every object alive into the permanent generation.

    A full garbage collection walks every object the numerical libraries created at import; it
    holds the interpreter lock for a few hundred milliseconds, which freezes the window while a
    run is under way. After gc.freeze() those objects are no longer walked (measured here: a
    full collection fell from about 220 ms to about 20 ms during a demo run). No collection
    runs first: that alone would be one such pause.
    """
    global _warmed
    with _warm_lock:
        if _warmed:
            return
        import gc
        import importlib

        for name in (
            "engine.fitting.coordinate",
            "engine.fitting.ridge",
            "engine.tuning.crossval",
            "engine.fitting.double_selection",
            "engine.tuning.size_crossval",
            "engine.fitting.stability",
            "engine.report",
        ):
            importlib.import_module(name)
        from engine.fitting.coordinate import warm_compiled_path

        warm_compiled_path()  # before the freeze: loading it creates many objects
        gc.freeze()
        _warmed = True
    # the worker processes that heavy validations run in: started now, while the user is
    # still choosing columns, they are ready when a run needs them
    from engine.tuning.parts import warm_process_pool

    warm_process_pool()
