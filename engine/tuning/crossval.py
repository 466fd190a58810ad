"""Cross-validation of a whole penalty path: held-out squared error at every penalty.

For each validation part the centring and scaling are recomputed on the training rows only
(no leakage from the held-out rows), the path is fitted on the training rows along the SAME
penalty grid (the grid of the full data, common practice), and the mean squared error of
the held-out rows is recorded at every penalty. The curve is the mean over parts; its standard
error is std(part errors, ddof=1) / sqrt(parts).

Cost. When rows outnumber columns, the centred cross products X'X, X'y, y'y of all rows are
formed once (row blocks, no copy); a training part's standardized Gram matrix is that total
minus the held-out rows' own cross products, with the shift to the part's means and the
division by its sds done algebraically. Otherwise the solver reads the training rows of X in
place (only the working columns are copied). Parts run in parallel threads (the compiled
coordinate descent releases the GIL) with one BLAS thread per worker; ``fit_and_validate``
adds the fit on all rows to them as one more task instead of running it before or after.
"""

from __future__ import annotations

__all__ = [
    "cross_validate_path",
    "estimated_seconds",
    "fit_and_validate",
    "fold_errors",
    "shared_cross_products",
]

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from engine.fitting.coordinate import (
    CrossProducts,
    SharedCrossProducts,
    _check_penalties,
    _check_xy,
    _GramProblem,
    _problem_lambda_max,
    _residual_problem,
    _Scaling,
    build_problem,
    compiled_route,
    default_ratio,
    normalize_penalty_factors,
    penalty_grid,
    solve_path,
)
from engine.fitting.path import PenaltyPath
from engine.fitting.ridge import RIDGE_RATIO, RidgeDecomposition
from engine.progress import Progress
from engine.tuning.curve import ValidationCurve, choose_index
from engine.tuning.parts import (
    BoardProgress,
    SharedArrays,
    board_folder,
    forced_placement,
    mean_and_se,
    process_pool_worthwhile,
    run_parts,
    run_parts_in_processes,
    worker_count,
)

# penalties whose held-out predictions are made together (one matrix product)
_SINK_BLOCK = 20

PenaltyFactors = np.ndarray | Callable[[np.ndarray, np.ndarray], np.ndarray] | None


@dataclass
class _PartJob:
    """One validation part: its rows and, on the Gram route, its standardized problem."""

    train: np.ndarray
    test: np.ndarray
    v: np.ndarray  # normalized penalty factors of this part
    prob: _GramProblem | None = None  # None: residual route, built from the rows where it runs
    sc: _Scaling | None = None
    # the held-out rows' cross products (centred at the shared reference), when the parts
    # partition the rows; with many held-out rows per column their errors come from these
    held: CrossProducts | None = None
    m0: np.ndarray | None = None  # the shared reference the held-out sums are centred at
    ybar0: float = 0.0


# held-out errors from cross products when held-out rows number at least this many per column
# (then the p x p products per block of penalties cost less than predicting every row)
_HELD_ROWS_PER_COLUMN = 4


def _part_job(X, y, train, test, penalty_factors, shared: SharedCrossProducts | None) -> _PartJob:
    p = X.shape[1]
    if callable(penalty_factors):
        v = normalize_penalty_factors(penalty_factors(X[train], y[train]), p)
    else:
        v = normalize_penalty_factors(penalty_factors, p)
    if shared is None:
        return _PartJob(train, test, v)
    prob, sc = shared.problem(X, y, train, test)
    held = shared.held.get(test.tobytes())
    if held is not None and held.n < _HELD_ROWS_PER_COLUMN * p:
        held = None
    return _PartJob(train, test, v, prob, sc, held, shared.m0, shared.ybar0)


