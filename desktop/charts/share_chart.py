"""Stability shares as horizontal bars, largest first, with the guidance threshold marked."""

from __future__ import annotations

__all__ = ["ShareChart"]

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QWidget

from desktop.charts.common import PlotPanel
from desktop.elided_label import differs_from, shorten_keeping_difference
from desktop.theme import ACCENT, MUTED, SERIES
from engine.study_result import StabilityResult

_SHOWN = 25
_LABEL_CHARS = 24  # a bar's name on the axis, at most


class ShareChart(PlotPanel):
    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.item.setLabel("bottom", "Share of half-samples in which the column was chosen")
        self.shown: list[str] = []

    def set_stability(self, stab: StabilityResult | None) -> None:
        self.item.clear()
        self.shown = []
        if stab is None or not stab.shares:
            self.set_title("Stability was not run")
            return
        # columns never chosen get no bar: a row of empty bars under "most often chosen" reads
        # as if they had been
        chosen = [kv for kv in stab.shares.items() if kv[1] > 0]
        never = len(stab.shares) - len(chosen)
        if not chosen:
            self.set_title(f"No column was chosen in any of the {stab.runs} half-samples")
            return
        ranked = sorted(chosen, key=lambda kv: (-kv[1], kv[0]))[:_SHOWN]
        self.shown = [n for n, _ in ranked]
        n = len(ranked)
        ys = np.arange(n)[::-1].astype(float)  # largest at the top
        shares = np.array([s for _, s in ranked])
        brushes = [pg.mkBrush(ACCENT if s >= stab.threshold else SERIES[9]) for s in shares]
        bars = pg.BarGraphItem(
            x0=np.zeros(n), y=ys, height=0.7, width=shares, brushes=brushes, pen=None
        )
        self.item.addItem(bars)
        # long names would widen the axis past the panel and push the bars out of sight:
        # shortened where they still differ, whole in the table beside
        starts = differs_from(self.shown)
        labels = [
            shorten_keeping_difference(name, starts[name], lambda s: len(s) <= _LABEL_CHARS)
            for name in self.shown
        ]
        self.item.getAxis("left").setTicks([list(zip(ys.tolist(), labels))])
        self.item.addItem(
            pg.InfiniteLine(
                pos=stab.threshold,
                angle=90,
                pen=pg.mkPen(MUTED, width=1.5, style=Qt.PenStyle.DashLine),
                label=f"threshold {stab.threshold:.2g}",
                labelOpts={"position": 0.02, "color": MUTED},
            )
        )
        if n < len(chosen):
            title = f"the {n} most often chosen of {len(chosen)} columns ever chosen"
        else:
            title = f"the {n} columns ever chosen" if n > 1 else "the one column ever chosen"
        if never:
            title += f" ({never} never)"
        self.set_title(f"{stab.runs} half-samples; {title}")
        self.item.setXRange(0, 1.02, padding=0)
        self.item.setYRange(-0.7, n - 0.3, padding=0)
