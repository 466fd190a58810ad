"""Running work over validation parts (or resamples) on the machine's cores, and summarizing it.

Two runners, one contract (``run(k)`` results handed to ``collect`` in the caller's thread, in the
order they finish):

- threads (``run_parts``): joblib's threading backend with one BLAS thread each. Every part
  sees the same cancel token. Cheap to start, but the per-penalty Python bookkeeping between
  compiled calls holds the interpreter lock, so on the penalized paths two threads measured
  no faster than one.
- processes (``run_parts_in_processes``): joblib's process backend (loky), for the penalized
  cross-validation, whose parts are independent and heavy. The data go to the workers through
  a folder of ``.npy`` files they map read-only (one copy on disk, none per part), and a small
  shared "board" file carries each part's progress out and the cancel flag in, so a cancel
  stops every worker at its next penalty and the progress bar moves within parts. Starting
  the workers costs a few seconds once per session (they import numpy/scipy/scikit-learn);
  they then stay for joblib's idle timeout, so ``process_pool_worthwhile`` only picks this
  runner when the work repays the start-up, and ``warm_process_pool`` starts them early.
"""

from __future__ import annotations

__all__ = [
    "worker_count",
    "run_parts",
    "run_parts_in_processes",
    "process_pool_worthwhile",
    "forced_placement",
    "warm_process_pool",
    "stop_worker_processes",
    "SharedArrays",
    "BoardProgress",
    "mean_and_se",
]

import os
import sys
import tempfile
import threading
import time
import warnings
from collections.abc import Callable, Iterable
from typing import Any, TypeVar

import numpy as np
from joblib import Parallel, delayed, parallel_config

from engine.blas_threads import one_blas_thread
from engine.errors import Cancelled
from engine.progress import Progress

T = TypeVar("T")

# seconds between two looks at the board (progress out, cancel in)
_BOARD_POLL = 0.1
# seconds between a worker's checks that the program that started it still runs
_PARENT_POLL = 2.0
# estimated seconds of part work above which starting worker processes pays (measured here:
# starting two workers that import the engine takes about 3 s on this 2-core machine; once
# they run, handing a part over costs a few milliseconds)
_COLD_START_WORTH = 8.0
_WARM_WORTH = 0.3
# idle workers are kept this long (joblib's default is 5 minutes; a desktop session pauses
# longer between runs); after that they must start again
_IDLE_SECONDS = 1800.0

_pool_lock = threading.Lock()
_pool_last_used: float | None = None  # monotonic time the worker processes last finished work


def worker_count(workers: int | None, tasks: int) -> int:
    """Workers to use: the machine's cores unless given, never more than the tasks."""
    if workers is None:
        workers = os.cpu_count() or 1
    return max(1, min(int(workers), tasks))


def run_parts(
    tasks: int, run: Callable[[int], T], collect: Callable[[T], None], workers: int
) -> None:
    """Call ``run(k)`` for k in 0..tasks-1 on threads and pass each result to ``collect``."""
    with one_blas_thread():
        if workers == 1:
            for k in range(tasks):
                collect(run(k))
            return
        pool = Parallel(n_jobs=workers, backend="threading", return_as="generator_unordered")
        with warnings.catch_warnings():
            # a cancel (or error) in one task leaves the others' results unused, which the
            # pool reports as a warning; the user asked for it, there is nothing to say
            warnings.filterwarnings(
                "ignore", message=r".*executed\s+but not used", category=UserWarning
            )
            for item in pool(delayed(run)(k) for k in range(tasks)):
                collect(item)


# --------------------------------------------------------------------------------------------
# Worker processes


def processes_supported() -> bool:
    """Worker processes can start here (not in a frozen bundle whose entry cannot run them)."""
    if getattr(sys, "frozen", False):
        return bool(getattr(sys, "_tamis_runs_worker_processes", False))
    return True


def _pool_is_warm() -> bool:
    with _pool_lock:
        last = _pool_last_used
    return last is not None and time.monotonic() - last < _IDLE_SECONDS


def forced_placement() -> str | None:
    """ "processes" or "threads" when TAMIS_PARALLEL asks for it by name (checks, benchmarks)."""
    forced = os.environ.get("TAMIS_PARALLEL", "").strip().lower()
    return forced if forced in ("processes", "threads") else None


def process_pool_worthwhile(estimated_seconds: float, workers: int) -> bool:
    """Whether parts estimated to take ``estimated_seconds`` in all should go to processes.

    The environment variable TAMIS_PARALLEL=processes or =threads overrides the estimate (for
    checks and benchmarks); one worker, or a bundle that cannot start workers, means threads.
    """
    if workers < 2 or not processes_supported():
        return False
    forced = forced_placement()
    if forced is not None:
        return forced == "processes"
    limit = _WARM_WORTH if _pool_is_warm() else _COLD_START_WORTH
    return estimated_seconds >= limit


