"""Least squares after selection, with heteroskedasticity-robust standard errors.

``post_lasso`` refits ordinary least squares (with intercept) on the columns a lasso kept, which
removes the shrinkage bias of the lasso coefficients (Belloni & Chernozhukov 2013, Bernoulli
19(2), "Least squares after model selection in high-dimensional sparse models").

Standard errors use the sandwich covariance (White 1980, Econometrica 48(4)):
    cov = (X'X)^-1 X' diag(w_i) X (X'X)^-1
with X the refit columns plus the intercept column, e_i the residuals, h_i the leverages and
    HC1: w_i = e_i^2 * n / (n - k)          (MacKinnon & White 1985; k columns incl. intercept)
    HC3: w_i = e_i^2 / (1 - h_i)^2          (MacKinnon & White 1985, J. Econometrics 29(3))
When rows come in groups (a column marked as group: households of one district, lots of one
supplier), errors of one group may move together and the meat sums within each group first
(cluster-robust, Liang & Zeger 1986, Biometrika 73(1)):
    CR1: X' diag(w) X -> c * sum_g (X_g'e_g)(X_g'e_g)',  c = G/(G - 1) * (n - 1)/(n - k)
with G groups (the small-sample factor most statistics packages apply).
"""

from __future__ import annotations

__all__ = ["SELECTION_CAUTION", "COV_TYPES", "RobustFit", "PostLasso", "robust_ols", "post_lasso"]

from dataclasses import dataclass, field

import numpy as np

from engine.errors import InputProblem

COV_TYPES = ("HC1", "HC3", "CR1")
# fewer groups than this make cluster-robust standard errors unreliable (common practice: they
# are built from one score per group; Cameron & Miller 2015, J. Human Resources 50(2), review
# how they understate with few groups)
FEW_GROUPS = 40

SELECTION_CAUTION = (
    "Standard errors after selection treat the chosen columns as if they had been fixed before "
    "looking at the data; they do not account for the selection step itself, so they are too "
    "small for the question 'does this column matter' (Belloni & Chernozhukov 2013). For the "
    "effect of one chosen column use double selection."
)

# a leverage this close to 1 means the row is fitted exactly; its HC3 weight is unbounded
_LEVERAGE_ONE = 1.0 - 1e-10


@dataclass
class RobustFit:
    """Least squares with intercept on ``X[:, columns]`` and its robust covariance.

    ``coefs`` (k,) in original units, in the order of ``columns``; ``covariance`` is
    (k + 1, k + 1) with the intercept first. Standard errors are NaN when they do not exist
    (no residual degrees of freedom, dependent columns, or an HC3 leverage of 1); ``notes`` say why.
    """

    columns: np.ndarray  # (k,) indices into the candidate matrix
    coefs: np.ndarray  # (k,)
    intercept: float
    std_errors: np.ndarray  # (k,)
    intercept_se: float
    covariance: np.ndarray  # (k + 1, k + 1), intercept first
    fitted: np.ndarray  # (n,)
    residuals: np.ndarray  # (n,)
    leverage: np.ndarray  # (n,) diagonal of the hat matrix
    cov_type: str
    df_resid: int
    notes: list[str] = field(default_factory=list)

    @property
    def rss(self) -> float:
        return float(self.residuals @ self.residuals)


