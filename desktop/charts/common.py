"""What every chart shares: a white plot frame in our palette, a log-penalty axis, export."""

from __future__ import annotations

__all__ = ["LogPenaltyAxis", "PlotPanel", "make_plot", "export_plot", "EXPORT_FILTER"]

import html
import textwrap
from pathlib import Path

import numpy as np
import pyqtgraph as pg
import pyqtgraph.exporters as pg_exporters
from PySide6.QtCore import Qt
from PySide6.QtGui import QFont, QFontMetrics, QResizeEvent
from PySide6.QtWidgets import QVBoxLayout, QWidget

from desktop.theme import INK, MUTED

EXPORT_FILTER = "PNG picture (*.png);;SVG drawing (*.svg)"

pg.setConfigOptions(antialias=True, background="w", foreground=INK)

TITLE_CHARS = 40  # a chart title's longest line in a narrow pane (wider panes take more)


class LogPenaltyAxis(pg.AxisItem):
    """An axis whose view coordinates are log10(penalty) but whose labels are penalties.

    With ``log_labels`` False it is a plain axis (the same chart switches to the budget t).
    """

    log_labels = True

    def tickStrings(self, values, scale, spacing):  # noqa: N802 - pyqtgraph name
        if not self.log_labels:
            return super().tickStrings(values, scale, spacing)
        out = []
        for v in values:
            x = 10.0**v
            out.append(f"{x:.2g}" if 1e-3 <= x < 1e4 else f"{x:.0e}")
        return out


def make_plot(bottom: pg.AxisItem | None = None) -> pg.PlotWidget:
    axes = {"bottom": bottom} if bottom is not None else {}
    w = pg.PlotWidget(axisItems=axes)
    item = w.getPlotItem()
    item.showGrid(x=True, y=True, alpha=0.15)
    item.hideButtons()
    item.setMenuEnabled(False)
    font = QFont()
    font.setPointSizeF(9)
    for name in ("bottom", "left"):
        ax = item.getAxis(name)
        ax.setTickFont(font)
        ax.setTextPen(pg.mkPen(INK))
        ax.setPen(pg.mkPen(MUTED))
        ax.enableAutoSIPrefix(False)  # ticks in the units the tables show, no "(x0.001)"
    return w


class PlotPanel(QWidget):
    """One plot filling the widget: ``plot`` (for export) and its ``item`` (to draw on)."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.plot = make_plot()
        self.item = self.plot.getPlotItem()
        lay = QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.addWidget(self.plot)
        self._title = ""

    def set_title(self, text: str | None) -> None:
        """The chart's title, broken into lines that fit the widget: a title on one long line
        widens the plot past its widget and cuts off its right side. Broken again whenever
        the widget's width changes (a chart is often filled before its tab is first shown)."""
        self._title = text or ""
        self._wrap_title()

    def _wrap_title(self) -> None:
        if not self._title:
            self.item.setTitle(None)
            return
        # about 8 pixels a character at the title's size, over the plot area only (the left
        # axis takes its own width, wide with long names); shorter lines while the title still
        # makes the chart wider than its widget
        room = self.width() - self._left_axis_width()
        chars = max(TITLE_CHARS, int(room / 8) - 4)
        while True:
            lines = textwrap.wrap(self._title, chars) or [self._title]
            self.item.setTitle("<br>".join(html.escape(line) for line in lines))
            needed = self.item.effectiveSizeHint(Qt.SizeHint.MinimumSize).width()
            if needed <= self.width() or chars <= 20 or not self.isVisible():
                break
            chars = int(chars * 0.85)
        # the plot keeps a width its longer title once forced on it until told again
        self.item.setGeometry(self.plot.range)

    def _left_axis_width(self) -> int:
        """The left axis's width, or what its tick names will take once drawn (the axis
        widens only when painted, after the title has been set)."""
        axis = self.item.getAxis("left")
        width = int(axis.width())
        names = [t for level in getattr(axis, "_tickLevels", None) or [] for _, t in level]
        if names:
            fm = QFontMetrics(axis.style.get("tickFont") or axis.font())
            width = max(width, max(fm.horizontalAdvance(str(t)) for t in names) + 25)
        return width

    def resizeEvent(self, event: QResizeEvent) -> None:  # noqa: N802 - Qt name
        super().resizeEvent(event)
        if self._title:
            self._wrap_title()


def export_plot(widget: pg.PlotWidget, path: Path | str) -> Path:
    """Write the chart as PNG (at twice the screen size) or SVG, chosen by the file's ending."""
    path = Path(path)
    item = widget.getPlotItem()
    if path.suffix.lower() == ".svg":
        try:
            pg_exporters.SVGExporter(item).export(str(path))
        except ValueError:
            # pyqtgraph 0.14's SVG exporter cannot parse the path syntax newer Qt writes;
            # Qt's own SVG generator draws the same scene as vectors
            _svg_with_qt(widget, path)
        return path
    else:
        if path.suffix.lower() != ".png":
            path = path.with_suffix(".png")
        exporter = pg_exporters.ImageExporter(item)
        width = max(int(item.sceneBoundingRect().width() * 2), 800)
        exporter.parameters()["width"] = width
    exporter.export(str(path))
    return path


def _svg_with_qt(widget: pg.PlotWidget, path: Path) -> None:
    from PySide6.QtCore import QRectF, QSize
    from PySide6.QtGui import QPainter
    from PySide6.QtSvg import QSvgGenerator

    item = widget.getPlotItem()
    source = item.sceneBoundingRect()
    gen = QSvgGenerator()
    gen.setFileName(str(path))
    gen.setSize(QSize(int(source.width()), int(source.height())))
    gen.setViewBox(QRectF(0, 0, source.width(), source.height()))
    gen.setTitle("Tamis chart")
    gen.setResolution(widget.logicalDpiX())  # items lay themselves out in screen pixels
    painter = QPainter(gen)
    try:
        widget.scene().render(painter, QRectF(0, 0, source.width(), source.height()), source)
    finally:
        painter.end()


def log10_positive(x: np.ndarray) -> np.ndarray:
    """log10 for penalties; a zero penalty (plain least squares) sits just past the smallest."""
    x = np.asarray(x, dtype=float)
    pos = x[x > 0]
    floor = pos.min() / 10 if pos.size else 1e-6
    return np.log10(np.where(x > 0, x, floor))