class _HeldOutMoments:
    """Zt'Zt, Zt'yt and yt'yt of the held-out rows standardized with the training part's
    means and sds, from their cross products about the shared reference (m0, ybar0):
    with d = training means - m0 and e = training mean of y - ybar0,
    Zt'Zt = D (G - s d' - d s' + m d d') D, Zt'yt = D (xy - e s - sy d + m e d),
    yt'yt = yy - 2 e sy + m e^2 (D = 1/sd, m held-out rows). The squared error of beta is then
    yt'yt - 2 beta'Zt'yt + beta'Zt'Zt beta; the reference sits near every part's means, so
    the subtraction loses only the digits the fit explains (the curve needs a few)."""

    def __init__(self, held: CrossProducts, m0: np.ndarray, ybar0: float, sc: _Scaling):
        m = held.n
        d = sc.means - m0
        e = sc.y_mean - ybar0
        inv = sc.inv_sd
        C = held.G - np.outer(held.s, d) - np.outer(d, held.s) + m * np.outer(d, d)
        self.M = C * np.outer(inv, inv)
        self.c = (held.xy - e * held.s - held.sy * d + m * e * d) * inv
        self.yy = held.yy - 2.0 * e * held.sy + m * e * e
        self.m = m

    def errors(self, B: np.ndarray) -> np.ndarray:
        """Mean squared held-out error of each row of B (k, p)."""
        quad = np.einsum("ij,ij->i", B @ self.M, B)
        return np.maximum(self.yy - 2.0 * (B @ self.c) + quad, 0.0) / self.m


def _part_errors(
    data: SharedArrays,
    job: _PartJob,
    mix: float,
    penalties: np.ndarray,
    tol: float,
    max_sweeps: int,
    progress: Progress | None,
) -> tuple[np.ndarray, float, list[str]]:
    """Held-out mean squared errors of one part (runs in a thread or a worker process)."""
    X, y = data.get("X"), data.get("y")
    if job.prob is None:
        prob, sc = _residual_problem(X, y, job.train)
    else:
        prob, sc = job.prob, job.sc
    assert sc is not None
    p = X.shape[1]
    v = job.v
    moments = None
    if job.held is not None and mix > 0 and job.m0 is not None:
        moments = _HeldOutMoments(job.held, job.m0, job.ybar0, sc)
    else:
        # held-out rows centred and scaled with the TRAINING part's means and sds
        Zt = (X[job.test] - sc.means) * sc.inv_sd
        yt = y[job.test] - sc.y_mean
    if mix == 0 and np.all(v == 1.0):
        resid = yt[:, None] - RidgeDecomposition(prob, sc).predict(penalties, Zt, progress)
        return np.mean(resid**2, axis=0), 0.0, []
    L = penalties.shape[0]
    err = np.zeros(L)
    # only held-out errors are kept, not the path: solutions wait in a small block and their
    # predictions are made by one matrix product per block
    block = np.zeros((min(_SINK_BLOCK, L), p))
    first = [0]

    def flush(upto: int) -> None:
        k0 = first[0]
        if upto > k0:
            if moments is not None:
                err[k0:upto] = moments.errors(block[: upto - k0])
            else:
                R = yt[:, None] - Zt @ block[: upto - k0].T
                err[k0:upto] = np.einsum("ij,ij->j", R, R) / R.shape[0]
            first[0] = upto

    def sink(k: int, beta: np.ndarray) -> None:
        if k - first[0] >= block.shape[0]:
            flush(k)
        block[k - first[0]] = beta

    # a worker process reports its progress through the board; threads only check for cancel
    steps = isinstance(progress, BoardProgress)
    res = solve_path(
        prob, penalties, mix, v, tol, max_sweeps, progress, sink=sink, report_steps=steps
    )
    flush(L)
    return err, float(np.max(res.kkt, initial=0.0)), res.notes


