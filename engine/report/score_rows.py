"""Predict the rows of another workbook with a fitted model and write them beside it.

The one routine behind ``tamis score`` and the window's "Predict new rows": it reads the rows
through intake, predicts them (``ScoringModel.predict_with_notes``), marks predictions outside the
fitted range, gives each prediction its 95% range, and writes a copy of the book with the
predictions sheet (``predictions``). The book itself is never written; the output may not be
the book or the results workbook.
"""

from __future__ import annotations

__all__ = ["ScoreOutcome", "score_rows", "default_out"]

from dataclasses import dataclass, field
from pathlib import Path

from engine.errors import InputProblem, Place
from engine.progress import Progress, silent


@dataclass
class ScoreOutcome:
    """What a scoring run did, for both fronts to report."""

    out: Path
    sheet: str
    method: str
    rows: int
    scored: int
    # (sheet row, why) of the first row left without a prediction, and of the first
    # prediction outside the fitted range
    first_unscored: tuple[int, str] | None = None
    extrapolated: int = 0
    first_extrapolated: tuple[int, str] | None = None
    notes: list[str] = field(default_factory=list)  # intake's warnings about the new rows
    # how wide each prediction's 95% range is, in words ("" when the model has none)
    range_note: str = ""
    # predicted rows with a cell that took the stored fill, and the first of them
    filled: int = 0
    first_filled: tuple[int, str] | None = None

    def cautions(self) -> list[str]:
        """What a user must know besides the count: rows left without a prediction and
        predictions beyond the fitted range, each with the first such row."""
        lines = []
        unscored = self.rows - self.scored
        if self.first_unscored is not None:
            row, why = self.first_unscored
            lines.append(
                f"{unscored} {'row' if unscored == 1 else 'rows'} left without a prediction "
                f"(first: row {row}, {why})"
            )
        if self.first_extrapolated is not None:
            row, why = self.first_extrapolated
            one = self.extrapolated == 1
            lines.append(
                f"{self.extrapolated} {'row lies' if one else 'rows lie'} outside the range the "
                "model was fitted on: "
                + (
                    "its prediction is an extrapolation"
                    if one
                    else "their predictions are extrapolations"
                )
                + f", not supported by the data (first: row {row}, {why})"
            )
        if self.first_filled is not None:
            row, why = self.first_filled
            lines.append(
                f"{self.filled} {'row was' if self.filled == 1 else 'rows were'} predicted with an "
                f"empty or unreadable cell filled by the stored value (first: row {row}, {why})"
            )
        return lines


def default_out(book: str | Path) -> Path:
    """Where predictions go unless told: beside the book, its name + "-scored.xlsx"."""
    book = Path(book)
    return book.with_name(book.stem + "-scored.xlsx")


def score_rows(
    book: str | Path,
    model,
    *,
    out: str | Path | None = None,
    sheet: str | None = None,
    results_book: str | Path | None = None,
    model_from: str | None = None,
    progress: Progress | None = None,
) -> ScoreOutcome:
    """Predict the rows of ``book`` (sheet ``sheet``, default the first visible) with the
    ``ScoringModel`` ``model`` and write them to ``out`` (default ``default_out(book)``).

    ``results_book``: the results workbook the model was read from (never replaced);
    ``model_from``: where the model came from, in words for the predictions sheet (default:
    that workbook). An existing file that Tamis did not write is never replaced (both fronts: the
    window's save dialog asks "replace?", which is easily said yes to).
    """
    from engine.intake import read_table
    from engine.report.predictions import write_predictions
    from engine.report.safe_write import refuse_to_replace_users_file

    progress = progress or silent()
    book = Path(book)
    if not book.exists():
        raise InputProblem(f"file '{book}' does not exist", Place(file=str(book)))
    target = Path(out) if out else default_out(book)
    if target.exists() and target.resolve() == book.resolve():
        raise InputProblem(
            f"the output '{target}' is the workbook being scored; choose another output file",
            Place(file=str(target)),
        )
    if results_book and target.exists() and target.resolve() == Path(results_book).resolve():
        raise InputProblem(
            f"the output '{target}' is the results workbook that holds the model; choose "
            "another output file",
            Place(file=str(target)),
        )
    refuse_to_replace_users_file(target)
    if target.suffix.lower() not in (".xlsx", ".xlsm"):
        raise InputProblem(
            f"predictions are written as an .xlsx workbook; the output '{target}' is not one",
            Place(file=str(target)),
        )
    progress.step(0.0, "reading the new rows")
    table = read_table(
        book,
        sheet=sheet,
        progress=progress.part(0.0, 0.5, "reading the new rows"),
        fitted_ranges=model.fitted_ranges(),
    )
    progress.step(0.5, "predicting")
    preds, low, high, notes = model.predict_with_range(table)
    cautions = model.range_cautions(table)
    fills = model.fill_cautions(table)
    # a row without a prediction needs no caution; a predicted row may have two
    shown = [n or "; ".join(w for w in (c, f) if w) for n, c, f in zip(notes, cautions, fills)]
    progress.step(0.6, "writing the predictions")
    said = model_from or (f"from '{results_book}'" if results_book else "")
    ranges = (low, high) if model.range_halfwidth is not None else None
    written = write_predictions(table, model, preds, shown, book, target, said, ranges)
    rows = [int(r) for r in table.row_numbers]
    unscored = [i for i, n in enumerate(notes) if n]
    beyond = [i for i, (n, c) in enumerate(zip(notes, cautions)) if c and not n]
    filled = [i for i, (n, f) in enumerate(zip(notes, fills)) if f and not n]
    progress.step(1.0, "done")
    return ScoreOutcome(
        out=written,
        sheet=table.sheet,
        method=model.method,
        rows=table.n_rows,
        scored=table.n_rows - len(unscored),
        first_unscored=(rows[unscored[0]], notes[unscored[0]]) if unscored else None,
        extrapolated=len(beyond),
        first_extrapolated=(
            (rows[beyond[0]], cautions[beyond[0]].removeprefix("extrapolation: "))
            if beyond
            else None
        ),
        notes=list(table.warnings),
        range_note=_range_note(model),
        filled=len(filled),
        first_filled=(rows[filled[0]], fills[filled[0]].removeprefix("filled: "))
        if filled
        else None,
    )


def _range_note(model) -> str:
    h = model.range_halfwidth
    if h is None:
        return ""
    if model.response_log:
        return (
            f"each prediction has a 95% range from EXP(its ln-scale value - {h:.4g}) to "
            f"EXP(its ln-scale value + {h:.4g}), from the cross-validated error"
        )
    return f"each prediction has a 95% range of ± {_four_digits(h)}, from the cross-validated error"


def _four_digits(x: float) -> str:
    """Four significant digits without an exponent where a reader expects none (16602 rather
    than 1.66e+04, as the scoring sheet shows it)."""
    from engine.report.sheets.cells import decimals_for

    if not 1e-4 <= abs(x) < 1e9:
        return f"{x:.4g}"
    return f"{x:.{decimals_for(x, 4)}f}"
