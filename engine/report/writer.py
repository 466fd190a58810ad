"""``write_results``: put a study's result sheets into a workbook, safely.

Two modes, exactly one per call:

- ``out=PATH`` writes a new workbook (.xlsx, or .xlsm for a macro-enabled source): for an
  .xlsx/.xlsm source the original package is copied part by part with our sheets merged in, so
  the user's sheets stay intact; for .csv/.xls/.ods a new workbook holds the data and ours.
- ``in_place=True`` adds our sheets to the source .xlsx/.xlsm itself. Every existing part stays
  byte-identical except the sheet list, its relationships, the content types, docProps/app.xml
  and (appended only) the styles part; a re-run replaces our previous sheets.

Change detection: the source's fingerprint (size, mtime, SHA-256) is taken from
``result.source_fingerprint`` when the study recorded it at read time (see
``engine.report.fingerprint``), otherwise at the start of writing; an in-place write is refused
if the file differs from it just before the replace.
"""

from __future__ import annotations

__all__ = ["write_results", "verify_results_file"]

import tempfile
import zipfile
from pathlib import Path

from engine.errors import InputProblem, Place, SourceChanged, WriteProblem
from engine.progress import Progress, silent
from engine.report import names
from engine.report.build_sheets import build_our_sheets
from engine.report.data_copy import copy_to_xlsx
from engine.report.package_merge import (
    SheetNameTaken,
    merge_package,
    read_sheet_list,
    uses_1904_dates,
)
from engine.report.safe_write import Fingerprint, check_writable, commit, fingerprint
from engine.report.zip_parts import PackageTooLarge, ZipSource

_PACKAGES = (".xlsx", ".xlsm")


def verify_results_file(path: str | Path, expected: tuple[str, ...] = names.ALL_SHEETS) -> None:
    """Raise when ``path`` is not a sound zip holding the ``expected`` sheets, each with its part."""
    path = Path(path)
    with zipfile.ZipFile(path) as zf:
        bad = zf.testzip()
        if bad is not None:
            raise WriteProblem(f"'{path}' failed its checksum at part {bad}", Place(file=str(path)))
    with ZipSource(path) as src:
        sheets = read_sheet_list(src)
        got = [s.name for s in sheets]
        missing = [n for n in expected if n not in got]
        if missing or any(s.part not in src for s in sheets):
            raise WriteProblem(
                f"'{path}' lacks sheets after writing: {missing}", Place(file=str(path))
            )


def _expected_fingerprint(result, source: Path) -> Fingerprint:
    recorded = getattr(result, "source_fingerprint", None)
    if recorded:
        fp = recorded if isinstance(recorded, Fingerprint) else Fingerprint.from_dict(recorded)
        return fp
    return fingerprint(source)


def write_results(
    result,
    *,
    out: str | Path | None = None,
    in_place: bool = False,
    progress: Progress | None = None,
) -> Path:
    """Write the result sheets (see the module docstring); returns the path written."""
    if (out is None) == (not in_place):
        raise InputProblem("give exactly one of an output file (out=PATH) or in_place=True")
    progress = progress or silent()
    source = Path(result.spec.source)
    if not source.exists():
        raise WriteProblem(f"the data file '{source}' no longer exists", Place(file=str(source)))
    suffix = source.suffix.lower()
    expected: Fingerprint | None = None
    if in_place:
        if suffix not in _PACKAGES:
            raise WriteProblem(
                f"in-place writing adds sheets to .xlsx or .xlsm workbooks only; "
                f"'{source}' is a {suffix or 'plain'} file: write a new workbook with out=PATH",
                Place(file=str(source)),
            )
        target = source
        expected = _expected_fingerprint(result, source)
        if getattr(result, "source_fingerprint", None) and fingerprint(source) != expected:
            raise SourceChanged(
                f"'{source}' changed on disk since it was read; nothing was written. "
                "Run the study again on the current file",
                Place(file=str(source)),
            )
    else:
        target = Path(out)  # type: ignore[arg-type]
        if target.suffix.lower() not in _PACKAGES:
            raise InputProblem(
                f"the output file '{target}' must end in .xlsx (or .xlsm for a workbook "
                "with macros)",
                Place(file=str(target)),
            )
        if target.exists() and target.resolve() == source.resolve():
            raise InputProblem(
                f"the output file is the data file '{source}'; to add the sheets to it "
                "use in-place writing, or choose another output name",
                Place(file=str(target)),
            )
        if suffix == ".xlsm" and target.suffix.lower() != ".xlsm":
            raise InputProblem(
                f"'{source}' is a macro-enabled workbook (.xlsm), and the copy keeps its "
                "parts as they are declared: give the output a name ending in .xlsm",
                Place(file=str(target)),
            )
    check_writable(target)
    progress.step(0.0, "writing the result sheets")
    with tempfile.TemporaryDirectory(prefix="tamis-report-") as tmp:
        ours = Path(tmp) / "ours.xlsx"
        # our date serials must count from the base the user's workbook counts from
        try:
            date1904 = suffix in _PACKAGES and uses_1904_dates(source)
        except (PackageTooLarge, zipfile.BadZipFile, KeyError, ValueError, OSError):
            date1904 = False  # the merge below meets the same fault and says what it is
        _, bulks = build_our_sheets(result, ours, progress.part(0.0, 0.8), date1904=date1904)
        base = source
        if suffix not in _PACKAGES:
            progress.step(0.8, "copying the data")
            base = Path(tmp) / "data.xlsx"
            copy_to_xlsx(source, base)
        progress.step(0.9, "merging into the workbook")

        def build(fh) -> None:
            try:
                merge_package(
                    str(base),
                    str(ours),
                    fh,
                    list(names.ALL_SHEETS),
                    dict(bulks),
                )
            except SheetNameTaken as exc:
                raise WriteProblem(
                    f"'{source}' already has a sheet named '{exc.name}' that Tamis did not write; "
                    "rename it so the results can be added",
                    Place(file=str(source), sheet=exc.name),
                ) from None
            except (PackageTooLarge, zipfile.BadZipFile, KeyError, ValueError) as exc:
                raise WriteProblem(
                    f"cannot add sheets to '{source}': its package is unusual ({exc}); "
                    "write a new workbook with out=PATH",
                    Place(file=str(source)),
                ) from exc

        commit(target, build, verify_results_file, expected)
    if in_place and getattr(result, "source_fingerprint", None):
        # our own write changed the file (the user's sheets are as they were): a second
        # save of the same result must not take it for someone else's change
        result.source_fingerprint = fingerprint(target).to_dict()
    progress.step(1.0, "written")
    return target
