"""`tamis score`: predictions written to a new workbook, equal to the stored model's."""

from __future__ import annotations

import io
import json
import re
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import openpyxl
import pytest
from study_fixture import make_result, simulate_rows, write_rows

from engine.commands import score
from engine.errors import InputProblem
from engine.intake import read_table
from engine.report import ScoringModel, load_scoring_model, write_results


def _ctx():
    return SimpleNamespace(stdout=io.StringIO(), stderr=io.StringIO(), written=[])


@pytest.fixture(scope="module")
def setup(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("score")
    result, _ = make_result(tmp)
    results = write_results(result, out=tmp / "results.xlsx")
    new = tmp / "new-lots.xlsx"
    write_rows(new, simulate_rows(30, seed=11))
    return result, results, new


def test_score_writes_predictions_beside_the_book(setup):
    _, results, new = setup
    before = new.read_bytes()
    ctx = _ctx()
    code = score.run(
        SimpleNamespace(book=str(new), results=str(results), sheet=None, out=None), ctx
    )
    assert code == 0
    out = new.with_name("new-lots-scored.xlsx")
    assert out.exists() and new.read_bytes() == before
    wb = openpyxl.load_workbook(out, read_only=True)
    assert wb.sheetnames == ["Lots", "TM Predictions"]
    rows = list(wb["TM Predictions"].iter_rows(min_row=5, values_only=True))
    head = next(wb["TM Predictions"].iter_rows(min_row=4, max_row=4, values_only=True))
    k = next(i for i, h in enumerate(head) if str(h).startswith("Prediction"))
    got = np.array([r[k] if r[k] is not None else np.nan for r in rows], dtype=float)
    want = load_scoring_model(results).predict(read_table(new))
    np.testing.assert_allclose(got, want, rtol=1e-14)
    # gaps in 'rain' are filled with the stored median when the model uses rain
    assert np.isfinite(got).all()
    assert "scored 30 of 30" in ctx.stdout.getvalue()
    # each prediction with its 95% range: -+ 1.96 x the root of the stored cross-validated error
    model = load_scoring_model(results)
    h = 1.959963984540054 * np.sqrt(model.cv_error)
    said = re.search(r"95% range of ± ([0-9.]+),", ctx.stdout.getvalue())
    assert said and float(said.group(1)) == pytest.approx(h, rel=5e-4)
    low = np.array([r[k + 1] for r in rows], dtype=float)
    high = np.array([r[k + 2] for r in rows], dtype=float)
    assert head[k + 1 : k + 3] == ("Low end (95% range)", "High end (95% range)")
    np.testing.assert_allclose(got - low, h, rtol=1e-12)
    np.testing.assert_allclose(high - got, h, rtol=1e-12)
    # shown alike: one format, six significant digits of a typical prediction
    shown = openpyxl.load_workbook(out)["TM Predictions"]
    formats = {shown.cell(r, k + 1 + j).number_format for r in range(5, 10) for j in range(3)}
    assert len(formats) == 1
    decimals = len(formats.pop().partition(".")[2])
    assert len(f"{model.typical_size:.{decimals}f}".replace(".", "").lstrip("0")) == 6


def test_score_refuses_to_overwrite_the_book(setup):
    _, results, new = setup
    with pytest.raises(InputProblem, match="being scored"):
        score.run(
            SimpleNamespace(book=str(new), results=str(results), sheet=None, out=str(new)), _ctx()
        )


def test_score_never_replaces_the_results_book_or_a_users_file(setup, tmp_path):

    _, results, new = setup
    before = results.read_bytes()
    with pytest.raises(InputProblem, match="results workbook that holds the model"):
        score.run(
            SimpleNamespace(book=str(new), results=str(results), sheet=None, out=str(results)),
            _ctx(),
        )
    assert results.read_bytes() == before
    users = tmp_path / "budget.xlsx"
    users.write_bytes(new.read_bytes())  # a workbook of the user's, no sheet of ours
    with pytest.raises(InputProblem, match="already exists and was not written by Tamis"):
        score.run(
            SimpleNamespace(book=str(new), results=str(results), sheet=None, out=str(users)),
            _ctx(),
        )
    assert users.read_bytes() == new.read_bytes()
    # an earlier output of ours is replaced
    ours = tmp_path / "scored.xlsx"
    for _ in range(2):
        args = SimpleNamespace(book=str(new), results=str(results), sheet=None, out=str(ours))
        assert score.run(args, _ctx()) == 0


def test_score_with_a_book_that_is_not_results(setup):
    _, _, new = setup
    with pytest.raises(InputProblem, match="TM Settings"):
        score.run(SimpleNamespace(book=str(new), results=str(new), sheet=None, out=None), _ctx())


def test_score_through_the_command_line(setup, tmp_path):
    from engine.cli import main
    from engine.context import Context

    _, results, new = setup
    out = tmp_path / "p.xlsx"
    ctx = Context(stdout=io.StringIO(), stderr=io.StringIO(), config_dir=tmp_path)
    code = main(["score", str(new), "--results", str(results), "--out", str(out)], ctx)
    assert code == 0, ctx.stderr.getvalue()
    assert Path(out).exists()
    # --json: one document on stdout, the human lines on stderr
    ctx = Context(stdout=io.StringIO(), stderr=io.StringIO(), config_dir=tmp_path)
    argv = ["score", str(new), "--results", str(results), "--out", str(out), "--json"]
    assert main(argv, ctx) == 0, ctx.stderr.getvalue()
    doc = json.loads(ctx.stdout.getvalue())
    model = load_scoring_model(results)
    assert doc["output"] == str(out) and doc["rows"] == doc["scored"] == 30
    assert doc["range_halfwidth"] == pytest.approx(1.959963984540054 * np.sqrt(model.cv_error))
    assert "scored 30 of 30" in ctx.stderr.getvalue()


def test_rows_beyond_the_fitted_range_are_scored_with_an_extrapolation_caution(setup, tmp_path):
    # common practice: a linear model says nothing about values outside the rows it was fitted
    # on; the prediction is kept but marked, and the model's stored range matches the study's
    result, results, new = setup
    model = load_scoring_model(results)
    fresh = type(model).from_result(result, model.method)
    # (cells keep 15-16 significant digits)
    np.testing.assert_allclose(model.lows, fresh.lows, rtol=1e-15)
    np.testing.assert_allclose(model.highs, fresh.highs, rtol=1e-15)
    j = next(k for k, e in enumerate(model.encodings) if e.kind == "number")
    source, high = model.encodings[j].source, float(model.highs[j])
    wb = openpyxl.load_workbook(new)
    ws = wb.worksheets[0]
    col = next(c for c in range(1, ws.max_column + 1) if ws.cell(1, c).value == source)
    ws.cell(3, col).value = high + 10.0 * (high - float(model.lows[j]))
    far = tmp_path / "far.xlsx"
    wb.save(far)

    def notes_of(book, name):
        ctx = _ctx()
        out = tmp_path / name
        args = SimpleNamespace(book=str(book), results=str(results), sheet=None, out=str(out))
        assert score.run(args, ctx) == 0
        assert "scored 30 of 30" in ctx.stdout.getvalue()  # still predicted
        sheet = openpyxl.load_workbook(out)["TM Predictions"]
        return [r[-1] for r in sheet.iter_rows(min_row=5, values_only=True)], ctx

    before, _ = notes_of(new, "plain.xlsx")  # new rows may already cross the range a little
    after, ctx = notes_of(far, "far-scored.xlsx")
    assert "outside the range the model was fitted on" in ctx.stderr.getvalue()
    assert f"'{source}' {high + 10.0 * (high - float(model.lows[j])):.6g} outside" in after[1]
    assert after[1].startswith("extrapolation: ")
    assert after[:1] + after[2:] == before[:1] + before[2:]


def test_score_with_another_stored_model_and_an_unknown_one(setup, tmp_path):
    result, results, new = setup
    ctx = _ctx()
    out = tmp_path / "ridge.xlsx"
    args = SimpleNamespace(book=str(new), results=str(results), sheet=None, out=str(out))
    args.method = "ridge"
    assert score.run(args, ctx) == 0
    assert "with 'ridge'" in ctx.stdout.getvalue()
    ws = openpyxl.load_workbook(out, read_only=True)["TM Predictions"]
    head = next(ws.iter_rows(min_row=4, max_row=4, values_only=True))
    k = next(i for i, h in enumerate(head) if str(h).startswith("Prediction"))
    got = np.array([r[k] for r in ws.iter_rows(min_row=5, values_only=True)], dtype=float)
    # ridge by hand from the study's own coefficients (every model column, original units)
    ridge = result.model("ridge")
    table = read_table(new)
    model = load_scoring_model(results, "ridge")
    assert model.method == "ridge"
    X = np.column_stack(
        [model._encode(e, model._find_column(table, e.source), table) for e in model.encodings]
    )
    want = ridge.intercept + X @ np.array([ridge.coefficients[e.name] for e in model.encodings])
    np.testing.assert_allclose(got, want, rtol=1e-12)
    args.method, args.out = "best-subset", str(tmp_path / "none.xlsx")
    with pytest.raises(InputProblem, match="holds no model 'best-subset'"):
        score.run(args, _ctx())


def test_the_study_can_name_the_scoring_sheets_method(tmp_path):
    from engine.report.scoring_model import scoring_reason
    from engine.study_spec import StudySpec

    result, _ = make_result(tmp_path)
    assert scoring_reason(result).startswith("the smallest cross-validated error")
    result.spec = result.spec.replace(scoring_method="forward-stepwise")
    assert result.scoring_method() == "forward-stepwise"
    assert scoring_reason(result) == "chosen in the study's settings"
    out = write_results(result, out=tmp_path / "named.xlsx")
    assert load_scoring_model(out).method == "forward-stepwise"
    ws = openpyxl.load_workbook(out, read_only=True)["TM Scoring"]
    top = [r[:2] for r in ws.iter_rows(max_row=6, values_only=True)]
    assert ("Model used", "forward-stepwise") in top
    assert ("Why this model", "chosen in the study's settings") in top
    with pytest.raises(InputProblem, match="not among the methods run"):
        StudySpec(source="x.xlsx", response="y", methods=("lasso",), scoring_method="ridge")


def test_prediction_rows_keep_text_dates_and_styles_as_written(tmp_path):
    # the rows are spliced into the sheet as XML (bulk_rows): text with XML's special characters,
    # one XML cannot hold or one that looks like an escape must read back as written
    # (ECMA-376 Part 1, 22.9.2.19, ST_Xstring: _xHHHH_), dates as dates in the scored book's
    # own date system (1900 or 1904), and the prediction and note columns keep their styles.
    # Read back by openpyxl and by calamine (general-purpose reader libraries).
    import datetime as dt

    from openpyxl.utils.datetime import CALENDAR_MAC_1904
    from python_calamine import CalamineWorkbook

    from engine.design import Encoding
    from engine.report.predictions import write_predictions
    from engine.report.scoring_model import ScoringModel

    labels = ["north", "south", "east & west", "plain", "last"]
    # notes are our own text, written as given: the hard cases go there
    notes = ["a<b & c>d", "bell\x07 in a note", "_x0041_ stays", "  spaces kept  ", ""]
    for epoch in (None, CALENDAR_MAC_1904):
        wb = openpyxl.Workbook()
        if epoch is not None:
            wb.epoch = epoch
        ws = wb.active
        ws.title = "New"
        ws.append(["made_on", "label", "x"])
        for i, t in enumerate(labels):
            ws.append([dt.datetime(2024, 3, 1 + i), t, float(i)])
            ws.cell(i + 2, 1).number_format = "yyyy-mm-dd"
        tag = "1904" if epoch is not None else "1900"
        book = tmp_path / f"new-{tag}.xlsx"
        wb.save(book)
        encodings = [
            Encoding("made_on:trend", "made_on", "A", "trend", origin="2024-01-01"),
            Encoding("label=plain", "label", "B", "level", level="plain"),
            Encoding("x", "x", "C", "number"),
        ]
        coefs = {"made_on:trend": 0.5, "label=plain": 1.0, "x": 2.0}
        zeros = dict.fromkeys(coefs, 0.0)
        model = ScoringModel.from_parts("ols", "y", 1.0, encodings, coefs, zeros,
                                        dict.fromkeys(coefs, 1.0), {"label": labels})  # fmt: skip
        preds = np.arange(5.0) * 2 + 1
        out = write_predictions(
            read_table(book), model, preds, notes, book, tmp_path / f"p-{tag}.xlsx", "r.xlsx"
        )
        got = openpyxl.load_workbook(out)["TM Predictions"]
        assert got.parent.epoch == wb.epoch
        assert [got.cell(5 + i, 3).value for i in range(5)] == labels
        assert [got.cell(5 + i, 2).value for i in range(5)] == [
            dt.datetime(2024, 3, 1 + i) for i in range(5)
        ]
        assert got.cell(5, 2).number_format == "yyyy-mm-dd"
        assert [got.cell(5 + i, 5).value for i in range(5)] == preds.tolist()
        assert got.cell(5, 5).font.b  # the prediction column's style
        # openpyxl reads inline strings without undoing _xHHHH_ escapes: plain ones here,
        # every one through calamine below
        assert [got.cell(5 + i, 6).value for i in (0, 3, 4)] == [notes[0], notes[3], None]
        assert got.cell(6, 6).font.i
        cal = CalamineWorkbook.from_path(str(out)).get_sheet_by_name("TM Predictions").to_python()
        assert [row[2] for row in cal[4:9]] == labels
        assert [row[5] for row in cal[4:8]] == notes[:4]


def test_a_filled_cell_is_said_in_the_note_and_the_report(tmp_path):
    # the study filled gaps with the median (policy "fill"): a new row with a gap is predicted
    # with the stored median put in, which its note and the command's report say
    from engine.study import run_study
    from engine.study_spec import StudySpec

    rng = np.random.default_rng(2)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["y", "dose", "temp"])
    for i in range(60):
        d, t = rng.normal(size=2)
        ws.append(
            [float(1 + 2 * d - t + rng.normal(0, 0.3)), None if i % 9 == 0 else float(d), float(t)]
        )
    data = tmp_path / "lab.xlsx"
    wb.save(data)
    res = run_study(
        StudySpec(source=str(data), response="y", methods=("ols",), folds=5, missing="fill")
    )
    results = write_results(res, out=tmp_path / "results.xlsx")
    fill = next(e.fill for e in res.design.encodings if e.name == "dose")
    new = openpyxl.Workbook()
    new.active.append(["dose", "temp"])
    new.active.append([0.5, 0.1])
    new.active.append([None, 0.2])
    new.active.append(["n/a", 0.3])
    book = tmp_path / "new.xlsx"
    new.save(book)
    out = tmp_path / "new-scored.xlsx"
    ctx = _ctx()
    code = score.run(
        SimpleNamespace(book=str(book), results=str(results), sheet=None, out=str(out)), ctx
    )
    assert code == 0
    ws = openpyxl.load_workbook(out, read_only=True)["TM Predictions"]
    head = list(next(ws.iter_rows(min_row=4, max_row=4, values_only=True)))
    notes = [r[head.index("Note")] for r in ws.iter_rows(min_row=5, values_only=True)]
    said = f"filled: 'dose' had no usable value, {fill:.6g} was put in"
    assert notes == [None, said, said]
    assert "2 rows were predicted with an empty or unreadable cell filled" in ctx.stderr.getvalue()


