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
        self.close_up = False
        self._x = np.zeros(0)
        self.marks: dict[str, float] = {}  # "min" / "one-se" -> view x

    def set_curve(
        self,
        curve: ValidationCurve | None,
        chosen_rule: str | None = None,
        ln_scale: bool = False,
    ) -> None:
        """ln_scale: the response was modelled as its natural log, so are the errors."""
        self.item.setLabel(
            "left", "Mean squared error on held-out rows" + (" (ln scale)" if ln_scale else "")
        )
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
            outward = self.label_side(rule)
            mark = pg.InfiniteLine(
                pos=x,
                angle=90,
                pen=pg.mkPen(colour, width=width, style=Qt.PenStyle.DashLine),
                label=words + (" (chosen)" if rule == chosen_rule else ""),
                labelOpts={  # mid-height: clear of the legend in the top corner
                    "position": 0.6 if rule == "min" else 0.45,
                    "color": colour,
                    "fill": pg.mkBrush(255, 255, 255, 210),
                    # text beside the line, not across it: left edge at the line (0) or
                    # right edge (1), a little off it
                    "anchors": [(-0.03, 0), (-0.03, 0)]
                    if outward == "right"
                    else [(1.03, 0), (1.03, 0)],
                },
            )
            # above the curve, so its label box is not crossed by it; a label turned towards
            # the other mark's line goes above that line too
            toward_other = (rule == "min") == (outward == "left")
            mark.setZValue(7 if toward_other else 6)
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
        self._apply_range()

    def label_side(self, rule: str) -> str:
        """Which side of its line a mark's label goes ("left" or "right" on screen).

        The simplest choice within one standard error sits left of (or on) the lowest error in
        both kinds of curve (penalties fall to the right, subset sizes grow to the right), so
        its label goes left and the other's right, unless that would run off the plot: within
        the outer 30% of the width the label turns inwards.
        """
        c = self.curve
        if c is None or self._x.size == 0:
            return "right"
        lo, hi = float(np.min(self._x)), float(np.max(self._x))
        x = self.marks.get(rule, lo)
        at = 0.5 if hi <= lo else (x - lo) / (hi - lo)
        if c.grid_kind == "penalty":  # the penalty axis is drawn reversed
            at = 1.0 - at
        if rule == "min":
            return "left" if at > 0.7 else "right"
        return "right" if at < 0.3 else "left"

    def set_close_up(self, on: bool) -> None:
        """Show the neighbourhood of the lowest error (on) or the whole curve (off)."""
        self.close_up = on
        self._apply_range()

    def close_up_range(self) -> tuple[float, float] | None:
        """The error range of the close-up: from the lowest error bar to four of its widths
        above the lowest error plus its standard error, or None when there is no curve."""
        c = self.curve
        if c is None or len(c.grid) == 0:
            return None
        y = np.asarray(c.mean_error, dtype=float)
        se = np.where(np.isfinite(c.se), c.se, 0.0)
        ok = np.isfinite(y)
        if not ok.any():
            return None
        lo = float(np.min((y - se)[ok]))
        top = float(y[c.index_min] + se[c.index_min])
        hi = top + 3.0 * max(top - lo, 1e-12 * max(abs(top), 1.0))
        return lo, min(hi, float(np.max((y + se)[ok])))

    def _apply_range(self) -> None:
        span = self.close_up_range() if self.close_up else None
        self.item.enableAutoRange()
        if span is not None and span[1] > span[0]:
            self.item.setYRange(*span, padding=0.05)

    def _beam(self) -> float:
        if self._x.size < 2:
            return 0.1
        return float(np.min(np.abs(np.diff(np.sort(self._x)))) * 0.5) or 0.05
