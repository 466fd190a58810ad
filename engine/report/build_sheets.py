"""Build our result sheets, under their final names, in a temporary workbook.

xlsxwriter writes native charts, custom error bars and cached formula values; its
constant_memory mode streams each sheet row by row and stores strings inline (no shared-string
part), which is what the package merge needs. Every sheet module therefore writes its rows in
increasing order.
"""

from __future__ import annotations

__all__ = ["build_our_sheets"]

from pathlib import Path

import xlsxwriter

from engine.progress import Progress, silent
from engine.report import names
from engine.report.bulk_rows import BulkSheet
from engine.report.scoring_model import ScoringModel
from engine.report.sheets import coefficients, fitted, path, scoring, settings, summary, validation
from engine.report.sheets.cells import Formats

WORKBOOK_OPTIONS = {
    "constant_memory": True,
    "strings_to_numbers": False,
    "strings_to_formulas": False,
    "strings_to_urls": False,
    "nan_inf_to_errors": False,
}


def build_our_sheets(
    result,
    target: str | Path,
    progress: Progress | None = None,
    *,
    scoring_blank_rows: int | None = None,
    date1904: bool = False,
) -> tuple[scoring.ScoringLayout, dict[str, BulkSheet]]:
    """Write every result sheet to the new workbook ``target``.

    date1904: the sheets will be merged into a workbook of the 1904 date system.

    Returns the scoring layout and, per sheet name, the numeric blocks still to be spliced into
    that sheet's XML (see ``bulk_rows``; the package merge does it).
    """
    progress = progress or silent()
    bulks = {names.PATH: BulkSheet(), names.FITTED: BulkSheet()}
    book = xlsxwriter.Workbook(str(target), {**WORKBOOK_OPTIONS, "date_1904": date1904})
    try:
        fm = Formats(book)
        sheets = {n: book.add_worksheet(n) for n in names.ALL_SHEETS}
        method = result.scoring_method()
        model = ScoringModel.from_result(result, method)
        progress.step(0.0, "summary sheet")
        summary.write(book, sheets[names.SUMMARY], result, fm)
        progress.step(0.05, "coefficients sheet")
        coefficients.write(book, sheets[names.COEFFICIENTS], result, fm)
        progress.step(0.1, "coefficient paths")
        path.write(
            book,
            sheets[names.PATH],
            result,
            fm,
            names.PATH,
            bulks[names.PATH],
            progress.part(0.1, 0.4),
        )
        progress.step(0.4, "validation sheet")
        validation.write(book, sheets[names.VALIDATION], result, fm, names.VALIDATION)
        progress.step(0.45, "fitted values")
        fitted.write(
            book, sheets[names.FITTED], result, fm, bulks[names.FITTED], progress.part(0.45, 0.85)
        )
        progress.step(0.85, "scoring sheet")
        layout = scoring.write(
            book,
            sheets[names.SCORING],
            result,
            model,
            fm,
            n_blank=scoring_blank_rows,
            date1904=date1904,
        )
        progress.step(0.9, "settings sheet")
        settings.write(book, sheets[names.SETTINGS], result, fm, method)
        sheets[names.SUMMARY].activate()
    finally:
        progress.step(0.95, "saving the result sheets")
        book.close()
    return layout, bulks
