"""Text that does not fit: a one-line label that shortens its text with an ellipsis instead of
widening the window, and tab bars that scroll rather than cut their tabs' names."""

from __future__ import annotations

__all__ = ["ElidedLabel", "keep_tab_names_whole"]

from PySide6.QtCore import QSize, Qt
from PySide6.QtGui import QResizeEvent
from PySide6.QtWidgets import QLabel, QSizePolicy, QTabWidget, QWidget


class ElidedLabel(QLabel):
    """``text()`` is the whole text; what is drawn loses its middle when space is short, and
    the whole text is the tooltip then (a long file name must not set the window's width)."""

    def __init__(
        self,
        text: str = "",
        parent: QWidget | None = None,
        mode: Qt.TextElideMode = Qt.TextElideMode.ElideMiddle,
    ) -> None:
        super().__init__(parent)
        self._mode = mode  # the middle for a file name; the end for a sentence
        self._full = ""
        self._own_tip = ""
        self.setSizePolicy(QSizePolicy.Policy.Ignored, QSizePolicy.Policy.Preferred)
        self.setText(text)

    def text(self) -> str:  # noqa: D102 - the whole text, as given
        return self._full

    def setText(self, text: str) -> None:  # noqa: N802 - Qt name
        self._full = text
        self._elide()

    def setToolTip(self, tip: str) -> None:  # noqa: N802
        self._own_tip = tip
        super().setToolTip(tip)

    def minimumSizeHint(self) -> QSize:  # noqa: N802
        return QSize(
            self.fontMetrics().horizontalAdvance("…") * 6, super().minimumSizeHint().height()
        )

    def sizeHint(self) -> QSize:  # noqa: N802
        return QSize(
            self.fontMetrics().horizontalAdvance(self._full) + 4, super().sizeHint().height()
        )

    def resizeEvent(self, event: QResizeEvent) -> None:  # noqa: N802
        super().resizeEvent(event)
        self._elide()

    def _elide(self) -> None:
        shown = self.fontMetrics().elidedText(self._full, self._mode, max(self.width(), 1))
        super().setText(shown)
        super().setToolTip(self._own_tip or (self._full if shown != self._full else ""))


def keep_tab_names_whole(tabs: QTabWidget) -> None:
    """Whole tab names with scroll arrows when they do not fit (a narrow window showed
    "Rows to ch" and hid the last tab with no way to reach it)."""
    tabs.setElideMode(Qt.TextElideMode.ElideNone)
    tabs.setUsesScrollButtons(True)
