"""Terminal helpers shared by the commands: a live progress line and result summaries."""

from __future__ import annotations

__all__ = ["terminal_progress", "summary_text", "CAUTIONS"]

import time

from engine.cautions import short_lines
from engine.design import drop_reasons_text
from engine.progress import Progress

# one line each, worded once for every front (engine.cautions)
CAUTIONS = tuple(short_lines())


def terminal_progress(ctx) -> Progress:
    """A progress that redraws one line on stderr when it is a terminal, and stays silent otherwise."""
    if not ctx.interactive:
        return Progress()
    last = [0.0]
    start = time.monotonic()

    def show(fraction: float, words: str) -> None:
        now = time.monotonic()
        if now - last[0] < 0.1 and fraction < 1.0:
            return
        last[0] = now
        if now - start < 0.5 and fraction < 1.0:
            return  # short runs stay quiet
        bar = "#" * int(fraction * 24)
        line = f"\r[{bar:<24}] {fraction * 100:5.1f}%  {words[:60]:<60}"
        ctx.stderr.write(line)
        if fraction >= 1.0:
            ctx.stderr.write("\r" + " " * len(line) + "\r")
        ctx.stderr.flush()

    return Progress(show)


def _fmt(x: float | None, digits: int = 4) -> str:
    return "-" if x is None else f"{x:.{digits}g}"


def _count(n: int, thing: str) -> str:
    return f"{n} {thing}" + ("" if n == 1 else "s")


def summary_text(result) -> str:
    """A readable summary of a study result for the terminal."""
    d = result.design
    tested = result.test_rows is not None
    lines = [
        f"{d.response_label} explained by {_count(len(d.names), 'model column')}; "
        f"{d.n_rows} rows used, {d.rows_dropped} dropped"
        + (f" ({drop_reasons_text(d.drop_reasons)})" if d.drop_reasons else "")
        + (f"; {len(result.test_rows)} held back as a final test" if tested else ""),
        f"source: {d.source}, sheet '{d.sheet}', header row {d.header_row}",
        "",
        f"{'method':<18}{'penalty':>11}{'cv error':>12}{'± se':>11}{'cv R2':>8}{'kept':>6}"
        f"{'R2':>8}" + (f"{'test error':>12}{'test R2':>9}" if tested else ""),
    ]
    for m in result.models:
        lines.append(
            f"{m.method:<18}{_fmt(m.penalty):>11}{_fmt(m.cv_error):>12}{_fmt(m.cv_error_se, 3):>11}"
            f"{_fmt(m.cv_r2, 3):>8}{len(m.selected):>6}{_fmt(m.r2, 3):>8}"
            + (f"{_fmt(m.test_error):>12}{_fmt(m.test_r2, 3):>9}" if tested else "")
            + ("  (approximate search)" if m.approximate else "")
        )
    for m in result.models:
        if 0 < len(m.selected) <= 15:
            lines.append(f"  {m.method}: {', '.join(m.selected)}")
        elif m.selected:
            lines.append(
                f"  {m.method}: {', '.join(m.selected[:15])}, ... ({len(m.selected)} in all)"
            )
    if result.focal is not None:
        f = result.focal
        lines += [
            "",
            f"effect of {f.column} (double selection, {f.penalty_rule} penalty): {f.estimate:.4g} "
            f"(robust se {f.std_error:.3g}; 95% interval {f.ci_low:.4g} to {f.ci_high:.4g}); "
            f"{_count(len(f.controls), 'control')}",
        ]
        lines += [f"  {note}" for note in f.notes]
    if result.stability is not None:
        s = result.stability
        lines += [
            "",
            f"stable over {s.runs} half-samples (share >= {s.threshold:g}): {', '.join(s.stable) or 'none'}",
        ]
    # the study's warnings, then each method's own notes (a choice at the grid's edge ...)
    notes = list(result.warnings)
    notes += [f"{m.method}: {n}" for m in result.models for n in m.notes]
    notes = list(dict.fromkeys(notes))
    if notes:
        lines += ["", "warnings:"] + [f"  - {w}" for w in notes]
    lines += ["", "cautions:"] + [f"  - {c}" for c in CAUTIONS]
    return "\n".join(lines)
