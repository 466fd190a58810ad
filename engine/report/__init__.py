"""The result workbook: sheets, native charts, live scoring formulas, safe writing.

Public names:

- ``write_results(result, *, out=None, in_place=False, progress=None) -> Path``
  write a study's result sheets to a new workbook (``out``) or add them to the source
  .xlsx/.xlsm (``in_place``); a re-run replaces only our sheets.
- ``read_settings(results_book) -> StudySpec``
  the study specification stored on a results workbook's settings sheet.
- ``load_scoring_model(results_book, method=None) -> ScoringModel``
  the model stored in a results workbook; ``.predict(table)`` scores an intake ``Table``.
- ``ScoringModel``        the linear predictor with its encodings (shared by sheet and command);
  ``ScoringModel.from_result(result)`` the one a study's scoring sheet would hold.
- ``score_rows(book, model, *, out=None, sheet=None, ...) -> ScoreOutcome``
  predict the rows of another workbook and write them to a copy of it (``tamis score`` and the
  window's "Predict new rows").
- ``fingerprint(path) -> Fingerprint``
  size, mtime and SHA-256 of a file, taken when it is read, so writing can refuse a file that
  changed on disk since (store it as ``StudyResult.source_fingerprint``).
- ``SHEET_NAMES``         our sheet names, in order ("TM Summary" ... "TM Settings").

Modules: ``writer`` (the two modes), ``build_sheets`` and ``sheets.*`` (one module per sheet),
``scoring_model``, ``settings_reader``, ``package_merge`` / ``styles_merge`` / ``zip_parts``
(package-level merge that leaves the user's parts untouched), ``safe_write`` (atomic replace),
``data_copy`` (.csv/.xls/.ods sources).
"""

from __future__ import annotations

from engine.report.names import ALL_SHEETS as SHEET_NAMES
from engine.report.safe_write import Fingerprint, fingerprint
from engine.report.score_rows import ScoreOutcome, score_rows
from engine.report.scoring_model import ScoringModel
from engine.report.settings_reader import load_scoring_model, read_settings
from engine.report.writer import write_results

__all__ = [
    "write_results",
    "read_settings",
    "load_scoring_model",
    "ScoringModel",
    "score_rows",
    "ScoreOutcome",
    "fingerprint",
    "Fingerprint",
    "SHEET_NAMES",
]
