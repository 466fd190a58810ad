"""Typed failures and warnings of the engine, in one place.

Every front maps these to what its user sees: the command line to an exit status and a
one-line message, the desktop to a message next to the thing that needs changing.

- ``InputProblem``: the user's file, sheet, column, cell or option needs changing (exit 2).
  Its message says what was expected, what arrived and how to fix it, and names the place.
- ``Cancelled``: the user stopped the run; nothing was written.
- ``WriteProblem``: the result could not be written (file locked, read-only, changed on
  disk since it was read); nothing was written.
- ``TamisWarning``: non-fatal trouble (a constant column dropped, a path that hit its
  iteration limit). Engine code collects these into the study result; tests turn them into
  errors so none is raised where it should have been collected.
"""

from __future__ import annotations

__all__ = ["TamisError", "InputProblem", "WriteProblem", "Cancelled", "TamisWarning", "Place"]

from dataclasses import dataclass


@dataclass(frozen=True)
class Place:
    """Where a problem is: any of file, sheet, column, row (1-based sheet row), cell ("C7")."""

    file: str | None = None
    sheet: str | None = None
    column: str | None = None
    row: int | None = None
    cell: str | None = None

    def describe(self) -> str:
        parts = []
        if self.file:
            parts.append(f"file '{self.file}'")
        if self.sheet:
            parts.append(f"sheet '{self.sheet}'")
        if self.column:
            parts.append(f"column '{self.column}'")
        if self.cell:
            parts.append(f"cell {self.cell}")
        elif self.row is not None:
            parts.append(f"row {self.row}")
        return ", ".join(parts)


class TamisError(Exception):
    """Base of every failure the engine reports on purpose."""

    exit_code = 1

    def __init__(self, message: str, place: Place | None = None):
        super().__init__(message)
        self.message = message
        self.place = place or Place()


class InputProblem(TamisError):
    """The input needs changing; the message names the place and says what to change."""

    exit_code = 2


class WriteProblem(TamisError):
    """The result could not be written; nothing was changed on disk."""

    exit_code = 2


class SourceChanged(WriteProblem):
    """The workbook changed on disk after the study read it: writing into it now would mix
    the new file with findings from the old one, so nothing was written."""


class Cancelled(TamisError):
    """The user cancelled the run; nothing was written."""

    exit_code = 3

    def __init__(self, message: str = "cancelled by the user; nothing was written"):
        super().__init__(message)


class TamisWarning(UserWarning):
    """Non-fatal numerical or data trouble, collected into the study result."""
