"""`tamis score BOOK --results RESULTS_BOOK [--sheet NAME] [--method M] [--out PATH]`.

Applies the model stored in a results workbook (its settings sheet) to the rows of another
workbook and writes the predictions to a new workbook (default: BOOK's stem + "-scored.xlsx",
beside BOOK). BOOK itself is never written. Missing or renamed columns and category levels the
model never saw are input problems naming the column (with close matches) or the row.
"""

from __future__ import annotations

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
    print(
        f"scored {done.scored} of {done.rows} rows of sheet '{done.sheet}' with "
        f"'{done.method}' from '{args.results}'",
        file=ctx.stdout,
    )
    if done.range_note:
        print(done.range_note, file=ctx.stdout)
    for line in done.cautions():
        print(line, file=ctx.stderr)
    print(f"predictions written to {done.out}", file=ctx.stdout)
    return 0
