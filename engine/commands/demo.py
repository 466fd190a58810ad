"""`tamis demo`: write the invented demo workbook, run the default analyses, show the result.

Two studies run on the demo workbook: the roastery lots (more columns than rows; which of ~240
readings drive the cup score) and the bakery demand (messy cells; the effect of price on demand
with controls chosen by double selection). Each writes its own results workbook beside the demo
workbook, so the demo workbook itself stays as generated. With a display, the desktop window
opens on the first results workbook; without one, the summaries are printed.
"""

from __future__ import annotations

import json
import os
import sys
from pathlib import Path

from engine.commands.terminal import summary_text, terminal_progress
from engine.errors import InputProblem
from engine.study_spec import StudySpec

DEFAULT_NAME = "tamis-demo.xlsx"


def demo_specs(book: Path) -> list[tuple[str, StudySpec]]:
    """The default analyses of the demo workbook (also used by tests and the installer check)."""
    return [
        (
            "roastery",
            StudySpec(
                source=str(book),
                sheet="Roastery lots",
                response="cup_score",
                methods=(
                    "lasso",
                    "ridge",
                    "elastic-net",
                    "adaptive-lasso",
                    "post-lasso",
                    "forward-stepwise",
                ),
                seed=1,
                stability_runs=50,
            ),
        ),
        (
            "bakery",
            StudySpec(
                source=str(book),
                sheet="Bakery demand",
                response="loaves_sold",
                methods=("ols", "lasso", "ridge", "post-lasso", "best-subset"),
                focal="price",
                seed=1,
                missing="fill",
            ),
        ),
    ]


def has_display() -> bool:
    if sys.platform in ("win32", "darwin"):
        return True
    return bool(os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY"))


def run(args, ctx) -> int:
    from demo.generate import build_demo_workbook
    from engine.report import write_results
    from engine.study import run_study

    book = Path(args.out) if args.out else Path.cwd() / DEFAULT_NAME
    if args.out and book.exists():
        raise InputProblem(
            f"'{book}' already exists; choose another --out path (the demo never overwrites a file you named)"
        )
    if book.suffix.lower() != ".xlsx":
        raise InputProblem(f"the demo workbook is an .xlsx file; '{book}' has another extension")
    build_demo_workbook(book)
    ctx.written.append(str(book))
    print(f"demo workbook written to {book}", file=ctx.stderr)

    documents = []
    written: list[Path] = []
    for label, spec in demo_specs(book):
        print(f"running the {label} analysis ...", file=ctx.stderr)
        result = run_study(spec, terminal_progress(ctx))
        out = book.with_name(f"{book.stem}-{label}-results.xlsx")
        if out.exists():
            out.unlink()  # our own output from an earlier demo run
        result.output = str(write_results(result, out=out))
        written.append(out)
        ctx.written.append(result.output)
        if args.json:
            documents.append({"analysis": label, **result.to_json()})
        else:
            print(f"\n=== {label}: sheet '{spec.sheet}' ===", file=ctx.stdout)
            print(summary_text(result), file=ctx.stdout)
            print(f"\nresults written to {result.output}", file=ctx.stdout)
    if args.json:
        json.dump(
            {"demo_workbook": str(book), "analyses": documents},
            ctx.stdout,
            indent=2,
            allow_nan=False,
        )
        ctx.stdout.write("\n")
        return 0
    if has_display() and not os.environ.get("TAMIS_NO_WINDOW"):
        print(f"\nopening the desktop window on {written[0]}", file=ctx.stderr)
        from engine.commands.desktop import open_window

        return open_window([str(written[0]), "--show-saved"], ctx)
    print(
        "\n(no display found: the same analysis ran headless; open the results workbooks in any "
        "spreadsheet program, or run 'tamis desktop' where a display exists)",
        file=ctx.stdout,
    )
    return 0
