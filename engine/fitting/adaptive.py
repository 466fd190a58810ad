"""Adaptive lasso: a lasso whose per-column penalty weights come from a first fit (Zou 2006).

Zou (2006), "The adaptive lasso and its oracle properties", JASA 101(476): with an initial
root-n-consistent estimate beta_init, weight column j by w_j = 1 / |beta_init_j|^gamma and solve

    (1/(2n)) * ||yc - Z beta||^2 + lambda * sum_j v_j |beta_j|,  v = w rescaled to sum to p

on the standardized columns Z (our penalty convention; the rescaling of the weights is done by
``elastic_net_path`` and only moves the penalty grid). Columns with a large first-fit
coefficient are penalized less, so strong columns keep unbiased coefficients while weak ones
are removed more readily.

Initial estimate (``init``), on the standardized scale so the weights do not depend on units:
- "ols": least squares on all columns;
- "ridge": ridge with its penalty chosen by generalized cross-validation,
  GCV(lambda) = n * RSS(lambda) / (n - df(lambda) - 1)^2 with df the trace of the hat matrix and
  1 for the intercept (Golub, Heath & Wahba 1979, Technometrics 21(2)); no folds are needed, so
  the weights can be recomputed cheaply inside every validation part;
- "auto": "ols" when rows are at least twice the columns (n >= 2p) and the columns are linearly
  independent, otherwise "ridge" (least squares is too noisy, or does not exist, below that).
A coefficient smaller than 1e-6 of the largest is raised to that floor, so every weight is finite.
"""

from __future__ import annotations

__all__ = [
    "INITS",
    "AdaptiveWeights",
    "AdaptiveLasso",
    "initial_estimate",
    "adaptive_weights",
    "adaptive_lasso",
]

from dataclasses import dataclass

import numpy as np

from engine.errors import InputProblem
from engine.fitting.coordinate import elastic_net_path
from engine.fitting.path import PenaltyPath
from engine.fitting.ridge import ridge_path
from engine.fitting.standardize import standardize
from engine.progress import Progress

INITS = ("auto", "ols", "ridge")
_FLOOR = 1e-6
_GCV_PENALTIES = 60


def initial_estimate(X: np.ndarray, y: np.ndarray, init: str = "auto") -> tuple[np.ndarray, str]:
    """Standardized first-fit coefficients (p,) and the rule used ("ols" or "ridge")."""
    if init not in INITS:
        raise InputProblem(
            f"unknown initial fit '{init}' for adaptive lasso; choose from {', '.join(INITS)}"
        )
    X = np.asarray(X, dtype=float)
    y = np.asarray(y, dtype=float).ravel()
    n, p = X.shape
    st = standardize(X, y)
    assert st.yc is not None  # a response was given
    live = ~st.constant
    if init in ("auto", "ols"):
        Zl = st.Z[:, live]
        full_rank = Zl.shape[1] < n and np.linalg.matrix_rank(Zl) == Zl.shape[1]
        if init == "ols" and not full_rank:
            raise InputProblem(
                f"least squares as the first fit needs independent columns and more rows than "
                f"columns ({n} rows, {p} columns); use the ridge first fit"
            )
        if full_rank and (init == "ols" or n >= 2 * p):
            beta = np.zeros(p)
            beta[live] = np.linalg.lstsq(Zl, st.yc, rcond=None)[0]
            return beta, "ols"
    path = ridge_path(X, y, n_penalties=_GCV_PENALTIES, check_kkt=False)
    fitted = path.intercepts[:, None] + path.coefs @ X.T  # (L, n)
    rss = ((y[None, :] - fitted) ** 2).sum(axis=1)
    dof = n - path.df - 1.0
    with np.errstate(divide="ignore", invalid="ignore"):
        gcv = np.where(dof > 0, n * rss / dof**2, np.inf)
    return path.std_coefs[int(np.argmin(gcv))].copy(), "ridge"


def adaptive_weights(
    X: np.ndarray, y: np.ndarray, gamma: float = 1.0, init: str = "auto"
) -> np.ndarray:
    """Penalty weights w_j = 1 / max(|beta_init_j|, 1e-6 * max|beta_init|)^gamma, shape (p,)."""
    if not gamma > 0:
        raise InputProblem(f"the adaptive-lasso exponent gamma must be positive; got {gamma}")
    beta, _ = initial_estimate(X, y, init)
    return _weights_from(beta, gamma)


def _weights_from(beta: np.ndarray, gamma: float) -> np.ndarray:
    a = np.abs(beta)
    top = a.max(initial=0.0)
    if top == 0.0:
        return np.ones_like(a)
    return 1.0 / np.maximum(a, _FLOOR * top) ** gamma


@dataclass(frozen=True)
class AdaptiveWeights:
    """Callable f(X_train, y_train) -> weights, for ``cross_validate_path(penalty_factors=...)``.

    Recomputing the first fit on each training part keeps the held-out rows out of the weights
    (otherwise they would leak into the choice of penalty).
    """

    gamma: float = 1.0
    init: str = "auto"

    def __call__(self, X: np.ndarray, y: np.ndarray) -> np.ndarray:
        return adaptive_weights(X, y, self.gamma, self.init)


@dataclass
class AdaptiveLasso:
    """The adaptive lasso path and the weights that defined it."""

    path: PenaltyPath
    weights: np.ndarray  # (p,) w_j before rescaling to sum to p
    init_coefs: np.ndarray  # (p,) standardized first-fit coefficients
    init_used: str  # "ols" or "ridge"
    gamma: float


def adaptive_lasso(
    X: np.ndarray,
    y: np.ndarray,
    gamma: float = 1.0,
    init: str = "auto",
    penalties: np.ndarray | None = None,
    n_penalties: int = 100,
    ratio: float | None = None,
    tol: float = 1e-7,
    progress: Progress | None = None,
) -> AdaptiveLasso:
    """Adaptive lasso path (Zou 2006): ``elastic_net_path(mix=1, penalty_factors=weights)``.

    X: (n, p) original units; y: (n,). Returns :class:`AdaptiveLasso`; coefficients of the path
    are in both unit systems as usual. For validation pass ``AdaptiveWeights(gamma, init)`` as
    the penalty factors of ``cross_validate_path`` together with ``result.path.penalties``.
    """
    if not gamma > 0:
        raise InputProblem(f"the adaptive-lasso exponent gamma must be positive; got {gamma}")
    if progress is not None:
        progress.step(0.0, "adaptive lasso: first fit")
    beta, used = initial_estimate(X, y, init)
    w = _weights_from(beta, gamma)
    path = elastic_net_path(
        X,
        y,
        mix=1.0,
        penalties=penalties,
        n_penalties=n_penalties,
        ratio=ratio,
        penalty_factors=w,
        tol=tol,
        progress=progress,
    )
    if progress is not None:
        progress.step(1.0, "adaptive lasso done")
    return AdaptiveLasso(path=path, weights=w, init_coefs=beta, init_used=used, gamma=float(gamma))
