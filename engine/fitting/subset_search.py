"""Best subset selection: for each size k, the k columns with the smallest residual sum of squares.

Exact search by branch and bound in the spirit of "leaps and bounds" (Furnival & Wilson 1974,
Technometrics 16(4)) in the dropping-column form of Gatu & Kontoghiorghes (2006, J. Comput.
Graph. Stat. 15(1)): a node is a column set V with a position k; its subtree holds every subset
of V that keeps V[:k], each subset appears exactly once, and the 2^p subsets are never listed.
The bound is that a least-squares RSS can only grow when columns are removed, so RSS(V) is a
lower bound for every subset in the subtree; a subtree whose bound is no better than the
incumbent of every size it could reach is skipped.

Everything works on the centred and scaled cross-product matrix. A node carries the inverse of
its cross-product matrix and its coefficients, so the RSS of all its children comes from one
vectorized formula, RSS(V minus j) = RSS(V) + beta_j^2 / [G_V^-1]_jj, and a child's inverse
from a rank-one downdate (a sweep). The free columns of a node are ordered by that RSS increase,
most important first, so the largest subtrees get the largest bounds.

Above ``exact_limit`` candidates, when p >= n or when the columns are linearly dependent, a
clearly labelled approximate search runs instead: forward selection followed by swaps of one
chosen column for one left-out column while the RSS drops (a local search; no guarantee).
"""

from __future__ import annotations

__all__ = ["SubsetSearch", "best_subset", "subset_rss"]

import time
from dataclasses import dataclass, field

import numpy as np

from engine.errors import InputProblem
from engine.fitting.stepwise import _check_xy, forward_stepwise
from engine.progress import Progress, silent

# smallest eigenvalue / largest of the scaled cross-product matrix below which the columns are
# treated as linearly dependent (the sweep downdates would lose all accuracy)
_DEPENDENT = 1e-10
# a swap must lower the RSS by more than this share to count (stops cycling on rounding noise)
_SWAP_GAIN = 1e-12


@dataclass
class SubsetSearch:
    """The best subset found for each size 1..max_size.

    ``subsets[k-1]`` are sorted column indices of the best set of size k and ``rss[k-1]`` its
    residual sum of squares (least squares with intercept, recomputed directly on the data).
    ``tss`` is the RSS of the intercept-only model. ``nodes`` counts subsets whose RSS was
    evaluated (compare with ``2 ** p``). ``approximate`` is True when the exact search was not
    run; ``warning`` then says why and what the result means.
    """

    subsets: list[tuple[int, ...]]
    rss: np.ndarray  # (K,)
    tss: float
    n_rows: int
    n_columns: int
    nodes: int
    approximate: bool
    method: str  # "branch and bound" or "forward selection with swaps"
    warning: str | None = None
    notes: list[str] = field(default_factory=list)

    @property
    def sizes(self) -> np.ndarray:
        return np.arange(1, len(self.subsets) + 1)