def test_new_rows_without_the_units_row_and_missing_columns_named_at_once(tmp_path):
    # the study's sheet had a units row ("temp (°C)"); new rows typed with the plain headings
    # are matched; a sheet lacking two of the model's columns is refused naming both
    from engine.study import run_study
    from engine.study_spec import StudySpec

    rng = np.random.default_rng(1)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["temp", "press", "y"])
    ws.append(["°C", "kPa", "g"])
    for _ in range(50):
        t, p = rng.normal(size=2)
        ws.append([80 + 5 * t, 101 + 3 * p, 10 + t + p + rng.normal(0, 0.2)])
    data = tmp_path / "runs.xlsx"
    wb.save(data)
    res = run_study(StudySpec(source=str(data), response="y", methods=("ols",), folds=5))
    model = ScoringModel.from_result(res)
    assert model.sources == ["temp (°C)", "press (kPa)"]
    plain = openpyxl.Workbook()
    plain.active.append(["temp", "press"])
    plain.active.append([82.0, 99.5])
    book = tmp_path / "plain.xlsx"
    plain.save(book)
    got = model.predict(read_table(book))
    m = res.models[0]
    want = m.intercept + m.coefficients["temp (°C)"] * 82.0 + m.coefficients["press (kPa)"] * 99.5
    assert got[0] == pytest.approx(want, rel=1e-12)
    # the predictions sheet echoes the values the model read, under the model's headings
    from engine.report.score_rows import score_rows

    scored = score_rows(book, model, out=tmp_path / "plain-scored.xlsx")
    ws = openpyxl.load_workbook(scored.out, read_only=True)["TM Predictions"]
    head = list(next(ws.iter_rows(min_row=4, max_row=4, values_only=True)))
    first = next(ws.iter_rows(min_row=5, max_row=5, values_only=True))
    assert first[head.index("temp (°C)")] == 82.0 and first[head.index("press (kPa)")] == 99.5
    other = openpyxl.Workbook()
    other.active.append(["humidity", "speed"])
    other.active.append([0.4, 3.0])
    wrong = tmp_path / "other.xlsx"
    other.save(wrong)
    with pytest.raises(InputProblem, match=r"needs 2 columns .*'temp \(°C\)', 'press \(kPa\)'"):
        model.predict(read_table(wrong))