def robust_ols(
    X: np.ndarray,
    y: np.ndarray,
    columns=None,
    cov_type: str = "HC1",
    groups: np.ndarray | None = None,
) -> RobustFit:
    """Ordinary least squares of y on an intercept and ``X[:, columns]`` with HC1/HC3/CR1 errors.

    X: (n, p) float; y: (n,) float; columns: indices (default all); groups: (n,) labels, needed
    by CR1 only. Solved by a QR factorization of the design (no normal equations).
    """
    if cov_type not in COV_TYPES:
        raise InputProblem(f"unknown covariance '{cov_type}'; choose from {', '.join(COV_TYPES)}")
    if (cov_type == "CR1") != (groups is not None):
        raise InputProblem("cluster-robust (CR1) standard errors need the group of every row")
    X = np.asarray(X, dtype=float)
    y = np.asarray(y, dtype=float).ravel()
    if X.ndim != 2 or X.shape[0] != y.shape[0]:
        raise InputProblem(
            f"the candidates have shape {X.shape} but the response has {y.shape[0]} rows"
        )
    n = X.shape[0]
    cols = np.arange(X.shape[1]) if columns is None else np.asarray(columns, dtype=int).ravel()
    D = np.column_stack([np.ones(n), X[:, cols]])
    k = D.shape[1]
    notes: list[str] = []
    Q, R = np.linalg.qr(D)
    rdiag = np.abs(np.diag(R))
    full_rank = k <= n and rdiag.min() > 1e-10 * max(rdiag.max(), 1e-300)
    if full_rank:
        theta = np.linalg.solve(R, Q.T @ y)
        Rinv = np.linalg.solve(R, np.eye(k))
    else:
        theta = np.linalg.lstsq(D, y, rcond=None)[0]
        notes.append(
            "the refit columns are linearly dependent (or outnumber the rows); standard errors "
            "are not available"
        )
    fitted = D @ theta
    resid = y - fitted
    df_resid = n - k
    cov = np.full((k, k), np.nan)
    leverage = np.full(n, np.nan)
    if full_rank:
        leverage = np.einsum("ij,ij->i", Q, Q)
        if df_resid <= 0:
            notes.append("no residual degrees of freedom; standard errors are not available")
        else:
            w: np.ndarray | None = None  # the rows' weights of the HC meat
            if cov_type == "CR1":
                assert groups is not None
                _, g = np.unique(np.asarray(groups), return_inverse=True)
                n_groups = int(g.max()) + 1
                if n_groups < 2:
                    notes.append("all rows are in one group; standard errors are not available")
                else:
                    scores = np.zeros((n_groups, k))  # Q_g' e_g, one row per group
                    np.add.at(scores, g.ravel(), Q * resid[:, None])
                    factor = n_groups / (n_groups - 1) * (n - 1) / df_resid
                    cov = Rinv @ (factor * (scores.T @ scores)) @ Rinv.T
            elif cov_type == "HC1":
                w = resid**2 * (n / df_resid)
            else:
                if np.any(leverage >= _LEVERAGE_ONE):
                    notes.append(
                        "a row has leverage 1 (it alone determines a coefficient); "
                        "HC3 standard errors are not available"
                    )
                else:
                    w = resid**2 / (1.0 - leverage) ** 2
            if w is not None:
                meat = Q.T @ (Q * w[:, None])
                cov = Rinv @ meat @ Rinv.T
    se = np.sqrt(np.diag(cov))
    return RobustFit(
        columns=cols,
        coefs=theta[1:].copy(),
        intercept=float(theta[0]),
        std_errors=se[1:].copy(),
        intercept_se=float(se[0]),
        covariance=cov,
        fitted=fitted,
        residuals=resid,
        leverage=leverage,
        cov_type=cov_type,
        df_resid=int(df_resid),
        notes=notes,
    )


@dataclass
class PostLasso:
    """Least squares refit on the selected columns, laid out over all p candidates.

    ``coefs`` (p,) original units, 0.0 for columns not selected; ``std_errors`` (p,) robust
    standard errors, NaN for columns not selected. ``caution`` is :data:`SELECTION_CAUTION`.
    """

    selected: np.ndarray  # (k,) sorted column indices
    coefs: np.ndarray  # (p,)
    intercept: float
    std_errors: np.ndarray  # (p,)
    intercept_se: float
    fitted: np.ndarray  # (n,)
    r2: float
    cov_type: str
    fit: RobustFit
    caution: str = SELECTION_CAUTION
    notes: list[str] = field(default_factory=list)


def post_lasso(
    X: np.ndarray,
    y: np.ndarray,
    selected_idx,
    cov_type: str = "HC1",
    groups: np.ndarray | None = None,
) -> PostLasso:
    """OLS on the columns ``selected_idx`` chose (Belloni & Chernozhukov 2013) with HC errors.

    X: (n, p); y: (n,); selected_idx: indices or a boolean mask of length p (e.g. the nonzero
    coefficients of a lasso at the chosen penalty). An empty selection gives the mean model.
    """
    X = np.asarray(X, dtype=float)
    y = np.asarray(y, dtype=float).ravel()
    p = X.shape[1]
    sel = np.asarray(selected_idx)
    if sel.dtype == bool:
        if sel.shape[0] != p:
            raise InputProblem(f"the selection mask has {sel.shape[0]} entries for {p} columns")
        sel = np.flatnonzero(sel)
    sel = np.unique(sel.astype(int))
    if sel.size and (sel.min() < 0 or sel.max() >= p):
        raise InputProblem(f"selected column indices must lie in 0..{p - 1}")
    fit = robust_ols(X, y, sel, cov_type, groups)
    coefs = np.zeros(p)
    coefs[sel] = fit.coefs
    se = np.full(p, np.nan)
    se[sel] = fit.std_errors
    tss = float(((y - y.mean()) ** 2).sum())
    r2 = 1.0 - fit.rss / tss if tss > 0 else float("nan")
    return PostLasso(
        selected=sel,
        coefs=coefs,
        intercept=fit.intercept,
        std_errors=se,
        intercept_se=fit.intercept_se,
        fitted=fit.fitted,
        r2=r2,
        cov_type=cov_type,
        fit=fit,
        notes=list(fit.notes),
    )
