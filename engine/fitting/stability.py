"""Stability selection: how often each column is chosen by the lasso on random half-samples.

Meinshausen & Buhlmann (2010), "Stability selection", JRSS-B 72(4). For each of ``runs``
half-samples (floor(n/2) rows drawn without replacement) the lasso path is fitted on one fixed
penalty grid; the share of runs in which column j has a nonzero coefficient at penalty lambda is
Pi_j(lambda), and the column's stability score is the largest share over the penalty region.

The region matters: at the smallest penalties nearly every column enters and every share is
near 1. As in the paper, the region is the stretch of the grid from the largest penalty down
to the last penalty at which the runs select on average at most q columns. Then the expected
number of falsely selected columns among those with score above a threshold pi_thr in (0.5, 1]
is at most q^2 / ((2 pi_thr - 1) p) (their Theorem 1, under exchangeability). The default
q = sqrt(0.8 p) makes that bound 1 at pi_thr = 0.9 and 4 at 0.6; thresholds between 0.6 and 0.9
are the usual guidance.

Runs are independent (seeds from numpy SeedSequence(seed).spawn) and run in parallel threads
(the compiled coordinate descent releases the interpreter lock); the result does not depend on
the number of workers.
"""

from __future__ import annotations

__all__ = ["StabilitySelection", "stability_selection", "false_selection_bound"]

from dataclasses import dataclass

import numpy as np
from joblib import Parallel, delayed

from engine.blas_threads import one_blas_thread
from engine.errors import InputProblem
from engine.fitting.coordinate import elastic_net_path, penalty_grid, penalty_max
from engine.progress import Progress, silent
from engine.study_result import StabilityResult
from engine.tuning.parts import worker_count


def false_selection_bound(q: float, p: int, threshold: float) -> float:
    """Meinshausen & Buhlmann (2010) bound on expected false selections: q^2 / ((2 pi - 1) p)."""
    if not 0.5 < threshold <= 1.0:
        raise InputProblem(f"the stability threshold must lie in (0.5, 1]; got {threshold}")
    return float(q * q / ((2.0 * threshold - 1.0) * p))


@dataclass
class StabilitySelection:
    """Selection shares of every column.

    ``shares`` (p,) is the largest share over the penalty region; ``share_path`` (L, p) the share
    at every penalty of ``penalties``; ``mean_selected`` (L,) the average count selected per run;
    ``region`` the number of leading penalties used (those with mean_selected <= q).
    """

    shares: np.ndarray  # (p,)
    share_path: np.ndarray  # (L, p)
    penalties: np.ndarray  # (L,)
    mean_selected: np.ndarray  # (L,)
    region: int
    q: float
    runs: int
    half_size: int

    def stable(self, threshold: float = 0.6) -> np.ndarray:
        """Indices of columns whose share is at least ``threshold``."""
        return np.flatnonzero(self.shares >= threshold)

    def false_selection_bound(self, threshold: float) -> float:
        return false_selection_bound(self.q, self.shares.shape[0], threshold)

    def to_result(self, names: list[str], threshold: float = 0.6) -> StabilityResult:
        """The study-result form, with column names in place of indices."""
        return StabilityResult(
            runs=self.runs,
            shares={name: float(v) for name, v in zip(names, self.shares)},
            threshold=threshold,
            stable=[names[j] for j in self.stable(threshold)],
        )


def _one_run(X, y, rows, penalties):
    path = elastic_net_path(X[rows], y[rows], mix=1.0, penalties=penalties)
    return path.std_coefs != 0


def stability_selection(
    X: np.ndarray,
    y: np.ndarray,
    runs: int = 100,
    seed: int = 0,
    penalties: np.ndarray | None = None,
    n_penalties: int = 50,
    ratio: float = 1e-2,
    max_selected: float | None = None,
    progress: Progress | None = None,
    workers: int | None = None,
) -> StabilitySelection:
    """Stability selection with the lasso (Meinshausen & Buhlmann 2010; module docstring).

    X: (n, p) original units, y: (n,). penalties: the fixed grid (default ``n_penalties``
    log-spaced values from the full-data lasso penalty_max down by ``ratio``). max_selected: q,
    the average number selected at the end of the penalty region (default sqrt(0.8 p)).
    workers: parallel threads (default the machine's cores).
    """
    progress = progress or silent()
    X = np.asarray(X, dtype=float)
    y = np.asarray(y, dtype=float).ravel()
    n, p = X.shape
    if runs < 2:
        raise InputProblem(f"stability selection needs at least 2 half-sample runs; got {runs}")
    half = n // 2
    if half < 3:
        raise InputProblem(f"stability selection needs at least 6 rows; got {n}")
    q = float(np.sqrt(0.8 * p)) if max_selected is None else float(max_selected)
    if not q > 0:
        raise InputProblem(f"the number of columns selected per run must be positive; got {q}")
    if penalties is None:
        penalties = penalty_grid(penalty_max(X, y), n_penalties, ratio)
    penalties = np.sort(np.asarray(penalties, dtype=float))[::-1]
    seeds = np.random.SeedSequence(seed).spawn(runs)
    draws = [np.sort(np.random.default_rng(s).choice(n, half, replace=False)) for s in seeds]
    counts = np.zeros((penalties.shape[0], p))
    per_run_selected = np.zeros(penalties.shape[0])
    workers = worker_count(workers, runs)
    done = 0
    progress.step(0.0, "stability selection")
    batch = max(1, 2 * workers)  # short batches so a cancel is seen between them
    with one_blas_thread():
        with Parallel(n_jobs=workers, backend="threading") as pool:
            for start in range(0, runs, batch):
                progress.step(done / runs, f"stability selection: run {done + 1} of {runs}")
                chunk = draws[start : start + batch]
                results = pool(delayed(_one_run)(X, y, rows, penalties) for rows in chunk)
                for sel in results:
                    counts += sel
                    per_run_selected += sel.sum(axis=1)
                done += len(chunk)
    progress.step(1.0, "stability selection done")
    share_path = counts / runs
    mean_selected = per_run_selected / runs
    over = np.flatnonzero(mean_selected > q)
    region = int(over[0]) if over.size else int(penalties.shape[0])
    region = max(region, 1)  # the largest penalty selects (almost) nothing; always keep it
    shares = share_path[:region].max(axis=0)
    return StabilitySelection(
        shares=shares,
        share_path=share_path,
        penalties=penalties,
        mean_selected=mean_selected,
        region=region,
        q=q,
        runs=runs,
        half_size=half,
    )
