"""Double selection: the effect of one focal column with controls chosen by two lassos.

Belloni, Chernozhukov & Hansen (2014), "Inference on treatment effects after selection among
high-dimensional controls", Review of Economic Studies 81(2):
  1. lasso of the response y on the controls W -> selected set A;
  2. lasso of the focal column d on the controls W -> selected set B;
  3. least squares of y on d, an intercept and the controls in A union B; the coefficient of d
     with a heteroskedasticity-robust standard error gives the estimate and its 95% interval.
A control that matters for y OR for d is kept, so a control that is weak for y but strongly
tied to d (the one single selection drops, biasing the effect) stays in.

Plug-in penalty (BCH 2014, following Belloni, Chen, Chernozhukov & Hansen 2012, Econometrica
80(6)). Their lasso for an equation with m controls is
    min_b (1/n) sum_i (u_i - x_i'b)^2 + (lambda/n) sum_j psi_j |b_j|,
    lambda = 2 c sqrt(n) Phi^-1(1 - g / (2m)),  c = 1.1,  g = 0.1 / log(n),
    psi_j  = sqrt( (1/n) sum_i x_ij^2 e_i^2 )   (heteroskedasticity-robust loadings),
with e the residuals: first u - mean(u), then the residuals of least squares on the selected
controls (post-lasso), recomputed up to 15 times until the loadings stop changing.
Mapping to our convention ((1/(2n)) ||uc - Z beta||^2 + lambda_ours * sum_j v_j |beta_j|, Z the
columns centred and divided by their sd, v rescaled to sum to m): halving their objective and
writing b_j = beta_j / sd_j gives the penalty (lambda / (2n)) * psi~_j |beta_j| with
psi~_j = psi_j / sd_j = sqrt((1/n) sum_i z_ij^2 e_i^2). So we pass penalty factors psi~ and the
single penalty lambda_ours = lambda / (2n) * sum(psi~) / m, which after the rescaling of the
factors is exactly lambda/(2n) * psi~_j per column. The intercept is not penalized in either.

Rows in groups (a group column: households of one district): errors within a group may move
together, so the final standard error is cluster-robust (CR1, engine.fitting.post_selection).
The controls are still chosen with the row-wise loadings above. Loadings summed within groups
first were tried: with a few large groups they grow with the group size for exactly the
columns that explain the first residual, so those were penalized out (on a 400-row, 12-group
sheet no control was kept and the effect was confounded).

The naive single-selection estimate shown for contrast: one lasso of y on d and W with d
left unpenalized (plug-in loadings of the y equation for W), then least squares of y on d and
the controls it kept.
"""

from __future__ import annotations

__all__ = [
    "PENALTY_RULES",
    "PLUGIN_C",
    "plugin_lambda",
    "PluginLasso",
    "plugin_lasso",
    "DoubleSelection",
    "double_selection",
]

from dataclasses import dataclass, field

import numpy as np
from scipy.stats import norm

from engine.errors import InputProblem
from engine.fitting.coordinate import elastic_net_path, path_penalties
from engine.fitting.post_selection import FEW_GROUPS, robust_ols
from engine.progress import Progress, silent
from engine.study_result import FocalResult
from engine.tuning.crossval import fit_and_validate, shared_cross_products
from engine.tuning.folds import make_folds

PENALTY_RULES = ("plugin", "cv")
# below this many rows a plug-in choice of no control at all gets a note (its penalty grows
# relative to what a few rows can show, so it errs towards keeping nothing)
FEW_ROWS_FOR_PLUGIN = 100
PLUGIN_C = 1.1
_LOADING_ITERATIONS = 15
_LOADING_TOL = 1e-6


def plugin_lambda(n: int, m: int, c: float = PLUGIN_C, gamma: float | None = None) -> float:
    """lambda = 2 c sqrt(n) Phi^-1(1 - gamma / (2m)), gamma = 0.1 / log(n) (BCH 2014 scale)."""
    if gamma is None:
        gamma = 0.1 / np.log(n)
    return float(2.0 * c * np.sqrt(n) * norm.ppf(1.0 - gamma / (2.0 * max(m, 1))))


@dataclass
class PluginLasso:
    """A lasso at the plug-in penalty with iterated heteroskedastic loadings."""

    selected: (
        np.ndarray
    )  # (k,) column indices with a nonzero coefficient (unpenalized ones included)
    std_coefs: np.ndarray  # (m,) standardized coefficients
    penalty: float  # lambda_ours (our convention, before the loadings)
    bch_lambda: float  # lambda on the scale of BCH 2014
    loadings: np.ndarray  # (m,) psi~_j on the standardized scale (0 for unpenalized columns)
    iterations: int


