"""`tamis rerun BOOK [--out PATH | --in-place] [--json]`.

Runs again the study whose settings a results workbook holds (its settings sheet), on the data
the workbook itself holds (results are written with the user's sheets, so the workbook alone
suffices), prints the result as `tamis fit` does, and says whether the saved results were
reproduced: the same rows used and, per method, the same cross-validated error and kept columns.
"""

from __future__ import annotations

from pathlib import Path

from engine.errors import InputProblem, Place


def run(args, ctx) -> int:
    from engine.commands.fit import finish
    from engine.commands.terminal import terminal_progress
    from engine.report.reproduce import differences, spec_for_rerun
    from engine.report.settings_reader import load_settings
    from engine.study import run_study

    book = Path(args.book)
    if not book.exists():
        raise InputProblem(f"file '{book}' does not exist", Place(file=str(book)))
    record = load_settings(book)
    spec = spec_for_rerun(record, book)
    if args.workers is not None:
        spec = spec.replace(workers=args.workers)
    print(
        f"running again the study saved in '{book}' (sheet '{spec.sheet}', written by Tamis "
        f"{record.about.get('tool version', '?')} on {record.about.get('written', '?')})",
        file=ctx.stderr,
    )
    result = run_study(spec, terminal_progress(ctx))
    found = differences(record, result)
    if found:
        result.warnings.append(
            "not reproduced: " + "; ".join(found) + " (the data, the settings or the Tamis "
            "version changed since the results were saved)"
        )
    code = finish(
        result, args, ctx, {"rerun_of": str(book), "reproduced": not found, "differences": found}
    )
    print(
        "saved results reproduced: the same rows, cross-validated errors and kept columns"
        if not found
        else f"saved results NOT reproduced: {'; '.join(found)}",
        file=ctx.stderr,
    )
    return code
