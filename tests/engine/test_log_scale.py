"""Columns taken as their natural log: the design, refusals naming the cell, the results
workbook and scoring in the response's own units.

Known answers: ln computed by numpy on the same cells; the smearing factor is Duan's (1983,
J. Amer. Statist. Assoc. 78(383)) mean of exp(residual), recomputed here from the fitted values.
Checks against statsmodels and LibreOffice are in tests/reference/test_log_scale_reference.py.
"""

from __future__ import annotations

import io
import json

import numpy as np
import openpyxl
import pytest

from engine import cli
from engine.context import Context
from engine.design import build_design
from engine.errors import InputProblem
from engine.intake import read_table
from engine.report import load_scoring_model, write_results
from engine.report.settings_reader import read_settings_v1
from engine.study import run_study
from engine.study_spec import StudySpec


def _book(path, n=60, seed=3, zero_at=None, text_col=False):
    """A small demand table: units sold falls with price by a constant elasticity."""
    rng = np.random.default_rng(seed)
    price = rng.uniform(1.5, 4.0, n)
    shelf = rng.uniform(5.0, 15.0, n)
    units = np.exp(5.0 - 1.2 * np.log(price) + 0.03 * shelf + rng.normal(0, 0.1, n))
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Sales"
    heads = ["units", "price", "shelf_m"] + (["region"] if text_col else [])
    ws.append(heads)
    for i in range(n):
        row = [float(units[i]), float(price[i]), float(shelf[i])]
        if text_col:
            row.append(["north", "south", "east"][i % 3])
        ws.append(row)
    if zero_at is not None:
        ws.cell(zero_at, 2).value = 0.0
    wb.save(path)
    return path


def _spec(book, **kw):
    kw.setdefault("methods", ("ols", "lasso"))
    kw.setdefault("folds", 5)
    return StudySpec(source=str(book), response="units", **kw)


def test_logged_columns_enter_as_their_natural_log(tmp_path):
    book = _book(tmp_path / "sales.xlsx")
    table = read_table(book)
    d = build_design(table, _spec(book, log_columns=("units", "price")))
    assert d.response_log and d.response_label == "ln(units)"
    assert d.names == ["ln(price)", "shelf_m"]
    assert [e.kind for e in d.encodings] == ["ln", "number"]
    raw = openpyxl.load_workbook(book).active
    price = np.array([raw.cell(r, 2).value for r in range(2, 62)])
    units = np.array([raw.cell(r, 1).value for r in range(2, 62)])
    np.testing.assert_array_equal(d.X[:, 0], np.log(price))
    np.testing.assert_array_equal(d.y, np.log(units))
    assert any("ln(units)" in w and "smearing" in w for w in d.warnings)


def test_a_value_at_or_below_zero_is_refused_naming_its_cell(tmp_path):
    book = _book(tmp_path / "sales.xlsx", zero_at=17)
    with pytest.raises(InputProblem) as err:
        run_study(_spec(book, log_columns=("price",)))
    msg = err.value.message
    assert "'price'" in msg and "cell B17" in msg and "above 0" in msg and "Sales" in msg
    assert err.value.place.cell == "B17"


@pytest.mark.parametrize(
    "logged, fragment",
    [
        (("region",), "only a number column can be taken as its natural log"),
        (("nowhere",), "nowhere"),
    ],
)
def test_logging_a_column_that_cannot_be_logged_is_refused(tmp_path, logged, fragment):
    book = _book(tmp_path / "sales.xlsx", text_col=True)
    with pytest.raises(InputProblem, match=fragment):
        run_study(_spec(book, log_columns=logged))


def test_a_logged_column_outside_the_study_is_refused(tmp_path):
    book = _book(tmp_path / "sales.xlsx")
    with pytest.raises(InputProblem, match="not in the study"):
        run_study(_spec(book, log_columns=("price",), exclude=("price",)))


def test_missing_cells_of_a_logged_column_take_the_median_of_its_logs(tmp_path):
    book = _book(tmp_path / "sales.xlsx")
    wb = openpyxl.load_workbook(book)
    wb.active.cell(5, 2).value = None
    wb.save(book)
    d = build_design(read_table(book), _spec(book, log_columns=("price",), missing="fill"))
    j = d.names.index("ln(price)")
    enc = d.encodings[j]
    others = np.delete(d.X[:, j], 3)
    assert enc.fill == pytest.approx(float(np.median(others)))
    assert d.X[3, j] == enc.fill


