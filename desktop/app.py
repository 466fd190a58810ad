"""Entry point of the window: ``tamis desktop [BOOK]`` and the ``tamis-desktop`` launcher."""

from __future__ import annotations

__all__ = ["main", "make_app"]

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
            "usage: tamis desktop [BOOK]\n\nOpen the Tamis window, optionally on a workbook or CSV file."
        )
        return 0
    book = next((a for a in args if not a.startswith("-")), None)
    app = make_app()

    from desktop.main_window import MainWindow
    from desktop.settings_store import SettingsStore, default_folder

    window = MainWindow(SettingsStore(default_folder()))
    window.show()
    if book:
        window.open_book(book)
    return int(app.exec())


if __name__ == "__main__":
    raise SystemExit(main())
