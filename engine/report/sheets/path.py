"""The coefficient path sheet: standardized coefficients along the penalty, one block per method.

Each block: the chosen penalty, a native scatter-with-lines chart on a log penalty axis (one
series per column, up to ``MAX_SERIES``; a vertical line marks the chosen penalty), then the
table: penalty, L1 budget t = sum |beta_j|, L2 budget sum beta_j^2, columns kept, and one column
per model column that is ever nonzero on the path, in the order of the chart's lines (those
kept at the chosen penalty first, then by entry along the path). Each line has its own colour
and line style; beyond ``LEGEND_UP_TO`` lines the legend names the first of them (the columns kept
at the chosen penalty first) and a note points to the table for the rest.
"""

from __future__ import annotations

__all__ = ["write", "MAX_SERIES", "CHART_ROWS"]

import numpy as np

from engine.report.bulk_rows import BulkSheet, NumberColumn, style_index
from engine.report.sheets.cells import Formats, heading_row, number, range_ref, text

MAX_SERIES = 40  # spreadsheet charts cap series counts; the table keeps every column
CHART_ROWS = 22
# a legend names up to this many lines and still fits beside the chart
LEGEND_UP_TO = 25
# line colours (ten well apart), then a line style per ten lines, so no two of the 40 drawn
# lines look alike
_COLOURS = (
    "#1F4E79", "#C55A11", "#548235", "#7030A0", "#BF9000",
    "#2E75B6", "#C00000", "#00B0A0", "#7F6000", "#E36CB8",
)  # fmt: skip
_DASHES = ("solid", "dash", "round_dot", "long_dash")


def _charted(path, names: list[str], ever: np.ndarray, chosen: int) -> list[int]:
    """Columns to draw: kept at the chosen penalty first, then by order of entry on the path."""
    cols = [int(j) for j in np.flatnonzero(ever)]
    nz = path.std_coefs != 0
    entry = {j: int(np.argmax(nz[:, j])) for j in cols}
    cols.sort(key=lambda j: (path.std_coefs[chosen, j] == 0, entry[j], j))
    return cols[:MAX_SERIES]


