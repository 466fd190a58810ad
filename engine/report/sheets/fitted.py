"""Fitted values and residuals of every method for the rows used, by source row number, then the
unusual-row measures of the scoring model's least-squares refit (engine.fitting.influence), and
a native chart of actual against fitted values of the scoring model with those rows marked."""

from __future__ import annotations

__all__ = ["write", "CHART_MAX_ROWS"]

import numpy as np

from engine.report.bulk_rows import BulkSheet, NumberColumn, TextColumn, style_index
from engine.report.names import FITTED
from engine.report.sheets.cells import Formats, heading_row, range_ref, text

# above this many rows the chart is left out: a scatter of more points makes spreadsheet
# programs slow to open and scroll the sheet, and the table still holds every value
CHART_MAX_ROWS = 20_000


def write(book, ws, result, fm: Formats, bulk: BulkSheet, progress=None) -> None:
    d = result.design
    models = [m for m in result.models if m.fitted is not None]
    text(ws, 0, 0, f"Fitted values and residuals (rows used from sheet '{d.sheet}')", fm.title)
    text(
        ws,
        1,
        0,
        "Source row is the row number in that sheet; residual = response - fitted"
        + (f", both on the ln scale of {d.response}." if d.response_log else "."),
        fm.note,
    )
    heads = ["Source row", d.response_label]
    for m in models:
        heads += [f"Fitted ({m.method})", f"Residual ({m.method})"]
    # a logged response: also in its own units, as the scoring sheet predicts it (exp of the
    # ln-scale fit times the smearing factor, Duan 1983), for the scoring model
    in_units = None
    if d.response_log and models:
        chosen = result.scoring_method()
        in_units = next((m for m in models if m.method == chosen), models[0])
        heads += [f"{d.response} (actual)", f"{d.response} fitted ({in_units.method})"]
    inf = result.influence
    if inf is not None:
        text(
            ws,
            2,
            len(heads),
            f"Least-squares refit of the {inf.n_coefficients - 1} columns {result.influence_method} "
            f"keeps: outlier = studentized residual beyond chance among {d.n_rows} rows "
            f"(Bonferroni, 5%); influential = Cook's distance above {inf.cooks_limit:.3g} "
            "(median of F, Cook 1977)",
            fm.note,
        )
        heads += ["Leverage", "Studentized residual", "Cook's distance", "Unusual"]
        heads.append("Actual value of an unusual row (for the chart)")
    heads.append("Line of equal values (for the chart)")
    heading_row(ws, 3, heads[1:], 16)
    for c, h in enumerate(heads):
        text(ws, 3, c, h, fm.heading)
    ws.set_column(0, 0, 11)
    ws.set_column(1, len(heads), 16)
    ws.freeze_panes(4, 1)
    rows = np.asarray(d.row_numbers, dtype=float)
    y = np.asarray(d.y, dtype=float)
    columns = [rows, y]
    for m in models:
        f = np.asarray(m.fitted, dtype=float)
        columns += [f, y - f]
    if progress is not None:
        progress.step(0.5, "fitted values")
    # the response's values to six significant digits of its size
    size = float(np.max(np.abs(y))) if y.size else 1.0
    shown_size = style_index(fm.shown_to(size if size > 0 else 1.0))
    measure = None  # leverage, studentized residual, Cook's distance: General keeps 3e-05
    cells: list[NumberColumn | TextColumn] = [NumberColumn(rows)]
    cells += [NumberColumn(c, shown_size) for c in columns[1:]]
    if in_units is not None:
        actual = np.exp(y)
        fitted_units = np.exp(np.asarray(in_units.fitted, dtype=float)) * float(
            in_units.smearing or 1.0
        )
        units_style = style_index(fm.shown_to(float(np.max(np.abs(actual))) or 1.0))
        cells += [NumberColumn(actual, units_style), NumberColumn(fitted_units, units_style)]
    if inf is not None:
        cells += [
            NumberColumn(inf.leverage, measure),
            NumberColumn(inf.studentized, measure),
            NumberColumn(inf.cooks, measure),
        ]
        flags = inf.flags()
        cells.append(TextColumn([w or None for w in flags]))
        cells.append(NumberColumn(np.where([bool(w) for w in flags], y, np.nan), shown_size))
    # two points, the lowest and highest value of actual and fitted alike: the chart's line
    # where fitted equals actual, over axes of the same range
    both = np.concatenate([y] + [np.asarray(m.fitted, dtype=float) for m in models])
    both = both[np.isfinite(both)]
    lo, hi = (float(both.min()), float(both.max())) if both.size else (0.0, 1.0)
    if hi > lo:  # out to round numbers, so the axes' ticks fall on them (80 to 89, not 80.14)
        step = 10.0 ** np.floor(np.log10(hi - lo))
        if (hi - lo) / step < 3:  # 99 to 201 on 90 to 210, not 0 to 300
            step /= 10
        lo, hi = float(np.floor(lo / step) * step), float(np.ceil(hi / step) * step)
    equal = np.full(d.n_rows, np.nan)
    equal[: min(2, d.n_rows)] = [lo, hi][: min(2, d.n_rows)]
    cells.append(NumberColumn(equal, shown_size))
    bulk.add_columns(4, 0, cells)
    scoring = result.influence_method or (result.scoring_method() if models else None)
    if scoring is None or f"Fitted ({scoring})" not in heads or not 0 < d.n_rows <= CHART_MAX_ROWS:
        return
    fitted_col = heads.index(f"Fitted ({scoring})")
    first, last = 4, 3 + d.n_rows
    chart = book.add_chart({"type": "scatter"})
    chart.add_series(
        {
            "name": "rows used",
            "categories": range_ref(FITTED, first, fitted_col, last, fitted_col),
            "values": range_ref(FITTED, first, 1, last, 1),
            "marker": {
                "type": "circle",
                "size": 3,
                "fill": {"color": "#1d6f8a"},
                "border": {"none": True},
            },
        }
    )
    if inf is not None:
        chart.add_series(
            {
                "name": "unusual rows",
                "categories": range_ref(FITTED, first, fitted_col, last, fitted_col),
                "values": range_ref(FITTED, first, len(heads) - 2, last, len(heads) - 2),
                "marker": {
                    "type": "diamond",
                    "size": 8,
                    "fill": {"none": True},
                    "border": {"color": "#a33c12", "width": 1.5},
                },
            }
        )
    line = len(heads) - 1
    chart.add_series(
        {
            "name": "fitted = actual",
            "categories": range_ref(FITTED, first, line, first + 1, line),
            "values": range_ref(FITTED, first, line, first + 1, line),
            "line": {"color": "#7f7f7f", "dash_type": "dash", "width": 1},
            "marker": {"type": "none"},
        }
    )
    chart.set_title({"name": f"Actual against fitted: {scoring}"})
    # the same range on both axes, so the cloud's spread about the line is not distorted
    bounds = {"min": lo, "max": hi} if hi > lo else {}
    chart.set_x_axis({"name": f"fitted {d.response_label}", "label_position": "low", **bounds})
    chart.set_y_axis({"name": f"actual {d.response_label}", "label_position": "low", **bounds})
    chart.set_legend({"position": "bottom"})
    # the unusual rows' column is empty elsewhere: "span" is written out (the default, gap, is
    # left implicit, which LibreOffice reads as zero); with no line between points it draws
    # nothing for an empty cell
    chart.show_blanks_as("span")
    chart.set_size({"width": 560, "height": 400})
    ws.insert_chart(3, len(heads) + 1, chart, {"x_offset": 10, "y_offset": 5})
