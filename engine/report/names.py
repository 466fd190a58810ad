"""Names of the sheets we write: one plain common prefix, so a re-run replaces only ours."""

from __future__ import annotations

__all__ = [
    "PREFIX",
    "SUMMARY",
    "COEFFICIENTS",
    "PATH",
    "VALIDATION",
    "FITTED",
    "SCORING",
    "SETTINGS",
    "PREDICTIONS",
    "ALL_SHEETS",
]

PREFIX = "TM "
SUMMARY = PREFIX + "Summary"
COEFFICIENTS = PREFIX + "Coefficients"
PATH = PREFIX + "Path"
VALIDATION = PREFIX + "Validation"
FITTED = PREFIX + "Fitted"
SCORING = PREFIX + "Scoring"
SETTINGS = PREFIX + "Settings"
PREDICTIONS = PREFIX + "Predictions"  # written by `tamis score` into a copy of the scored book

# the order they appear in, after the user's own sheets
ALL_SHEETS: tuple[str, ...] = (SUMMARY, COEFFICIENTS, PATH, VALIDATION, FITTED, SCORING, SETTINGS)
