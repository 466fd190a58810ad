"""Natural logs of the response and of candidates, checked against outside sources.

- Data: the Engel food expenditure data (235 Belgian working-class households, income and food
  expenditure; Koenker & Bassett 1982, Econometrica 50), shipped with statsmodels
  (statsmodels.datasets.engel), an open dataset.
- Least squares of ln(foodexp) on ln(income) against statsmodels' OLS on numpy's logs of the
  same columns (general-purpose reference library): coefficients to 1e-10.
- The smearing factor against its definition in Duan (1983, J. Amer. Statist. Assoc. 78(383),
  605-610): the mean of exp(residual) of the ln-scale fit, with statsmodels' residuals.
- The scoring sheet with LN and EXP formulas recalculated by LibreOffice Calc (headless, see
  tests/reference/libreoffice.py) against the engine's predictions to 1e-9, and a price of 0
  pasted under the headings getting no prediction and a check naming its column.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import openpyxl
import pytest
from open_data import engel, engel_book

from engine.intake import read_table
from engine.report import load_scoring_model, write_results
from engine.study import run_study
from engine.study_spec import StudySpec

statsmodels = pytest.importorskip("statsmodels.api")


def _engel_book(path: Path) -> tuple[Path, np.ndarray, np.ndarray]:
    income, food = engel()
    return engel_book(path), income, food


def _log_log_study(book: Path):
    """Least squares of ln(foodexp) on ln(income), through the whole study."""
    spec = StudySpec(
        source=str(book),
        response="foodexp",
        methods=("ols",),
        folds=5,
        log_columns=("foodexp", "income"),
    )
    return run_study(spec)


def test_log_log_least_squares_and_smearing_match_statsmodels_on_engel_data(tmp_path):
    book, income, food = _engel_book(tmp_path / "engel.xlsx")
    res = _log_log_study(book)
    ours = res.models[0]
    ref = statsmodels.OLS(np.log(food), statsmodels.add_constant(np.log(income))).fit()
    assert ours.intercept == pytest.approx(ref.params[0], rel=1e-10)
    assert ours.coefficients["ln(income)"] == pytest.approx(ref.params[1], rel=1e-10)
    # Duan (1983): the smearing estimate is the mean of exp(residual)
    assert ours.smearing == pytest.approx(float(np.mean(np.exp(ref.resid))), rel=1e-10)
    # Engel's law: food takes a falling share of income, an income elasticity below 1
    assert 0.0 < ours.coefficients["ln(income)"] < 1.0
    model = load_scoring_model(write_results(res, out=tmp_path / "results.xlsx"))
    want = np.exp(ref.fittedvalues) * np.mean(np.exp(ref.resid))
    np.testing.assert_allclose(model.predict(read_table(book)), want, rtol=1e-10)


@pytest.mark.libreoffice
def test_ln_scoring_sheet_recalculated_by_libreoffice_equals_the_engine(tmp_path):
    from libreoffice import convert, make_profile, paste_after_examples, scoring_layout, soffice

    if soffice() is None:  # loud: the reference check is not silently skipped
        pytest.fail("LibreOffice (soffice) is not installed: the recalculation check cannot run")
    book, income, food = _engel_book(tmp_path / "engel.xlsx")
    res = _log_log_study(book)
    results = write_results(res, out=tmp_path / "results.xlsx")
    model = load_scoring_model(results)
    new_income = [650.0, 1200.5, 0.0, 3000.0]
    paste_after_examples(results, ["income"], [(x,) for x in new_income], tmp_path / "pasted.xlsx")
    (out,) = convert([tmp_path / "pasted.xlsx"], "xlsx", tmp_path / "lo", make_profile(tmp_path))
    got_ws = openpyxl.load_workbook(out, data_only=True)["TM Scoring"]
    head, cols = scoring_layout(got_ws)
    pred_col = next(c for h, c in cols.items() if h.startswith("Prediction of"))
    got = [got_ws.cell(head + 1 + i, pred_col).value for i in range(5 + len(new_income))]
    checks = [got_ws.cell(head + 1 + i, cols["Check"]).value for i in range(5 + len(new_income))]
    m = res.models[0]
    np.testing.assert_allclose(got[:5], np.exp(m.fitted[:5]) * m.smearing, rtol=1e-9)
    new = openpyxl.Workbook()
    new.active.append(["income"])
    for x in new_income:
        new.active.append([x])
    new.save(tmp_path / "new.xlsx")
    engine_preds = model.predict(read_table(tmp_path / "new.xlsx"))
    for i, x in enumerate(new_income):
        if x > 0:
            assert got[5 + i] == pytest.approx(engine_preds[i], rel=1e-9)
        else:  # no log of 0: #N/A on the sheet, NaN in the engine, and the check says why
            assert got[5 + i] in ("#N/A", None) and np.isnan(engine_preds[i])
            assert "not above 0" in (checks[5 + i] or "")
    # the 95% range: exp of the ln-scale prediction -+ 1.96 (scipy's normal 97.5% point) x the
    # root cross-validated error on the ln scale; no smearing (the ends are quantiles)
    from scipy.stats import norm

    from engine.report.scoring_model import RANGE_HIGH, RANGE_LOW

    h = norm.ppf(0.975) * np.sqrt(m.cv_error)
    logged = np.log(np.asarray(new_income[:2] + new_income[3:], dtype=float))
    linear = m.intercept + m.coefficients["ln(income)"] * logged
    for heading, sign in ((RANGE_LOW, -1), (RANGE_HIGH, 1)):
        cells = [got_ws.cell(head + 1 + 5 + i, cols[heading]).value for i in range(len(new_income))]
        shown = [c for i, c in enumerate(cells) if new_income[i] > 0]
        np.testing.assert_allclose(shown, np.exp(linear + sign * h), rtol=1e-9)
        assert cells[2] in (None, "")  # no prediction, no range
    _, low, high, _ = model.predict_with_range(read_table(tmp_path / "new.xlsx"))
    keep = np.array(new_income) > 0
    np.testing.assert_allclose(low[keep], np.exp(linear - h), rtol=1e-9)
    assert np.all(low[keep] < engine_preds[keep]) and np.all(engine_preds[keep] < high[keep])
