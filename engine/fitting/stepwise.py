"""Forward stepwise selection: the whole greedy sequence of least-squares fits.

At each step the column that lowers the residual sum of squares (RSS) most is added; every fit
has an unpenalized intercept. The sequence is computed with modified Gram-Schmidt updates
(a QR factorization grown one column at a time, Golub & Van Loan, Matrix Computations, 5.2):
the response and every remaining candidate are kept orthogonal to the columns already chosen,
so one step costs O(n p) -- linear in the size of the data -- instead of refitting every
candidate model from scratch. With many more rows than columns the steps run on the triangle
of one QR factorization of the centred columns (the same inner products, p x p), so a step
costs O(p^2) after one O(n p^2) factorization.
"""

from __future__ import annotations

__all__ = ["StepwisePath", "forward_stepwise"]

from dataclasses import dataclass

import numpy as np

from engine.errors import InputProblem
from engine.fitting.triangle import qr_triangle
from engine.progress import Progress, silent

# a candidate whose part orthogonal to the chosen columns has lost all but this share of its
# sum of squares is (numerically) a combination of them and can no longer enter
_COLLINEAR = 1e-10
# gains within this relative distance of the largest count as equal
_TIE = 1e-12
# a downdated squared length below this share of the column's own is computed afresh
_RECOMPUTE = 1e-6
# with at least this many rows per column the steps run on the triangle of a QR factorization
# (p x p) instead of the rows (n x p): measured 2.1 s -> under 0.1 s at 18000 x 107
_REDUCE_ROWS_PER_COLUMN = 2


@dataclass
class StepwisePath:
    """The greedy sequence: ``order[:k]`` is the model of size k, ``rss[k-1]`` its RSS.

    ``tss`` is the RSS of the intercept-only model (size 0). ``note`` says why the sequence
    stopped before ``min(n - 1, p)`` steps (remaining columns are combinations of chosen ones).
    """

    order: np.ndarray  # (K,) column indices in order of entry
    rss: np.ndarray  # (K,) residual sum of squares of the model with the first k columns
    tss: float  # total sum of squares around the mean
    n_rows: int
    note: str | None = None

    @property
    def sizes(self) -> np.ndarray:
        return np.arange(1, len(self.order) + 1)

    def subset(self, size: int) -> tuple[int, ...]:
        """Column indices (sorted) of the model with ``size`` columns."""
        return tuple(sorted(int(j) for j in self.order[:size]))


def forward_stepwise(
    X: np.ndarray,
    y: np.ndarray,
    max_steps: int | None = None,
    progress: Progress | None = None,
) -> StepwisePath:
    """Forward stepwise least squares with intercept, up to ``min(n - 1, p, max_steps)`` steps.

    X: (n, p) float, y: (n,) float. Ties between candidates go to the lower column index.
    Returns a :class:`StepwisePath`.
    """
    progress = progress or silent()
    X, y = _check_xy(X, y)
    n, p = X.shape
    limit = min(n - 1, p)
    if max_steps is not None:
        if max_steps < 0:
            raise InputProblem(f"the number of stepwise steps must be 0 or more; got {max_steps}")
        limit = min(limit, int(max_steps))

    Z = X - X.mean(axis=0)  # candidates, kept orthogonal to the chosen columns
    r = y - y.mean()  # residual of the current model
    tss = float(r @ r)
    outside = 0.0
    if n >= _REDUCE_ROWS_PER_COLUMN * p:
        # many more rows than columns: the same steps on the triangle R of Z = QR and on Q'r,
        # which keep every inner product of the columns and the residual; the part of r
        # outside the columns' span (its squared length ``outside``) is in every RSS alike.
        # Each step then costs O(p^2) instead of O(n p)
        # one factorization of [Z r] (R only, no Q): its last column holds Q'r over the first
        # p rows and the length of r outside their span in the last
        Raug = qr_triangle(np.column_stack([Z, r]))
        outside = float(Raug[p, p] ** 2)
        Z, r = np.ascontiguousarray(Raug[:p, :p]), Raug[:p, p].copy()
        n_work = p
    else:
        n_work = n
    # Z itself is never changed: with Q the orthonormal basis of the chosen columns, each
    # remaining column's part outside it has squared length |z|^2 - sum_s (q_s'z)^2 (the
    # downdate, kept in ``norms``) and inner product with the residual r'z (r is orthogonal
    # to Q). One product [q r]'Z per step gives both, so a step reads Z once and writes
    # nothing (it used to project every column, several passes over Z).
    start_norms = np.einsum("ij,ij->j", Z, Z)
    norms = start_norms.copy()
    usable = start_norms > 0.0
    Q = np.empty((n_work, limit))  # orthonormal basis of the chosen (centred) columns
    zr = Z.T @ r
    order: list[int] = []
    rss: list[float] = []
    note = None
    for step in range(limit):
        progress.step(step / max(limit, 1), f"forward stepwise, step {step + 1} of {limit}")
        # a downdated length that lost most of its digits to the subtractions is taken afresh
        # (as pivoted QR factorizations do), so collinearity and gains stay exact to rounding
        stale = np.flatnonzero(usable & (norms < _RECOMPUTE * start_norms))
        if stale.size and step:
            B = Q[:, :step]
            part = Z[:, stale] - B @ (B.T @ Z[:, stale])
            norms[stale] = np.einsum("ij,ij->j", part, part)
        alive = usable & (norms > _COLLINEAR * start_norms)
        if not alive.any():
            note = (
                f"stopped after {step} steps: every remaining column is a combination of the "
                "columns already chosen"
            )
            break
        gain = np.full(p, -np.inf)
        gain[alive] = zr[alive] ** 2 / norms[alive]
        # gains equal up to rounding are a tie: the lower column index enters
        j = int(np.argmax(gain >= gain.max() * (1.0 - _TIE)))
        q = Z[:, j].copy()
        for _ in range(2):  # project out the basis twice ("twice is enough", Parlett)
            if step:
                B = Q[:, :step]
                q -= B @ (B.T @ q)
        q /= np.linalg.norm(q)
        Q[:, step] = q
        usable[j] = False
        r = r - q * (q @ r)
        w, zr = np.stack([q, r]) @ Z  # q'Z for the downdate, Z'r for the next gains
        norms -= w * w
        order.append(j)
        rss.append(float(r @ r) + outside)
    progress.step(1.0, "forward stepwise done")
    return StepwisePath(
        order=np.asarray(order, dtype=int), rss=np.asarray(rss), tss=tss, n_rows=n, note=note
    )


def _check_xy(X: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    X = np.asarray(X, dtype=float)
    y = np.asarray(y, dtype=float).ravel()
    if X.ndim != 2:
        raise InputProblem(f"the candidate matrix must be two-dimensional; got shape {X.shape}")
    if X.shape[0] != y.shape[0]:
        raise InputProblem(
            f"the candidates have {X.shape[0]} rows but the response has {y.shape[0]}"
        )
    if X.shape[0] < 3:
        raise InputProblem(f"subset selection needs at least 3 rows; got {X.shape[0]}")
    if not (np.isfinite(X).all() and np.isfinite(y).all()):
        raise InputProblem("the candidates or the response contain missing or infinite values")
    return X, y