def _mark_pool_used() -> None:
    global _pool_last_used
    with _pool_lock:
        _pool_last_used = time.monotonic()


_worker_ready = False  # per process: imports done and their objects frozen


def _prepare_worker() -> None:
    """Import what a part needs, then take every object alive out of the garbage collector's
    walks: a worker without psutil runs a full collection after each task at most once a
    second, which over the numerical libraries' import-time objects took about 140 ms here
    (both workers idle) per second of work; after gc.freeze() it walks only new objects."""
    global _worker_ready
    if not _worker_ready:
        import gc

        import engine.tuning.crossval  # noqa: F401

        gc.freeze()
        _leave_with_parent()
        _worker_ready = True


def _leave_with_parent() -> None:
    """End this worker when the program that started it is gone (killed or crashed: a normal
    exit stops the workers itself); otherwise it would idle until its timeout."""
    parent = os.getppid()
    if sys.platform == "win32" or parent <= 1:
        return  # Windows keeps the parent's id after it ends; nothing to watch there

    def watch() -> None:
        while True:
            time.sleep(_PARENT_POLL)
            if os.getppid() != parent:  # adopted by another process: the parent has ended
                os._exit(0)

    threading.Thread(target=watch, name="tamis-parent-watch", daemon=True).start()


def _import_engine() -> int:
    _prepare_worker()
    return os.getpid()


_stopping = threading.Event()  # set by stop_worker_processes: start no more workers
_warming: threading.Thread | None = None


def warm_process_pool(workers: int | None = None, wait: bool = False) -> threading.Thread | None:
    """Start the worker processes (and their imports) now, in the background unless ``wait``."""
    global _warming
    n = worker_count(workers, os.cpu_count() or 1)
    if n < 2 or not processes_supported() or _stopping.is_set():
        return None

    def start() -> None:
        if _stopping.is_set():
            return
        list(_process_pool(n)(delayed(_import_engine)() for _ in range(n)))
        _mark_pool_used()

    _mark_pool_used()  # from now on the workers count as available (a run waits for them)

    if wait:
        start()
        return None
    thread = threading.Thread(target=start, name="tamis-warm-workers", daemon=True)
    thread.start()
    _warming = thread
    return thread


def stop_worker_processes(wait_for_start: float = 5.0) -> None:
    """End the worker processes now (a program leaving without the interpreter's clean-up,
    like the desktop, must call this: the workers would otherwise outlive it)."""
    global _pool_last_used
    _stopping.set()
    if _warming is not None and _warming.is_alive():
        _warming.join(wait_for_start)  # let a start under way finish, then stop what it made
    from joblib.externals.loky import reusable_executor

    executor = getattr(reusable_executor, "_executor", None)
    if executor is not None:
        # joblib's executor also removes its temporary folder when it terminates
        stop = getattr(executor, "terminate", None) or executor.shutdown
        stop(kill_workers=True)
    with _pool_lock:
        _pool_last_used = None
    if _warming is None or not _warming.is_alive():
        _stopping.clear()  # nothing left that could start workers behind our back


def _process_pool(workers: int) -> Parallel:
    # the same settings every time, so joblib reuses the running workers (other settings would
    # start new ones); arrays go through SharedArrays, not joblib's own memory mapping
    with parallel_config(backend="loky", idle_worker_timeout=_IDLE_SECONDS):
        return Parallel(
            n_jobs=workers,
            return_as="generator_unordered",
            max_nbytes=None,
            batch_size=1,
            pre_dispatch="3*n_jobs",
        )


class SharedArrays:
    """Arrays handed to worker processes as read-only mapped ``.npy`` files (no pickled copies).

    In the parent ``get`` returns the original array; a pickled copy (in a worker) maps the file
    once per process and keeps it for the following parts.
    """

    _mapped: dict[str, np.ndarray] = {}  # per process: file path -> mapped array

    def __init__(self, folder: str | None = None, **arrays: np.ndarray):
        self._arrays: dict[str, np.ndarray] | None = dict(arrays)
        self._paths: dict[str, str] = {}
        if folder is not None:
            for name, a in arrays.items():
                path = os.path.join(folder, f"{name}.npy")
                np.save(path, np.ascontiguousarray(a))
                self._paths[name] = path

    def __getstate__(self) -> dict[str, Any]:
        if not self._paths:
            raise TypeError("SharedArrays made without a folder cannot go to another process")
        return {"_arrays": None, "_paths": self._paths}

    def get(self, name: str) -> np.ndarray:
        if self._arrays is not None:
            return self._arrays[name]
        path = self._paths[name]
        a = SharedArrays._mapped.get(path)
        if a is None:
            a = np.asarray(np.load(path, mmap_mode="r"))
            if sys.platform != "win32":
                # keep the maps of this run only: a map of a removed file still holds its
                # disk space. (Windows cannot remove a mapped file, so there every part maps
                # afresh and lets go when it returns.)
                folder = os.path.dirname(path)
                kept = {
                    p: m for p, m in SharedArrays._mapped.items() if os.path.dirname(p) == folder
                }
                SharedArrays._mapped = {**kept, path: a}
        return a


