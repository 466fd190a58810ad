"""Entry point of the window: ``tamis desktop [BOOK]`` and the ``tamis-desktop`` launcher."""

from __future__ import annotations

__all__ = ["main", "make_app", "run_and_exit"]

import sys
from collections.abc import Sequence


def make_app():
    """The QApplication (created once), with high-DPI rounding left to the screen and our theme."""
    from PySide6.QtCore import Qt
    from PySide6.QtGui import QGuiApplication
    from PySide6.QtWidgets import QApplication

    from desktop.theme import apply_theme

    app = QApplication.instance()
    if app is None:
        # fractional scaling (125 %, 150 %) renders crisply instead of rounding to 100 % or 200 %
        QGuiApplication.setHighDpiScaleFactorRoundingPolicy(
            Qt.HighDpiScaleFactorRoundingPolicy.PassThrough
        )
        app = QApplication(["tamis"])
        app.setApplicationName("Tamis")
        app.setOrganizationName("Tamis")
        app.setApplicationDisplayName("Tamis")
    apply_theme(app)
    return app


def main(argv: Sequence[str] | None = None) -> int:
    """Open the window, optionally on a workbook; returns the exit status."""
    args = list(sys.argv[1:] if argv is None else argv)
    if any(a in ("-h", "--help") for a in args):
        print(
            "usage: tamis desktop [BOOK] [--show-saved]\n\nOpen the Tamis window, optionally on a workbook or CSV file;\n"
            "--show-saved re-runs the analysis saved in a results workbook at once."
        )
        return 0
    book = next((a for a in args if not a.startswith("-")), None)
    from engine.context import tune_own_process

    tune_own_process()  # the event loop gets the interpreter lock often during a fit
    app = make_app()

    from desktop.main_window import MainWindow
    from desktop.settings_store import SettingsStore, default_folder

    window = MainWindow(SettingsStore(default_folder()))
    window.show()
    from desktop.engine_calls import stop_background_work, warm_up_in_background

    warm_up_in_background()  # imports and freezes while the user looks at the window
    if book:
        window.show_saved_on_open = "--show-saved" in args
        window.open_book(book)
    code = int(app.exec())
    window.runner.shutdown()
    stop_background_work()  # the launchers leave with os._exit, which would orphan workers
    return code


def run_and_exit(argv: Sequence[str] | None = None) -> None:
    """For launchers only: run ``main`` and leave without the interpreter's final clean-up.

    A reference-count slip in a compiled extension (seen with PySide6 6.12 after long runs)
    can abort the interpreter while it tears objects down at exit; the user's work is saved
    by then, so we flush and leave directly. Never called by tests or by ``tamis desktop``.
    """
    import os

    code = main(argv)
    sys.stdout.flush()
    sys.stderr.flush()
    os._exit(code)


if __name__ == "__main__":
    run_and_exit()
