"""Choosing how much to penalize, or how many columns to keep, from held-out error.

- ``folds``          ``make_folds``: shuffled, repeated, grouped, time-ordered and leave-one-out parts
- ``crossval``       ``cross_validate_path``: validation curve along a penalty grid, with the
                     centring and scaling recomputed on each training part; ``fit_and_validate``:
                     the same with the fit on all rows running beside the parts
- ``size_crossval``  ``cross_validate_sizes``: validation by subset size, the search rerun per part
- ``curve``          ``ValidationCurve`` and ``choose_index`` (minimum or one-standard-error rule)
- ``criteria``       ``path_criteria``: AIC, BIC and extended BIC (Chen & Chen 2008) along a path
- ``parts``          ``run_parts``, ``worker_count``, ``mean_and_se``: parts on the cores, and their summary
"""

__all__: list[str] = []
