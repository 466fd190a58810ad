"""The ``tamis`` command line: argument parsing and the one error boundary of this front.

Every subcommand lives in ``engine.commands.<name>`` as ``run(args, ctx) -> int``. Failures map
to exit statuses: 0 ok, 2 input or usage problem (one line naming the place), 3 cancelled,
1 unexpected failure (a pointer to a log file holding the traceback; ``--traceback`` prints it).
Heavy imports happen inside the subcommands so ``tamis --help`` is instant.
"""

from __future__ import annotations

__all__ = ["main", "build_parser"]

import argparse
import dataclasses
import importlib
import json
import os
import sys
import traceback
from collections.abc import Sequence

from engine import __version__
from engine.context import Context, default_context, tune_own_process, write_error_log
from engine.errors import TamisError
from engine.methods import DEFAULT_METHODS, METHODS


class _Parser(argparse.ArgumentParser):
    """argparse that reports usage problems as exit 2 through our boundary instead of exiting."""

    def error(self, message: str):  # type: ignore[override]
        raise _UsageError(
            f"{message} (see 'tamis {self.prog.split()[-1]} --help')"
            if " " in self.prog
            else message
        )


class _UsageError(Exception):
    pass


def build_parser() -> argparse.ArgumentParser:
    p = _Parser(
        prog="tamis",
        description="Choose the columns that matter in a workbook and write "
        "the results back as sheets with charts and live scoring formulas.",
    )
    p.add_argument("--version", action="version", version=f"tamis {__version__}")
    p.add_argument(
        "--traceback", action="store_true", help="print the full traceback of an unexpected failure"
    )
    sub = p.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    s = sub.add_parser("inspect", help="list the sheets and describe every column of one sheet")
    s.add_argument("book", help="workbook or CSV file")
    s.add_argument("--sheet", help="sheet name (default: the first visible sheet)")
    s.add_argument(
        "--header-row", type=int, help="1-based row holding the column headings (default: detected)"
    )
    s.add_argument("--json", action="store_true", help="print one JSON document instead of a table")

    f = sub.add_parser(
        "fit", help="fit and cross-validate the chosen methods and write the result sheets"
    )
    f.add_argument("book", help="workbook or CSV file")
    f.add_argument("--response", required=True, help="the column to predict")
    f.add_argument("--sheet", help="sheet name (default: the first visible sheet)")
    f.add_argument(
        "--header-row", type=int, help="1-based row holding the column headings (default: detected)"
    )
    f.add_argument(
        "--candidates",
        nargs="+",
        metavar="COLUMN",
        help="candidate columns (default: every usable column)",
    )
    f.add_argument(
        "--exclude", nargs="+", metavar="COLUMN", default=[], help="columns to leave out"
    )
    f.add_argument(
        "--interact",
        nargs=2,
        action="append",
        default=[],
        metavar=("COLUMN", "COLUMN"),
        help="also let two candidate columns act together: their product enters as a candidate "
        "(for a category, one product per level); a number column named twice adds its square "
        "(a curved effect); repeat for more pairs",
    )
    f.add_argument(
        "--scoring-method",
        metavar="METHOD",
        help="the method the scoring sheet uses, one of --methods (default: the one with the "
        "smallest cross-validated error)",
    )
    f.add_argument(
        "--log",
        nargs="+",
        metavar="COLUMN",
        default=[],
        help="use the natural log of these number columns (the response too, if named; "
        "predictions then come back in its units); their values must be above 0",
    )
    f.add_argument(
        "--methods",
        help="comma-separated methods from: "
        + ", ".join(m.name for m in METHODS)
        + " (default: %(default)s)",
        default=",".join(DEFAULT_METHODS),
    )
    f.add_argument("--folds", type=int, help="cross-validation folds (default: 10)")
    f.add_argument(
        "--scheme",
        choices=["kfold", "repeated", "grouped", "time", "loo"],
        help="how rows are split for validation (default: kfold; grouped with --group, "
        "time with --time-order)",
    )
    f.add_argument("--repeats", type=int, help="repetitions for --scheme repeated (default: 5)")
    f.add_argument(
        "--group",
        metavar="COLUMN",
        help="rows sharing this column's value stay in one fold (implies --scheme grouped); "
        "standard errors of the focal effect and of post-lasso are clustered by it",
    )
    f.add_argument(
        "--time-order",
        metavar="COLUMN",
        help="column giving the time order (implies --scheme time): rows are cut into "
        "consecutive blocks, each part trains on the earlier blocks and validates on the next "
        "(forward chaining); rows sharing one time stay in one block",
    )
    f.add_argument(
        "--choose",
        default="min",
        choices=["min", "one-se"],
        help="pick the penalty with the smallest error, or the simplest within one standard error",
    )
    f.add_argument(
        "--seed", type=int, default=0, help="seed for the random fold split (default: %(default)s)"
    )
    f.add_argument(
        "--penalties",
        type=int,
        default=100,
        help="penalty values on each path (default: %(default)s)",
    )
    f.add_argument(
        "--penalty-ratio",
        type=float,
        metavar="RATIO",
        help="smallest over largest penalty on each path (default: 1e-4 with more rows than "
        "columns, else 1e-2); smaller reaches weaker penalties",
    )
    f.add_argument(
        "--exact-subset-limit",
        type=int,
        default=40,
        metavar="N",
        help="best subset searches exactly up to this many candidates, above it a labelled "
        "approximate search (default: %(default)s)",
    )
    f.add_argument(
        "--mix",
        type=float,
        default=0.5,
        help="elastic-net blend, 1 = lasso, 0 = ridge (default: %(default)s)",
    )
    f.add_argument(
        "--missing",
        default="drop",
        choices=["drop", "fill"],
        help="rows with a missing candidate: drop them, or fill with the median and add a missing indicator",
    )
    f.add_argument(
        "--focal",
        metavar="COLUMN",
        help="estimate this column's effect by double selection of controls",
    )
    f.add_argument(
        "--focal-penalty",
        default="plugin",
        choices=["plugin", "cv"],
        help="penalty for double selection: the plug-in rule or cross-validation",
    )
    f.add_argument(
        "--stability",
        type=int,
        default=0,
        metavar="RUNS",
        help="half-samples for stability of selection (0 skips; 100 is usual)",
    )
    f.add_argument(
        "--date-parts",
        action="store_true",
        help="add month and weekday categories for date columns",
    )
    f.add_argument(
        "--hold-back",
        type=float,
        default=0.0,
        metavar="SHARE",
        help="hold back this share of the rows (e.g. 0.2) as a final test: no fit or choice sees "
        "them, and each model's error on them is reported (the latest rows with --time-order)",
    )
    f.add_argument("--workers", type=int, help="parallel workers (default: the machine's cores)")
    where = f.add_mutually_exclusive_group()
    where.add_argument(
        "--out", metavar="PATH", help="write a new workbook with the input's sheets plus ours"
    )
    where.add_argument(
        "--in-place", action="store_true", help="add our sheets to the input .xlsx/.xlsm itself"
    )
    f.add_argument("--json", action="store_true", help="print one JSON document with the result")

    r = sub.add_parser(
        "rerun",
        help="run again the study saved in a results workbook, on the data it holds, and say "
        "whether the saved results are reproduced",
    )
    r.add_argument("book", help="a workbook written by 'tamis fit' (or saved from the window)")
    r.add_argument("--workers", type=int, help="parallel workers (default: the machine's cores)")
    r_where = r.add_mutually_exclusive_group()
    r_where.add_argument("--out", metavar="PATH", help="write the new results to a new workbook")
    r_where.add_argument(
        "--in-place", action="store_true", help="replace the results in BOOK itself"
    )
    r.add_argument("--json", action="store_true", help="print one JSON document with the result")

    sc = sub.add_parser("score", help="predict new rows with a model stored in a results workbook")
    sc.add_argument("book", help="workbook or CSV file with new rows")
    sc.add_argument("--results", required=True, help="a workbook written by 'tamis fit'")
    sc.add_argument("--sheet", help="sheet of BOOK holding the new rows")
    sc.add_argument(
        "--method",
        metavar="METHOD",
        help="which of the results workbook's models predicts (default: the one its scoring "
        "sheet uses)",
    )
    sc.add_argument(
        "--out", metavar="PATH", help="where to write the predictions (default: BOOK-scored.xlsx)"
    )
    sc.add_argument(
        "--json",
        action="store_true",
        help="print one JSON document: where the predictions went, rows scored, the range's "
        "half-width and the cautions",
    )

    d = sub.add_parser("demo", help="write the demo workbook and run the default analysis on it")
    d.add_argument(
        "--out",
        metavar="PATH",
        help="where to write the demo workbook (default: ./tamis-demo.xlsx)",
    )
    d.add_argument("--json", action="store_true", help="print one JSON document with the result")

    w = sub.add_parser("desktop", help="open the desktop window")
    w.add_argument("book", nargs="?", help="workbook to open")
    return p


