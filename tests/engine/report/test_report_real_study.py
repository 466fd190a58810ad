"""End to end with the real study entry point: what the results workbook stores predicts the
study's own fitted values (two routes that must agree), and re-reads the same specification."""

from __future__ import annotations

import numpy as np
from study_fixture import simulate_rows, write_rows

from engine.intake import read_table
from engine.report import load_scoring_model, read_settings, write_results
from engine.study import run_study
from engine.study_spec import StudySpec


def test_real_study_round_trip(tmp_path):
    source = tmp_path / "lots.xlsx"
    write_rows(source, simulate_rows(80, seed=5))  # simulated data with a known truth
    spec = StudySpec(
        source=str(source),
        response="score",
        exclude=("lot",),
        folds=5,
        missing="fill",
        methods=("lasso", "ridge", "post-lasso", "forward-stepwise"),
    )
    result = run_study(spec)
    out = write_results(result, out=tmp_path / "results.xlsx")
    assert read_settings(out) == spec
    table = read_table(source)
    for m in result.models:
        if m.fitted is None:
            continue
        pred = load_scoring_model(out, m.method).predict(table)
        np.testing.assert_allclose(pred, m.fitted, rtol=1e-9, atol=1e-9)
