"""Tamis engine: workbook in, study result out, results workbook written. Never imports Qt.

The flow, one module per concept:

- ``engine.intake``     read .xlsx/.xlsm/.xls/.ods/.csv into typed columns with a report
- ``engine.design``     roles + table -> design matrix, encodings, dropped rows and columns
- ``engine.fitting``    ols, ridge, lasso and elastic-net paths, subset search, post-selection fits
- ``engine.tuning``     folds, cross-validation curves, information criteria, choice rules
- ``engine.study``      ``run_study(spec, progress)``: the one entry point both fronts use
- ``engine.report``     result sheets, native charts, scoring formulas, safe in-place writing
- ``engine.cli``        the ``tamis`` command line (a thin front over the above)

Shared pieces: ``engine.errors`` (typed failures), ``engine.progress`` (progress and cancel),
``engine.methods`` (the catalogue of methods), ``engine.study_spec`` / ``engine.study_result``
(the request and the response of a run).
"""

__version__ = "0.1.0"

__all__ = ["__version__"]
