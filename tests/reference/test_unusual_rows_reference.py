"""Unusual rows (engine.fitting.influence) and far-out cells (engine.far_values), checked
against outside sources.

- Leverage, externally studentized residuals, Cook's distance and the Bonferroni outlier test
  against statsmodels' OLSInfluence and OLSResults.outlier_test (general-purpose reference
  library) on Brownlee's stack-loss data (21 runs of a plant oxidising ammonia; Brownlee 1965,
  shipped with statsmodels as an open dataset) and on the Engel data (Koenker & Bassett 1982).
- From memory, run 21 of the stack-loss data is the classic suspect of least squares
  (studentized residual about -3.3, Cook's distance about 0.69): checked numerically through
  statsmodels above, and by the rules stated in the module it is not flagged (Bonferroni
  p about 0.09 among 21 rows; Cook's limit, the median of F(4, 17), about 0.87 by scipy).
- Tukey's outer fences (Tukey 1977: 3 interquartile ranges beyond the quartiles) with the
  quartiles of pandas' Series.quantile and scipy.stats.iqr as a second route; for normal data
  the share beyond them is 2 * Phi(-(0.6745 + 3 * 1.349)), about 2.3e-6 (from memory; computed
  by scipy here).
- A planted typing slip (one food expenditure times ten; one income times 100) in the Engel
  data is what the checks are for: both name it, through the whole study.
"""

from __future__ import annotations

import json

import numpy as np
import openpyxl
import pandas as pd
import pytest
from open_data import engel, engel_book
from openpyxl.utils import get_column_letter
from scipy import stats

from engine.far_values import screen_far_values
from engine.fitting.influence import influence
from engine.intake.far_out import far_values
from engine.report import write_results
from engine.study import run_study
from engine.study_spec import StudySpec

sm = pytest.importorskip("statsmodels.api")
from statsmodels.stats.outliers_influence import OLSInfluence  # noqa: E402


def _stackloss():
    d = sm.datasets.stackloss.load_pandas().data
    return d.iloc[:, 1:].to_numpy(dtype=float), d["STACKLOSS"].to_numpy(dtype=float)