def best_subset(
    X: np.ndarray,
    y: np.ndarray,
    max_size: int | None = None,
    exact_limit: int = 40,
    progress: Progress | None = None,
) -> SubsetSearch:
    """Best subset of each size 1..max_size for least squares with intercept.

    X: (n, p) float, y: (n,) float. ``max_size`` defaults to min(n - 2, p), so every model
    keeps at least one residual degree of freedom. The exact branch-and-bound search runs when
    p <= ``exact_limit`` and p < n and the columns are linearly independent; otherwise an
    approximate search runs and the result says so (``approximate=True`` and ``warning``).
    ``progress.step`` is called during the search, so a cancel stops it within a second.
    """
    progress = progress or silent()
    X, y = _check_xy(X, y)
    n, p = X.shape
    top = min(n - 2, p)
    if max_size is None:
        max_size = top
    if max_size < 1:
        raise InputProblem(f"the largest subset size must be at least 1; got {max_size}")
    max_size = min(int(max_size), top)
    if max_size < 1:
        raise InputProblem(
            f"best subset needs at least 3 rows and 1 column; got {n} rows, {p} columns"
        )
    if exact_limit < 1:
        raise InputProblem(f"the exact-search limit must be at least 1 column; got {exact_limit}")

    Z, yc = _centre_scale(X, y)
    G = Z.T @ Z
    c = Z.T @ yc
    yy = float(yc @ yc)

    reason = None
    if p >= n:
        reason = f"there are {p} candidate columns but only {n} rows"
    elif p > exact_limit:
        reason = (
            f"{p} candidate columns is above the exact-search limit of {exact_limit}"
            " (raise the limit, --exact-subset-limit, to search exactly; the time can grow quickly)"
        )
    else:
        eig = np.linalg.eigvalsh(G)
        if eig[0] <= _DEPENDENT * max(eig[-1], 1e-300):
            reason = "some candidate columns are exact linear combinations of others"

    start = forward_stepwise(X, y, max_steps=max_size, progress=progress.part(0.0, 0.05))
    inc_sets = [start.subset(k) for k in range(1, len(start.order) + 1)]
    inc_sets, nodes = _swap_improve(G, c, yy, inc_sets, progress.part(0.05, 0.15))
    if reason is not None:
        warning = (
            f"Best subset is approximate: {reason}. The sets shown come from forward "
            "selection improved by one-for-one swaps; they are good sets, not proven best."
        )
        subsets = inc_sets
        method = "forward selection with swaps"
    else:
        warning = None
        method = "branch and bound"
        inc_rss = np.array([_rss_of(G, c, yy, s) for s in inc_sets])
        subsets, visited = _branch_and_bound(
            G, c, yy, max_size, inc_sets, inc_rss, progress.part(0.15, 1.0)
        )
        nodes += visited
    rss = np.array([subset_rss(X, y, s) for s in subsets])
    progress.step(1.0, "best subset done")
    return SubsetSearch(
        subsets=[tuple(sorted(int(j) for j in s)) for s in subsets],
        rss=rss,
        tss=float(yc @ yc),
        n_rows=n,
        n_columns=p,
        nodes=int(nodes),
        approximate=reason is not None,
        method=method,
        warning=warning,
        notes=[start.note] if start.note else [],
    )


def subset_rss(X: np.ndarray, y: np.ndarray, columns: tuple[int, ...] | list[int]) -> float:
    """RSS of least squares of y on an intercept and X[:, columns], solved directly."""
    cols = list(columns)
    A = np.column_stack([np.ones(X.shape[0]), X[:, cols]])
    coef, *_ = np.linalg.lstsq(A, y, rcond=None)
    r = y - A @ coef
    return float(r @ r)