def plugin_lasso(
    X: np.ndarray,
    u: np.ndarray,
    unpenalized: np.ndarray | None = None,
    c: float = PLUGIN_C,
    gamma: float | None = None,
    progress: Progress | None = None,
) -> PluginLasso:
    """Lasso of u on the columns of X at the plug-in penalty (module docstring).

    unpenalized: indices of columns left unpenalized (always kept; they do not count in m).
    """
    X = np.asarray(X, dtype=float)
    u = np.asarray(u, dtype=float).ravel()
    n, m_all = X.shape
    free = np.zeros(m_all, bool)
    if unpenalized is not None:
        free[np.asarray(unpenalized, dtype=int)] = True
    m = int((~free).sum())
    lam = plugin_lambda(n, m, c, gamma)
    Xc = X - X.mean(axis=0)
    sd = np.sqrt((Xc**2).mean(axis=0))
    live = sd > 0
    Z = np.zeros_like(Xc)
    Z[:, live] = Xc[:, live] / sd[live]
    resid = u - u.mean()
    selected = np.flatnonzero(free)
    beta = np.zeros(m_all)
    psi = np.zeros(m_all)
    iterations = 0
    penalty = 0.0
    if m == 0:
        return PluginLasso(selected, beta, 0.0, lam, psi, 0)
    while iterations < _LOADING_ITERATIONS:
        iterations += 1
        if progress is not None:
            progress.check()
        new = np.sqrt((Z**2 * resid[:, None] ** 2).mean(axis=0))
        pen = ~free
        fallback = new[pen & live].max(initial=0.0) or 1.0
        new[pen & ~(new > 0)] = fallback  # a constant column: any positive loading, never chosen
        new[free] = 0.0
        change = np.max(np.abs(new - psi)) / max(np.max(np.abs(new)), 1e-300)
        psi = new
        penalty = lam / (2.0 * n) * psi.sum() / m_all
        path = elastic_net_path(X, u, mix=1.0, penalties=np.array([penalty]), penalty_factors=psi)
        beta = path.std_coefs[0]
        selected = np.flatnonzero((beta != 0) | free)
        if change < _LOADING_TOL:
            break
        resid = robust_ols(X, u, selected).residuals  # post-lasso residuals (no errors needed)
    return PluginLasso(selected, beta, float(penalty), lam, psi, iterations)


def _cv_lasso(X, u, unpenalized, parts, choose, workers, progress):
    n, m_all = X.shape
    v = None
    if unpenalized is not None:
        v = np.ones(m_all)
        v[np.asarray(unpenalized, dtype=int)] = 0.0
    shared = shared_cross_products(X, u, parts)
    grid = path_penalties(X, u, 1.0, penalty_factors=v, shared=shared)

    def fit_all(prog):
        return elastic_net_path(
            X, u, mix=1.0, penalties=grid, penalty_factors=v, progress=prog, shared=shared
        )

    # one path on all rows, beside the validation parts, serves both the curve and the choice
    path, curve = fit_and_validate(
        fit_all, X, u, parts, 1.0, grid, penalty_factors=v, choose=choose, progress=progress,
        workers=workers, shared=shared,
    )  # fmt: skip
    i = curve.chosen(choose)
    beta = path.std_coefs[i]
    sel = np.flatnonzero(beta != 0) if v is None else np.flatnonzero((beta != 0) | (v == 0))
    return sel, float(curve.grid[i])


@dataclass
class DoubleSelection:
    """Array-level result; ``to_focal`` turns indices into names for the study result.

    Control indices refer to the columns of W.
    """

    estimate: float
    std_error: float
    ci_low: float
    ci_high: float
    controls: np.ndarray  # union used in the final least-squares fit
    controls_for_response: np.ndarray
    controls_for_focal: np.ndarray
    penalty_rule: str
    covariance: str
    naive_estimate: float
    naive_std_error: float
    naive_controls: np.ndarray
    penalties: dict[str, float] = field(default_factory=dict)  # lambda_ours per step
    notes: list[str] = field(default_factory=list)

    def to_focal(self, column: str, control_names: list[str]) -> FocalResult:
        def names(idx: np.ndarray) -> list[str]:
            return [control_names[int(j)] for j in idx]

        return FocalResult(
            column=column,
            estimate=self.estimate,
            std_error=self.std_error,
            ci_low=self.ci_low,
            ci_high=self.ci_high,
            controls=names(self.controls),
            controls_for_response=names(self.controls_for_response),
            controls_for_focal=names(self.controls_for_focal),
            penalty_rule=self.penalty_rule,
            naive_estimate=self.naive_estimate,
            covariance=self.covariance,
            notes=list(self.notes),
        )


