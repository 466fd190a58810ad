"""What a study run returns: per-method results plus everything needed to write and score.

The JSON produced by ``StudyResult.to_json`` is the contract of ``tamis fit --json`` (see
DESIGN.md); extra keys are allowed, the documented ones keep their meaning.
"""

from __future__ import annotations

__all__ = ["SizeRow", "Criteria", "ModelResult", "FocalResult", "StabilityResult", "StudyResult"]

import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from engine.far_values import FarValue
from engine.fitting.influence import OUTLIER_LEVEL, Influence, UnusualRow
from engine.fitting.path import PenaltyPath
from engine.study_spec import StudySpec
from engine.tuning.curve import ValidationCurve

if TYPE_CHECKING:
    from engine.design import Design


@dataclass
class SizeRow:
    """The best (or greedy) subset of one size, fitted on all rows."""

    size: int
    columns: list[str]
    rss: float
    r2: float
    bic: float | None = None

    def to_json(self) -> dict[str, Any]:
        return {
            "size": self.size,
            "columns": list(self.columns),
            "rss": float(self.rss),
            "r2": float(self.r2),
            "bic": _num(self.bic),
        }


@dataclass
class Criteria:
    """Information criteria along a path, with the degrees of freedom used for each point."""

    df: np.ndarray  # lasso/elastic net: count of nonzeros (Zou, Hastie & Tibshirani 2007); ridge: trace of the hat matrix
    aic: np.ndarray
    bic: np.ndarray
    ebic: (
        np.ndarray
    )  # extended BIC, Chen & Chen (2008), gamma = 1 - log(n)/(2 log p) clipped to [0, 1]


@dataclass
class ModelResult:
    """One method's fit: coefficients in original units (the intercept unpenalized), the
    chosen penalty and how it was chosen, the cross-validated error, the path and validation
    curve, and notes a reader must see (a choice at the grid's edge, approximate searches)."""

    method: str
    intercept: float
    coefficients: dict[str, float]  # original units; every model column, 0.0 if not selected
    std_coefficients: dict[str, float]  # per unit standard deviation of the column
    selected: list[str]
    penalty: float | None = None
    mix: float | None = None
    choice: str | None = None  # "min", "one-se", "bic" or None
    cv_error: float | None = None
    cv_error_se: float | None = None
    r2: float | None = None  # in-sample R squared on the rows used
    # 1 - cv_error / the response's mean squared deviation on the rows used: the share of
    # variation predicted on held-out rows (predictive R squared, common practice); unlike r2
    # it falls, and can go below 0, when a model fits noise
    cv_r2: float | None = None
    fitted: np.ndarray | None = None  # (n,) in-sample predictions
    path: PenaltyPath | None = None
    curve: ValidationCurve | None = None  # validation over penalties or sizes
    criteria: Criteria | None = None
    by_size: list[SizeRow] | None = None
    std_errors: dict[str, float] | None = None  # robust (HC) standard errors where meaningful
    approximate: bool = False  # a labelled approximate search (best subset above the exact limit)
    notes: list[str] = field(default_factory=list)
    # on the rows held back as a final test (StudySpec.test_share): mean squared error and
    # R squared (1 - SSE / SST on the test rows); None when no rows were held back
    test_error: float | None = None
    test_r2: float | None = None
    # response fitted as its ln: the factor a prediction exp(intercept + x'b) is multiplied by
    # to estimate the mean in the response's own units (Duan 1983); None otherwise
    smearing: float | None = None

    def to_json(self) -> dict[str, Any]:
        out: dict[str, Any] = {
            "method": self.method,
            "penalty": _num(self.penalty),
            "mix": _num(self.mix),
            "choice": self.choice,
            "cv_error": _num(self.cv_error),
            "cv_error_se": _num(self.cv_error_se),
            "intercept": float(self.intercept),
            "coefficients": {k: float(v) for k, v in self.coefficients.items()},
            "selected": list(self.selected),
            "by_size": [r.to_json() for r in self.by_size] if self.by_size is not None else None,
            "r2": _num(self.r2),
            "cv_r2": _num(self.cv_r2),
            "approximate": self.approximate,
            "notes": list(self.notes),
        }
        if self.smearing is not None:
            out["smearing"] = float(self.smearing)
        if self.test_error is not None:
            out["test_error"] = _num(self.test_error)
            out["test_r2"] = _num(self.test_r2)
        if self.std_errors is not None:
            out["std_errors"] = {k: float(v) for k, v in self.std_errors.items()}
        return out


@dataclass
class FocalResult:
    """Double selection (Belloni, Chernozhukov & Hansen 2014) for one focal column."""

    column: str
    estimate: float
    std_error: float  # robust: HC1, or CR1 clustered by the group column when there is one
    ci_low: float
    ci_high: float
    controls: list[str]  # union used in the final least-squares fit
    controls_for_response: list[str]
    controls_for_focal: list[str]
    penalty_rule: str  # "plugin" or "cv"
    naive_estimate: float | None = None  # single selection (response equation only), for contrast
    covariance: str = "HC1"
    # what the estimate's reader must know (few groups for clustered errors, a failed refit)
    notes: list[str] = field(default_factory=list)

    def to_json(self) -> dict[str, Any]:
        return {
            "column": self.column,
            "estimate": float(self.estimate),
            "std_error": float(self.std_error),
            "ci_low": float(self.ci_low),
            "ci_high": float(self.ci_high),
            "controls": list(self.controls),
            "controls_for_response": list(self.controls_for_response),
            "controls_for_focal": list(self.controls_for_focal),
            "penalty_rule": self.penalty_rule,
            "covariance": self.covariance,
            "naive_estimate": _num(self.naive_estimate),
            "notes": list(self.notes),
        }


