"""Information criteria along a penalty path (Gaussian likelihood, variance profiled out).

For each point with residual sum of squares RSS and degrees of freedom df (intercept not
counted; adding a constant to df shifts every value equally and never changes the choice):

    AIC  = n * log(RSS / n) + 2 * df                          (Akaike 1974)
    BIC  = n * log(RSS / n) + log(n) * df                     (Schwarz 1978)
    EBIC = BIC + 2 * gamma * log C(p, df),  gamma = 1 - log(n) / (2 log p) clipped to [0, 1]
                                                              (Chen & Chen 2008, Biometrika 95(3))

df is the count of nonzero coefficients for lasso and elastic net (an unbiased estimate of
the degrees of freedom of the lasso: Zou, Hastie & Tibshirani 2007, Ann. Stat. 35(5)) and the
trace of the hat matrix for ridge. log C(p, df) uses the log-gamma function, so a fractional
ridge df is allowed.
"""

from __future__ import annotations

__all__ = ["path_criteria", "path_rss", "ebic_gamma"]

import numpy as np
from scipy.special import gammaln

from engine.fitting.path import PenaltyPath
from engine.study_result import Criteria


def ebic_gamma(n: int, p: int) -> float:
    """gamma = 1 - log(n) / (2 log p), clipped to [0, 1] (Chen & Chen 2008)."""
    if p <= 1:
        return 0.0
    return float(np.clip(1.0 - np.log(n) / (2.0 * np.log(p)), 0.0, 1.0))


def path_criteria(rss: np.ndarray, df: np.ndarray, n: int, p: int) -> Criteria:
    """AIC, BIC and extended BIC at each path point (formulas in the module docstring).

    rss, df: (L,); n rows used; p candidate columns. A zero RSS (exact fit) gives -inf.
    """
    rss = np.asarray(rss, dtype=float)
    df = np.asarray(df, dtype=float)
    if rss.shape != df.shape:
        raise ValueError(f"rss {rss.shape} and df {df.shape} differ in shape")
    with np.errstate(divide="ignore"):
        fit = n * np.log(rss / n)
    aic = fit + 2.0 * df
    bic = fit + np.log(n) * df
    d = np.clip(df, 0.0, p)
    log_models = gammaln(p + 1.0) - gammaln(d + 1.0) - gammaln(p - d + 1.0)
    ebic = bic + 2.0 * ebic_gamma(n, p) * log_models
    return Criteria(df=df, aic=aic, bic=bic, ebic=ebic)


def path_rss(X: np.ndarray, y: np.ndarray, path: PenaltyPath) -> np.ndarray:
    """Residual sum of squares of each path point on the rows it was fitted to."""
    X = np.asarray(X, dtype=float)
    y = np.asarray(y, dtype=float).ravel()
    resid = y[:, None] - (X @ path.coefs.T + path.intercepts[None, :])
    return np.einsum("ij,ij->j", resid, resid)