def double_selection(
    y: np.ndarray,
    d: np.ndarray,
    W: np.ndarray,
    penalty: str = "plugin",
    folds: int = 10,
    seed: int = 0,
    choose: str = "min",
    cov_type: str = "HC1",
    level: float = 0.95,
    progress: Progress | None = None,
    workers: int | None = 1,
    groups: np.ndarray | None = None,
    parts: list[tuple[np.ndarray, np.ndarray]] | None = None,
) -> DoubleSelection:
    """Effect of the focal column d on y with controls W chosen by double selection (BCH 2014).

    y: (n,), d: (n,), W: (n, m) candidate controls in original units. penalty: "plugin"
    (module docstring) or "cv" (cross-validation over ``parts``, by default ``folds`` shuffled
    folds with ``seed``; ``choose`` picks the penalty). groups: (n,) labels of rows whose errors
    may move together: a cluster-robust standard error (``cov_type`` becomes CR1).
    The interval is estimate +- Phi^-1(1 - (1 - level)/2) * robust standard error.
    """
    if penalty not in PENALTY_RULES:
        raise InputProblem(
            f"unknown penalty rule '{penalty}'; choose from {', '.join(PENALTY_RULES)}"
        )
    progress = progress or silent()
    y = np.asarray(y, dtype=float).ravel()
    d = np.asarray(d, dtype=float).ravel()
    W = np.asarray(W, dtype=float)
    if W.ndim == 1:
        W = W[:, None]
    n = y.shape[0]
    if d.shape[0] != n or W.shape[0] != n:
        raise InputProblem(
            f"the response has {n} rows, the focal column {d.shape[0]} and the controls {W.shape[0]}"
        )
    if np.ptp(d) == 0:
        raise InputProblem(
            "the focal column has the same value in every row; its effect cannot be estimated"
        )
    m = W.shape[1]
    if groups is not None:
        cov_type = "CR1"
    if penalty == "cv" and parts is None:
        parts = make_folds(n, "kfold", folds, seed)
    DW = np.column_stack([d, W])
    penalties: dict[str, float] = {}
    empty = np.zeros(0, dtype=int)

    def select(X, u, unpen, step, lo, hi):
        sub = progress.part(lo, hi, step)
        if m == 0:
            return np.arange(X.shape[1]) if unpen is not None else empty
        if penalty == "plugin":
            fit = plugin_lasso(X, u, unpenalized=unpen, progress=sub)
            penalties[step] = fit.penalty
            return fit.selected
        sel, lam = _cv_lasso(X, u, unpen, parts, choose, workers, sub)
        penalties[step] = lam
        return sel

    progress.step(0.0, "double selection: response on controls")
    a = select(W, y, None, "response on controls", 0.0, 0.35)
    progress.step(0.35, "double selection: focal column on controls")
    b = select(W, d, None, "focal column on controls", 0.35, 0.7)
    progress.step(0.7, "double selection: single selection for contrast")
    naive_sel = select(DW, y, np.array([0]), "response on focal and controls", 0.7, 0.95)
    naive_controls = np.array([j - 1 for j in naive_sel if j != 0], dtype=int)
    union = np.union1d(a, b).astype(int)
    z = float(norm.ppf(1.0 - (1.0 - level) / 2.0))
    final = robust_ols(DW, y, np.concatenate([[0], union + 1]), cov_type, groups)
    naive = robust_ols(DW, y, np.concatenate([[0], naive_controls + 1]), cov_type, groups)
    notes = list(final.notes)
    n_groups = 0 if groups is None else len(np.unique(np.asarray(groups)))
    if 0 < n_groups < FEW_GROUPS:
        notes.append(
            f"the standard error allows for errors moving together within each of the "
            f"{n_groups} groups; with fewer than about {FEW_GROUPS} groups such standard errors "
            "tend to be too small, so read the interval as rough"
        )
    if penalty == "plugin" and m and union.size == 0 and n < FEW_ROWS_FOR_PLUGIN:
        notes.append(
            f"no control was kept: with {n} rows the plug-in penalty keeps a control only when "
            "its link is strong, so 'no controls' may mean too few rows rather than none "
            "needed; compare with the cross-validated penalty (--focal-penalty cv)"
        )
    est, se = float(final.coefs[0]), float(final.std_errors[0])
    progress.step(1.0, "double selection done")
    return DoubleSelection(
        estimate=est,
        std_error=se,
        ci_low=est - z * se,
        ci_high=est + z * se,
        controls=union,
        controls_for_response=np.asarray(a, dtype=int),
        controls_for_focal=np.asarray(b, dtype=int),
        penalty_rule=penalty,
        covariance=cov_type,
        naive_estimate=float(naive.coefs[0]),
        naive_std_error=float(naive.std_errors[0]),
        naive_controls=naive_controls,
        penalties=penalties,
        notes=notes,
    )