def fold_errors(
    X: np.ndarray,
    y: np.ndarray,
    train: np.ndarray,
    test: np.ndarray,
    mix: float,
    penalties: np.ndarray,
    penalty_factors: PenaltyFactors = None,
    shared: SharedCrossProducts | None = None,
    tol: float = 1e-7,
    max_sweeps: int = 10000,
    progress: Progress | None = None,
) -> tuple[np.ndarray, float, list[str]]:
    """Held-out mean squared error at each penalty for one part; also its KKT violation and notes."""
    job = _part_job(X, y, train, test, penalty_factors, shared)
    return _part_errors(SharedArrays(X=X, y=y), job, mix, penalties, tol, max_sweeps, progress)


def estimated_seconds(n: int, p: int, parts: int, penalties: int, mix: float) -> float:
    """Rough single-core seconds of the parts' penalized paths, to decide whether worker
    processes pay. Fitted to this machine's measurements: compiled Gram route (rows outnumber
    columns) 1000x500 lasso about 0.03 s per part, elastic net about 0.1 s; interpreted
    routes 1000x500 lasso about 0.2 s per part, 200x2000 about 0.1 s, elastic net about twice.
    """
    if compiled_route(n, p, mix):
        per_penalty = (1e-9 if mix == 1.0 else 4e-9) * p * p
        return parts * penalties * per_penalty
    gram = n > p
    per_penalty = 1e-8 * p * p if gram else 3e-9 * n * p
    return parts * penalties * per_penalty * (1.0 if mix == 1.0 else 2.0)


def _placement(
    parallel: str, workers: int, mix: float, factors_per_part: bool, estimate: float, compiled: bool
) -> tuple[str, int]:
    """Where the parts run, "processes" or "threads", and how many at once."""
    if factors_per_part or workers < 2:
        parallel = "threads"  # a per-part callable may hold anything: it stays in this process
    elif parallel == "auto":
        if compiled:
            # the compiled path releases the interpreter lock: threads, unless processes are
            # asked for by name (TAMIS_PARALLEL, for checks) and can be started
            asked = forced_placement() == "processes"
            parallel = "processes" if asked and process_pool_worthwhile(0, workers) else "threads"
        else:
            parallel = "processes" if process_pool_worthwhile(estimate, workers) else "threads"
    if parallel == "threads" and mix > 0 and not factors_per_part and not compiled:
        # the interpreted paths' per-penalty Python work holds the interpreter lock: a second
        # thread only adds contention (measured here 15-35% slower than one on 100x200 to
        # 1000x500), so these parts run one after another unless they go to processes
        workers = 1
    return parallel, workers


def _indexed_part_errors(k, data, job, mix, lam, tol, max_sweeps, progress):
    return k, _part_errors(data, job, mix, lam, tol, max_sweeps, progress)


def shared_cross_products(X, y, parts) -> SharedCrossProducts | None:
    """Cross products for a path on all rows and its validation parts (None when n <= p)."""
    X, y = _check_xy(X, y)
    if X.shape[0] <= X.shape[1]:
        return None
    return SharedCrossProducts(X, y, [np.asarray(te, dtype=np.intp) for _, te in parts])


