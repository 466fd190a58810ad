"""The validation curve: mean held-out error with one-standard-error bars, both choices marked."""

from __future__ import annotations

__all__ = ["CurveChart"]

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QVBoxLayout, QWidget

from desktop.charts.common import LogPenaltyAxis, log10_positive, make_plot
from desktop.theme import ACCENT, INK, MUTED, SERIES
from engine.tuning.curve import ValidationCurve

_MIN_COLOUR = SERIES[1]  # ochre
_ONE_SE_COLOUR = SERIES[2]  # plum


class CurveChart(QWidget):
    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self._axis = LogPenaltyAxis(orientation="bottom")
        self.plot = make_plot(self._axis)
        self.item = self.plot.getPlotItem()
        self.item.setLabel("left", "Mean squared error on held-out rows")
        self.legend = self.item.addLegend(
            offset=(-10, 10),
            labelTextColor=INK,
            brush=pg.mkBrush(255, 255, 255, 220),
            pen=pg.mkPen(MUTED),
        )
        lay = QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.addWidget(self.plot)
        self.curve: ValidationCurve | None = None
        self._x = np.zeros(0)
        self.marks: dict[str, float] = {}  # "min" / "one-se" -> view x

    def set_curve(self, curve: ValidationCurve | None, chosen_rule: str | None = None) -> None:
        self.item.clear()
        self.legend.clear()
        self.curve = curve
        self.marks = {}
        if curve is None or len(curve.grid) == 0:
            self.item.setTitle("No validation curve for this method")
            return
        self.item.setTitle(None)
        if curve.grid_kind == "penalty":
            self._x = log10_positive(curve.grid)
            self._axis.log_labels = True
            self.item.setLabel("bottom", "Penalty (log scale; weaker to the right)")
            self.item.invertX(True)
        else:
            self._x = np.asarray(curve.grid, dtype=float)
            self._axis.log_labels = False
            self.item.setLabel("bottom", "Number of columns in the subset")
            self.item.invertX(False)
        self._axis.picture = None
        self._axis.update()
        y = np.asarray(curve.mean_error, dtype=float)
        se = np.where(np.isfinite(curve.se), curve.se, 0.0)
        bars = pg.ErrorBarItem(
            x=self._x, y=y, top=se, bottom=se, beam=self._beam(), pen=pg.mkPen(MUTED, width=1)
        )
        self.item.addItem(bars)
        line = self.item.plot(
            self._x,
            y,
            pen=pg.mkPen(ACCENT, width=2),
            symbol="o",
            symbolSize=5,
            symbolBrush=ACCENT,
            symbolPen=None,
            name="mean held-out error",
        )
        line.setZValue(5)
        self.legend.addItem(bars, "± one standard error")
        for rule, idx, colour, words in (
            ("min", curve.index_min, _MIN_COLOUR, "lowest error"),
            ("one-se", curve.index_one_se, _ONE_SE_COLOUR, "simplest within one SE"),
        ):
            x = float(self._x[idx])
            self.marks[rule] = x
            width = 2.5 if rule == chosen_rule else 1.5
            mark = pg.InfiniteLine(
                pos=x,
                angle=90,
                pen=pg.mkPen(colour, width=width, style=Qt.PenStyle.DashLine),
                label=words + (" (chosen)" if rule == chosen_rule else ""),
                labelOpts={
                    "position": 0.88 if rule == "min" else 0.72,
                    "color": colour,
                    "fill": pg.mkBrush(255, 255, 255, 210),
                    "anchors": [(0.5, 0), (0.5, 0)],
                },
            )
            self.item.addItem(mark, ignoreBounds=True)
            dot = self.item.plot(
                [x],
                [float(y[idx])],
                pen=None,
                symbol="d",
                symbolSize=12,
                symbolBrush=colour,
                symbolPen=pg.mkPen(INK),
                name=words,
            )
            dot.setZValue(10)
        self.item.enableAutoRange()

    def _beam(self) -> float:
        if self._x.size < 2:
            return 0.1
        return float(np.min(np.abs(np.diff(np.sort(self._x)))) * 0.5) or 0.05
