"""Actual against fitted values of one model, with the rows that stand apart marked and named."""

from __future__ import annotations

__all__ = ["FitChart"]

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QWidget

from desktop.charts.common import PlotPanel
from desktop.theme import ACCENT, MUTED, PROBLEM, SERIES

_NAMED = 10  # flagged rows labelled on the chart; the table lists them all


class FitChart(PlotPanel):
    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.named: list[int] = []  # sheet rows labelled on the chart
        self.marked: int | None = None  # the sheet row picked in the list beside the chart
        self._points: tuple[np.ndarray, np.ndarray, np.ndarray] | None = None
        self._mark = pg.ScatterPlotItem(size=18, pen=pg.mkPen(ACCENT, width=2.5), brush=None)

    def set_fit(
        self,
        actual: np.ndarray | None,
        fitted: np.ndarray | None,
        rows: np.ndarray | None = None,
        flagged: list[int] | None = None,
        title: str = "",
        response: str = "response",
    ) -> None:
        """Points (fitted, actual); ``flagged``: sheet rows (among ``rows``) to mark and name."""
        self.item.clear()
        self.named = []
        self.marked = None
        self._points = None
        if actual is None or fitted is None or not len(actual):
            self.set_title("No fitted values to show")
            return
        x = np.asarray(fitted, dtype=float)
        y = np.asarray(actual, dtype=float)
        self.item.setLabel("bottom", f"Fitted {response}")
        self.item.setLabel("left", f"Actual {response}")
        lo = float(min(np.nanmin(x), np.nanmin(y)))
        hi = float(max(np.nanmax(x), np.nanmax(y)))
        # the line of perfect fit: points above it were under-predicted
        self.item.addItem(
            pg.PlotDataItem(
                [lo, hi], [lo, hi], pen=pg.mkPen(MUTED, width=1.2, style=Qt.PenStyle.DashLine)
            )
        )
        self.item.addItem(
            pg.ScatterPlotItem(x, y, size=5, pen=None, brush=pg.mkBrush(SERIES[0] + "90"))
        )
        if rows is not None:
            self._points = (np.asarray(rows), x, y)
        self._mark.setData([], [])
        self.item.addItem(self._mark)
        marks = set(flagged or [])
        if marks and rows is not None:
            where = [i for i, r in enumerate(np.asarray(rows)) if int(r) in marks]
            self.item.addItem(
                pg.ScatterPlotItem(
                    x[where], y[where], size=11, pen=pg.mkPen(PROBLEM, width=2), brush=None
                )
            )
            for i in where[:_NAMED]:
                label = pg.TextItem(f"row {int(rows[i])}", color=PROBLEM, anchor=(-0.15, 0.5))
                label.setPos(float(x[i]), float(y[i]))
                self.item.addItem(label)
                self.named.append(int(rows[i]))
        self.set_title(title)

    def mark_row(self, row: int | None) -> None:
        """Ring the point of one sheet row (the row picked in the list), or none."""
        self.marked = None
        self._mark.setData([], [])
        if row is None or self._points is None:
            return
        rows, x, y = self._points
        where = np.flatnonzero(rows == row)
        if where.size:
            self._mark.setData(x[where], y[where])
            self.marked = row
