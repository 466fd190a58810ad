"""`tamis score BOOK --results RESULTS_BOOK [--sheet NAME] [--method M] [--out PATH]`.

Applies the model stored in a results workbook (its settings sheet) to the rows of another
workbook and writes the predictions to a new workbook (default: BOOK's stem + "-scored.xlsx",
beside BOOK). BOOK itself is never written. Missing or renamed columns and category levels the
model never saw are input problems naming the column (with close matches) or the row.
"""

from __future__ import annotations

from pathlib import Path

from engine.errors import InputProblem, Place


def default_out(book: Path) -> Path:
    return book.with_name(book.stem + "-scored.xlsx")


def run(args, ctx) -> int:
    from engine.intake import read_table
    from engine.report.predictions import write_predictions
    from engine.report.safe_write import refuse_to_replace_users_file
    from engine.report.settings_reader import load_scoring_model

    book = Path(args.book)
    if not book.exists():
        raise InputProblem(f"file '{book}' does not exist", Place(file=str(book)))
    model = load_scoring_model(args.results, getattr(args, "method", None))
    out = Path(args.out) if getattr(args, "out", None) else default_out(book)
    if out.exists() and out.resolve() == book.resolve():
        raise InputProblem(
            f"the output '{out}' is the workbook being scored; choose another --out",
            Place(file=str(out)),
        )
    if out.exists() and out.resolve() == Path(args.results).resolve():
        raise InputProblem(
            f"the output '{out}' is the results workbook that holds the model; choose "
            "another --out",
            Place(file=str(out)),
        )
    refuse_to_replace_users_file(out)
    if out.suffix.lower() not in (".xlsx", ".xlsm"):
        raise InputProblem(f"--out must name an .xlsx file (got '{out}')", Place(file=str(out)))
    table = read_table(book, sheet=getattr(args, "sheet", None))
    preds, notes = model.predict_with_notes(table)
    cautions = model.range_cautions(table)
    shown = [n or c for n, c in zip(notes, cautions)]  # a row without a prediction needs none
    written = write_predictions(table, model, preds, shown, book, out, str(args.results))
    ctx.written.append(str(written))
    unscored = sum(1 for n in notes if n)
    print(
        f"scored {table.n_rows - unscored} of {table.n_rows} rows of sheet '{table.sheet}' with "
        f"'{model.method}' from '{args.results}'",
        file=ctx.stdout,
    )
    if unscored:
        first = next(i for i, n in enumerate(notes) if n)
        print(
            f"{unscored} {'row' if unscored == 1 else 'rows'} left without a prediction "
            f"(first: row {int(table.row_numbers[first])}, "
            f"{notes[first]})",
            file=ctx.stderr,
        )
    beyond = [i for i, (n, c) in enumerate(zip(notes, cautions)) if c and not n]
    if beyond:
        first = beyond[0]
        one = len(beyond) == 1
        print(
            f"{len(beyond)} {'row lies' if one else 'rows lie'} outside the range the model was "
            f"fitted on: {'its prediction is an extrapolation' if one else 'their predictions are extrapolations'}, "
            f"not supported by the data (first: row {int(table.row_numbers[first])}, "
            f"{cautions[first][len('extrapolation: ') :]})",
            file=ctx.stderr,
        )
    print(f"predictions written to {written}", file=ctx.stdout)
    return 0
