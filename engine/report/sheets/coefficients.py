"""The coefficients sheet: one row per model column, one column per method.

Original units first, then the standardized values (per standard deviation of the column).
A zero is shown as a grey italic dot (number format, so the cell still holds 0) and a "kept by"
column names the methods that kept the row's column, so selection is visible without colour.
Then stability shares (Meinshausen & Buhlmann 2010), robust standard errors where a method has
them (e.g. least squares after lasso), and the focal-effect block of double selection
(Belloni, Chernozhukov & Hansen 2014).
"""

from __future__ import annotations

__all__ = ["write"]

from engine.report.sheets.cells import Formats, heading_row, number, text


def _coef(ws, r: int, c: int, value: float, fm: Formats) -> None:
    if value == 0.0:
        ws.write_number(r, c, 0.0, fm.zero)
    else:
        number(ws, r, c, value, fm)


def reads_as(enc) -> str:
    """What one unit of a model column is, in words a spreadsheet reader can act on: the
    level a category's coefficient is measured against, the day a date's trend counts from."""

    def named(n, names: tuple[str, ...]) -> str:  # "3" or "3.0" -> the third name
        try:
            k = int(float(n))
        except (TypeError, ValueError):
            return str(n)
        return names[k - 1] if 1 <= k <= len(names) else str(n)

    blank = "(blank)"
    if enc.kind == "number":
        return "per unit"
    if enc.kind == "ln":
        return f"per unit of ln({enc.source}): {enc.source} multiplied by e (2.718)"
    if enc.kind == "flag":
        return "yes against no"
    if enc.kind == "level":
        return f"'{enc.level or blank}' against '{enc.reference or blank}'"
    if enc.kind == "trend":
        return f"per day from {enc.origin}"
    if enc.kind == "month":
        return f"{named(enc.level, _MONTHS)} against {named(enc.reference, _MONTHS)}"
    if enc.kind == "weekday":
        return f"{named(enc.level, _WEEKDAYS)} against {named(enc.reference, _WEEKDAYS)}"
    if enc.kind == "missing":
        return "an empty cell (filled) against a value"
    if enc.kind == "product" and enc.factors:
        return f"{enc.factors[0]} times {enc.factors[1]}"
    return enc.kind


_WEEKDAYS = ("Monday", "Tuesday", "Wednesday", "Thursday", "Friday", "Saturday", "Sunday")
_MONTHS = (
    "January", "February", "March", "April", "May", "June", "July", "August", "September",
    "October", "November", "December",
)  # fmt: skip


def write(book, ws, result, fm: Formats) -> None:
    d = result.design
    models = result.models
    stab = result.stability
    with_se = [m for m in models if m.std_errors]
    text(ws, 0, 0, "Coefficients", fm.title)
    text(
        ws,
        1,
        0,
        "Original units: change in the response per unit of the column. Standardized: per "
        "standard deviation of the column. A dot (·) marks a coefficient of exactly zero "
        "(the method left the column out).",
        fm.note,
    )
    heads = ["Model column", "Source column", "One unit is", "Kept by"]
    heads += [f"{m.method}" for m in models]
    heads += [f"{m.method} (standardized)" for m in models]
    if stab is not None:
        heads += [f"Stability share ({stab.runs} half-samples)", "Stable"]
    heads += [f"{m.method} robust standard error" for m in with_se]
    text(ws, 3, 0, "Units:", fm.note)
    text(ws, 3, 4, "original units", fm.note)
    text(ws, 3, 4 + len(models), "standardized", fm.note)
    if with_se:  # the caution where the numbers are read, not only on the Summary
        se0 = 4 + 2 * len(models) + (2 if stab is not None else 0)
        text(
            ws,
            3,
            se0,
            "standard errors after selection: they ignore that the columns were chosen, so "
            "they understate the uncertainty (too small to judge whether a column matters)",
            fm.note,
        )
    heading_row(ws, 4, heads[4:], 14)
    for c, h in enumerate(heads):
        text(ws, 4, c, h, fm.heading)
    ws.set_column(0, 1, 24)
    ws.set_column(2, 2, 30)
    # wide enough for the longest list of methods keeping a column (bold text runs wider)
    ws.set_column(3, 3, min(60, max(28, 1.15 * len(", ".join(m.method for m in models)))))
    ws.set_column(4, len(heads), 14)
    ws.freeze_panes(5, 1)
    r = 5
    text(ws, r, 0, "(intercept)", fm.label)
    for t, m in enumerate(models):
        number(ws, r, 4 + t, m.intercept, fm)
    r += 1
    for enc in d.encodings:
        name = enc.name
        text(ws, r, 0, name, fm.label)
        text(ws, r, 1, enc.source)
        text(ws, r, 2, reads_as(enc), fm.note)
        kept = [m.method for m in models if float(m.coefficients.get(name, 0.0)) != 0.0]
        text(ws, r, 3, ", ".join(kept) if kept else "none", fm.kept if kept else fm.note)
        c = 4
        for m in models:
            _coef(ws, r, c, float(m.coefficients.get(name, 0.0)), fm)
            c += 1
        for m in models:
            _coef(ws, r, c, float(m.std_coefficients.get(name, 0.0)), fm)
            c += 1
        if stab is not None:
            number(ws, r, c, stab.shares.get(name), fm.share)
            text(ws, r, c + 1, "yes" if name in stab.stable else "")
            c += 2
        for m in with_se:
            number(ws, r, c, (m.std_errors or {}).get(name), fm)
            c += 1
        r += 1
    if result.focal is not None:
        f = result.focal
        r += 1
        text(ws, r, 0, f"Focal effect of '{f.column}' (double selection)", fm.title)
        r += 1
        d = result.design
        enc = d.encodings[d.names.index(f.column)] if f.column in d.names else None
        logged = d.response_log or (enc is not None and enc.kind == "ln")
        rows = [
            (
                "Estimate (ln scale: read it as below)" if logged else "Estimate (original units)",
                f.estimate,
            ),
            (f"Standard error ({f.covariance})", f.std_error),
            ("95% interval, low", f.ci_low),
            ("95% interval, high", f.ci_high),
            ("Single-selection estimate, for contrast", f.naive_estimate),
            ("Penalty rule", f.penalty_rule),
            ("Controls kept for the response", ", ".join(f.controls_for_response) or "none"),
            (f"Controls kept for '{f.column}'", ", ".join(f.controls_for_focal) or "none"),
            ("Controls in the final fit (union)", ", ".join(f.controls) or "none"),
        ]
        # values in the fourth column: the labels run across the empty cells before them
        for label, value in rows:
            text(ws, r, 0, label, fm.label)
            if isinstance(value, str):
                text(ws, r, 3, value)
            else:
                number(ws, r, 3, value, fm)
            r += 1
        for note in f.notes:  # how to read it (logs, which label is 1), few groups...
            text(ws, r, 0, note[:1].upper() + note[1:], fm.note)
            r += 1
        text(
            ws,
            r,
            0,
            "The interval is valid for this one effect after choosing controls from the "
            "data (Belloni, Chernozhukov & Hansen 2014); it is not a causal claim by itself.",
            fm.note,
        )
