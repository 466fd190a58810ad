"""The summary sheet: where the data came from, how the study ran, how the methods compare.

Ends with cautions in plain words (selection is not causation; standard errors after selection;
extrapolation), deferring to the reader's own review practice.
"""

from __future__ import annotations

__all__ = ["write", "CAUTIONS"]

import datetime as _dt
import math

from engine.cautions import CAUTIONS as ENGINE_CAUTIONS
from engine.design import drop_reasons_text
from engine.methods import method_info
from engine.report.sheets.cells import Formats, heading_row, number, text

# worded once for every front (engine.cautions); the sheet adds where its ranges are
CAUTIONS = tuple(
    f"{c.title}. {c.text}"
    + (
        " The lowest and highest value fitted of each column are on the scoring sheet, whose "
        "Check column names values outside them."
        if c is ENGINE_CAUTIONS[2]
        else ""
    )
    for c in ENGINE_CAUTIONS
)


def _methods_title(name: str) -> str:
    try:
        return method_info(name).title
    except Exception:
        return name


def write(book, ws, result, fm: Formats) -> None:
    spec, d = result.spec, result.design
    ws.set_column(0, 0, 34)
    ws.set_column(1, 1, 26)
    ws.set_column(2, 11, 15)
    r = 0
    text(ws, r, 0, "Tamis study results", fm.title)
    r += 2
    scheme = spec.scheme
    if scheme == "loo":
        scheme_words = "leave one out"
    elif scheme == "repeated":
        scheme_words = f"{spec.folds}-fold, repeated {spec.repeats} times"
    else:
        scheme_words = f"{spec.folds}-fold ({scheme})"
    reasons = drop_reasons_text(d.drop_reasons, limit=10)
    facts: list[tuple[str, object]] = [
        ("Data file", spec.source),
        ("Sheet", d.sheet),
        ("Header row", d.header_row),
        ("Rows used", d.n_rows),
        ("Rows dropped", d.rows_dropped),
        ("Why rows were dropped", reasons),
        ("Response", d.response_label),
        ("Model columns (after encoding)", d.n_cols),
        (
            "Columns left out",
            "; ".join(f"{k}: {v}" for k, v in d.dropped_columns.items()) or "none",
        ),
        ("Methods", ", ".join(spec.methods)),
        ("Validation scheme", scheme_words),
        ("Choice rule", "smallest error" if spec.choose == "min" else "one standard error"),
        ("Seed", spec.seed),
        ("Run started", result.started or _dt.datetime.now().isoformat(timespec="seconds")),
        ("Run time (seconds)", round(float(result.seconds), 2)),
        ("Tool version", f"Tamis {result.tool_version}"),
    ]
    if result.test_rows is not None:
        facts.insert(
            5,
            (
                "Rows held back as a final test",
                f"{len(result.test_rows)}: never fitted or used to choose; "
                "see the test columns of the comparison",
            ),
        )
    if spec.focal:
        facts.append(("Focal column", spec.focal))
    for label, value in facts:
        text(ws, r, 0, label, fm.label)
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            number(ws, r, 1, value)
        else:
            text(ws, r, 1, value)
        r += 1

    r += 1
    text(ws, r, 0, "Comparison of the methods", fm.label)
    r += 1
    heads = [
        "Method",
        "Name",
        "Cross-validated error",
        "Its standard error",
        "Cross-validated R squared",
        "Columns kept",
        "In-sample R squared",
        "Penalty",
        "Choice",
        "Notes",
    ]
    tested = result.test_rows is not None
    if tested:
        heads += ["Error on the final test rows", "R squared on the final test rows"]
    heading_row(ws, r, heads[2:], 15)
    for c, h in enumerate(heads):
        text(ws, r, c, h, fm.heading)
    r += 1
    best = result.scoring_method() if result.models else None
    for m in result.models:
        text(ws, r, 0, _methods_title(m.method), fm.label if m.method == best else None)
        text(ws, r, 1, m.method)
        number(ws, r, 2, m.cv_error, fm)
        number(ws, r, 3, m.cv_error_se, fm)
        number(ws, r, 4, m.cv_r2, fm)
        number(ws, r, 5, len(m.selected))
        number(ws, r, 6, m.r2, fm)
        number(ws, r, 7, m.penalty, fm)
        if m.choice:
            text(ws, r, 8, m.choice)
        notes = list(m.notes)
        if m.approximate:
            notes.insert(0, "approximate search")
        if m.method == best:
            notes.insert(0, "used on the scoring sheet")
        if notes:
            text(ws, r, 9, "; ".join(notes))
        if tested:
            number(ws, r, 10, m.test_error, fm)
            number(ws, r, 11, m.test_r2, fm)
        r += 1
    if result.focal is not None:
        f = result.focal
        r += 1
        text(ws, r, 0, f"Effect of '{f.column}' (double selection)", fm.label)
        text(
            ws,
            r,
            1,
            f"{f.estimate:.6g} (standard error {f.std_error:.4g}, "
            f"95% interval {f.ci_low:.6g} to {f.ci_high:.6g}); details on the coefficients sheet",
        )
        r += 1
    warnings = list(dict.fromkeys(list(result.warnings) + list(d.warnings)))
    r += 1
    text(ws, r, 0, "Warnings", fm.label)
    r += 1
    if not warnings:
        text(ws, r, 0, "none", fm.note)
        r += 1
    for w in warnings:
        text(ws, r, 0, w)
        r += 1
    r += 1
    text(ws, r, 0, "Cautions", fm.label)
    r += 1
    for caution in CAUTIONS:
        text(ws, r, 0, caution)
        r += 1
    _ = math  # numbers above are written through `number`, which skips non-finite values
