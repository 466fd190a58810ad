"""The background runner: closing while a task that cannot be cancelled runs must not hang."""

from __future__ import annotations

import time

from desktop.worker import TaskRunner


def _uninterruptible(progress):
    time.sleep(0.8)  # like one long read call that never reaches a progress step
    return "read"


def test_shutdown_waits_for_a_running_task_without_hanging(qtbot):
    runner = TaskRunner()
    assert runner.start("load", _uninterruptible)
    t0 = time.monotonic()
    runner.shutdown(ms=5000)
    waited = time.monotonic() - t0
    assert not runner.busy
    assert waited < 3.0  # the task ends after 0.8 s; before the fix this wait never returned


def test_shutdown_gives_up_after_its_limit(qtbot):
    runner = TaskRunner()
    runner.start("load", lambda p: time.sleep(1.5))
    t0 = time.monotonic()
    runner.shutdown(ms=200)
    assert time.monotonic() - t0 < 1.2  # the window may close while the read finishes
    runner.wait(5000)  # let the thread end so the test leaves nothing running
    qtbot.waitUntil(lambda: not runner.busy, timeout=3000)


def test_a_finished_task_reports_success_on_the_gui_thread(qtbot):
    runner = TaskRunner()
    with qtbot.waitSignal(runner.succeeded, timeout=5000) as sig:
        runner.start("sum", lambda p: 1 + 1)
    assert sig.args == ["sum", 2]
    qtbot.waitUntil(lambda: not runner.busy, timeout=3000)


def test_the_worker_object_is_destroyed_on_the_gui_thread(qtbot):
    """Destroying the worker in its own thread as that thread ends waits for the interpreter
    lock while holding a Qt lock; the GUI thread, holding the interpreter lock, can be waiting
    for that Qt lock (seen: a hang in QLabel.setText after a cancel). So it must die on the GUI
    thread."""
    import threading

    from PySide6.QtCore import Qt

    release = threading.Event()
    runner = TaskRunner()
    runner.start("wait", lambda p: release.wait(5))
    worker = runner._worker
    assert worker is not None
    where: list[str] = []
    worker.destroyed.connect(
        lambda *_: where.append(threading.current_thread().name), Qt.ConnectionType.DirectConnection
    )
    del worker
    release.set()
    qtbot.waitUntil(lambda: not runner.busy, timeout=5000)
    qtbot.waitUntil(lambda: bool(where), timeout=3000)
    assert where == [threading.main_thread().name]
