"""One module per result sheet; each exposes ``write(book, ws, result, ...)``.

- ``summary``       data source, settings in words, comparison of the methods, warnings, cautions
- ``coefficients``  one row per model column, one column per method, plus stability and focal block
- ``path``          coefficient paths along the penalty, with native line charts
- ``validation``    cross-validation curves with error bars, by-size tables of subset methods
- ``fitted``        fitted values and residuals per source row
- ``scoring``       paste block with live, portable prediction formulas
- ``settings``      the study specification and what scoring needs, machine-readable
"""