def _against_statsmodels(X, y, ours):
    ref = sm.OLS(y, sm.add_constant(X, has_constant="add")).fit()
    oi = OLSInfluence(ref)
    np.testing.assert_allclose(ours.leverage, oi.hat_matrix_diag, rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(ours.studentized, oi.resid_studentized_external, rtol=1e-9)
    np.testing.assert_allclose(ours.cooks, oi.cooks_distance[0], rtol=1e-9, atol=1e-14)
    bonf = np.asarray(ref.outlier_test(method="bonf"))[:, 2]
    np.testing.assert_allclose(ours.outlier_p, bonf, rtol=1e-8, atol=1e-12)
    assert ours.n_coefficients == int(np.linalg.matrix_rank(sm.add_constant(X)))


def test_stack_loss_measures_match_statsmodels_and_run_21_is_not_flagged():
    X, y = _stackloss()
    ours = influence(X, y)
    _against_statsmodels(X, y, ours)
    assert ours.studentized[20] == pytest.approx(-3.33, abs=0.01)  # from memory, run 21
    assert ours.cooks[20] == pytest.approx(0.69, abs=0.01)
    assert ours.cooks_limit == pytest.approx(stats.f.ppf(0.5, 4, 17))
    assert ours.unusual() == []
    assert set(ours.flags()) == {""}


def test_a_planted_slip_in_the_engel_data_is_an_outlier_and_influential():
    income, food = engel()
    food = food.copy()
    food[57] *= 10  # a slipped decimal point
    X = income[:, None]
    ours = influence(X, food)
    _against_statsmodels(X, food, ours)
    flagged = ours.unusual()
    assert flagged[0].index == 57 and flagged[0].outlier and flagged[0].influential
    assert ours.flags()[57] == "outlier, influential"


def test_collinear_and_constant_columns_use_the_rank_as_a_pseudo_inverse_does():
    X, y = _stackloss()
    X2 = np.column_stack([X, X[:, 0] + 2 * X[:, 1], np.full(len(y), 3.0)])
    ours = influence(X2, y)
    # same column space as the three original columns: same fit, same measures
    _against_statsmodels(X, y, ours)


def test_too_few_rows_left_over_gives_no_measures():
    X, y = _stackloss()
    rng = np.random.default_rng(0)
    wide = np.column_stack([X, rng.normal(size=(len(y), 8))])  # 21 rows, 12 coefficients
    assert influence(wide, y) is None  # 9 residual degrees of freedom
    assert influence(X, y) is not None  # 17


def test_no_columns_measures_the_mean_alone():
    _, y = _stackloss()
    ours = influence(np.zeros((len(y), 0)), y)
    _against_statsmodels(np.zeros((len(y), 0)), y, ours)
    np.testing.assert_allclose(ours.leverage, 1 / len(y))


def test_fences_follow_tukeys_definition_with_reference_quartiles():
    income, food = engel()
    q1, q3 = pd.Series(food).quantile([0.25, 0.75])
    assert q3 - q1 == pytest.approx(stats.iqr(food))
    beyond = np.flatnonzero((food < q1 - 3 * (q3 - q1)) | (food > q3 + 3 * (q3 - q1)))
    logged = np.log(food)
    l1, l3 = pd.Series(logged).quantile([0.25, 0.75])
    beyond_log = np.flatnonzero((logged < l1 - 3 * (l3 - l1)) | (logged > l3 + 3 * (l3 - l1)))
    # a positive column counts only values far out on both scales
    np.testing.assert_array_equal(far_values(food), np.intersect1d(beyond, beyond_log))
    slipped = food.copy()
    slipped[12] *= 100
    assert 12 in far_values(slipped)


def test_normal_data_almost_never_reach_the_outer_fences():
    z = stats.norm.ppf(0.75)
    share = 2 * stats.norm.cdf(-(z + 3 * 2 * z))
    assert share == pytest.approx(2.3e-6, rel=0.05)  # from memory
    rng = np.random.default_rng(20261205)
    hits = sum(len(far_values(rng.normal(50, 4, 1000))) for _ in range(200))
    assert hits <= 5  # 200,000 values, about 0.5 expected


def test_a_zero_typed_for_a_missing_value_is_named_in_a_tight_column():
    rng = np.random.default_rng(3)
    v = rng.normal(100, 3, 300)
    v[40] = 0.0
    assert list(far_values(v)) == [40]


def _engel_book(path, slip_food: int | None = None, slip_income: int | None = None):
    income, food = engel()
    income, food = income.copy(), food.copy()
    if slip_food is not None:
        food[slip_food] *= 10
    if slip_income is not None:
        income[slip_income] *= 100
    return engel_book(path, income, food)


def test_the_study_names_the_slipped_cells_and_the_unusual_row(tmp_path):
    book = _engel_book(tmp_path / "engel.xlsx", slip_food=57, slip_income=120)
    res = run_study(StudySpec(source=str(book), response="foodexp", methods=("ols",), folds=5))
    text = "\n".join(res.warnings)
    # data row i is sheet row i + 2 (headings on row 1); foodexp is column B, income column A
    assert "'foodexp' in B59" in text and "'income' in A122" in text
    assert [(f.cell, f.row) for f in res.far_cells] == [("B59", 59), ("A122", 122)]
    flagged = res.unusual_rows()
    assert flagged and flagged[0][0] == 59
    assert "row 59 (residual" in text and "Least squares model" in text
    doc = res.to_json()
    json.dumps(doc)  # plain JSON
    assert [f["cell"] for f in doc["far_cells"]] == ["B59", "A122"]
    rows = {r["row"]: r for r in doc["unusual_rows"]["rows"]}
    assert rows[59]["flags"][0] == "outlier"
    ref = sm.OLS(res.design.y, sm.add_constant(res.design.X)).fit()
    oi = OLSInfluence(ref)
    assert rows[59]["cooks_distance"] == pytest.approx(oi.cooks_distance[0][57], rel=1e-9)
    # the fitted-values sheet carries the measures for every row
    out = write_results(res, out=tmp_path / "results.xlsx")
    wb = openpyxl.load_workbook(out, read_only=True)
    sheet = next(wb[n] for n in wb.sheetnames if "itted" in n)
    table = list(sheet.iter_rows(min_row=4, values_only=True))
    heads = list(table[0])
    lev, cook, flag = (
        heads.index("Leverage"),
        heads.index("Cook's distance"),
        heads.index("Unusual"),
    )
    body = {int(r[0]): r for r in table[1:] if r[0] is not None}
    assert body[59][flag] == ", ".join(rows[59]["flags"])
    assert body[59][cook] == pytest.approx(oi.cooks_distance[0][57], rel=1e-9)
    assert body[3][lev] == pytest.approx(oi.hat_matrix_diag[1], rel=1e-9)
    assert body[3][flag] in (None, "")
    # a native chart of actual against fitted values, the unusual rows as a second series
    # drawn from the column that holds only their values (the others empty, not drawn as 0)
    import re
    import zipfile

    with zipfile.ZipFile(out) as z:
        chart = next(
            c
            for c in (z.read(n).decode() for n in z.namelist() if n.startswith("xl/charts/"))
            if "Actual against fitted: ols" in c
        )
    refs = re.findall(r"<c:f>(.*?)</c:f>", chart)
    marked = get_column_letter(heads.index("Actual value of an unusual row (for the chart)") + 1)
    fitted_col = get_column_letter(heads.index("Fitted (ols)") + 1)
    line = get_column_letter(heads.index("Line of equal values (for the chart)") + 1)
    assert refs == [
        f"'TM Fitted'!${fitted_col}$5:${fitted_col}$239",
        "'TM Fitted'!$B$5:$B$239",
        f"'TM Fitted'!${fitted_col}$5:${fitted_col}$239",
        f"'TM Fitted'!${marked}$5:${marked}$239",
        f"'TM Fitted'!${line}$5:${line}$6",  # the line where fitted equals actual
        f"'TM Fitted'!${line}$5:${line}$6",
    ]
    ends = [r[heads.index("Line of equal values (for the chart)")] for r in table[1:3]]
    actual = [r[1] for r in table[1:]]
    assert ends[0] <= min(actual) and ends[1] >= max(actual)
    assert '<c:dispBlanksAs val="span"/>' in chart
    marked_values = [
        r[heads.index("Actual value of an unusual row (for the chart)")] for r in table[1:]
    ]
    assert sum(v is not None for v in marked_values) == len(flagged)


def test_unslipped_engel_data_name_no_cell_and_one_household_in_the_log_fit(tmp_path):
    book = _engel_book(tmp_path / "engel.xlsx")
    res = run_study(
        StudySpec(
            source=str(book),
            response="foodexp",
            methods=("ols",),
            folds=5,
            log_columns=("foodexp", "income"),
        )
    )
    assert not any("far outside" in w or "long tail" in w for w in res.warnings)
    # household 105 (sheet row 106) spends far less on food than its income predicts; on the
    # ln scale it is the one row statsmodels' Bonferroni test puts below 0.05
    income, food = engel()
    ref = sm.OLS(np.log(food), sm.add_constant(np.log(income))).fit()
    bonf = np.asarray(ref.outlier_test(method="bonf"))[:, 2]
    assert list(np.flatnonzero(bonf < 0.05)) == [104]
    assert [row for row, _ in res.unusual_rows()] == [106]
    assert any("row 106 (residual 3.8 standard errors" in w for w in res.warnings)


def test_many_far_values_read_as_a_long_tail_with_advice_to_log():
    from engine.design import Design, Encoding

    rng = np.random.default_rng(1)
    n = 400
    tail = np.exp(rng.normal(0, 1.6, n))  # heavy: a few percent beyond the raw outer fences
    y = rng.normal(size=n)
    d = Design(
        source="x",
        sheet="S",
        header_row=1,
        response="y",
        names=["spend"],
        encodings=[Encoding("spend", "spend", "C", "number")],
        X=tail[:, None],
        y=y,
        row_numbers=np.arange(2, n + 2),
        means=np.zeros(1),
        sds=np.ones(1),
    )
    screen = screen_far_values(d, {"spend": "C", "y": "B"})
    assert screen.cells == [] and screen.tails[0][0] == "spend"
    notes = screen.notes()
    assert (
        len(notes) == 1
        and "long tail" in notes[0]
        and "'spend'" in notes[0]
        and "--log" in notes[0]
    )
