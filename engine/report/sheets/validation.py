"""The validation sheet: cross-validation curves with error bars and by-size tables.

Per method with a curve: a native chart of the mean held-out error with custom error bars of one
standard error (std of the part errors / sqrt(parts)), vertical lines at the smallest-error and
one-standard-error choices (common practice), then the table. Subset methods add a table of the
best (or greedy) set of each size with its residual sum of squares and R squared.
"""

from __future__ import annotations

__all__ = ["write"]

import numpy as np

from engine.report.sheets.cells import Formats, heading_row, number, range_ref, text

CHART_ROWS = 20


def write(book, ws, result, fm: Formats, sheet_name: str) -> list[tuple[str, int]]:
    blocks = []
    text(ws, 0, 0, "Validation", fm.title)
    spec = result.spec
    text(
        ws,
        1,
        0,
        "Mean held-out squared error at each penalty (or size) with one standard error"
        + (f", on the ln scale of {result.design.response}" if result.design.response_log else "")
        + f"; validation: {spec.scheme}, {spec.folds} parts, seed {spec.seed}.",
        fm.note,
    )
    ws.set_column(0, 0, 14)
    ws.set_column(1, 5, 13)
    ws.set_column(6, 6, 40)
    r = 3
    any_block = False
    for m in result.models:
        cv = m.curve
        if cv is None and not m.by_size:
            continue
        any_block = True
        text(ws, r, 0, f"{m.method}", fm.label)
        if m.cv_error is not None:
            text(
                ws,
                r,
                1,
                f"chosen: error {m.cv_error:.6g}"
                + (f" ± {m.cv_error_se:.3g}" if m.cv_error_se is not None else ""),
                fm.note,
            )
        r += 1
        if cv is not None and len(cv.grid):
            grid = np.asarray(cv.grid, dtype=float)
            mean = np.asarray(cv.mean_error, dtype=float)
            se = np.asarray(cv.se, dtype=float)
            is_pen = cv.grid_kind == "penalty"
            finite = np.isfinite(mean)
            lo = float(np.nanmin(np.where(finite, mean - np.nan_to_num(se), np.nan)))
            hi = float(np.nanmax(np.where(finite, mean + np.nan_to_num(se), np.nan)))
            line_r = r
            text(ws, r, 0, "marker lines", fm.note)
            for t, (label, idx) in enumerate(
                (("smallest error", cv.index_min), ("one standard error", cv.index_one_se))
            ):
                text(ws, r + 2 * t, 3, label, fm.note)
                for u, y in enumerate((lo, hi)):
                    number(ws, r + 2 * t + u, 1, grid[idx])
                    number(ws, r + 2 * t + u, 2, y)
            r += 4
            chart_r = r
            r += CHART_ROWS
            head = r
            heads = [
                "Penalty" if is_pen else "Size",
                "Mean error",
                "Standard error",
                "Lower",
                "Upper",
                "Columns kept",
                "Marker",
            ]
            heading_row(ws, head, heads[1:6], 13)
            for c, h in enumerate(heads):
                text(ws, head, c, h, fm.heading)
            chosen = cv.chosen(spec.choose) if m.choice in ("min", "one-se") else None
            for i in range(len(grid)):
                rr = head + 1 + i
                number(ws, rr, 0, grid[i])
                number(ws, rr, 1, mean[i], fm)
                number(ws, rr, 2, se[i], fm)
                number(ws, rr, 3, mean[i] - se[i], fm)
                number(ws, rr, 4, mean[i] + se[i], fm)
                number(ws, rr, 5, cv.n_selected[i])
                marks = []
                if i == cv.index_min:
                    marks.append("smallest error")
                if i == cv.index_one_se:
                    marks.append("one standard error")
                if chosen is not None and i == chosen:
                    marks.append("chosen")
                if marks:
                    text(ws, rr, 6, ", ".join(marks), fm.kept)
            first, last = head + 1, head + len(grid)
            chart = book.add_chart({"type": "scatter"})
            err = range_ref(sheet_name, first, 2, last, 2)
            chart.add_series(
                {
                    "name": "mean held-out error",
                    "categories": range_ref(sheet_name, first, 0, last, 0),
                    "values": range_ref(sheet_name, first, 1, last, 1),
                    "marker": {"type": "circle", "size": 4},
                    "y_error_bars": {
                        "type": "custom",
                        "plus_values": "=" + err,
                        "minus_values": "=" + err,
                    },
                }
            )
            for t, (label, dash) in enumerate(
                (("smallest error", "dash"), ("one standard error", "round_dot"))
            ):
                chart.add_series(
                    {
                        "name": label,
                        "categories": range_ref(
                            sheet_name, line_r + 2 * t, 1, line_r + 2 * t + 1, 1
                        ),
                        "values": range_ref(sheet_name, line_r + 2 * t, 2, line_r + 2 * t + 1, 2),
                        "line": {"color": "black", "dash_type": dash, "width": 1.25},
                        "marker": {"type": "none"},
                    }
                )
            chart.set_title({"name": f"Cross-validation: {m.method}"})
            xa: dict[str, object] = {
                "name": "penalty (log scale)" if is_pen else "number of columns",
                "label_position": "low",
            }
            if is_pen:
                xa["log_base"] = 10
            chart.set_x_axis(xa)
            ya: dict[str, object] = {
                "name": "mean squared error" + (" (ln scale)" if result.design.response_log else "")
            }
            if lo > 0 and hi / lo > 20:
                # errors spanning decades (the empty model's error dwarfs the interesting
                # region near the minimum): a log scale keeps the minimum readable
                ya.update(name="mean squared error (log scale)", log_base=10)
            chart.set_y_axis(ya)
            chart.set_legend({"position": "bottom"})
            chart.set_size({"width": 640, "height": 20 * CHART_ROWS})
            ws.insert_chart(chart_r, 0, chart, {"x_offset": 5, "y_offset": 5})
            blocks.append((m.method, head))
            r = last + 2
        if m.by_size:
            text(
                ws,
                r,
                0,
                f"{m.method}: best set of each size"
                + (" (approximate search)" if m.approximate else ""),
                fm.label,
            )
            r += 1
            for c, h in enumerate(
                ["Size", "Residual sum of squares", "R squared", "BIC", "Columns"]
            ):
                text(ws, r, c, h, fm.heading)
            r += 1
            for row in m.by_size:
                number(ws, r, 0, row.size)
                number(ws, r, 1, row.rss, fm)
                number(ws, r, 2, row.r2, fm)
                number(ws, r, 3, row.bic, fm)
                text(ws, r, 4, ", ".join(row.columns) or "(none)")
                r += 1
        r += 2
    if not any_block:
        text(ws, r, 0, "No method of this study has a validation curve.", fm.note)
    return blocks