def test_ln_response_predictions_come_back_in_units_with_the_smearing_factor(tmp_path):
    book = _book(tmp_path / "sales.xlsx")
    res = run_study(_spec(book, log_columns=("units", "price")))
    d = res.design
    for m in res.models:
        assert m.smearing == pytest.approx(float(np.mean(np.exp(d.y - m.fitted))), rel=1e-12)
        assert 1.0 < m.smearing < 1.05  # errors of sd 0.1: E exp(e) = exp(0.005)
    out = write_results(res, out=tmp_path / "results.xlsx")
    model = load_scoring_model(out)
    assert model.response_log
    chosen = res.model(model.method)
    assert model.smearing == pytest.approx(chosen.smearing, rel=1e-15)  # 16 digits stored
    table = read_table(book)
    want = np.exp(chosen.fitted) * chosen.smearing
    np.testing.assert_allclose(model.predict(table), want, rtol=1e-12)
    # the settings sheet says so, in layout version 2
    ws = openpyxl.load_workbook(out, read_only=True)["TM Settings"]
    rows = list(ws.iter_rows(values_only=True))
    assert rows[0][:2] == ("Tamis settings", 2)
    assert ("response scale", '"ln"') in [r[:2] for r in rows]
    # and the scoring sheet's cached example predictions are in units
    sc = openpyxl.load_workbook(out, read_only=True, data_only=True)["TM Scoring"]
    cells = list(sc.iter_rows(values_only=True))
    head, col = next(
        (i, j)
        for i, r in enumerate(cells)
        for j, v in enumerate(r)
        if isinstance(v, str) and v.startswith("Prediction of")
    )
    assert "from its ln" in cells[head][col]
    got = [cells[head + 1 + i][col] for i in range(5)]
    np.testing.assert_allclose(got, want[:5], rtol=1e-12)
    # the fitted sheet has the scoring model's fit in units too, beside the sheet's own values
    fs = openpyxl.load_workbook(out, read_only=True)["TM Fitted"]
    frows = list(fs.iter_rows(min_row=4, values_only=True))
    heads = list(frows[0])
    actual = np.array([r[heads.index("units (actual)")] for r in frows[1:]], dtype=float)
    fitted = np.array(
        [r[heads.index(f"units fitted ({model.method})")] for r in frows[1:]], dtype=float
    )
    sheet_units = np.array(table.column("units").values, dtype=float)[d.row_numbers - 2]
    np.testing.assert_allclose(actual, sheet_units, rtol=1e-12)
    np.testing.assert_allclose(fitted, want, rtol=1e-12)


def test_new_rows_with_no_log_get_no_prediction_and_a_note(tmp_path):
    book = _book(tmp_path / "sales.xlsx")
    res = run_study(_spec(book, log_columns=("units", "price"), methods=("ols",)))
    model = load_scoring_model(write_results(res, out=tmp_path / "results.xlsx"))
    new = openpyxl.Workbook()
    new.active.append(["price", "shelf_m"])
    for row in ([2.0, 10.0], [0.0, 10.0], [-1.0, 8.0], [None, 9.0]):
        new.active.append(row)
    new.save(tmp_path / "new.xlsx")
    preds, notes = model.predict_with_notes(read_table(tmp_path / "new.xlsx"))
    m = res.models[0]
    linear = (
        m.intercept + m.coefficients["ln(price)"] * np.log(2.0) + m.coefficients["shelf_m"] * 10
    )
    assert preds[0] == pytest.approx(np.exp(linear) * m.smearing, rel=1e-12)
    assert np.isnan(preds[1:]).all()
    assert notes[0] == ""
    assert notes[1] == notes[2] == "'price' is not above 0, so it has no ln"
    assert notes[3] == "no usable value in 'price'"


