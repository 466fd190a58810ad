"""The focal effect: the double-selection estimate with its interval, beside the single-selection one."""

from __future__ import annotations

__all__ = ["FocalChart"]

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt

from desktop.charts.common import PlotPanel
from desktop.theme import ACCENT, INK, MUTED, SERIES
from engine.study_result import FocalResult


class FocalChart(PlotPanel):
    def set_focal(self, focal: FocalResult | None) -> None:
        self.item.clear()
        if focal is None:
            self.set_title("No focal column in this study")
            return
        self.item.setLabel("bottom", f"Effect of one unit of {focal.column} on the response")
        rows: list[tuple[str, float, float | None, float | None, str]] = [
            ("double selection", focal.estimate, focal.ci_low, focal.ci_high, ACCENT)
        ]
        if focal.naive_estimate is not None and np.isfinite(focal.naive_estimate):
            rows.append(("response equation only", focal.naive_estimate, None, None, SERIES[1]))
        ticks = []
        for k, (words, est, lo, hi, colour) in enumerate(rows):
            y = float(len(rows) - 1 - k)
            ticks.append((y, words))
            if lo is not None and hi is not None:
                self.item.plot([lo, hi], [y, y], pen=pg.mkPen(colour, width=3))
                for end in (lo, hi):
                    self.item.plot([end, end], [y - 0.12, y + 0.12], pen=pg.mkPen(colour, width=2))
            self.item.plot(
                [est],
                [y],
                pen=None,
                symbol="o",
                symbolSize=11,
                symbolBrush=colour,
                symbolPen=pg.mkPen(INK),
            )
        self.item.addItem(
            pg.InfiniteLine(
                pos=0.0,
                angle=90,
                pen=pg.mkPen(MUTED, style=Qt.PenStyle.DashLine),
                label="no effect",
                labelOpts={"position": 0.95, "color": MUTED},
            )
        )
        self.item.getAxis("left").setTicks([ticks])
        self.item.setYRange(-0.8, len(rows) - 0.2, padding=0)
        self.set_title(f"Estimate and interval ({focal.covariance} standard errors)")