def cross_validate_path(
    X: np.ndarray,
    y: np.ndarray,
    parts: Sequence[tuple[np.ndarray, np.ndarray]],
    mix: float,
    penalties: np.ndarray | None,
    penalty_factors: PenaltyFactors = None,
    choose: str = "min",
    progress: Progress | None = None,
    workers: int | None = None,
    n_selected: np.ndarray | None = None,
    scheme: str = "kfold",
    tol: float = 1e-7,
    max_sweeps: int = 10000,
    use_gram: bool | None = None,
    diagnostics: dict | None = None,
    parallel: str = "auto",
    shared: SharedCrossProducts | None = None,
) -> ValidationCurve:
    """Validation curve of the penalized fit (mix: 1 lasso, 0 ridge) over ``parts``.

    X: (n, p) original units; y: (n,); parts: (train_idx, test_idx) pairs from make_folds.
    penalties: the grid (decreasing; taken from the full data when None). penalty_factors: an
    array, or a callable f(X_train, y_train) -> array recomputed inside each part (adaptive
    lasso). n_selected: count of nonzero coefficients of the full-data path at each penalty
    (computed here with one extra full-data path when not given). workers: parallel parts
    (default: number of cores). diagnostics: optional dict filled with "max_kkt_violation"
    (over parts) and "notes". parallel: "threads", "processes" (worker processes, for heavy
    parts; callable penalty factors always use threads) or "auto" (processes when the
    estimated work repays starting them, see ``engine.tuning.parts``). shared: the cross
    products of X, y made for these parts by ``shared_cross_products`` (and used for the fit
    on all rows too); formed here when not given.
    """
    curve, _ = _validate(
        X, y, parts, mix, penalties, penalty_factors, choose, progress, workers, n_selected,
        scheme, tol, max_sweeps, use_gram, diagnostics, parallel, shared, None,
    )  # fmt: skip
    return curve


def fit_and_validate(
    fit_all: Callable[[Progress | None], PenaltyPath],
    X: np.ndarray,
    y: np.ndarray,
    parts: Sequence[tuple[np.ndarray, np.ndarray]],
    mix: float,
    penalties: np.ndarray,
    penalty_factors: PenaltyFactors = None,
    choose: str = "min",
    progress: Progress | None = None,
    workers: int | None = None,
    scheme: str = "kfold",
    tol: float = 1e-7,
    max_sweeps: int = 10000,
    diagnostics: dict | None = None,
    parallel: str = "auto",
    shared: SharedCrossProducts | None = None,
) -> tuple[PenaltyPath, ValidationCurve]:
    """The fit on all rows, ``fit_all(progress)`` (a path along ``penalties``), and its
    validation curve (arguments as ``cross_validate_path``).

    Where the parts run on threads, the fit on all rows is one more task among them, started
    first (it is the largest): the cores stay busy instead of waiting for it before or after
    the parts. It then reports no steps of its own (the parts report), only checks for the
    user's cancel. Elsewhere it runs first, on the first 15% of the progress range.
    """
    curve, path = _validate(
        X, y, parts, mix, penalties, penalty_factors, choose, progress, workers, None,
        scheme, tol, max_sweeps, None, diagnostics, parallel, shared, fit_all,
    )  # fmt: skip
    assert path is not None
    return path, curve


# share of the progress range the fit on all rows takes when it runs before the parts
_FIT_ALL_SHARE = 0.15
# the task index of the fit on all rows among the parts' results
_ALL_ROWS = -1


