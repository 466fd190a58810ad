"""Text that does not fit: a one-line label that shortens its text with an ellipsis instead of
widening the window, names in a table shortened so that they stay told apart, and tab bars
that scroll rather than cut their tabs' names."""

from __future__ import annotations

__all__ = [
    "ElidedLabel",
    "DistinctNamesDelegate",
    "keep_tab_names_whole",
    "differs_from",
    "shorten_keeping_difference",
]

import os
from collections.abc import Callable

from PySide6.QtCore import QAbstractItemModel, QSize, Qt
from PySide6.QtGui import QResizeEvent
from PySide6.QtWidgets import QLabel, QSizePolicy, QStyledItemDelegate, QTabWidget, QWidget


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


def differs_from(names: list[str]) -> dict[str, int]:
    """For each name, the position where it first differs from the name sharing the longest
    start with it ("sensor_10_level" beside "sensor_12_level": 8)."""
    order = sorted(set(names))
    out: dict[str, int] = {}
    for i, name in enumerate(order):
        near = [order[j] for j in (i - 1, i + 1) if 0 <= j < len(order)]
        out[name] = max((len(os.path.commonprefix([name, other])) for other in near), default=0)
    return out


def _cut_middle(text: str, fits: Callable[[str], bool]) -> tuple[str, int, int]:
    """The text with as little of its middle left out as makes it fit, and how many of its
    first and last characters stay."""
    for keep in range(len(text) - 1, 0, -1):
        head, tail = (keep + 1) // 2, keep // 2
        shown = text[:head] + "…" + (text[-tail:] if tail else "")
        if fits(shown):
            return shown, head, tail
    return "…", 0, 0


def _cut_end(text: str, fits: Callable[[str], bool]) -> str:
    if fits(text):
        return text
    for keep in range(len(text) - 1, 0, -1):
        if fits(text[:keep] + "…"):
            return text[:keep] + "…"
    return "…"


def shorten_keeping_difference(text: str, start: int, fits: Callable[[str], bool]) -> str:
    """``text`` shortened until ``fits`` accepts it: its middle left out, unless that hides
    where it differs from its neighbour (``start``, see differs_from); then its first letters,
    an ellipsis, and the text from just before that point on ("sens…_10_level_read…" rather
    than "sens…name", which every long sensor name became)."""
    if fits(text):
        return text
    middle, head, tail = _cut_middle(text, fits)
    if start < head or start >= len(text) - tail:
        return middle
    lead = text[: min(4, start)] + "…"
    if not fits(lead + text[start] + "…"):
        return middle  # too narrow to show the difference at all
    # one letter of what comes before the difference, unless the lead shows it already
    rest = text[start - 1 :] if start > 4 else text[start:]
    return lead + _cut_end(rest, lambda shown: fits(lead + shown))


class DistinctNamesDelegate(QStyledItemDelegate):
    """A table column of names, each shortened where it is too wide so that it stays told
    apart from the others: middle elision made long names that differ only in their middle
    look the same ("sens…name" for every sensor). The whole name stays on hover."""

    _MARGIN = 8  # pixels the style keeps around a cell's text

    def __init__(self, model: QAbstractItemModel, column: int, parent: QWidget | None = None):
        super().__init__(parent)
        self._model, self._column = model, column
        self._starts: dict[str, int] | None = None
        for signal in (model.modelReset, model.layoutChanged, model.dataChanged):
            signal.connect(self._forget)

    def _forget(self, *_args) -> None:
        self._starts = None

    def initStyleOption(self, option, index) -> None:  # noqa: N802 - Qt name
        super().initStyleOption(option, index)
        text = option.text
        if not text:
            return
        if self._starts is None:
            m = self._model
            names = [str(m.index(r, self._column).data() or "") for r in range(m.rowCount())]
            self._starts = differs_from(names)
        width = max(option.rect.width() - self._MARGIN, 1)
        fm = option.fontMetrics
        option.text = shorten_keeping_difference(
            text, self._starts.get(text, 0), lambda shown: fm.horizontalAdvance(shown) <= width
        )
