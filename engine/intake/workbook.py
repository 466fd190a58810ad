"""Open a workbook file with python-calamine and turn every way it can fail into one sentence.

The file is only ever opened for reading. Its kind is taken from its first bytes, not just
its name, so a text file renamed ".xlsx", a password-protected workbook (an encrypted
compound file) and a cut-short download each get their own message.
"""

from __future__ import annotations

__all__ = ["WORKBOOK_FORMATS", "SUPPORTED_SUFFIXES", "sniff_format", "open_workbook", "sheet_infos"]

import zipfile
from pathlib import Path

import python_calamine as calamine

from engine.errors import InputProblem, Place
from engine.intake.table import SheetInfo

WORKBOOK_FORMATS = ("xlsx", "xlsm", "xls", "ods")
# delimited text: .csv, and the tab-separated text spreadsheet programs save as .txt or .tsv
TEXT_SUFFIXES = (".csv", ".tsv", ".txt")
SUPPORTED_SUFFIXES = (".xlsx", ".xlsm", ".xls", ".ods", *TEXT_SUFFIXES)


def is_text_table(path: Path) -> bool:
    """Whether the file is read as delimited text (one sheet) rather than as a workbook."""
    return path.suffix.lower() in TEXT_SUFFIXES


_ZIP_MAGIC = b"PK\x03\x04"
_OLE_MAGIC = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
_ENCRYPTED_STREAM = "EncryptedPackage".encode("utf-16-le")


def check_path(path: Path) -> None:
    """Raise an InputProblem unless `path` names an existing file of a supported kind."""
    place = Place(file=str(path))
    if not path.exists():
        raise InputProblem(f"file '{path}' does not exist; check the path and the spelling", place)
    if path.is_dir():
        raise InputProblem(f"'{path}' is a folder, not a workbook file", place)
    if path.suffix.lower() not in SUPPORTED_SUFFIXES:
        shown = path.suffix or "(no extension)"
        raise InputProblem(
            f"file '{path}' has the extension {shown}, which Tamis does not read; "
            f"save it as one of {', '.join(SUPPORTED_SUFFIXES)}",
            place,
        )


def _looks_encrypted(path: Path) -> bool:
    # An encrypted Office Open XML workbook is a compound file holding a stream of this name.
    with open(path, "rb") as fh:
        return _ENCRYPTED_STREAM in fh.read()


def sniff_format(path: Path) -> str:
    """The workbook format by content: "xlsx", "xlsm", "xls" or "ods" (or raise InputProblem)."""
    place = Place(file=str(path))
    suffix = path.suffix.lower().lstrip(".")
    with open(path, "rb") as fh:
        head = fh.read(8)
    if not head:
        raise InputProblem(f"file '{path}' is empty (0 bytes); it holds no workbook", place)
    if head.startswith(_OLE_MAGIC):
        if _looks_encrypted(path):
            raise InputProblem(
                f"file '{path}' is protected with a password (it is encrypted), so it cannot be "
                "read; open it in a spreadsheet program and save an unprotected copy",
                place,
            )
        return "xls"
    if head.startswith(_ZIP_MAGIC):
        try:
            with zipfile.ZipFile(path) as zf:
                names = set(zf.namelist())
        except zipfile.BadZipFile as exc:
            raise InputProblem(
                f"file '{path}' is damaged or incomplete (its zip package cannot be opened: {exc}); "
                "it may have been cut short while copying or downloading",
                place,
            ) from exc
        if "content.xml" in names and "mimetype" in names:
            return "ods"
        if "xl/workbook.xml" in names:
            return "xlsm" if suffix == "xlsm" or "xl/vbaProject.bin" in names else "xlsx"
        if "xl/workbook.bin" in names:
            raise InputProblem(
                f"file '{path}' is a binary workbook (.xlsb), which Tamis does not read; "
                "save it as .xlsx",
                place,
            )
        raise InputProblem(
            f"file '{path}' is a zip file but not a spreadsheet workbook "
            "(it has no workbook part); save the data as .xlsx",
            place,
        )
    text_hint = ""
    if head.lstrip().lower().startswith((b"<html", b"<!doc", b"<?xml", b"<table")):
        text_hint = (
            " (it holds web-page or XML text, as some programs export under a workbook name)"
        )
    elif all(32 <= b < 127 or b in (9, 10, 13) for b in head):
        text_hint = " (it holds plain text; if it is a table separated by commas, semicolons or tabs, name it .csv)"
    raise InputProblem(
        f"file '{path}' is not a {suffix or 'workbook'} workbook{text_hint}; "
        "save it from a spreadsheet program as .xlsx",
        place,
    )