def _validate(
    X, y, parts, mix, penalties, penalty_factors, choose, progress, workers, n_selected,
    scheme, tol, max_sweeps, use_gram, diagnostics, parallel, shared, fit_all,
) -> tuple[ValidationCurve, PenaltyPath | None]:  # fmt: skip
    X, y = _check_xy(X, y)
    if choose not in ("min", "one-se"):
        raise ValueError(f"choose must be 'min' or 'one-se', got {choose!r}")
    if not 0.0 <= mix <= 1.0:
        raise ValueError(f"mix must lie in [0, 1], got {mix}")
    if parallel not in ("auto", "threads", "processes"):
        raise ValueError(f"parallel must be 'auto', 'threads' or 'processes', got {parallel!r}")
    n, p = X.shape
    parts = [(np.asarray(tr, dtype=np.intp), np.asarray(te, dtype=np.intp)) for tr, te in parts]
    if not parts:
        raise ValueError("no validation parts were given")
    if progress is not None:
        progress.step(0.0, "validation: preparing")
    lam = _check_penalties(penalties)
    full_v = None if callable(penalty_factors) else penalty_factors
    if callable(penalty_factors):
        full_v = penalty_factors(X, y)
    if lam is None:
        prob, _ = build_problem(X, y)
        v = normalize_penalty_factors(full_v, p)
        if mix == 0:
            lam_max = float(np.max(np.abs(prob.q))) / n / 1e-3
            lam = penalty_grid(lam_max, 100, RIDGE_RATIO)
        else:
            lam = penalty_grid(_problem_lambda_max(prob, mix, v), 100, default_ratio(n, p))

    gram = (n > p) if use_gram is None else use_gram
    if not gram:
        shared = None
    elif shared is None:
        shared = SharedCrossProducts(X, y, [te for _, te in parts])
    workers = worker_count(workers, len(parts))

    errors = np.zeros((len(parts), lam.shape[0]))
    kkt_max = 0.0
    notes: set[str] = set()
    done = 0
    fitted: list[PenaltyPath] = []

    def collect(item):
        nonlocal kkt_max, done
        k, result = item
        if k == _ALL_ROWS:
            fitted.append(result)
            return
        err, kkt, nts = result
        errors[k] = err
        kkt_max = max(kkt_max, kkt)
        notes.update(nts)
        done += 1
        if progress is not None and parallel == "threads":  # processes report through the board
            progress.step(done / len(parts), f"validation part {done} of {len(parts)}")

    estimate = estimated_seconds(n, p, len(parts), lam.shape[0], mix)
    compiled = gram and compiled_route(n, p, mix)
    parallel, workers = _placement(
        parallel, workers, mix, callable(penalty_factors), estimate, compiled
    )
    beside = fit_all is not None and parallel == "threads" and workers > 1
    if fit_all is not None and not beside:
        fitted.append(fit_all(None if progress is None else progress.part(0.0, _FIT_ALL_SHARE)))
        if progress is not None:
            progress = progress.part(_FIT_ALL_SHARE, 1.0)
    if parallel == "processes":
        with board_folder() as folder:
            data = SharedArrays(folder, X=X, y=y)

            def tasks():
                for k, (tr, te) in enumerate(parts):
                    job = _part_job(X, y, tr, te, penalty_factors, shared)
                    yield _indexed_part_errors, (k, data, job, mix, lam, tol, max_sweeps)

            run_parts_in_processes(tasks(), len(parts), collect, workers, progress, folder)
    else:
        child = progress.part(0.0, 1.0) if progress is not None else None
        data = SharedArrays(X=X, y=y)

        def run(k: int):
            if beside:  # task 0 is the fit on all rows; it only checks for cancel
                if k == 0:
                    assert fit_all is not None
                    quiet = None if progress is None else Progress(cancel=progress.cancel)
                    return _ALL_ROWS, fit_all(quiet)
                k -= 1
            tr, te = parts[k]
            job = _part_job(X, y, tr, te, penalty_factors, shared)
            return _indexed_part_errors(k, data, job, mix, lam, tol, max_sweeps, child)

        run_parts(len(parts) + int(beside), run, collect, workers)
    mean, se = mean_and_se(errors)
    path = fitted[0] if fitted else None
    if path is not None:
        n_selected = path.n_selected
    elif n_selected is None:
        from engine.fitting.coordinate import elastic_net_path
        from engine.fitting.ridge import ridge_path

        if mix == 0 and full_v is None:
            n_selected = ridge_path(X, y, penalties=lam, check_kkt=False).n_selected
        else:
            n_selected = elastic_net_path(
                X, y, mix, penalties=lam, penalty_factors=full_v, tol=tol
            ).n_selected
    if diagnostics is not None:
        diagnostics["max_kkt_violation"] = kkt_max
        diagnostics["notes"] = sorted(notes)
    curve = ValidationCurve(
        grid=lam,
        grid_kind="penalty",
        mean_error=mean,
        se=se,
        n_selected=np.asarray(n_selected),
        part_errors=errors,
        index_min=choose_index(mean, se, "min"),
        index_one_se=choose_index(mean, se, "one-se"),
        scheme=scheme,
        parts=len(parts),
    )
    return curve, path
