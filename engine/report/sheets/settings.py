"""The settings sheet: the study specification and everything scoring needs, machine-readable.

Layout version 2 when the study took natural logs (read by ``read_settings_v2``), else layout
version 1 (``read_settings_v1``), so that such workbooks stay readable by an older Tamis, while
one that could not apply the logs refuses the newer layout. Column A holds
keys or section markers in square brackets; values follow in columns B onwards. Text values
are JSON; a JSON text longer than one cell holds is split over consecutive cells of its row.

    A1  "Tamis settings"            B1  layout version (1)
    [about]        tool version, specification schema version, written at, scoring model
    [study]        one row per StudySpec field (JSON), the schema version included
    [design]       response, sheet, header row, rows used, response mean; version 2 adds
                   "response scale": "ln" or "original"
    [encodings]    header row, then per model column: name, source, letter, kind, level, fill,
                   origin, reference, mean, sd (level/origin/reference as JSON), low, high;
                   version 2 adds factors (JSON, the two columns a product multiplies)
    [levels]       per category source: source, JSON list of its levels (reference first)
    [models]       header row, then per method: method, intercept, penalty, mix, choice,
                   cv_error, cv_error_se, r2; version 2 adds smearing (the factor that takes an
                   ln-scale prediction back to the response's units)
    [coefficients] header row (name, then one column per method), one row per model column
    [end]
"""

from __future__ import annotations

import numpy as np

__all__ = ["write", "LAYOUT_VERSION", "TITLE", "CHUNK"]

import datetime as _dt
import json

from engine.report.sheets.cells import Formats, number, text

LAYOUT_VERSION = 2  # the newest layout this Tamis writes and reads
TITLE = "Tamis settings"
CHUNK = 30_000  # characters per cell; spreadsheet cells hold at most 32,767


def _json_cells(ws, r: int, value: object) -> None:
    s = json.dumps(value, ensure_ascii=False, allow_nan=False)
    for i in range(0, max(len(s), 1), CHUNK):
        text(ws, r, 1 + i // CHUNK, s[i : i + CHUNK])


def write(book, ws, result, fm: Formats, scoring_method: str) -> None:
    d = result.design
    ws.set_column(0, 0, 22)
    ws.set_column(1, 12, 16)
    text(ws, 0, 0, TITLE, fm.title)
    # logs and products are layout 2: a reader of layout 1 would score them wrongly
    needs_v2 = d.response_log or any(e.kind in ("ln", "product") for e in d.encodings)
    ws.write_number(0, 1, LAYOUT_VERSION if needs_v2 else 1)
    text(
        ws,
        1,
        0,
        "Machine-readable record of this study: `tamis fit` and the desktop can re-run it "
        "from here, and `tamis score` reads the model from here. Please do not edit.",
        fm.note,
    )
    r = 3

    def key(k: str, fmt=None) -> None:
        text(ws, r, 0, k, fmt)

    text(ws, r, 0, "[about]", fm.label)
    r += 1
    for k, v in (
        ("tool version", result.tool_version),
        ("spec schema version", result.spec.schema_version),
        ("written", _dt.datetime.now().astimezone().isoformat(timespec="seconds")),
        ("scoring model", scoring_method),
    ):
        key(k)
        _json_cells(ws, r, v)
        r += 1
    text(ws, r, 0, "[study]", fm.label)
    r += 1
    for k, v in result.spec.to_dict().items():
        key(k)
        _json_cells(ws, r, v)
        r += 1
    text(ws, r, 0, "[design]", fm.label)
    r += 1
    for k, v in (
        ("response", d.response),
        ("sheet", d.sheet),
        ("header row", d.header_row),
        ("rows used", d.n_rows),
        ("rows dropped", d.rows_dropped),
        ("response mean", d.y_mean),
        *((("response scale", "ln" if d.response_log else "original"),) if needs_v2 else ()),
    ):
        key(k)
        _json_cells(ws, r, v)
        r += 1
    text(ws, r, 0, "[encodings]", fm.label)
    r += 1
    for c, h in enumerate(
        (
            "name", "source", "letter", "kind", "level", "fill", "origin", "reference", "mean",
            "sd", "low", "high", "factors",
        )
    ):  # fmt: skip
        text(ws, r, c, h, fm.heading)
    r += 1
    for j, e in enumerate(d.encodings):
        text(ws, r, 0, e.name)
        text(ws, r, 1, e.source)
        text(ws, r, 2, e.letter)
        text(ws, r, 3, e.kind)
        text(ws, r, 4, json.dumps(e.level))
        number(ws, r, 5, e.fill)
        text(ws, r, 6, json.dumps(e.origin))
        text(ws, r, 7, json.dumps(e.reference))
        number(ws, r, 8, d.means[j])
        number(ws, r, 9, d.sds[j])
        if d.n_rows:  # the range of the rows used: new rows beyond it are extrapolation
            number(ws, r, 10, float(np.min(d.X[:, j])))
            number(ws, r, 11, float(np.max(d.X[:, j])))
        if e.factors:
            text(ws, r, 12, json.dumps(list(e.factors)))
        r += 1
    text(ws, r, 0, "[levels]", fm.label)
    r += 1
    for source, levels in d.category_levels.items():
        text(ws, r, 0, source)
        _json_cells(ws, r, list(levels))
        r += 1
    text(ws, r, 0, "[models]", fm.label)
    r += 1
    model_heads = [
        "method",
        "intercept",
        "penalty",
        "mix",
        "choice",
        "cv_error",
        "cv_error_se",
        "r2",
    ]
    if needs_v2:
        model_heads.append("smearing")
    for c, h in enumerate(model_heads):
        text(ws, r, c, h, fm.heading)
    r += 1
    for m in result.models:
        text(ws, r, 0, m.method)
        number(ws, r, 1, m.intercept)
        number(ws, r, 2, m.penalty)
        number(ws, r, 3, m.mix)
        if m.choice:
            text(ws, r, 4, m.choice)
        number(ws, r, 5, m.cv_error)
        number(ws, r, 6, m.cv_error_se)
        number(ws, r, 7, m.r2)
        if needs_v2:
            number(ws, r, 8, m.smearing)
        r += 1
    text(ws, r, 0, "[coefficients]", fm.label)
    r += 1
    text(ws, r, 0, "name", fm.heading)
    for t, m in enumerate(result.models):
        text(ws, r, 1 + t, m.method, fm.heading)
    r += 1
    for name in d.names:
        text(ws, r, 0, name)
        for t, m in enumerate(result.models):
            ws.write_number(r, 1 + t, float(m.coefficients.get(name, 0.0)))
        r += 1
    text(ws, r, 0, "[end]", fm.label)
