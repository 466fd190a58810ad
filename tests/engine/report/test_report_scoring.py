"""The scoring model: three routes to the same prediction must agree.

Routes: (1) the study's fitted values (design matrix times coefficients), (2) ``ScoringModel``
on rows read back by intake from the source workbook, (3) the Python mirror of the scoring
sheet's formulas on the example cells. Plus the settings sheet round trip and the input
problems (renamed column, unseen level).
"""

from __future__ import annotations

import numpy as np
import pytest
from study_fixture import HEADINGS, make_result, simulate_rows, write_rows, write_wide_book

from engine.errors import InputProblem
from engine.intake import read_table
from engine.report import ScoringModel, load_scoring_model, read_settings, write_results
from engine.report.sheets.scoring import example_rows


@pytest.fixture(scope="module")
def study(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("scoring")
    result, rows = make_result(tmp)
    out = write_results(result, out=tmp / "results.xlsx")
    return result, rows, out, tmp


def test_model_on_intake_rows_equals_fitted_values(study):
    result, _, _, _ = study
    table = read_table(result.spec.source, sheet="Lots")
    for m in result.models:
        pred = ScoringModel.from_result(result, m.method).predict(table)
        np.testing.assert_allclose(pred, m.fitted, rtol=1e-12, atol=1e-9)


def test_sheet_formula_mirror_on_example_cells_equals_fitted_values(study):
    result, _, _, _ = study
    for m in result.models:
        model = ScoringModel.from_result(result, m.method)
        for i, cells in enumerate(example_rows(result, model)):
            encoded = [model.cell_value(e, cells.get(e.source)) for e in model.encodings]
            assert model.sheet_prediction(encoded) == pytest.approx(m.fitted[i], rel=1e-12)


def test_best_model_is_the_smallest_cv_error(study):
    result, _, out, _ = study
    best = min(result.models, key=lambda m: m.cv_error)
    assert load_scoring_model(out).method == best.method


def test_settings_round_trip(study):
    result, _, out, _ = study
    assert read_settings(out) == result.spec
    for m in result.models:
        stored = load_scoring_model(out, m.method)
        direct = ScoringModel.from_result(result, m.method)
        assert [e.name for e in stored.encodings] == [e.name for e in direct.encodings]
        # numbers pass through cells written with 16 significant digits
        for a, b in zip(stored.encodings, direct.encodings):
            assert (a.name, a.source, a.kind, a.level, a.origin, a.reference) == (
                b.name,
                b.source,
                b.kind,
                b.level,
                b.origin,
                b.reference,
            )
            assert (a.fill is None) == (b.fill is None)
            if a.fill is not None:
                assert a.fill == pytest.approx(b.fill, rel=1e-15)
        np.testing.assert_allclose(stored.means, direct.means, rtol=1e-15)
        np.testing.assert_allclose(stored.sds, direct.sds, rtol=1e-15)
        np.testing.assert_allclose(stored.coefficients, direct.coefficients, rtol=1e-15)
        assert stored.intercept == pytest.approx(direct.intercept, rel=1e-15)
        assert stored.category_levels == direct.category_levels


def test_renamed_column_is_named_with_close_matches(study, tmp_path):
    result, rows, out, _ = study
    new = tmp_path / "new.xlsx"
    headings = [
        "lot",
        "Altitude (m)",
        "rain",
        "density",
        "process",
        "organic",
        "harvest",
        "price",
        "score",
    ]
    renamed = [
        {("Altitude (m)" if k == "altitude" else k): v for k, v in r.items()} for r in rows[:10]
    ]
    write_rows(new, renamed, headings=headings)
    model = load_scoring_model(out)
    with pytest.raises(InputProblem) as err:
        model.predict(read_table(new))
    msg = err.value.message
    assert "'altitude'" in msg and "Altitude (m)" in msg
    assert err.value.place.column == "altitude"


def test_an_unseen_level_leaves_its_row_without_a_prediction(study, tmp_path):
    result, _, out, _ = study
    rows = simulate_rows(12, seed=3, gaps=False)
    rows[4]["process"] = "anaerobic"
    new = tmp_path / "new.xlsx"
    write_rows(new, rows)
    model = load_scoring_model(out, "lasso")
    # a level without a coefficient leaves its row without a prediction (not the reference
    # level's), with a note naming column and level; the other rows are scored
    preds, notes = model.predict_with_notes(read_table(new))
    assert np.isnan(preds[4]) and np.isfinite(np.delete(preds, 4)).all()
    assert notes[4] == "level 'anaerobic' of 'process' not seen in fitting"
    assert notes[:4] + notes[5:] == [""] * 11


def test_a_known_level_in_other_letter_case_is_that_level(study, tmp_path):
    # intake reads "Washed" and "washed" as one level; scoring new rows must too, in the
    # engine and in the sheet formula's mirror, or such rows would lose their prediction
    result, _, out, _ = study
    rows = simulate_rows(12, seed=3, gaps=False)
    typed = [dict(r, process=r["process"].upper()) for r in rows]
    plain, upper = tmp_path / "plain.xlsx", tmp_path / "upper.xlsx"
    write_rows(plain, rows)
    write_rows(upper, typed)
    model = load_scoring_model(out, "lasso")
    want = model.predict(read_table(plain))
    got, notes = model.predict_with_notes(read_table(upper))
    np.testing.assert_array_equal(got, want)
    assert notes == [""] * 12
    enc = next(e for e in model.encodings if e.kind == "level")
    assert model.cell_value(enc, f" {enc.level.upper()}  ") == 1.0
    assert model.cell_value(enc, enc.level + "x") == 0.0


def test_headings_match_the_source(study):
    result, _, _, _ = study
    model = ScoringModel.from_result(result, "lasso")
    assert set(model.sources) <= set(HEADINGS)


def test_every_scoring_formula_fits_the_spreadsheet_limit_on_a_wide_model(tmp_path):
    # Source: [MS-OI29500] 2.1.1085 (ECMA-376 Part 1, 18.18.35 ST_Formula): the standard sets
    # no length, the most used spreadsheet program takes at most 8,192 characters. A model of
    # 60 columns with stored fills makes a long Check, which is then split into a helper
    # cell per column
    import re
    import zipfile

    import openpyxl

    from engine.report import write_results
    from engine.study import run_study
    from engine.study_spec import StudySpec

    p = 60
    book = write_wide_book(tmp_path / "wide.xlsx", 150, p, blank_every=37, seed=5)
    res = run_study(
        StudySpec(source=str(book), response="y", methods=("ols",), folds=4, missing="fill")
    )
    out = write_results(res, out=tmp_path / "results.xlsx")
    names = openpyxl.load_workbook(out, read_only=True).sheetnames
    with zipfile.ZipFile(out) as zf:
        xml = zf.read(f"xl/worksheets/sheet{names.index('TM Scoring') + 1}.xml").decode()
    formulas = re.findall(r"<f>(.*?)</f>", xml)
    assert formulas and max(len(f) for f in formulas) <= 8192
    # the Check joins one helper cell per source column, each naming its own column's issues
    helpers = openpyxl.load_workbook(out, read_only=True)["TM Scoring"]
    heads = next(r for r in helpers.iter_rows(values_only=True) if r and "Check" in r)
    assert sum(1 for h in heads if isinstance(h, str) and h.startswith("check: x")) == p


def test_a_stray_word_among_new_numbers_costs_its_row_only(tmp_path):
    # three new rows with "warm" in one: intake types so few cells with a word as text, yet
    # the other rows' numbers are read and the row with the word is named by its cell
    import openpyxl

    from engine.study import run_study
    from engine.study_spec import StudySpec

    rng = np.random.default_rng(0)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["y", "temp"])
    for _ in range(40):
        t = float(rng.normal(20, 3))
        ws.append([2 * t + float(rng.normal()), t])
    wb.save(tmp_path / "fit.xlsx")
    res = run_study(
        StudySpec(source=str(tmp_path / "fit.xlsx"), response="y", methods=("ols",), folds=4)
    )
    model = ScoringModel.from_result(res)
    new = openpyxl.Workbook()
    new.active.append(["temp"])
    for v in (20.0, "warm", 21.5):
        new.active.append([v])
    new.save(tmp_path / "new.xlsx")
    pred, notes = model.predict_with_notes(read_table(tmp_path / "new.xlsx"))
    m = res.models[0]
    np.testing.assert_allclose(
        pred[[0, 2]], m.intercept + m.coefficients["temp"] * np.array([20.0, 21.5])
    )
    assert np.isnan(pred[1]) and notes[1] == "no usable value in 'temp' (A3 'warm')"
    # each cell read as the fit reads one: a lab result against a limit as half the limit,
    # a decimal comma where only a comma makes a number ("21,5"), common practice as in intake
    lab = openpyxl.Workbook()
    lab.active.append(["temp"])
    for v in (20.0, "<22", "21,5", "warm"):
        lab.active.append([v])
    lab.save(tmp_path / "lab.xlsx")
    pred, notes = model.predict_with_notes(read_table(tmp_path / "lab.xlsx"))
    np.testing.assert_allclose(
        pred[:3], m.intercept + m.coefficients["temp"] * np.array([20.0, 11.0, 21.5])
    )
    assert np.isnan(pred[3]) and notes[3] == "no usable value in 'temp' (A5 'warm')"
    # a column with no number at all is the wrong column: refused, naming it
    wrong = openpyxl.Workbook()
    wrong.active.append(["temp"])
    for v in ("warm", "cold"):
        wrong.active.append([v])
    wrong.save(tmp_path / "wrong.xlsx")
    with pytest.raises(InputProblem, match="column 'temp'"):
        model.predict(read_table(tmp_path / "wrong.xlsx"))


def test_a_percentage_typed_among_words_follows_the_fitted_scale():
    # a column intake typed as text (a stray word among few new rows) is read cell by cell:
    # "50%" in points for a model fitted on points (12.5 for 12.5%), as a share otherwise
    from engine.report.scoring_model import _numbers_in_text

    np.testing.assert_allclose(
        _numbers_in_text(["50%", "warm", "<0.4", "0,2"], points=True), [50.0, np.nan, 0.2, 0.2]
    )
    np.testing.assert_allclose(_numbers_in_text(["50%"]), [0.5])