class BoardProgress(Progress):
    """A worker's Progress: writes its fraction done to its slot of the board file and raises
    ``Cancelled`` when the parent has set the board's cancel flag."""

    def __init__(self, board_path: str, slot: int):
        super().__init__()
        self.board_path = board_path
        self.slot = slot
        self._board: np.ndarray | None = None

    def __getstate__(self) -> dict[str, Any]:
        return {"board_path": self.board_path, "slot": self.slot}

    def __setstate__(self, state: dict[str, Any]) -> None:
        self.__init__(state["board_path"], state["slot"])  # type: ignore[misc]

    def _view(self) -> np.ndarray:
        if self._board is None:
            self._board = np.memmap(self.board_path, dtype=np.float64, mode="r+")
        return self._board

    def check(self) -> None:
        if self._view()[-1] != 0.0:
            raise Cancelled()

    def report(self, fraction: float, words: str = "") -> None:
        self._view()[self.slot] = min(max(fraction, 0.0), 1.0)

    def part(self, lo: float, hi: float, words: str = "") -> Progress:
        return self  # a worker reports its part as a whole


class _Stopped:
    """What a part stopped by the cancel flag returns."""


def _stoppable(fn: Callable[..., T], args: tuple, progress: BoardProgress) -> T | _Stopped:
    # a cancelled part returns quietly: an exception would make joblib kill the workers, and
    # the next run would pay their start-up again
    _prepare_worker()
    try:
        progress.check()
        return fn(*args, progress)
    except Cancelled:
        return _Stopped()


def run_parts_in_processes(
    tasks: Iterable[tuple[Callable[..., T], tuple]],
    count: int,
    collect: Callable[[T], None],
    workers: int,
    progress: Progress | None,
    board_folder: str,
    words: str = "validation",
) -> None:
    """Run ``fn(*args, board_progress)`` for each of the ``count`` tasks in worker processes.

    ``tasks`` may be a generator: joblib draws from it only as workers free up, so at most a
    few parts' inputs exist at once.

    Each result goes to ``collect`` in the calling thread as it finishes. While they run, a
    watcher thread relays the parts' progress to ``progress`` and the cancel token to the
    workers (they stop at their next penalty); a cancel then raises ``Cancelled`` here.
    """
    board_path = os.path.join(board_folder, "board.f64")
    board = np.memmap(board_path, dtype=np.float64, mode="w+", shape=(count + 1,))
    board[:] = 0.0
    board.flush()
    finished = threading.Event()
    done = [0]

    def watch() -> None:
        while not finished.wait(_BOARD_POLL):
            if progress is None:
                continue
            if progress.cancel.cancelled:
                board[-1] = 1.0
                continue
            progress.report(float(np.mean(board[:-1])), f"{words}: {done[0]} of {count} parts done")

    watcher = threading.Thread(target=watch, name="tamis-parts-watch", daemon=True)
    watcher.start()
    results = _process_pool(workers)(
        delayed(_stoppable)(fn, args, BoardProgress(board_path, k))
        for k, (fn, args) in enumerate(tasks)
    )
    try:
        for item in results:
            if isinstance(item, _Stopped):
                continue
            done[0] += 1
            collect(item)
        _mark_pool_used()
    finally:
        finished.set()
        watcher.join()
        results.close()  # after an error or cancel: stop what still runs

    if progress is not None:  # the watcher may not have looked since the last part ended
        progress.step(1.0, f"{words}: {done[0]} of {count} parts done")


def board_folder() -> tempfile.TemporaryDirectory:
    """A private temporary folder for one run's shared files (removed afterwards)."""
    return tempfile.TemporaryDirectory(prefix="tamis-parts-", ignore_cleanup_errors=True)


def mean_and_se(errors: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Mean over parts (rows) and its standard error, std(ddof=1)/sqrt(parts); NaN for one part."""
    parts = errors.shape[0]
    mean = errors.mean(axis=0)
    if parts > 1:
        se = errors.std(axis=0, ddof=1) / np.sqrt(parts)
    else:
        se = np.full(errors.shape[1:], np.nan)
    return mean, se
