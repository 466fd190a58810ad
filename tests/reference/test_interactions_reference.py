"""Interactions (products of two candidate columns), checked against outside sources.

- Data: the Grunfeld investment data (11 US firms, 1935-1954: gross investment, firm value,
  capital stock; Grunfeld 1958), shipped with statsmodels (statsmodels.datasets.grunfeld), an
  open dataset.
- A square (value paired with itself) against ``invest ~ value + I(value ** 2)``.
- Least squares with value x capital (two numbers) and value x firm (a number and a category)
  against statsmodels' formula interface, ``invest ~ value * capital + value * C(firm)``
  (general-purpose reference library). The two code the firm against different reference
  levels, so the comparison is of what does not depend on that choice: fitted values, residual
  sum of squares and the number/number interaction's coefficient, to 1e-8.
- The scoring sheet's product formulas recalculated by LibreOffice Calc (headless, see
  tests/reference/libreoffice.py) against the engine's predictions for pasted rows, to 1e-9.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import openpyxl
import pytest

from engine.intake import read_table
from engine.report import load_scoring_model, write_results
from engine.study import run_study
from engine.study_spec import StudySpec

smf = pytest.importorskip("statsmodels.formula.api")


def _grunfeld_book(path: Path):
    from statsmodels.datasets import grunfeld

    data = grunfeld.load_pandas().data
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Firms"
    ws.append(["invest", "value", "capital", "firm"])
    for row in data.itertuples():
        ws.append([float(row.invest), float(row.value), float(row.capital), str(row.firm)])
    wb.save(path)
    return path, data


def _study(book: Path):
    return run_study(
        StudySpec(
            source=str(book),
            response="invest",
            methods=("ols",),
            folds=5,
            interactions=(("value", "capital"), ("value", "firm")),
        )
    )


def test_interactions_match_statsmodels_formulas_on_grunfeld_data(tmp_path):
    book, data = _grunfeld_book(tmp_path / "grunfeld.xlsx")
    res = _study(book)
    ours = res.model("ols")
    ref = smf.ols("invest ~ value * capital + value * C(firm)", data=data).fit()
    np.testing.assert_allclose(ours.fitted, ref.fittedvalues.to_numpy(), rtol=1e-8, atol=1e-6)
    rss = float(np.sum((res.design.y - ours.fitted) ** 2))
    assert rss == pytest.approx(ref.ssr, rel=1e-8)
    assert ours.coefficients["value × capital"] == pytest.approx(
        ref.params["value:capital"], rel=1e-8
    )
    # one product per firm besides the reference firm
    firms = data["firm"].nunique()
    assert sum(n.startswith("value × firm=") for n in res.design.names) == firms - 1


def test_a_square_matches_statsmodels_on_grunfeld_data(tmp_path):
    # curvature: value paired with itself, against ``invest ~ value + I(value ** 2)``
    book, data = _grunfeld_book(tmp_path / "grunfeld.xlsx")
    spec = StudySpec(
        source=str(book), response="invest", candidates=("value",), methods=("ols",), folds=5,
        interactions=(("value", "value"),),
    )  # fmt: skip
    ours = run_study(spec).model("ols")
    ref = smf.ols("invest ~ value + I(value ** 2)", data=data).fit()
    assert ours.coefficients["value²"] == pytest.approx(ref.params["I(value ** 2)"], rel=1e-8)
    assert ours.coefficients["value"] == pytest.approx(ref.params["value"], rel=1e-8)
    np.testing.assert_allclose(ours.fitted, ref.fittedvalues.to_numpy(), rtol=1e-8, atol=1e-6)


@pytest.mark.libreoffice
def test_product_formulas_recalculated_by_libreoffice_equal_the_engine(tmp_path):
    from libreoffice import convert, make_profile, paste_after_examples, scoring_layout, soffice

    if soffice() is None:  # loud: the reference check is not silently skipped
        pytest.fail("LibreOffice (soffice) is not installed: the recalculation check cannot run")
    book, _ = _grunfeld_book(tmp_path / "grunfeld.xlsx")
    res = _study(book)
    results = write_results(res, out=tmp_path / "results.xlsx")
    model = load_scoring_model(results)
    assert any(e.kind == "product" for e in model.encodings)
    new = [
        (1200.0, 150.0, "Chrysler"),
        (5000.5, 900.0, "US Steel"),
        (300.0, 20.0, "Northwind Mills"),
    ]
    paste_after_examples(results, ["value", "capital", "firm"], new, tmp_path / "pasted.xlsx")
    (out,) = convert([tmp_path / "pasted.xlsx"], "xlsx", tmp_path / "lo", make_profile(tmp_path))
    got_ws = openpyxl.load_workbook(out, data_only=True)["TM Scoring"]
    head, cols = scoring_layout(got_ws)
    pred_col = next(c for h, c in cols.items() if h.startswith("Prediction of"))
    got = [got_ws.cell(head + 1 + i, pred_col).value for i in range(5 + len(new))]
    np.testing.assert_allclose(got[:5], res.model("ols").fitted[:5], rtol=1e-9)
    rows = openpyxl.Workbook()
    rows.active.append(["value", "capital", "firm"])
    for row in new:
        rows.active.append(list(row))
    rows.save(tmp_path / "new.xlsx")
    engine_preds = model.predict(read_table(tmp_path / "new.xlsx"))
    np.testing.assert_allclose(got[5:7], engine_preds[:2], rtol=1e-9)
    # a firm the fit never saw: no prediction on the sheet (#N/A) nor from the engine
    assert got[7] in ("#N/A", None) and np.isnan(engine_preds[2])
