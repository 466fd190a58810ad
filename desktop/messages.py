"""The one place where a failure becomes words for the window (no Qt here).

Every background task relays its exception to :func:`describe_failure`; the window shows the
result in its message strip and, when the engine named a column, next to that column.
"""

from __future__ import annotations

__all__ = ["UserMessage", "describe_failure"]

from dataclasses import dataclass

from engine.errors import Cancelled, InputProblem, TamisError, WriteProblem


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
            "problem", _sentence(exc.message), f"Where: {where}." if where else "", exc.place.column
        )
    if isinstance(exc, WriteProblem):
        return UserMessage(
            "problem",
            _sentence(exc.message),
            "The workbook was left as it was. Close it in other programs and try again.",
        )
    if isinstance(exc, TamisError):
        return UserMessage("problem", _sentence(exc.message))
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


def _sentence(text: str) -> str:
    text = text.strip()
    if not text:
        return text
    text = text[0].upper() + text[1:]
    return text if text.endswith((".", "!", "?")) else text + "."