def test_only_logged_candidates_keep_layout_version_1_free_studies_readable(tmp_path):
    # a study without logs writes layout version 1, which the version-1 reader parses as before
    book = _book(tmp_path / "sales.xlsx")
    res = run_study(_spec(book, methods=("ols",)))
    out = write_results(res, out=tmp_path / "results.xlsx")
    rows = [
        tuple(r)
        for r in openpyxl.load_workbook(out, read_only=True)["TM Settings"].iter_rows(
            values_only=True
        )
    ]
    assert rows[0][:2] == ("Tamis settings", 1)
    record = read_settings_v1(rows)
    assert not record.scoring_model().response_log
    # logs on a candidate alone: version 2, the response in its own units
    res = run_study(_spec(book, methods=("ols",), log_columns=("price",)))
    model = load_scoring_model(write_results(res, out=tmp_path / "results2.xlsx"))
    assert not model.response_log and res.models[0].smearing is None
    np.testing.assert_allclose(model.predict(read_table(book)), res.models[0].fitted, rtol=1e-12)


def test_focal_effect_with_both_in_ln_is_read_as_an_elasticity(tmp_path):
    book = _book(tmp_path / "sales.xlsx", n=120)
    res = run_study(_spec(book, methods=("ols",), log_columns=("units", "price"), focal="price"))
    f = res.focal
    assert f.column == "ln(price)"
    assert f.ci_low < -1.2 < f.ci_high  # the simulated elasticity
    assert any("elasticity" in note for note in f.notes)
    # the sheet says the estimate is on the ln scale, with the reading beside it
    from engine.report import write_results

    out = write_results(res, out=tmp_path / "results.xlsx")
    ws = openpyxl.load_workbook(out, read_only=True)["TM Coefficients"]
    first = [r[0] for r in ws.iter_rows(values_only=True) if r and r[0]]
    assert "Estimate (ln scale: read it as below)" in first
    assert "Estimate (original units)" not in first
    assert any(str(v).startswith("Both in ln: the estimate is an elasticity") for v in first)


def test_a_yes_no_focal_under_a_logged_response_reads_as_yes_against_no(tmp_path):
    rng = np.random.default_rng(5)
    n = 120
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["spend", "income", "car"])
    for _ in range(n):
        income = float(np.exp(rng.normal(10.0, 0.4)))
        car = bool(rng.random() < 0.5)
        spend = np.exp(1.0 + 0.6 * np.log(income) + 0.1 * car + rng.normal(0, 0.2))
        ws.append([float(spend), income, "Y" if car else "N"])
    book = tmp_path / "homes.xlsx"
    wb.save(book)
    res = run_study(
        StudySpec(
            source=str(book), response="spend", log_columns=("spend", "income"),
            methods=("ols",), folds=5, focal="car",
        )
    )  # fmt: skip
    notes = res.focal.notes
    assert any("percent change in spend for yes against no" in n for n in notes), notes
    assert any("'car' is 1 for yes and 0 for no" in n for n in notes), notes
    assert not any("per unit of car" in n for n in notes)


def test_cli_log_option_reaches_the_json(tmp_path):
    book = _book(tmp_path / "sales.xlsx")
    out, err = io.StringIO(), io.StringIO()
    code = cli.main(
        [
            "fit", str(book), "--response", "units", "--log", "units", "price",
            "--methods", "ols", "--folds", "4", "--json", "--out", str(tmp_path / "r.xlsx"),
        ],
        Context(stdout=out, stderr=err),
    )  # fmt: skip
    assert code == 0, err.getvalue()
    doc = json.loads(out.getvalue())
    assert doc["response_scale"] == "ln"
    assert doc["candidates"] == ["ln(price)", "shelf_m"]
    assert doc["spec"]["log_columns"] == ["units", "price"]
    assert doc["models"][0]["smearing"] > 1.0


def test_a_specification_with_logs_or_test_rows_refuses_an_older_reader():
    # a Tamis knowing only schema version 1 must not re-run such a study without its logs or
    # its final test rows: the new fields raise the version, which older readers refuse
    plain = StudySpec(source="b.xlsx", response="y")
    assert plain.to_dict()["schema_version"] == 1
    for changed in (plain.replace(log_columns=("y",)), plain.replace(test_share=0.2)):
        d = changed.to_dict()
        assert d["schema_version"] == 2
        assert StudySpec.from_dict(d) == changed
        with pytest.raises(InputProblem, match="newer Tamis"):
            StudySpec.from_dict({**d, "schema_version": 3})
