"""Background work: one QThread plus one worker object per task, errors relayed to one slot.

A task is a plain callable ``job(progress) -> value``. It runs on a worker thread with an
``engine.progress.Progress`` whose callback is relayed to the GUI thread as a Qt signal
(throttled, so a chatty engine cannot flood the event loop) and whose cancel token the
Stop button sets. The outcome comes back on the GUI thread as ``succeeded(value)`` or
``failed(exception)``; the window turns failures into words in one place
(``desktop.messages.describe_failure``).
"""

from __future__ import annotations

__all__ = ["TaskRunner"]

import time
import weakref
from collections.abc import Callable
from typing import Any

from PySide6.QtCore import QObject, Qt, QThread, Signal, Slot

from engine.progress import CancelToken, Progress

_MIN_GAP = 0.04  # seconds between progress signals (25 updates a second is smooth enough)


class _Worker(QObject):
    progressed = Signal(float, str)
    succeeded = Signal(object)
    failed = Signal(object)
    done = Signal()

    def __init__(self, job: Callable[[Progress], Any], token: CancelToken) -> None:
        super().__init__()
        self._job = job
        self._token = token
        self._last = 0.0

    def _relay(self, fraction: float, words: str) -> None:
        now = time.monotonic()
        if now - self._last >= _MIN_GAP or fraction >= 1.0:
            self._last = now
            self.progressed.emit(float(fraction), words)

    @Slot()
    def run(self) -> None:
        try:
            value = self._job(Progress(self._relay, self._token))
        except BaseException as exc:  # noqa: BLE001 - every failure goes to the one boundary
            self.failed.emit(exc)
        else:
            self.succeeded.emit(value)
        finally:
            self.done.emit()


class TaskRunner(QObject):
    """Runs one background task at a time and forwards its signals on the GUI thread.

    ``started(label)``, ``progressed(fraction, words)``, ``succeeded(label, value)``,
    ``failed(label, exception)``, ``finished(label)`` (after the thread has stopped).
    """

    started = Signal(str)
    progressed = Signal(float, str)
    succeeded = Signal(str, object)
    failed = Signal(str, object)
    finished = Signal(str)

    # every runner alive, so a test fixture can check none was left with a thread running
    live: weakref.WeakSet[TaskRunner] = weakref.WeakSet()

    def __init__(self, parent: QObject | None = None) -> None:
        super().__init__(parent)
        TaskRunner.live.add(self)
        self._thread: QThread | None = None
        self._worker: _Worker | None = None
        self._token: CancelToken | None = None
        self.label = ""

    @property
    def busy(self) -> bool:
        return self._thread is not None

    def start(self, label: str, job: Callable[[Progress], Any]) -> bool:
        """Start ``job`` unless a task is already running; return whether it started."""
        if self.busy:
            return False
        self.label = label
        self._token = CancelToken()
        thread = QThread()
        thread.setObjectName(f"tamis-{label}")
        worker = _Worker(job, self._token)
        worker.moveToThread(thread)
        thread.started.connect(worker.run)
        worker.progressed.connect(self.progressed)
        worker.succeeded.connect(self._on_succeeded)
        worker.failed.connect(self._on_failed)
        # direct: the QThread object lives on the GUI thread, so a queued quit would wait for the
        # GUI event loop, which is blocked while the window waits for this thread at closing time
        worker.done.connect(thread.quit, Qt.ConnectionType.DirectConnection)
        # no worker.deleteLater here: it would destroy the worker in its own thread as that
        # thread ends, and the binding's destructor waits for the interpreter lock while holding
        # a Qt lock the GUI thread may be waiting for with the interpreter lock held (a rare
        # deadlock, seen in CI); the worker goes on the GUI thread, in
        # _on_thread_finished, once its thread has ended
        thread.finished.connect(self._on_thread_finished)
        self._thread, self._worker = thread, worker
        self.started.emit(label)
        thread.start()
        return True

    def cancel(self) -> None:
        """Ask the running task to stop at its next progress step."""
        if self._token is not None:
            self._token.cancel()

    def wait(self, ms: int = 5000) -> bool:
        """Block until the thread ends (for shutdown and tests); True if it ended."""
        return self._thread.wait(ms) if self._thread is not None else True

    def shutdown(self, ms: int = 5000) -> None:
        """Cancel and wait; used when the window closes."""
        self.cancel()
        # a step that cannot be interrupted (one long read of a huge sheet) may outlast the wait;
        # then the window closes anyway instead of hanging
        if self._thread is not None and self._thread.wait(ms):
            self._on_thread_finished()

    @Slot(object)
    def _on_succeeded(self, value: object) -> None:
        self.succeeded.emit(self.label, value)

    @Slot(object)
    def _on_failed(self, exc: object) -> None:
        self.failed.emit(self.label, exc)

    @Slot()
    def _on_thread_finished(self) -> None:
        thread = self._thread
        if thread is None:
            return
        thread.wait()
        self._thread = None
        self._worker = None  # the last reference: the worker object is destroyed here
        self._token = None
        label, self.label = self.label, ""
        thread.deleteLater()
        self.finished.emit(label)