@dataclass
class StabilityResult:
    """Selection shares over half-samples (Meinshausen & Buhlmann 2010)."""

    runs: int
    shares: dict[str, float]  # per model column: largest share selected along the lasso path
    threshold: float = 0.6  # guidance: columns above 0.6-0.9 are called stable
    stable: list[str] = field(default_factory=list)

    def to_json(self) -> dict[str, Any]:
        return {
            "runs": self.runs,
            "threshold": self.threshold,
            "shares": {k: float(v) for k, v in self.shares.items()},
            "stable": list(self.stable),
        }


@dataclass
class StudyResult:
    """What ``run_study`` returns: the specification as run, the design (rows used, encodings,
    dropped rows and columns), one ``ModelResult`` per method, the focal effect and stability
    when asked, the warnings of the run, and the rows to check. ``model(method)`` picks one
    fit, ``scoring_method()`` names the one the scoring sheet uses, ``to_json()`` is the
    command line's JSON document (cautions included); ``ScoringModel.from_result(result)``
    predicts new rows, ``write_results(result, out=...)`` writes the results workbook."""

    spec: StudySpec
    design: Design
    models: list[ModelResult]
    focal: FocalResult | None = None
    stability: StabilityResult | None = None
    warnings: list[str] = field(default_factory=list)
    tool_version: str = ""
    started: str = ""  # ISO 8601 date and time of the run
    seconds: float = 0.0
    output: str | None = None
    # size, mtime and SHA-256 of the source when it was read (engine.report.fingerprint(path)
    # .to_dict()); in-place writing refuses a file that no longer matches it
    source_fingerprint: dict[str, Any] | None = None
    # sheet rows held back as the final test (StudySpec.test_share); None when none were
    test_rows: np.ndarray | None = None

    # the least-squares refit of the scoring model's kept columns, row by row (order of
    # design.row_numbers); None when too few rows are left for the measures to say anything
    influence: Influence | None = None
    influence_method: str | None = None
    # cells far outside the rest of their column (engine.far_values), on every row read
    far_cells: list[FarValue] = field(default_factory=list)

    def model(self, method: str) -> ModelResult:
        for m in self.models:
            if m.method == method:
                return m
        raise KeyError(method)

    def scoring_method(self) -> str:
        """The method the scoring sheet uses: the one the study names, else the smallest
        cross-validated error, else the first."""
        named = self.spec.scoring_method
        if named and any(m.method == named for m in self.models):
            return named
        with_cv = [
            (m.cv_error, i)
            for i, m in enumerate(self.models)
            if m.cv_error is not None and math.isfinite(m.cv_error)
        ]
        if with_cv:
            return self.models[min(with_cv)[1]].method
        return self.models[0].method

    def unusual_rows(self) -> list[tuple[int, UnusualRow]]:
        """(sheet row, measures) of each row flagged by the influence check, most extreme first."""
        if self.influence is None:
            return []
        rows = self.design.row_numbers
        return [(int(rows[u.index]), u) for u in self.influence.unusual()]

    def to_json(self) -> dict[str, Any]:
        from engine.cautions import short_lines

        d = self.design
        out: dict[str, Any] = {
            "cautions": short_lines(),
            "response": d.response,
            "rows_used": int(d.n_rows),
            "rows_dropped": int(d.rows_dropped),
            "drop_reasons": dict(d.drop_reasons),
            "candidates": list(d.names),
            # "ln" when the models explain the natural log of the response
            "response_scale": "ln" if d.response_log else "original",
            "models": [m.to_json() for m in self.models],
            "output": self.output,
            "warnings": list(self.warnings),
            "source": {"file": self.spec.source, "sheet": d.sheet, "header_row": d.header_row},
            "spec": self.spec.to_dict(),
            "tool_version": self.tool_version,
        }
        if self.test_rows is not None:
            out["test_rows"] = int(len(self.test_rows))
        out["far_cells"] = [f.to_json() for f in self.far_cells]
        if self.influence is not None:
            out["unusual_rows"] = {
                "method": self.influence_method,
                "coefficients_refitted": self.influence.n_coefficients,
                "cooks_limit": self.influence.cooks_limit,
                "outlier_level": OUTLIER_LEVEL,
                "rows": [
                    {
                        "row": row,
                        "leverage": u.leverage,
                        "studentized_residual": _num(u.studentized),
                        "cooks_distance": _num(u.cooks),
                        "flags": u.reasons(),
                    }
                    for row, u in self.unusual_rows()
                ],
            }
        if self.focal is not None:
            out["focal"] = self.focal.to_json()
        if self.stability is not None:
            out["stability"] = self.stability.to_json()
        return out


def _num(x: float | None) -> float | None:
    if x is None:
        return None
    x = float(x)
    return x if np.isfinite(x) else None
