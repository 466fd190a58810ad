"""Validation parts in worker processes: the same numbers as in-process, progress, cancel."""

import pickle
import threading
import time

import numpy as np
import pytest
from sparse_truth import sparse_truth_data

from engine.errors import Cancelled
from engine.fitting.coordinate import elastic_net_path
from engine.progress import CancelToken, Progress
from engine.tuning.crossval import cross_validate_path
from engine.tuning.folds import make_folds
from engine.tuning.parts import SharedArrays, board_folder, process_pool_worthwhile


@pytest.mark.parametrize("n,p,mix", [(150, 20, 1.0), (60, 90, 1.0), (150, 20, 0.5), (80, 30, 0.0)])
def test_processes_give_the_same_errors_to_the_last_digit(n, p, mix):
    # the same arithmetic runs in a worker as in the caller, so the parts' errors must be
    # bit-identical (reruns of a study must not depend on where its parts ran)
    X, y = sparse_truth_data(n, p, seed=1)
    parts = make_folds(n, "kfold", folds=5, seed=3)
    lam = elastic_net_path(X, y, mix=max(mix, 0.5)).penalties[::4]
    kw = dict(n_selected=np.zeros(lam.size))
    here = cross_validate_path(X, y, parts, mix, lam, workers=1, parallel="threads", **kw)
    away = cross_validate_path(X, y, parts, mix, lam, workers=2, parallel="processes", **kw)
    assert np.array_equal(here.part_errors, away.part_errors)
    assert here.index_min == away.index_min


def test_progress_moves_within_parts_and_cancel_stops_the_workers():
    X, y = sparse_truth_data(400, 300, seed=2)
    parts = make_folds(400, "kfold", folds=4, seed=0)
    lam = elastic_net_path(X, y).penalties
    lam = np.geomspace(lam[0], lam[0] * 1e-4, 400)  # long enough to cancel in the middle
    token = CancelToken()
    seen: list[float] = []

    def callback(fraction, words):
        seen.append(fraction)

    def cancel_soon():
        while not seen:
            time.sleep(0.02)
        token.cancel()

    threading.Thread(target=cancel_soon, daemon=True).start()
    started = time.monotonic()
    with pytest.raises(Cancelled):
        cross_validate_path(
            X,
            y,
            parts,
            1.0,
            lam,
            progress=Progress(callback, token),
            workers=2,
            parallel="processes",
            n_selected=np.zeros(lam.size),
        )
    waited = time.monotonic() - started
    assert seen and 0.0 <= min(seen) and max(seen) < 1.0
    assert waited < 60  # a generous bound: the point is that it returns, not how fast
    # the workers are usable again afterwards
    small_X, small_y = sparse_truth_data(90, 10, seed=3)
    curve = cross_validate_path(
        small_X,
        small_y,
        make_folds(90, "kfold", folds=3, seed=0),
        1.0,
        np.geomspace(1.0, 0.01, 10),
        workers=2,
        parallel="processes",
        n_selected=np.zeros(10),
    )
    assert np.all(np.isfinite(curve.mean_error))


def test_shared_arrays_travel_as_files_not_copies():
    X = np.arange(12.0).reshape(4, 3)
    with board_folder() as folder:
        shared = SharedArrays(folder, X=X)
        assert shared.get("X") is X  # the caller keeps its own array
        copy = pickle.loads(pickle.dumps(shared))
        mapped = copy.get("X")
        assert np.array_equal(mapped, X) and not mapped.flags.writeable
        assert len(pickle.dumps(shared)) < 500  # the path only, not the numbers
    with pytest.raises(TypeError, match="without a folder"):
        pickle.dumps(SharedArrays(X=X))


def test_small_work_stays_in_process():
    assert not process_pool_worthwhile(0.01, workers=2)
    assert not process_pool_worthwhile(100.0, workers=1)


def test_stop_ends_the_worker_processes():
    # the desktop leaves with os._exit; it stops the workers first or they would outlive it
    import os

    from joblib import delayed

    from engine.tuning.parts import _process_pool, stop_worker_processes, warm_process_pool

    warm_process_pool(2, wait=True)
    pids = set(_process_pool(2)(delayed(os.getpid)() for _ in range(4)))
    assert pids and os.getpid() not in pids
    stop_worker_processes()
    alive = _still_running(pids, within=30)
    assert not alive, f"workers still running: {alive}"


def _still_running(pids, within: float) -> set[int]:
    """The processes of ``pids`` still running after up to ``within`` seconds (an ended child
    of this process is reaped, so it does not linger as a zombie)."""
    import os

    alive = set(pids)
    deadline = time.monotonic() + within
    while alive and time.monotonic() < deadline:
        for pid in list(alive):
            try:
                if os.waitpid(pid, os.WNOHANG)[0] == pid:
                    alive.discard(pid)
                    continue
            except ChildProcessError:  # not a child of this process
                pass
            try:
                os.kill(pid, 0)
            except ProcessLookupError:
                alive.discard(pid)
        time.sleep(0.1)
    return alive


@pytest.mark.skipif(not hasattr(__import__("signal"), "SIGKILL"), reason="POSIX signals")
def test_workers_leave_when_their_program_is_killed():
    # a crash (here: SIGKILL, no clean-up at all) must not leave the workers idling for their
    # 30-minute timeout: each watches its parent and ends with it
    import subprocess
    import sys

    code = (
        "import os\n"
        "from joblib import delayed\n"
        "from engine.tuning.parts import warm_process_pool, _process_pool\n"
        "warm_process_pool(2, wait=True)\n"
        "print(' '.join(map(str, sorted(set(_process_pool(2)(delayed(os.getpid)() for _ in range(6)))))), flush=True)\n"
        "os.kill(os.getpid(), 9)\n"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    pids = [int(v) for v in done.stdout.split()]
    assert pids, done.stderr[-2000:]
    alive = _still_running(pids, within=20)
    assert not alive, f"workers outlived their killed program: {alive}"


def test_fit_on_all_rows_runs_first_when_parts_go_to_processes():
    # with the parts in worker processes the fit on all rows runs before them, in the caller,
    # on the first part of the progress range; the curve equals the in-process one
    from engine.tuning.crossval import fit_and_validate

    X, y = sparse_truth_data(60, 90, seed=2)
    parts = make_folds(60, "kfold", folds=5, seed=1)
    lam = elastic_net_path(X, y).penalties[::5]
    seen, where = [], []

    def fit_all(progress):
        where.append((threading.current_thread() is threading.main_thread(), list(seen)))
        return elastic_net_path(X, y, penalties=lam, progress=progress)

    path, curve = fit_and_validate(
        fit_all, X, y, parts, 1.0, lam, workers=2, parallel="processes",
        progress=Progress(lambda f, w: seen.append(f)),
    )  # fmt: skip
    here = cross_validate_path(X, y, parts, 1.0, lam, workers=1, n_selected=path.n_selected)
    assert np.array_equal(curve.part_errors, here.part_errors)
    assert len(where) == 1 and where[0][0] and max(where[0][1], default=0.0) == 0.0
    # the parts report on the rest of the range, after the fit's share, to its end
    assert seen == sorted(seen) and seen[-1] == pytest.approx(1.0)