def _centre_scale(X: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    Z = X - X.mean(axis=0)
    norms = np.sqrt(np.einsum("ij,ij->j", Z, Z))
    norms[norms == 0.0] = 1.0  # a constant column stays all-zero and is never useful
    return Z / norms, y - y.mean()


def _rss_of(G: np.ndarray, c: np.ndarray, yy: float, s: tuple[int, ...]) -> float:
    idx = list(s)
    b = np.linalg.lstsq(G[np.ix_(idx, idx)], c[idx], rcond=None)[0]
    return float(yy - c[idx] @ b)


def _branch_and_bound(
    G: np.ndarray,
    c: np.ndarray,
    yy: float,
    max_size: int,
    inc_sets: list[tuple[int, ...]],
    inc_rss: np.ndarray,
    progress: Progress,
) -> tuple[list[tuple[int, ...]], int]:
    """Exact dropping-column branch and bound; returns the best set per size and nodes evaluated."""
    p = G.shape[0]
    # best[s] is the incumbent RSS of size s (index 0 unused); unreachable sizes stay +inf
    best = np.full(p + 1, np.inf)
    best_set: list[tuple[int, ...] | None] = [None] * (p + 1)
    for k, (s, r) in enumerate(zip(inc_sets, inc_rss), start=1):
        best[k], best_set[k] = r, s
    # max of best over sizes [lo, hi]: a running maximum from the left is enough once sorted
    # by size, but incumbents need not be monotone, so take the max over the range explicitly.

    A0 = np.linalg.inv(G)
    A0 = (A0 + A0.T) / 2.0
    beta0 = A0 @ c
    rss0 = float(yy - c @ beta0)
    V0 = np.arange(p)
    if p <= max_size and rss0 < best[p]:
        best[p], best_set[p] = rss0, tuple(V0)
    nodes = 1
    covered = 1.0  # subsets accounted for (evaluated or skipped), out of 2^p
    total = 2.0**p
    # stack entries: (V, k, Ainv, beta, rss) of a node whose children still need evaluating
    stack = [(V0, 0, A0, beta0, rss0)]
    last = time.monotonic()
    counter = 0
    while stack:
        V, k, A, beta, rss = stack.pop()
        m = len(V)
        counter += 1
        if counter & 127 == 0:
            now = time.monotonic()
            if now - last > 0.2:
                progress.step(covered / total, f"best subset: {nodes:,} subsets evaluated")
                last = now
        if m - 1 < 1 or k >= m:
            continue
        increase = beta[k:] ** 2 / np.diag(A)[k:]
        child_rss = rss + increase
        nodes += m - k
        covered += m - k
        size = m - 1
        if size <= max_size:
            j = int(np.argmin(child_rss))
            if child_rss[j] < best[size]:
                best[size] = child_rss[j]
                best_set[size] = tuple(int(v) for v in np.delete(V, k + j))
        # order the free columns: largest RSS increase (most important) first
        rank = np.argsort(-increase, kind="stable")
        perm = np.concatenate([np.arange(k), k + rank])
        V = V[perm]
        A = A[np.ix_(perm, perm)]
        beta = beta[perm]
        child_rss = child_rss[rank]
        # children: drop V[i] for i = k..m-1; the child's subtree keeps V[:i], sizes i..m-1,
        # and holds 2^(m-1-i) subsets (the child itself already evaluated above)
        for i in range(m - 1, k - 1, -1):
            sub = 2.0 ** (m - 1 - i) - 1.0
            if sub == 0.0:
                continue
            lo, hi = max(i, 1), min(m - 2, max_size)
            if lo > hi or child_rss[i - k] >= best[lo : hi + 1].max():
                covered += sub
                continue
            a = A[:, i]
            An = A - np.outer(a, a / a[i])
            keep = np.concatenate([np.arange(i), np.arange(i + 1, m)])
            An = An[np.ix_(keep, keep)]
            bn = (beta - a * (beta[i] / a[i]))[keep]
            stack.append((V[keep], i, An, bn, float(child_rss[i - k])))
    return [best_set[k] for k in range(1, max_size + 1)], nodes  # type: ignore[misc]


def _swap_improve(
    G: np.ndarray,
    c: np.ndarray,
    yy: float,
    sets: list[tuple[int, ...]],
    progress: Progress,
) -> tuple[list[tuple[int, ...]], int]:
    """Improve each set by the best one-for-one swap until none lowers the RSS.

    All swap RSS values of a set come from the cross-product matrix at once: with u_j the unit
    vector of span(S) orthogonal to S minus j, dropping j raises the RSS by c_j^2 and then adding
    l lowers it by (x_l'r + c_j w_jl)^2 / (d_l + w_jl^2), where r is the residual, d_l the
    squared norm of x_l orthogonal to span(S), w_jl = u_j'x_l and c_j = beta_j / sqrt([G_S^-1]_jj).
    """
    p = G.shape[0]
    out: list[tuple[int, ...]] = []
    evaluated = 0
    for idx, s in enumerate(sets):
        progress.step(idx / max(len(sets), 1), f"improving the set of size {idx + 1} by swaps")
        S = list(s)
        for _ in range(10 * p):
            progress.check()
            k = len(S)
            out_cols = np.setdiff1d(np.arange(p), S)
            if k == 0 or out_cols.size == 0:
                break
            Sa = np.asarray(S, dtype=np.intp)
            Gs = G[np.ix_(Sa, Sa)]
            try:
                A = np.linalg.inv(Gs)
            except np.linalg.LinAlgError:
                break
            beta = A @ c[S]
            rss = yy - c[S] @ beta
            Gso = G[np.ix_(Sa, out_cols)]
            xr = c[out_cols] - Gso.T @ beta  # x_l' r
            d = np.diag(G)[out_cols] - np.einsum("ij,ij->j", Gso, A @ Gso)  # ||x_l - H x_l||^2
            dA = np.diag(A)
            if np.any(dA <= 0):
                break
            W = (A @ Gso) / np.sqrt(dA)[:, None]  # w_jl, shape (k, p-k)
            cj = beta / np.sqrt(dA)
            num = xr[None, :] + cj[:, None] * W
            den = d[None, :] + W**2
            with np.errstate(divide="ignore", invalid="ignore"):
                gain = np.where(den > 1e-12 * np.diag(G)[out_cols][None, :], num**2 / den, 0.0)
            new_rss = rss + cj[:, None] ** 2 - gain
            evaluated += new_rss.size
            a, b = np.unravel_index(int(np.argmin(new_rss)), new_rss.shape)
            if not new_rss[a, b] < rss - _SWAP_GAIN * yy:
                break
            S[a] = int(out_cols[b])
        out.append(tuple(sorted(S)))
    return out, evaluated