def open_workbook(path: Path, fmt: str) -> calamine.CalamineWorkbook:
    """Open for reading. Content decides the reader, whatever the file is named."""
    place = Place(file=str(path))
    try:
        if path.suffix.lower().lstrip(".") == fmt or (
            fmt == "xlsm" and path.suffix.lower() == ".xlsx"
        ):
            return calamine.CalamineWorkbook.from_path(str(path))
        with open(path, "rb") as fh:
            return calamine.CalamineWorkbook.from_filelike(fh)
    except calamine.PasswordError as exc:
        raise InputProblem(
            f"file '{path}' is protected with a password, so it cannot be read; "
            "save an unprotected copy from a spreadsheet program",
            place,
        ) from exc
    except (calamine.CalamineError, OSError, ValueError) as exc:
        raise InputProblem(
            f"file '{path}' could not be read as an .{fmt} workbook ({exc}); it may be damaged "
            "or cut short; re-save it from a spreadsheet program",
            place,
        ) from exc
    except BaseException as exc:
        if not _reader_panicked(exc):
            raise
        raise InputProblem(
            f"file '{path}' could not be read as an .{fmt} workbook (its reader stopped on "
            "a damaged part); it may be damaged or cut short; re-save it from a spreadsheet "
            "program",
            place,
        ) from exc


def _reader_panicked(exc: BaseException) -> bool:
    """The cell reader's compiled code stopped on something it did not expect in the file.

    python-calamine is written in Rust; a panic there reaches Python as pyo3's
    PanicException, which derives from BaseException (not Exception), so the handlers above
    do not see it (measured: an .xls cut inside its sector table).
    """
    return type(exc).__name__ == "PanicException"


def sheet_infos(book: calamine.CalamineWorkbook) -> list[SheetInfo]:
    """Every worksheet in workbook order; chart sheets and macro sheets are left out."""
    infos: list[SheetInfo] = []
    for index, meta in enumerate(book.sheets_metadata):
        if meta.typ not in (calamine.SheetTypeEnum.WorkSheet,):
            continue
        hidden = meta.visible != calamine.SheetVisibleEnum.Visible
        infos.append(SheetInfo(name=meta.name, index=index, hidden=hidden))
    return infos


def read_grid(book: calamine.CalamineWorkbook, sheet: str, path: Path) -> list[list]:
    """The sheet's cells as rows from row 1 and column A (empty cells are "")."""
    place = Place(file=str(path), sheet=sheet)
    try:
        return book.get_sheet_by_name(sheet).to_python(skip_empty_area=False)
    except calamine.PasswordError as exc:
        raise InputProblem(f"{place.describe()}: the sheet is password protected", place) from exc
    except (calamine.CalamineError, OSError, ValueError) as exc:
        raise InputProblem(
            f"{place.describe()}: the sheet could not be read ({exc}); the file may be damaged",
            place,
        ) from exc
    except BaseException as exc:
        if not _reader_panicked(exc):
            raise
        raise InputProblem(
            f"{place.describe()}: the sheet could not be read (its reader stopped on a "
            "damaged part); the file may be damaged",
            place,
        ) from exc
