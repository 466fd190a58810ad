"""A penalty path: coefficients at a decreasing sequence of penalties, in both unit systems."""

from __future__ import annotations

__all__ = ["PenaltyPath"]

from dataclasses import dataclass, field

import numpy as np


@dataclass
class PenaltyPath:
    """Solutions of one penalized problem along a grid of penalties (largest first).

    Penalty convention (Friedman, Hastie & Tibshirani 2010): minimize
    (1/(2n)) * ||y - ybar - Z beta||^2 + lambda * (mix * ||beta||_1 + (1 - mix)/2 * ||beta||_2^2)
    with Z the centred columns divided by their population standard deviation.
    ``std_coefs`` are beta; ``coefs`` are b_j = beta_j / sd_j in original units, derived on
    request from ``column_scale`` = 1/sd_j (0 for a constant column) rather than stored, so a
    path holds one (L, p) array, not two (it is as large as the data when rows are few).
    The constraint form: ``l1_budget`` = sum |beta_j| and ``l2_budget`` = sum beta_j^2 at each
    penalty (the budget t of the equivalent constrained problem).
    """

    penalties: np.ndarray  # (L,) decreasing
    std_coefs: np.ndarray  # (L, p) standardized coefficients beta
    column_scale: np.ndarray  # (p,) 1/sd of each column (0 where constant): b = beta * scale
    intercepts: np.ndarray  # (L,) original units
    mix: float  # 1 lasso, 0 ridge
    n_iter: np.ndarray | None = None  # (L,) coordinate-descent sweeps, when applicable
    max_kkt_violation: float | None = None  # largest violation of the optimality conditions
    kkt_violations: np.ndarray | None = None  # (L,) the same measure at each penalty
    df: np.ndarray | None = None  # (L,) degrees of freedom (ridge: trace of the hat matrix)
    notes: list[str] = field(default_factory=list)  # non-fatal numerical trouble, in words

    @property
    def coefs(self) -> np.ndarray:
        """(L, p) coefficients in original units (computed on each access; see ``coefs_at``)."""
        return self.std_coefs * self.column_scale

    def coefs_at(self, i: int) -> np.ndarray:
        """Coefficients in original units at penalty index ``i``."""
        return self.std_coefs[i] * self.column_scale

    @property
    def l1_budget(self) -> np.ndarray:
        return np.abs(self.std_coefs).sum(axis=1)

    @property
    def l2_budget(self) -> np.ndarray:
        return (self.std_coefs**2).sum(axis=1)

    @property
    def n_selected(self) -> np.ndarray:
        return (self.std_coefs != 0).sum(axis=1)

    def __len__(self) -> int:
        return int(self.penalties.shape[0])
