"""Choosing the subset size: held-out error per size, BIC per size, and the rows of the size table.

Cross-validation reruns the whole search (best subset or forward stepwise) on each training
part and scores the chosen set of every size on the held-out rows. Choosing the subsets once on
all rows and only refitting inside the parts would leak: the held-out rows would already have
helped choose the columns, and the error would look too good (Hastie, Tibshirani & Friedman,
The Elements of Statistical Learning, 2nd ed. 2009, section 7.10.2).

The grid runs over sizes 0 (intercept only) .. max_size, simplest first, so the one-standard-
error rule picks the smallest size within one standard error of the minimum.

BIC of the least-squares fit with k columns plus intercept (Schwarz 1978, Ann. Statist. 6(2)),
Gaussian errors with the variance profiled out, additive constants dropped:
    BIC_k = n * log(RSS_k / n) + (k + 1) * log(n)
"""

from __future__ import annotations

__all__ = [
    "SEARCHES",
    "SizedSubsets",
    "subsets_by_size",
    "cross_validate_sizes",
    "size_bic",
    "size_rows",
]

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.linalg import solve_triangular

from engine.errors import InputProblem
from engine.fitting.stepwise import forward_stepwise
from engine.fitting.subset_search import best_subset
from engine.fitting.triangle import qr_triangle
from engine.progress import Progress, silent
from engine.study_result import SizeRow
from engine.tuning.curve import ValidationCurve, choose_index
from engine.tuning.parts import mean_and_se, run_parts, worker_count

SEARCHES = ("best-subset", "forward-stepwise")


@dataclass
class SizedSubsets:
    """One search's result in a common form: ``subsets[k]`` is the set of size k (k = 0..K).

    ``rss[k]`` its residual sum of squares (``rss[0]`` is the total sum of squares).
    """

    subsets: list[tuple[int, ...]]
    rss: np.ndarray  # (K + 1,)
    n_rows: int
    approximate: bool = False
    warning: str | None = None
    nodes: int = 0

    @property
    def sizes(self) -> np.ndarray:
        return np.arange(len(self.subsets))


def subsets_by_size(
    X: np.ndarray,
    y: np.ndarray,
    search: str,
    max_size: int | None = None,
    exact_limit: int = 40,
    progress: Progress | None = None,
) -> SizedSubsets:
    """Run ``search`` ("best-subset" or "forward-stepwise") and list its set of every size."""
    if search == "best-subset":
        res = best_subset(X, y, max_size=max_size, exact_limit=exact_limit, progress=progress)
        return SizedSubsets(
            subsets=[()] + list(res.subsets),
            rss=np.concatenate([[res.tss], res.rss]),
            n_rows=res.n_rows,
            approximate=res.approximate,
            warning=res.warning,
            nodes=res.nodes,
        )
    if search == "forward-stepwise":
        path = forward_stepwise(X, y, max_steps=max_size, progress=progress)
        return SizedSubsets(
            subsets=[()] + [path.subset(k) for k in path.sizes],
            rss=np.concatenate([[path.tss], path.rss]),
            n_rows=path.n_rows,
            warning=path.note,
        )
    raise InputProblem(f"unknown subset search '{search}'; choose from {', '.join(SEARCHES)}")


def size_bic(rss: np.ndarray, sizes: np.ndarray, n: int) -> np.ndarray:
    """BIC_k = n log(RSS_k / n) + (k + 1) log n per size (module docstring); inf where RSS = 0."""
    rss = np.asarray(rss, dtype=float)
    sizes = np.asarray(sizes, dtype=float)
    with np.errstate(divide="ignore"):
        fit = n * np.log(rss / n)
    out = fit + (sizes + 1.0) * np.log(n)
    return np.where(rss > 0, out, np.inf)  # a perfect fit says nothing about new rows


def size_rows(
    subsets: Sequence[tuple[int, ...]],
    rss: np.ndarray,
    tss: float,
    n: int,
    names: Sequence[str],
    include_empty: bool = False,
) -> list[SizeRow]:
    """The size table: one :class:`SizeRow` per set (column names, RSS, R squared, BIC).

    ``subsets``/``rss`` are listed by size; empty sets are skipped unless ``include_empty``.
    """
    rss = np.asarray(rss, dtype=float)
    sizes = np.array([len(s) for s in subsets])
    bic = size_bic(rss, sizes, n)
    rows = []
    for s, r, b in zip(subsets, rss, bic):
        if not s and not include_empty:
            continue
        r2 = 1.0 - r / tss if tss > 0 else float("nan")
        rows.append(
            SizeRow(
                size=len(s),
                columns=[names[j] for j in s],
                rss=float(r),
                r2=float(r2),
                bic=float(b) if np.isfinite(b) else None,
            )
        )
    return rows


# with at least this many training rows per column, each size's least squares runs on the
# triangle of one QR factorization instead of the rows (measured at 18000 x 107: 5 s of
# refits per part -> 0.1 s)
_REDUCE_ROWS_PER_COLUMN = 2


