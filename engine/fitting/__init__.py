"""Fits on a numeric design: every function takes arrays (X, y) and returns coefficients in original units.

Least squares and shrinkage (penalty convention of Friedman, Hastie & Tibshirani 2010):

- ``standardize``       centring and population-sd scaling shared by every penalized fit
- ``ols``               ``fit_ols``: pivoted-QR least squares with rank-deficiency reporting
- ``ridge``             ``ridge_path``: the whole ridge path from one SVD; ``ridge_df``
- ``coordinate``        ``elastic_net_path`` (lasso at mix 1): coordinate descent with warm starts,
                        strong rules and a KKT check; ``penalty_max``
- ``path``              ``PenaltyPath``: a path in both unit systems, with its budget t

Subset selection and inference after selection:

- ``subset_search``     ``best_subset``: exact branch and bound (Furnival & Wilson 1974), labelled
                        approximate search beyond a visible limit
- ``stepwise``          ``forward_stepwise``: the greedy sequence with QR updates
- ``adaptive``          ``adaptive_lasso`` and ``AdaptiveWeights`` (Zou 2006)
- ``post_selection``    ``post_lasso`` and ``robust_ols`` with HC1/HC3 errors (Belloni & Chernozhukov 2013)
- ``double_selection``  ``double_selection`` for a focal column (Belloni, Chernozhukov & Hansen 2014)
- ``stability``         ``stability_selection`` over half-samples (Meinshausen & Buhlmann 2010)

Checks of a fit:

- ``influence``         leverage, studentized residuals and Cook's distance of a least-squares refit
"""

__all__: list[str] = []
