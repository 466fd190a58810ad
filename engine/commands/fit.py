"""`tamis fit`: build a study specification from the arguments, run it, print and write the result."""

from __future__ import annotations

import json
from pathlib import Path

from engine.commands.terminal import summary_text, terminal_progress
from engine.errors import InputProblem
from engine.study_spec import StudySpec

# repetitions of repeated k-fold when not given (common practice: 5 to 10)
_DEFAULT_REPEATS = 5


def _scheme_of(args) -> str:
    """The validation scheme: as given, else implied by --group or --time-order; options that
    the scheme would ignore are refused rather than silently dropped."""
    scheme = args.scheme or ("grouped" if args.group else "time" if args.time_order else "kfold")
    if args.group and scheme != "grouped":
        raise InputProblem(
            f"--group is used by grouped folds only (--scheme grouped), not by --scheme {scheme}"
        )
    if args.time_order and scheme != "time":
        raise InputProblem(
            f"--time-order is used by time-ordered folds only (--scheme time), not by "
            f"--scheme {scheme}"
        )
    if args.repeats is not None and scheme != "repeated":
        raise InputProblem(f"--repeats applies to --scheme repeated only, not to --scheme {scheme}")
    if args.folds is not None and scheme == "loo":
        raise InputProblem("leave-one-out uses one fold per row: leave --folds out")
    return scheme


def spec_from_args(args) -> StudySpec:
    scheme = _scheme_of(args)
    return StudySpec(
        source=str(args.book),
        response=args.response,
        sheet=args.sheet,
        header_row=args.header_row,
        candidates=tuple(args.candidates) if args.candidates else None,
        exclude=tuple(args.exclude or ()),
        log_columns=tuple(args.log or ()),
        interactions=tuple(tuple(pair) for pair in args.interact or ()),
        focal=args.focal,
        focal_penalty=args.focal_penalty,
        group=args.group,
        time_order=args.time_order,
        methods=args.methods,
        mix=args.mix,
        folds=args.folds if args.folds is not None else 10,
        scheme=scheme,
        repeats=args.repeats if args.repeats is not None else _DEFAULT_REPEATS,
        choose=args.choose,
        seed=args.seed,
        n_penalties=args.penalties,
        penalty_ratio=args.penalty_ratio,
        max_exact_subset=args.exact_subset_limit,
        missing=args.missing,
        date_parts=args.date_parts,
        stability_runs=args.stability,
        workers=args.workers,
        scoring_method=args.scoring_method,
        test_share=args.hold_back,
    )


def run(args, ctx) -> int:
    from engine.study import run_study

    if not Path(args.book).exists():
        raise InputProblem(f"file '{args.book}' does not exist")
    spec = spec_from_args(args)
    if args.in_place and Path(args.book).suffix.lower() not in (".xlsx", ".xlsm"):
        raise InputProblem(
            f"--in-place adds sheets to .xlsx or .xlsm workbooks only; '{args.book}' is not one: use --out PATH.xlsx"
        )
    result = run_study(spec, terminal_progress(ctx))
    return finish(result, args, ctx)


def finish(result, args, ctx, extra: dict | None = None) -> int:
    """Write (when asked), then print the summary or the JSON document (with ``extra`` keys)."""
    out = getattr(args, "out", None)
    in_place = bool(getattr(args, "in_place", False))
    if out or in_place:
        from engine.report import write_results
        from engine.report.safe_write import refuse_to_replace_users_file

        if out:
            refuse_to_replace_users_file(out)

        written = write_results(result, out=out, in_place=in_place)
        result.output = str(written)
        ctx.written.append(result.output)
    if args.json:
        json.dump(
            {**result.to_json(), **(extra or {})},
            ctx.stdout,
            indent=2,
            allow_nan=False,
        )
        ctx.stdout.write("\n")
        if result.output:
            print(f"results written to {result.output}", file=ctx.stderr)
    else:
        print(summary_text(result), file=ctx.stdout)
        if result.output:
            print(f"\nresults written to {result.output}", file=ctx.stdout)
        else:
            print(
                "\n(nothing written: add --out PATH or --in-place to write the result sheets)",
                file=ctx.stdout,
            )
    return 0
