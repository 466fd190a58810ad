"""Progress reporting and cancellation as plain objects the engine accepts.

Long work calls ``progress.step(fraction, words)`` between folds, penalties or search nodes.
Each call checks the cancel token, so a cancel takes effect at the next step (well under a
second for every method). Nested work gets a sub-range with ``progress.part(start, end)`` so
that a cross-validation inside a study still moves one bar from 0 to 1.
"""

from __future__ import annotations

__all__ = ["CancelToken", "Progress", "ProgressCallback", "silent"]

import threading
from collections.abc import Callable

from engine.errors import Cancelled

# fraction done in [0, 1], the current step in words
ProgressCallback = Callable[[float, str], None]


class CancelToken:
    """Thread-safe flag a front sets to stop a run."""

    def __init__(self) -> None:
        self._event = threading.Event()

    def cancel(self) -> None:
        self._event.set()

    def reset(self) -> None:
        """Clear a cancel, so the token can serve the next run."""
        self._event.clear()

    @property
    def cancelled(self) -> bool:
        return self._event.is_set()

    def raise_if_cancelled(self) -> None:
        if self._event.is_set():
            raise Cancelled()


class Progress:
    """A callback plus a cancel token, mapped onto a sub-range [start, end] of the whole bar."""

    def __init__(
        self,
        callback: ProgressCallback | None = None,
        cancel: CancelToken | None = None,
        start: float = 0.0,
        end: float = 1.0,
        prefix: str = "",
    ) -> None:
        self.callback = callback
        self.cancel = cancel or CancelToken()
        self.start = start
        self.end = end
        self.prefix = prefix

    def step(self, fraction: float, words: str = "") -> None:
        """Report `fraction` (0..1 of this range) done; raise Cancelled if the user asked."""
        self.cancel.raise_if_cancelled()
        self.report(fraction, words)

    def report(self, fraction: float, words: str = "") -> None:
        """Only report (for a watcher thread that must not raise on the user's cancel)."""
        if self.callback is not None:
            f = min(max(fraction, 0.0), 1.0)
            text = f"{self.prefix}{words}" if words else self.prefix.rstrip(": ")
            self.callback(self.start + (self.end - self.start) * f, text)

    def check(self) -> None:
        """Only check for cancellation (for tight loops that report elsewhere)."""
        self.cancel.raise_if_cancelled()

    def part(self, lo: float, hi: float, words: str = "") -> Progress:
        """A child progress covering [lo, hi] of this range, sharing the cancel token."""
        span = self.end - self.start
        prefix = f"{self.prefix}{words}: " if words else self.prefix
        return Progress(
            self.callback, self.cancel, self.start + span * lo, self.start + span * hi, prefix
        )


def silent() -> Progress:
    """A progress that reports nowhere and is never cancelled."""
    return Progress()
