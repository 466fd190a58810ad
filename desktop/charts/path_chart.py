"""Coefficient paths: one line per column against the penalty (log) or the budget t.

The cursor is a draggable vertical line; wherever it rests, ``index_changed(i)`` names the
nearest computed point of the path, so the selected set and the coefficient table follow it
live from the path the engine already computed (nothing is refitted). Hovering near a line
names its column; ``highlight(name)`` brings one line forward.
"""

from __future__ import annotations

__all__ = ["PathChart", "AXIS_PENALTY", "AXIS_BUDGET"]

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QPointF, Qt, Signal
from PySide6.QtGui import QColor
from PySide6.QtWidgets import QVBoxLayout, QWidget

from desktop.charts.common import LogPenaltyAxis, log10_positive, make_plot
from desktop.theme import ACCENT, INK, MUTED, series_colour
from engine.fitting.path import PenaltyPath

AXIS_PENALTY = "penalty"
AXIS_BUDGET = "budget"
_HOVER_PX = 8.0


class PathChart(QWidget):
    index_changed = Signal(int)
    hovered = Signal(str)  # column name under the mouse, "" when none

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self._log_axis = LogPenaltyAxis(orientation="bottom")
        self.plot = make_plot(self._log_axis)
        self.item = self.plot.getPlotItem()
        # short enough for the axis at 1.5x scaling (the longer wording was clipped)
        self.item.setLabel("left", "Standardized coefficient")
        lay = QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.addWidget(self.plot)

        self.path: PenaltyPath | None = None
        self.names: list[str] = []
        self.mode = AXIS_PENALTY
        self.index = 0
        self.chosen: int | None = None
        self.hovered_name = ""
        self.highlighted: str | None = None
        self._x = np.zeros(0)
        self._lines: dict[str, pg.PlotCurveItem] = {}
        self._colours: dict[str, str] = {}
        self.penalty_line = pg.InfiniteLine(
            angle=90,
            movable=True,
            pen=pg.mkPen(ACCENT, width=2),
            hoverPen=pg.mkPen(ACCENT, width=4),
        )
        self.penalty_line.setZValue(50)
        self.penalty_line.setCursor(Qt.CursorShape.SizeHorCursor)
        self.penalty_line.sigPositionChanged.connect(self._on_cursor_moved)
        self.penalty_line.sigPositionChangeFinished.connect(self._snap_cursor)
        self._chosen_line = pg.InfiniteLine(
            angle=90,
            movable=False,
            pen=pg.mkPen(MUTED, width=1, style=Qt.PenStyle.DashLine),
            label="chosen",
            labelOpts={"position": 0.95, "color": MUTED},
        )
        self._hover_label = pg.TextItem(
            "",
            color=INK,
            fill=pg.mkBrush(255, 253, 245, 230),
            border=pg.mkPen(MUTED),
            anchor=(0, 1),
        )
        self._hover_label.setZValue(100)
        self.plot.scene().sigMouseMoved.connect(self._on_mouse_moved)

    # content ----------------------------------------------------------------------------
    def set_path(
        self, path: PenaltyPath | None, names: list[str], chosen: int | None = None
    ) -> None:
        self.path = path
        self.names = list(names)
        self.chosen = chosen
        pal = {}
        k = 0
        if path is not None:
            for j, n in enumerate(self.names):
                if np.any(path.std_coefs[:, j] != 0):
                    pal[n] = series_colour(k)
                    k += 1
        self._colours = pal
        self.index = chosen if chosen is not None else 0
        self._redraw()

    def set_axis(self, mode: str) -> None:
        if mode != self.mode:
            self.mode = mode
            self._redraw()

    def x_values(self) -> np.ndarray:
        """View x of every path point (log10 penalty, or budget t)."""
        return self._x

    def _redraw(self) -> None:
        self.item.clear()
        self._lines = {}
        self.hovered_name = ""
        path = self.path
        if path is None or len(path) == 0:
            # no axes either: empty axes keeping the last method's ranges read as a chart
            self.item.setTitle("No penalty path for this method")
            self.item.hideAxis("bottom")
            self.item.hideAxis("left")
            self.item.showGrid(x=False, y=False)
            return
        self.item.setTitle(None)
        self.item.showAxis("bottom")
        self.item.showAxis("left")
        self.item.showGrid(x=True, y=True, alpha=0.15)
        if self.mode == AXIS_PENALTY:
            self._x = log10_positive(path.penalties)
            self._log_axis.log_labels = True
            self.item.setLabel("bottom", "Penalty (log scale; weaker to the right)")
            self.item.invertX(True)
        else:
            self._x = np.asarray(path.l1_budget, dtype=float)
            self._log_axis.log_labels = False
            self.item.setLabel("bottom", "Budget t = sum of |standardized coefficients|")
            self.item.invertX(False)
        self._log_axis.picture = None  # labels change meaning with the mode
        self._log_axis.update()
        order = np.argsort(self._x, kind="stable")
        xs = self._x[order]
        for j, n in enumerate(self.names):
            if n not in self._colours:
                continue
            # PlotCurveItem, not PlotDataItem: a ridge path on 240 columns draws 240 lines
            line = pg.PlotCurveItem(xs, path.std_coefs[order, j], pen=self._pen(n))
            self.item.addItem(line)
            self._lines[n] = line
        self.item.addItem(
            pg.InfiniteLine(pos=0, angle=0, pen=pg.mkPen(MUTED, width=1)), ignoreBounds=True
        )
        if self.chosen is not None:
            self._chosen_line.setValue(float(self._x[self.chosen]))
            self.item.addItem(self._chosen_line, ignoreBounds=True)
        lo, hi = float(np.min(self._x)), float(np.max(self._x))
        # quiet while the cursor is put back: new bounds clamp the old position (another
        # path, or the other axis), which must not be taken for a move by the user
        self.penalty_line.blockSignals(True)
        self.penalty_line.setBounds((lo, hi))
        self.penalty_line.setValue(float(self._x[self.index]))
        self.penalty_line.blockSignals(False)
        self.item.addItem(self.penalty_line, ignoreBounds=True)
        self.item.addItem(self._hover_label, ignoreBounds=True)
        self._hover_label.hide()
        self.item.enableAutoRange()
        if self.highlighted:
            self.highlight(self.highlighted)

    def _label_line_ends(self, most: int = 8) -> None:
        """Name the largest lines where they end (the weakest penalty), skipping crowded ones."""
        path = self.path
        assert path is not None
        end = len(path) - 1  # the weakest penalty: the right-hand end on either axis
        values = {n: float(path.std_coefs[end, self.names.index(n)]) for n in self._lines}
        span = max((abs(v) for v in values.values()), default=0.0) or 1.0
        placed: list[float] = []
        for n, v in sorted(values.items(), key=lambda kv: -abs(kv[1]))[:most]:
            if v == 0.0 or any(abs(v - u) < 0.07 * span for u in placed):
                continue
            placed.append(v)
            label = pg.TextItem(n, color=self._colours[n], anchor=(1, 1))
            label.setPos(float(self._x[end]), v)
            self.item.addItem(label, ignoreBounds=True)

    # cursor -----------------------------------------------------------------------------
    def nearest_index(self, x: float) -> int:
        return int(np.argmin(np.abs(self._x - x))) if self._x.size else 0

    def set_index(self, i: int) -> None:
        """Move the cursor to path point ``i`` (emits ``index_changed`` if it moved)."""
        if not self._x.size:
            return
        i = int(np.clip(i, 0, self._x.size - 1))
        self.penalty_line.setValue(float(self._x[i]))

    def move_cursor_to(self, x: float) -> None:
        """Place the cursor at view x, as a drag would."""
        self.penalty_line.setValue(float(x))

    def _on_cursor_moved(self) -> None:
        i = self.nearest_index(float(self.penalty_line.value()))
        if i != self.index:
            self.index = i
            self.index_changed.emit(i)

    def _snap_cursor(self) -> None:
        if self._x.size:
            self.penalty_line.blockSignals(True)
            self.penalty_line.setValue(float(self._x[self.index]))
            self.penalty_line.blockSignals(False)

    # hover and highlight ----------------------------------------------------------------
    def name_near(self, x: float, y: float, px_tolerance: float = _HOVER_PX) -> str:
        """The column whose line passes within ``px_tolerance`` pixels of view point (x, y)."""
        if self.path is None or not self._lines:
            return ""
        vb = self.item.getViewBox()
        _, ppy = vb.viewPixelSize()
        order = np.argsort(self._x, kind="stable")
        xs = self._x[order]
        best, best_d = "", np.inf
        for n in self._lines:
            j = self.names.index(n)
            yv = float(np.interp(x, xs, self.path.std_coefs[order, j]))
            d = abs(yv - y) / ppy if ppy > 0 else np.inf
            if d < best_d:
                best, best_d = n, d
        return best if best_d <= px_tolerance else ""

    def _on_mouse_moved(self, pos: QPointF) -> None:
        vb = self.item.getViewBox()
        if not vb.sceneBoundingRect().contains(pos):
            self._set_hover("")
            return
        p = vb.mapSceneToView(pos)
        name = self.name_near(p.x(), p.y())
        self._set_hover(name, p)

    def _set_hover(self, name: str, at: QPointF | None = None) -> None:
        if name:
            self._hover_label.setText(name)
            self._hover_label.setPos(at)
            self._hover_label.show()
        else:
            self._hover_label.hide()
        if name != self.hovered_name:
            self.hovered_name = name
            self.hovered.emit(name)

    def _pen(self, name: str, width: float = 1.6, alpha: int = 255):
        c = QColor(self._colours[name])
        c.setAlpha(alpha)
        dashed = list(self._colours).index(name) >= 12  # colours repeat: tell them apart by dashes
        style = Qt.PenStyle.DashLine if dashed else Qt.PenStyle.SolidLine
        return pg.mkPen(c, width=width, style=style)

    def highlight(self, name: str | None) -> None:
        """Bring one column's line forward and fade the rest; None restores all."""
        self.highlighted = name if name in self._lines else None
        for n, line in self._lines.items():
            if self.highlighted is None:
                line.setPen(self._pen(n))
                line.setZValue(0)
            elif n == self.highlighted:
                line.setPen(self._pen(n, width=3.5))
                line.setZValue(10)
            else:
                line.setPen(self._pen(n, width=1.2, alpha=60))
                line.setZValue(0)

    def line_width(self, name: str) -> float:
        return float(self._lines[name].opts["pen"].widthF()) if name in self._lines else 0.0
