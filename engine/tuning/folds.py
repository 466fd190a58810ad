"""Validation parts: which rows train and which rows are held out, for each part.

Schemes (all common practice):
- "kfold": rows shuffled with ``seed``, cut into ``folds`` parts of near-equal size; every row
  is held out exactly once.
- "repeated": ``repeats`` independent k-fold splits, each shuffled with a seed derived from
  ``seed`` (numpy SeedSequence spawning), parts listed repeat by repeat.
- "grouped": rows of one group always stay together; groups (shuffled with ``seed``) are dealt
  to parts so that part sizes in rows stay balanced (largest group first to the smallest part).
- "time": rows sorted by ``order`` (stable), cut into ``folds`` consecutive blocks; part k trains
  on blocks 0..k-1 and validates on block k, so there are folds - 1 parts and no part ever
  trains on a later row than it validates on ("forward chaining"). Rows sharing one time (six
  shops' sales of one week) stay in one block: a cut falls where the time changes, so no part
  trains on rows of the very period it validates on.
- "loo": leave one row out, n parts.
"""

from __future__ import annotations

__all__ = ["make_folds", "SCHEMES"]

import numpy as np

from engine.errors import InputProblem

SCHEMES = ("kfold", "repeated", "grouped", "time", "loo")

Parts = list[tuple[np.ndarray, np.ndarray]]


def _complement(n: int, test: np.ndarray) -> np.ndarray:
    mask = np.ones(n, bool)
    mask[test] = False
    return np.flatnonzero(mask)


def _kfold(n: int, folds: int, rng: np.random.Generator) -> Parts:
    perm = rng.permutation(n)
    return [(_complement(n, np.sort(t)), np.sort(t)) for t in np.array_split(perm, folds)]


def make_folds(
    n: int,
    scheme: str = "kfold",
    folds: int = 10,
    seed: int = 0,
    repeats: int = 1,
    groups: np.ndarray | None = None,
    order: np.ndarray | None = None,
) -> Parts:
    """List of (train_idx, test_idx) pairs of row indices (sorted int arrays) over n rows.

    Raises InputProblem when the rows or groups are too few for the folds asked.
    """
    if scheme not in SCHEMES:
        raise InputProblem(f"unknown validation scheme '{scheme}': use one of {', '.join(SCHEMES)}")
    if scheme == "loo":
        if n < 2:
            raise InputProblem(f"{n} rows: leave-one-out needs at least 2 rows")
        return [(_complement(n, np.array([i])), np.array([i])) for i in range(n)]
    if folds < 2:
        raise InputProblem(f"{folds} folds asked: use at least 2 folds")
    if scheme != "grouped" and n < folds:
        raise InputProblem(f"{n} rows but {folds} folds: use at most {n} folds or more rows")
    if scheme == "kfold":
        return _kfold(n, folds, np.random.default_rng(seed))
    if scheme == "repeated":
        if repeats < 1:
            raise InputProblem(f"{repeats} repeats asked: use at least 1")
        children = np.random.SeedSequence(seed).spawn(repeats)
        parts: Parts = []
        for child in children:
            parts.extend(_kfold(n, folds, np.random.default_rng(child)))
        return parts
    if scheme == "grouped":
        if groups is None:
            raise InputProblem("the grouped scheme needs a group column")
        groups = np.asarray(groups)
        if groups.shape[0] != n:
            raise InputProblem(f"the group column has {groups.shape[0]} values for {n} rows")
        labels, codes = np.unique(groups, return_inverse=True)
        G = labels.shape[0]
        if G < 2:
            raise InputProblem(
                f"the group column holds one group only ('{labels[0]}'): grouped folds need "
                "at least 2 groups; choose a column with more groups, or shuffled folds "
                "(--scheme kfold) without one"
            )
        if G < folds:
            raise InputProblem(
                f"the group column has only {G} groups but {folds} folds were asked: "
                f"use at most {G} folds or a column with more groups"
            )
        rng = np.random.default_rng(seed)
        sizes = np.bincount(codes, minlength=G)
        # shuffle first so that ties in size are broken at random, then largest first
        shuffled = rng.permutation(G)
        ordered = shuffled[np.argsort(-sizes[shuffled], kind="stable")]
        load = np.zeros(folds, dtype=int)
        part_of_group = np.empty(G, dtype=int)
        for g in ordered:
            k = int(np.argmin(load))
            part_of_group[g] = k
            load[k] += sizes[g]
        row_part = part_of_group[codes]
        return [
            (np.flatnonzero(row_part != k), np.flatnonzero(row_part == k)) for k in range(folds)
        ]
    # time
    if order is None:
        sorted_rows = np.arange(n)
    else:
        order = np.asarray(order)
        if order.shape[0] != n:
            raise InputProblem(f"the order column has {order.shape[0]} values for {n} rows")
        sorted_rows = np.argsort(order, kind="stable")
    blocks = np.array_split(sorted_rows, folds)
    if order is not None:
        blocks = _whole_periods(blocks, sorted_rows, order[sorted_rows], folds)
    out: Parts = []
    for k in range(1, folds):
        train = np.sort(np.concatenate(blocks[:k]))
        out.append((train, np.sort(blocks[k])))
    return out


def _whole_periods(
    blocks: list[np.ndarray], sorted_rows: np.ndarray, times: np.ndarray, folds: int
) -> list[np.ndarray]:
    """The blocks with each cut moved to the nearest place where the time changes."""
    changes = np.flatnonzero(times[1:] != times[:-1]) + 1  # positions where a new time starts
    if changes.size < folds - 1:
        raise InputProblem(
            f"the time order has {changes.size + 1} distinct values, too few for {folds} "
            f"blocks of whole periods; use --folds {max(2, changes.size + 1)} or fewer"
        )
    cuts = np.cumsum([len(b) for b in blocks])[:-1]
    chosen: list[int] = []
    for i, c in enumerate(cuts):
        # the nearest change after the last cut that leaves enough changes for the cuts still
        # to come (ties go to the earlier one)
        last = changes[changes.size - (cuts.size - i)]
        free = changes[(changes > (chosen[-1] if chosen else 0)) & (changes <= last)]
        chosen.append(int(free[np.argmin(np.abs(free - c))]))
    return np.split(sorted_rows, chosen)
