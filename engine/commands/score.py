"""`tamis score BOOK --results RESULTS_BOOK [--sheet NAME] [--method M] [--out PATH] [--json]`.

Applies the model stored in a results workbook (its settings sheet) to the rows of another
workbook and writes the predictions to a new workbook (default: BOOK's stem + "-scored.xlsx",
beside BOOK). BOOK itself is never written. Missing or renamed columns and category levels the
model never saw are input problems naming the column (with close matches) or the row.
"""

from __future__ import annotations

import json
from pathlib import Path

from engine.errors import InputProblem, Place


def run(args, ctx) -> int:
    from engine.report.score_rows import score_rows
    from engine.report.settings_reader import load_scoring_model

    book = Path(args.book)
    if not book.exists():
        raise InputProblem(f"file '{book}' does not exist", Place(file=str(book)))
    model = load_scoring_model(args.results, getattr(args, "method", None))
    done = score_rows(
        book,
        model,
        out=getattr(args, "out", None),
        sheet=getattr(args, "sheet", None),
        results_book=args.results,
    )
    ctx.written.append(str(done.out))
    human = ctx.stderr if getattr(args, "json", False) else ctx.stdout
    print(
        f"scored {done.scored} of {done.rows} rows of sheet '{done.sheet}' with "
        f"'{done.method}' from '{args.results}'",
        file=human,
    )
    if done.range_note:
        print(done.range_note, file=human)
    for line in done.cautions():
        print(line, file=ctx.stderr)
    print(f"predictions written to {done.out}", file=human)
    if getattr(args, "json", False):
        doc = {
            "output": str(done.out),
            "sheet": done.sheet,
            "method": done.method,
            "rows": done.rows,
            "scored": done.scored,
            "extrapolated": done.extrapolated,
            "filled": done.filled,
            "range_halfwidth": model.range_halfwidth,
            "response_scale": "ln" if model.response_log else "original",
            "cautions": done.cautions(),
            "warnings": list(done.notes),
        }
        print(json.dumps(doc), file=ctx.stdout)
    return 0