def test_a_range_is_said_with_four_digits_and_no_exponent():
    from engine.report.score_rows import _four_digits

    assert _four_digits(16601.98994358) == "16602"
    assert _four_digits(3.0234) == "3.023" and _four_digits(0.0123456) == "0.01235"
    assert _four_digits(2.5e-6) == "2.5e-06"  # tiny: the exponent is the clearer way


def test_a_percentage_in_new_rows_reads_the_same_in_any_batch(tmp_path):
    # the fitted column holds shares (0.1 to 0.9, a few typed "76%"): "50%" among new rows is
    # 0.5 and predicts alike alone or beside a plain 50 (which reads as 50 percent there)
    from engine.report.score_rows import score_rows
    from engine.study import run_study
    from engine.study_spec import StudySpec

    rng = np.random.default_rng(4)
    fit = openpyxl.Workbook()
    fit.active.append(["y", "pct"])
    for i in range(40):
        share = round(float(rng.uniform(0.1, 0.9)), 2)
        fit.active.append(
            [3 + 4 * share + float(rng.normal(0, 0.1)), f"{share:.0%}" if i % 5 == 0 else share]
        )
    fit.save(tmp_path / "fit.xlsx")
    res = run_study(
        StudySpec(source=str(tmp_path / "fit.xlsx"), response="y", methods=("ols",), folds=4)
    )
    model = ScoringModel.from_result(res)
    predictions = []
    for k, cells in enumerate((["50%"], [50, "50%"])):
        new = openpyxl.Workbook()
        new.active.append(["pct"])
        for c in cells:
            new.active.append([c])
        new.save(tmp_path / f"new{k}.xlsx")
        done = score_rows(tmp_path / f"new{k}.xlsx", model, out=tmp_path / f"scored{k}.xlsx")
        sheet = openpyxl.load_workbook(done.out)["TM Predictions"]
        predictions.append([r[2] for r in sheet.iter_rows(min_row=5, values_only=True) if r[0]])
    assert predictions[0][0] == pytest.approx(predictions[1][1])
    assert predictions[1][0] == pytest.approx(predictions[1][1])
    m = res.models[0]
    assert predictions[0][0] == pytest.approx(m.intercept + m.coefficients["pct"] * 0.5)