def write(
    book, ws, result, fm: Formats, sheet_name: str, bulk: BulkSheet, progress=None
) -> list[tuple[str, int]]:
    """Write every penalized method's path; returns (method, header row) per block."""
    d = result.design
    blocks: list[tuple[str, int]] = []
    models = [m for m in result.models if m.path is not None and len(m.path) > 0]
    text(ws, 0, 0, "Coefficient paths", fm.title)
    if not models:
        text(ws, 1, 0, "No penalized method ran in this study.", fm.note)
        return blocks
    text(
        ws,
        1,
        0,
        "Standardized coefficients (per standard deviation of the column) at each penalty; "
        "the penalty axis is logarithmic and the vertical line marks the chosen penalty.",
        fm.note,
    )
    ws.set_column(0, 0, 14)
    ws.set_column(1, 3, 12)
    r = 3
    for b, m in enumerate(models):
        path = m.path
        P = np.asarray(path.std_coefs, dtype=float)
        L = len(path)
        pen = np.asarray(path.penalties, dtype=float)
        chosen = int(np.argmin(np.abs(pen - m.penalty))) if m.penalty is not None else 0
        ever = (P != 0).any(axis=0)
        cols = [int(j) for j in np.flatnonzero(ever)]
        text(ws, r, 0, f"{m.method}: path over {L} penalties", fm.label)
        r += 1
        text(ws, r, 0, "Chosen penalty", fm.label)
        number(ws, r, 1, m.penalty if m.penalty is not None else pen[chosen])
        text(ws, r, 2, f"rule: {m.choice}" if m.choice else "", fm.note)
        drawn = _charted(path, d.names, ever, chosen)
        # the table's columns in the order of the lines (kept at the chosen penalty first, then
        # by entry along the path), the columns not drawn after them
        cols = drawn + [j for j in cols if j not in set(drawn)]
        if len(drawn) > LEGEND_UP_TO:
            text(
                ws, r, 4,
                f"{len(drawn)} lines{f' of {len(cols)} columns' if len(cols) > len(drawn) else ''}"
                f": the legend names the first {LEGEND_UP_TO} (columns kept at the chosen penalty "
                "first, then by entry along the path); the table below names them all in the "
                "order of the lines' colours, then line styles",
                fm.note,
            )  # fmt: skip
        r += 1
        ylo = float(P.min()) if P.size else -1.0
        yhi = float(P.max()) if P.size else 1.0
        if ylo == yhi:
            ylo, yhi = ylo - 1.0, yhi + 1.0
        line_r = r
        text(ws, r, 0, "marker line", fm.note)
        number(ws, r, 1, pen[chosen])
        number(ws, r, 2, ylo)
        number(ws, r + 1, 1, pen[chosen])
        number(ws, r + 1, 2, yhi)
        r += 2
        chart_r = r
        r += CHART_ROWS
        head = r
        heads = ["Penalty", "L1 budget t", "L2 budget", "Columns kept"] + [d.names[j] for j in cols]
        heading_row(ws, head, heads[1:], 12)
        for c, h in enumerate(heads):
            text(ws, head, c, h, fm.heading)
        l1 = np.abs(P).sum(axis=1)
        l2 = (P**2).sum(axis=1)
        kept = (P != 0).sum(axis=1)

        # six significant digits of each kind's largest value (the cells keep every digit);
        # the penalties span decades, so they keep the General format
        def shown(values: np.ndarray):
            top = float(np.max(np.abs(values))) if values.size else 0.0
            return style_index(fm.shown_to(top if top > 0 else 1.0))

        big = float(np.max(np.abs(P[:, cols]))) if cols else 0.0
        coef_style = style_index(fm.shown_to(big if big > 0 else 1.0, "coefficient"))
        bulk.add_columns(
            head + 1,
            0,
            [
                NumberColumn(pen),
                NumberColumn(l1, shown(l1)),
                NumberColumn(l2, shown(l2)),
                NumberColumn(kept.astype(float)),
                *(NumberColumn(P[:, j], coef_style) for j in cols),
            ],
        )
        if progress is not None:
            progress.step((b + 1) / len(models), f"path of {m.method}")
        first, last = head + 1, head + L
        chart = book.add_chart({"type": "scatter", "subtype": "straight"})
        pos = {j: 4 + c for c, j in enumerate(cols)}
        for i, j in enumerate(drawn):
            chart.add_series(
                {
                    "name": [sheet_name, head, pos[j]],
                    "categories": range_ref(sheet_name, first, 0, last, 0),
                    "values": range_ref(sheet_name, first, pos[j], last, pos[j]),
                    "line": {
                        "width": 1.25,
                        "color": _COLOURS[i % len(_COLOURS)],
                        "dash_type": _DASHES[(i // len(_COLOURS)) % len(_DASHES)],
                    },
                }
            )
        chart.add_series(
            {
                "name": "chosen penalty",
                "categories": range_ref(sheet_name, line_r, 1, line_r + 1, 1),
                "values": range_ref(sheet_name, line_r, 2, line_r + 1, 2),
                "line": {"color": "black", "dash_type": "dash", "width": 1.5},
            }
        )
        chart.set_title({"name": f"Coefficient path: {m.method}"})
        chart.set_x_axis({"name": "penalty (log scale)", "log_base": 10, "label_position": "low"})
        chart.set_y_axis({"name": "standardized coefficient"})
        # beyond LEGEND_UP_TO lines the legend keeps the first ones (the columns kept at the
        # chosen penalty come first) and the chosen-penalty line; the table names the rest
        chart.set_legend(
            {"position": "right", "delete_series": list(range(LEGEND_UP_TO, len(drawn)))}
        )
        # a long legend takes room beside the plot: a wider chart keeps the plot readable
        chart.set_size({"width": 640 if len(drawn) <= 12 else 900, "height": 20 * CHART_ROWS})
        ws.insert_chart(chart_r, 0, chart, {"x_offset": 5, "y_offset": 5})
        blocks.append((m.method, head))
        r = head + L + 3
    return blocks