def _part_errors(X, y, train, test, search, max_size, exact_limit, progress):
    found = subsets_by_size(X[train], y[train], search, max_size, exact_limit, progress)
    err = np.full(max_size + 1, np.nan)
    Xtr, ytr, Xte, yte = X[train], y[train], X[test], y[test]
    A = np.column_stack([np.ones(len(train)), Xtr])  # the intercept is column 0
    b = ytr
    if A.shape[0] >= _REDUCE_ROWS_PER_COLUMN * A.shape[1]:
        # A = QR keeps every subset's least squares: |b - A_s c| differs from |Q'b - R_s c|
        # by the same amount for every c, so both have the same minimizer (and A_s, R_s the
        # same singular values, hence the same rank decisions)
        Raug = qr_triangle(np.column_stack([A, b]))
        q = A.shape[1]
        A, b = Raug[:q, :q], Raug[:q, q]
    sets = found.subsets[: max_size + 1]
    order = _entry_order(sets)
    if order is not None and len(order) + 1 <= A.shape[0]:
        # nested sets (forward stepwise): one QR factorization of the columns in their order
        # of entry holds every size's least squares, the leading k x k triangle for size k
        # (at 270 x 6000, 269 sizes: one factorization instead of 269 SVD-based fits)
        cols = [0] + [j + 1 for j in order]
        Q, R = np.linalg.qr(A[:, cols])
        qb = Q.T @ b
        ones_te = np.column_stack([np.ones(len(test)), Xte[:, order]])
        diag = np.abs(np.diag(R))
        for k in range(len(sets)):
            if k and diag[k] <= _RANK_TOL * diag[: k + 1].max():
                break  # a column that adds nothing: leave the rest to least squares below
            coef = solve_triangular(R[: k + 1, : k + 1], qb[: k + 1])
            err[k] = float(np.mean((yte - ones_te[:, : k + 1] @ coef) ** 2))
        else:
            return err, found.approximate
    for k, s in enumerate(sets):
        if np.isfinite(err[k]):
            continue
        cols = list(s)
        coef = np.linalg.lstsq(A[:, [0] + [j + 1 for j in cols]], b, rcond=None)[0]
        pred = coef[0] + Xte[:, cols] @ coef[1:]
        err[k] = float(np.mean((yte - pred) ** 2))
    return err, found.approximate


# a diagonal entry of the ordered triangle this small against the largest so far: the column is
# (numerically) a combination of earlier ones, where SVD-based least squares decides the rank
_RANK_TOL = 1e-10


def _entry_order(sets: Sequence[tuple[int, ...]]) -> list[int] | None:
    """The order in which columns entered, when every set adds one column to the last (sets
    listed by size from the empty set); None when the sets are not nested."""
    order: list[int] = []
    for before, after in zip(sets, sets[1:]):
        added = set(after) - set(before)
        if len(after) != len(before) + 1 or len(added) != 1:
            return None
        order.append(added.pop())
    return order


def cross_validate_sizes(
    X: np.ndarray,
    y: np.ndarray,
    parts: Sequence[tuple[np.ndarray, np.ndarray]],
    search: str = "best-subset",
    max_size: int | None = None,
    choose: str = "min",
    progress: Progress | None = None,
    workers: int | None = None,
    exact_limit: int = 40,
    scheme: str = "kfold",
    diagnostics: dict | None = None,
) -> ValidationCurve:
    """Held-out mean squared error of the size-k set, k = 0..max_size, searched in each part.

    X: (n, p); y: (n,); parts: (train_idx, test_idx) pairs (engine.tuning.folds.make_folds).
    max_size is capped at min(p, smallest training part - 2). The returned curve has
    ``grid_kind="size"``, ``grid`` = sizes 0..K, ``n_selected`` = the sizes, and both the
    "min" and "one-se" choices (``curve.chosen(choose)``). Parts run in threads (``workers``,
    default the machine's cores), each reporting progress, so a cancel stops every part.
    ``diagnostics`` (optional dict) receives "approximate_parts": how many parts ran the
    approximate search.
    """
    if search not in SEARCHES:
        raise InputProblem(f"unknown subset search '{search}'; choose from {', '.join(SEARCHES)}")
    if choose not in ("min", "one-se"):
        raise InputProblem(f"the choice rule must be 'min' or 'one-se'; got '{choose}'")
    progress = progress or silent()
    X = np.asarray(X, dtype=float)
    y = np.asarray(y, dtype=float).ravel()
    parts = [(np.asarray(tr, dtype=np.intp), np.asarray(te, dtype=np.intp)) for tr, te in parts]
    if not parts:
        raise InputProblem("no validation parts were given")
    smallest = min(len(tr) for tr, _ in parts)
    top = min(X.shape[1], smallest - 2)
    if top < 1:
        raise InputProblem(
            f"a training part has only {smallest} rows; subset sizes need at least 3 rows per part"
        )
    K = top if max_size is None else min(int(max_size), top)
    if K < 1:
        raise InputProblem(f"the largest subset size must be at least 1; got {max_size}")
    workers = worker_count(workers, len(parts))

    errors = np.full((len(parts), K + 1), np.nan)
    approx = 0
    done = 0
    progress.step(0.0, f"{search}: validation")

    def run(i: int):
        tr, te = parts[i]
        sub = progress.part(i / len(parts), (i + 1) / len(parts), f"part {i + 1}")
        return i, _part_errors(X, y, tr, te, search, K, exact_limit, sub)

    def collect(item):
        nonlocal approx, done
        i, (err, was_approx) = item
        errors[i] = err
        approx += int(was_approx)
        done += 1
        progress.step(done / len(parts), f"{search}: validation part {done} of {len(parts)}")

    run_parts(len(parts), run, collect, workers)
    mean, se = mean_and_se(errors)
    if diagnostics is not None:
        diagnostics["approximate_parts"] = approx
    sizes = np.arange(K + 1)
    return ValidationCurve(
        grid=sizes.astype(float),
        grid_kind="size",
        mean_error=mean,
        se=se,
        n_selected=sizes,
        part_errors=errors,
        index_min=choose_index(mean, se, "min"),
        index_one_se=choose_index(mean, se, "one-se"),
        scheme=scheme,
        parts=len(parts),
    )
