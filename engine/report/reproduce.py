"""Running a saved study again from its results workbook, and checking that it reproduces.

A results workbook holds the user's sheets and ours, the settings sheet among them, so the study
can be re-run from the workbook alone (``spec_for_rerun``) and audited: ``differences`` lists
what the new run does not reproduce of the saved one (rows used, and per method the
cross-validated error and the kept columns).
"""

from __future__ import annotations

__all__ = ["spec_for_rerun", "differences", "STORED_DIGITS"]

import math
from pathlib import Path

from engine.errors import InputProblem, Place
from engine.report.names import PREFIX
from engine.study_spec import StudySpec

# spreadsheet cells keep about 16 significant digits of a number (xlsxwriter writes %.16g):
# a reproduced error agrees to this relative difference
STORED_DIGITS = 1e-14


def spec_for_rerun(record, book: str | Path) -> StudySpec:
    """The saved specification pointed at the data inside ``book`` itself: the sheet the study
    read (named in the specification, else recorded with the design: the first visible sheet
    of a workbook), or for a study of a text file the sheet its copy was written to."""
    from engine.intake import list_sheets
    from engine.intake.workbook import is_text_table
    from engine.report.data_copy import sheet_name_for_csv

    book = Path(book)
    spec: StudySpec = record.spec
    names = [s.name for s in list_sheets(book) if not s.hidden]
    wanted = spec.sheet
    read = record.design.get("sheet")
    if wanted is None and spec.source and is_text_table(Path(spec.source)):
        wanted = sheet_name_for_csv(Path(spec.source))
    if wanted is None and isinstance(read, str) and read:
        wanted = read
    if wanted in names:
        return spec.replace(source=str(book), sheet=wanted)
    theirs = [n for n in names if not n.startswith(PREFIX)]
    if not theirs:
        raise InputProblem(
            f"'{book}' holds no data sheet besides Tamis's own; the study was saved in another "
            f"workbook: run it on the data with `tamis fit`",
            Place(file=str(book)),
        )
    raise InputProblem(
        f"the study saved in '{book}' read sheet '{wanted}', which the workbook no longer has "
        f"(it has {', '.join(repr(n) for n in theirs)}); rename the data sheet back to "
        f"'{wanted}'",
        Place(file=str(book), sheet=wanted),
    )


def differences(record, result) -> list[str]:
    """What ``result`` does not reproduce of the study saved in ``record`` (empty: all of it)."""
    found = []
    saved_rows = record.design.get("rows used")
    if isinstance(saved_rows, (int, float)) and int(saved_rows) != result.design.n_rows:
        found.append(f"{result.design.n_rows} rows used, {int(saved_rows)} saved")
    for m in result.models:
        saved = record.models.get(m.method)
        if saved is None:
            found.append(f"{m.method} was not in the saved study")
            continue
        before = saved.get("cv_error")
        now = m.cv_error
        if isinstance(before, float) and now is not None and math.isfinite(now):
            if abs(now - before) > STORED_DIGITS * max(abs(before), abs(now)):
                found.append(f"{m.method} cross-validated error {now:.6g}, {before:.6g} saved")
        kept_before = {k for k, v in record.coefficients.get(m.method, {}).items() if v != 0.0}
        if kept_before != set(m.selected):
            gained = sorted(set(m.selected) - kept_before)
            lost = sorted(kept_before - set(m.selected))
            change = ", ".join([*(f"+{c}" for c in gained[:3]), *(f"-{c}" for c in lost[:3])])
            found.append(f"{m.method} keeps other columns ({change})")
    return found
