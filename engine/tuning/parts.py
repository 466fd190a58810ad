"""Running work over validation parts (or resamples) on the machine's cores, and summarizing it.

Parts run on threads (joblib's threading backend, one BLAS thread each: the work is many small
compiled calls that would otherwise contend for the cores), so every part sees the same cancel
token and a cancel stops them all within a second. Results are handed back, in the caller's
thread, in the order they finish.
"""

from __future__ import annotations

__all__ = ["worker_count", "run_parts", "mean_and_se"]

import os
from collections.abc import Callable
from typing import TypeVar

import numpy as np
from joblib import Parallel, delayed

from engine.fitting.coordinate import one_blas_thread

T = TypeVar("T")


def worker_count(workers: int | None, tasks: int) -> int:
    """Workers to use: the machine's cores unless given, never more than the tasks."""
    if workers is None:
        workers = os.cpu_count() or 1
    return max(1, min(int(workers), tasks))


def run_parts(
    tasks: int, run: Callable[[int], T], collect: Callable[[T], None], workers: int
) -> None:
    """Call ``run(k)`` for k in 0..tasks-1 and pass each result to ``collect`` as it finishes."""
    with one_blas_thread():
        if workers == 1:
            for k in range(tasks):
                collect(run(k))
            return
        pool = Parallel(n_jobs=workers, backend="threading", return_as="generator_unordered")
        for item in pool(delayed(run)(k) for k in range(tasks)):
            collect(item)


def mean_and_se(errors: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Mean over parts (rows) and its standard error, std(ddof=1)/sqrt(parts); NaN for one part."""
    parts = errors.shape[0]
    mean = errors.mean(axis=0)
    if parts > 1:
        se = errors.std(axis=0, ddof=1) / np.sqrt(parts)
    else:
        se = np.full(errors.shape[1:], np.nan)
    return mean, se
