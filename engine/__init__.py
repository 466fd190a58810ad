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

import os as _os
import sys as _sys

__version__ = "0.1.0"

# the names a Python user needs, loaded on first use (``import engine`` stays light, and the
# BLAS setting below still comes before numpy): see "Using Tamis from Python" in the README
_PUBLIC = {
    "StudySpec": "engine.study_spec",
    "run_study": "engine.study",
    "StudyResult": "engine.study_result",
    "Progress": "engine.progress",
    "CancelToken": "engine.progress",
    "Cancelled": "engine.errors",
    "InputProblem": "engine.errors",
    "TamisError": "engine.errors",
    "TamisWarning": "engine.errors",
    "read_table": "engine.intake",
    "read_frame": "engine.intake",
    "write_results": "engine.report",
    "ScoringModel": "engine.report",
    "load_scoring_model": "engine.report",
}

__all__ = ["__version__", "BLAS_SPIN_EXPONENT", *_PUBLIC]


def __getattr__(name: str):
    module = _PUBLIC.get(name)
    if module is None:
        raise AttributeError(f"module 'engine' has no attribute '{name}'")
    import importlib

    return getattr(importlib.import_module(module), name)


# OpenBLAS's helper threads keep spinning for 2**28 cycles (about 0.1 s) after each threaded
# call before they sleep; the compiled paths then lose up to a third of a core to them (measured
# here: 90-120 ms of a 290 ms validation of 1000x500). 2**20 cycles (well under a millisecond)
# keeps back-to-back products fast. The library reads the setting when it loads, so it applies
# only where the engine is imported before numpy (the command line, the window, the bundle);
# a user's own setting wins.
BLAS_SPIN_EXPONENT = 20
if "numpy" not in _sys.modules:
    _os.environ.setdefault("OPENBLAS_THREAD_TIMEOUT", str(BLAS_SPIN_EXPONENT))