def main(argv: Sequence[str] | None = None, ctx: Context | None = None) -> int:
    if ctx is None:
        ctx = default_context()
        tune_own_process()  # a real process of our own, not a test calling main
    argv = list(sys.argv[1:] if argv is None else argv)
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except _UsageError as exc:
        print(f"tamis: error: {exc}", file=ctx.stderr)
        # the arguments could not be read, so --json is looked for among them as written
        if "--json" in argv[: argv.index("--") if "--" in argv else len(argv)]:
            _json_error(argparse.Namespace(json=True), ctx, str(exc), 2, {})
        return 2
    except SystemExit as exc:  # --help and --version
        return int(exc.code or 0)
    if not args.command:
        parser.print_help(ctx.stdout)
        return 0
    try:
        module = importlib.import_module(f"engine.commands.{args.command}")
        return int(module.run(args, ctx))
    except TamisError as exc:
        print(f"tamis: error: {exc.message}", file=ctx.stderr)
        _json_error(args, ctx, exc.message, exc.exit_code, dataclasses.asdict(exc.place))
        return exc.exit_code
    except KeyboardInterrupt:
        print(f"tamis: cancelled; {_what_was_written(ctx)}", file=ctx.stderr)
        return 3
    except BrokenPipeError:
        # the reader of the output stopped early (``tamis inspect ... | head``): not a failure
        if ctx.own_process:
            _silence_stdout()
        return 0
    except Exception:  # a real bug: keep the traceback for the report, not for the user
        text = traceback.format_exc()
        if args.traceback:
            print(text, file=ctx.stderr)
        log = _write_log(ctx, text)
        message = f"unexpected failure (a bug in Tamis; {_what_was_written(ctx)}). Details: {log}"
        print(f"tamis: {message}", file=ctx.stderr)
        _json_error(args, ctx, message, 1, {})
        return 1


def _json_error(args, ctx: Context, message: str, code: int, place: dict) -> None:
    """With --json, a failure is one JSON document on stdout too, for scripts that read it:
    {"error": message, "exit_code": code, "place": {file, sheet, column, row, cell}}."""
    if not getattr(args, "json", False):
        return
    where = {k: v for k, v in place.items() if v is not None}
    print(json.dumps({"error": message, "exit_code": code, "place": where}), file=ctx.stdout)


def _what_was_written(ctx: Context) -> str:
    if not ctx.written:
        return "nothing was written"
    return "written before it: " + ", ".join(ctx.written)


def _silence_stdout() -> None:
    """Point the process's standard output at the null device, so that the interpreter's
    final flush of the closed pipe raises nothing more."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError):  # no file descriptor behind it
        pass


def _write_log(ctx: Context, text: str) -> str:
    return write_error_log(ctx, text) or (
        "(the log file could not be written; run again with --traceback)"
    )
