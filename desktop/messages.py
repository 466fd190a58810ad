"""The one place where a failure becomes words for the window (no Qt here).

Every background task relays its exception to :func:`describe_failure`; the window shows the
result in its message strip and, when the engine named a column, next to that column.
"""

from __future__ import annotations

__all__ = ["UserMessage", "as_sentence", "describe_failure", "window_words"]

import re
from dataclasses import dataclass

from engine.errors import Cancelled, InputProblem, SourceChanged, TamisError, WriteProblem


@dataclass(frozen=True)
class UserMessage:
    """What the window shows: a tone ("info", "problem", "stopped", "fault"), a headline, details."""

    tone: str
    headline: str
    detail: str = ""
    column: str | None = None  # a column the message belongs beside, when the engine named one


def describe_failure(exc: BaseException, doing: str = "the run") -> UserMessage:
    """Turn any exception from a background task into plain words."""
    if isinstance(exc, Cancelled):
        return UserMessage("stopped", f"Stopped {doing}. Nothing was written.")
    if isinstance(exc, InputProblem):
        where = exc.place.describe()
        return UserMessage(
            "problem",
            as_sentence(window_words(exc.message)),
            f"Where: {where}." if where else "",
            exc.place.column,
        )
    if isinstance(exc, SourceChanged):  # closing other programs would not help here
        return UserMessage(
            "problem",
            as_sentence(exc.message),
            "The workbook was left as it was. Open it again so the study reads what it holds "
            "now, then run the study and save.",
        )
    if isinstance(exc, WriteProblem):
        return UserMessage(
            "problem",
            as_sentence(exc.message),
            "The workbook was left as it was. Close it in other programs and try again.",
        )
    if isinstance(exc, TamisError):
        return UserMessage("problem", as_sentence(window_words(exc.message)))
    if isinstance(exc, MemoryError):
        return UserMessage(
            "fault",
            f"The computer ran out of memory during {doing}.",
            "Try fewer candidate columns, fewer stability half-samples or fewer methods.",
        )
    if isinstance(exc, OSError):
        name = getattr(exc, "filename", None)
        what = f" ({name})" if name else ""
        return UserMessage(
            "problem", f"A file could not be read or written{what}: {exc.strerror or exc}."
        )
    import traceback

    from engine.context import Context, write_error_log

    log = write_error_log(Context(), "".join(traceback.format_exception(exc)))
    details = (
        f"the details are in {log}; please pass that file on with the workbook if you can"
        if log
        else "its details could not be written to a log file"
    )
    return UserMessage(
        "fault",
        f"Something unexpected went wrong during {doing}; nothing was written.",
        f"{type(exc).__name__}: {exc}. This is a fault in Tamis, not in your data: {details}. "
        "Your files are as they were; trying again or restarting Tamis may help.",
    )


def as_sentence(text: str) -> str:
    text = text.strip()
    if not text:
        return text
    text = text[0].upper() + text[1:]
    return text if text.endswith((".", "!", "?")) else text + "."


# The engine's advice names the command line's options; in the window it names the setting
# that does the same (labels of desktop.settings_panel and the role menu), or says that only
# the command line has the option.
_WINDOW_WORDS: tuple[tuple[str, str], ...] = (
    (r"use --folds (\d+) or fewer", r"set 'Parts (folds)' under Run settings to \1 or fewer"),
    (
        r"use --missing fill",
        "set 'Missing values' under Run settings to 'Fill with the median and mark the gap'",
    ),
    (r"--folds must", "'Parts (folds)' must"),
    (
        r"use in-place writing, or choose another output name",
        "use 'Save into workbook', or choose another file name",
    ),
    (
        r"choose another --out \(Tamis replaces only its own earlier outputs\)",
        "choose another file name (Tamis replaces only workbooks it wrote itself)",
    ),
    (
        r"\(--focal-penalty cv\)",
        "('Focal effect penalty' set to 'By validation', under Run settings)",
    ),
    (r"\(fewer parts, --folds,", "(fewer parts, 'Parts (folds)' under Run settings,"),
    (
        r"--missing fill keeps",
        "'Fill with the median and mark the gap' (Missing values, under Run settings) keeps",
    ),
    (r"\(--log COLUMN\)", "(tick 'Log' for the column)"),
    (r"\(--group COLUMN\)", "(give one column the role 'group')"),
    (r"\(--scheme kfold\)", "('Validation' set to 'Shuffled folds', under Run settings)"),
    (r"\(--time-order COLUMN\)", "(give one column the role 'time order')"),
    (r": --penalty-ratio\)", ", an option of the command line: tamis fit --penalty-ratio)"),
    (
        r"raise the limit, --exact-subset-limit,",
        "raise the limit with the command line's tamis fit --exact-subset-limit",
    ),
)


def window_words(text: str) -> str:
    """An engine message with its command-line advice put as the window's settings."""
    for pattern, replacement in _WINDOW_WORDS:
        text = re.sub(pattern, replacement, text)
    return text
