"""Independent recalculation of the scoring sheet by LibreOffice Calc (headless).

Source: LibreOffice Calc 7.4, run with a throw-away profile whose OOXMLRecalcMode is 0 ("always
recalculate on load"), so every formula is computed by LibreOffice's own engine rather than read
from the cached values we store. Checked to work by planting a wrong cached value and seeing it
corrected. The recalculated workbook is read back with openpyxl (data_only=True).

Agreement required: 1e-9 relative between LibreOffice's predictions and the engine's, on the
example rows (the study's fitted values) and on new rows pasted under the headings (category
levels, yes/no text, dates and a gap filled by the stored median), which are also scored by
`tamis score` on a second workbook.
"""

from __future__ import annotations

import datetime as dt
import io
import re
import shutil
import subprocess
import sys
import zipfile
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import openpyxl
import pytest
from openpyxl.utils import get_column_letter

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "engine" / "report"))

from libreoffice import (  # noqa: E402
    convert,
    make_profile,
    paste_after_examples,
    scoring_layout,
    soffice,
)
from rich_workbook import write_rich  # noqa: E402
from study_fixture import make_result, simulate_rows, write_rows, write_wide_book  # noqa: E402

from engine.intake import read_table  # noqa: E402
from engine.report import ScoringModel, load_scoring_model, write_results  # noqa: E402

pytestmark = pytest.mark.libreoffice

if soffice() is None:  # loud: the reference check is not silently skipped
    pytest.skip(
        "LibreOffice (soffice) is not installed: the independent recalculation check cannot run",
        allow_module_level=True,
    )

WRONG = 12345.0


def _predictions(path: Path, first: int, count: int) -> np.ndarray:
    ws = openpyxl.load_workbook(path, data_only=True)["TM Scoring"]
    head, cols = scoring_layout(ws)
    pc = next(c for h, c in cols.items() if h.startswith("Prediction of"))
    vals = [ws.cell(head + first + i, pc).value for i in range(count)]
    return np.array([np.nan if v in (None, "", "#N/A") else float(v) for v in vals])


def _new_rows_book(path: Path, headings: list[str], rows: list[tuple]) -> Path:
    """A workbook of new rows for the score route, the same rows as pasted on the sheet."""
    wb = openpyxl.Workbook()
    wb.active.append(headings)
    for row in rows:
        wb.active.append(list(row))
    wb.save(path)
    return path


def _plant_wrong_cached_value(src: Path, dst: Path) -> None:
    """Copy ``src`` with the first prediction's cached value replaced by WRONG."""
    wb = openpyxl.load_workbook(src, read_only=True)
    index = wb.sheetnames.index("TM Scoring") + 1
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            data = zin.read(info.filename)
            if info.filename == f"xl/worksheets/sheet{index}.xml":
                text = data.decode()
                m = re.search(
                    r'(<c r="[A-Z]+\d+" s="\d+"><f>IF\(COUNTA[^<]*?SUMPRODUCT[^<]*</f><v>)([^<]*)(</v>)',
                    text,
                )
                assert m is not None
                text = text[: m.start(2)] + repr(WRONG) + text[m.end(2) :]
                data = text.encode()
            zout.writestr(info, data)


@pytest.fixture(scope="module")
def lo(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("libreoffice")
    result, rows = make_result(tmp)
    results = write_results(result, out=tmp / "results.xlsx")
    model = load_scoring_model(results)

    # new rows: every process level, yes/no as text, dates, gaps in 'rain'
    new_rows = simulate_rows(12, seed=21)
    new_rows[0]["rain"] = None
    new_book = tmp / "new-lots.xlsx"
    write_rows(new_book, new_rows)

    pasted = tmp / "pasted.xlsx"
    wb = openpyxl.load_workbook(results)
    ws = wb["TM Scoring"]
    head, cols = scoring_layout(ws)
    n_examples = 5
    for i, row in enumerate(new_rows):
        r = head + 1 + n_examples + i
        for s in model.sources:
            v = row[s]
            if isinstance(v, dt.date):
                v = dt.datetime(v.year, v.month, v.day)
            ws.cell(r, cols[s]).value = v
    wb.save(pasted)

    # edge rows: a category level the fit never saw, and a number far beyond the fitted range
    edge_rows = simulate_rows(3, seed=22)
    level_source = next(e.source for e in model.encodings if e.kind == "level")
    known = next(e.level for e in model.encodings if e.kind == "level")
    # a known level typed with spaces and in other letter case
    edge_rows[2][level_source] = f"  {known.swapcase()} "
    j_num = next(k for k, e in enumerate(model.encodings) if e.kind == "number")
    num_source = model.encodings[j_num].source
    edge_rows[0][level_source] = "a level never seen"
    span = float(model.highs[j_num] - model.lows[j_num])
    edge_rows[1][num_source] = float(model.highs[j_num]) + 5.0 * span
    edge = tmp / "edge.xlsx"
    wb = openpyxl.load_workbook(results)
    ws = wb["TM Scoring"]
    for i, row in enumerate(edge_rows):
        for s in model.sources:
            v = row[s]
            if isinstance(v, dt.date):
                v = dt.datetime(v.year, v.month, v.day)
            ws.cell(head + 1 + n_examples + i, cols[s]).value = v
    # and a number typed as text, on the sheet only (the check must name it)
    for s in model.sources:
        v = "about 12" if s == num_source else edge_rows[1][s]
        if isinstance(v, dt.date):
            v = dt.datetime(v.year, v.month, v.day)
        ws.cell(head + 1 + n_examples + len(edge_rows), cols[s]).value = v
    wb.save(edge)
    edge_book = tmp / "edge-rows.xlsx"
    write_rows(edge_book, edge_rows)

    planted = tmp / "planted.xlsx"
    _plant_wrong_cached_value(results, planted)

    rich_dir = tmp / "rich"
    rich_dir.mkdir()
    rich_result, _ = make_result(rich_dir, name="rich.xlsx", writer=write_rich)
    rich = write_results(rich_result, in_place=True)

    profile = make_profile(tmp)
    outdir = tmp / "recalculated"
    converted = convert([results, pasted, planted, rich, edge], "xlsx", outdir, profile)
    pdf = convert([results], "pdf", tmp / "pdf", profile)[0]

    from engine.commands import score

    scored = tmp / "scored.xlsx"
    ctx = SimpleNamespace(stdout=io.StringIO(), stderr=io.StringIO(), written=[])
    assert (
        score.run(
            SimpleNamespace(book=str(new_book), results=str(results), sheet=None, out=str(scored)),
            ctx,
        )
        == 0
    )
    return SimpleNamespace(
        result=result,
        model=model,
        new_book=new_book,
        new_rows=new_rows,
        converted=dict(zip(["results", "pasted", "planted", "rich", "edge"], converted)),
        edge_book=edge_book,
        num_source=num_source,
        pdf=pdf,
        scored=scored,
        n_examples=n_examples,
    )


def test_model_covers_every_encoding_kind(lo):
    kinds = {e.kind for e in lo.model.encodings}
    assert {"number", "level", "flag", "trend"} <= kinds, kinds


def test_libreoffice_recalculates_on_load(lo):
    got = _predictions(lo.converted["planted"], 1, 1)[0]
    want = lo.result.model(lo.model.method).fitted[0]
    assert got != WRONG
    assert got == pytest.approx(want, rel=1e-9)


def test_example_rows_recalculated_equal_fitted_values(lo):
    got = _predictions(lo.converted["results"], 1, lo.n_examples)
    want = lo.result.model(lo.model.method).fitted[: lo.n_examples]
    np.testing.assert_allclose(got, want, rtol=1e-9)


def test_pasted_rows_recalculated_equal_engine_and_score_command(lo):
    got = _predictions(lo.converted["pasted"], 1 + lo.n_examples, len(lo.new_rows))
    engine = lo.model.predict(read_table(lo.new_book))
    np.testing.assert_allclose(got, engine, rtol=1e-9)
    ws = openpyxl.load_workbook(lo.scored, read_only=True)["TM Predictions"]
    head = next(ws.iter_rows(min_row=4, max_row=4, values_only=True))
    k = next(i for i, h in enumerate(head) if str(h).startswith("Prediction"))
    scored = np.array([r[k] for r in ws.iter_rows(min_row=5, values_only=True)], dtype=float)
    np.testing.assert_allclose(got, scored, rtol=1e-9)
    # the direct route from the study's coefficients agrees as well
    direct = ScoringModel.from_result(lo.result, lo.model.method).predict(read_table(lo.new_book))
    np.testing.assert_allclose(direct, engine, rtol=1e-12)


def _column(path: Path, heading: str, first: int, count: int) -> np.ndarray:
    ws = openpyxl.load_workbook(path, data_only=True)["TM Scoring"]
    head, cols = scoring_layout(ws)
    vals = [ws.cell(head + first + i, cols[heading]).value for i in range(count)]
    return np.array([np.nan if v in (None, "") else float(v) for v in vals])


def test_range_ends_recalculated_equal_the_engine_and_the_score_command(lo):
    from engine.report.scoring_model import RANGE_HIGH, RANGE_LOW

    n = len(lo.new_rows)
    low = _column(lo.converted["pasted"], RANGE_LOW, 1 + lo.n_examples, n)
    high = _column(lo.converted["pasted"], RANGE_HIGH, 1 + lo.n_examples, n)
    pred, e_low, e_high, _ = lo.model.predict_with_range(read_table(lo.new_book))
    np.testing.assert_allclose(low, e_low, rtol=1e-9)
    np.testing.assert_allclose(high, e_high, rtol=1e-9)
    # the definition: the prediction +- 1.96 (scipy's normal 97.5% point) x the root of the
    # model's cross-validated mean squared error, here on the original scale
    from scipy.stats import norm

    h = norm.ppf(0.975) * np.sqrt(lo.result.model(lo.model.method).cv_error)
    np.testing.assert_allclose(high - pred, h, rtol=1e-9)
    np.testing.assert_allclose(pred - low, h, rtol=1e-9)
    ws = openpyxl.load_workbook(lo.scored, read_only=True)["TM Predictions"]
    head = list(next(ws.iter_rows(min_row=4, max_row=4, values_only=True)))
    body = list(ws.iter_rows(min_row=5, values_only=True))
    for heading, want in ((RANGE_LOW, low), (RANGE_HIGH, high)):
        k = head.index(heading)
        np.testing.assert_allclose(np.array([r[k] for r in body], dtype=float), want, rtol=1e-9)
    # an example row's range is cached by us and recalculated alike
    ex_low = _column(lo.converted["results"], RANGE_LOW, 1, lo.n_examples)
    fitted = lo.result.model(lo.model.method).fitted[: lo.n_examples]
    np.testing.assert_allclose(ex_low, fitted - h, rtol=1e-9)


def test_unseen_levels_get_no_prediction_and_far_numbers_a_range_check(lo):
    # the sheet must not predict a level the model has no coefficient for (it would silently
    # be the reference level), and must flag a number beyond the fitted range, as the engine does
    ws = openpyxl.load_workbook(lo.converted["edge"], data_only=True)["TM Scoring"]
    head, cols = scoring_layout(ws)
    pc = next(c for h, c in cols.items() if h.startswith("Prediction of"))
    r0 = head + 1 + lo.n_examples
    assert ws.cell(r0, pc).value == "#N/A"
    assert "unseen level in" in ws.cell(r0, cols["Check"]).value
    assert "outside the fitted range in" in ws.cell(r0 + 1, cols["Check"]).value
    engine = lo.model.predict(read_table(lo.edge_book))
    assert ws.cell(r0 + 1, pc).value == pytest.approx(engine[1], rel=1e-9)
    # spaces around a known level, and its letter case, count for nothing, on the sheet as in
    # the engine's intake
    assert ws.cell(r0 + 2, pc).value == pytest.approx(engine[2], rel=1e-9)
    # (its check may only name its month: the fixture's design keeps two harvest months)
    assert not (ws.cell(r0 + 2, cols["Check"]).value or "").replace(
        f"month not seen in fitting in {get_column_letter(cols['harvest'])}", ""
    )
    # text where a number belongs is named, not silently taken as a missing cell
    num_letter = get_column_letter(cols[lo.num_source])
    assert f"not a number in {num_letter}" in ws.cell(r0 + 3, cols["Check"]).value
    assert "not a number" not in (ws.cell(r0 + 1, cols["Check"]).value or "")
    # the engine (and so `tamis score`) agrees: no prediction for the unseen level, a
    # prediction with an extrapolation caution for the far number
    assert np.isnan(engine[0])
    _, notes = lo.model.predict_with_notes(read_table(lo.edge_book))
    assert "level 'a level never seen' of " in notes[0] and notes[1] == ""
    cautions = lo.model.range_cautions(read_table(lo.edge_book))
    assert cautions[1].startswith(f"extrapolation: '{lo.num_source}'")


def test_rich_in_place_workbook_opens_in_libreoffice(lo):
    wb = openpyxl.load_workbook(lo.converted["rich"], read_only=True)
    assert wb.sheetnames[:3] == ["Lots", "Overview", "Lookup"]
    assert "TM Scoring" in wb.sheetnames


def test_pdf_export_shows_the_charts(lo):
    pdftotext = shutil.which("pdftotext")
    if pdftotext is None:
        pytest.skip("pdftotext (poppler-utils) is missing")
    text = subprocess.run([pdftotext, str(lo.pdf), "-"], capture_output=True, text=True).stdout
    for title in (
        "Coefficient path: lasso",
        "Coefficient path: ridge",
        "Cross-validation: lasso",
        "Cross-validation: forward-stepwise",
    ):
        assert title in text


def test_check_mark_column_on_the_recalculated_scoring_sheet(tmp_path):
    # a yes/no column written as "x" and blanks: on the sheet a blank cell takes the stored fill
    # (0, no) and "x" counts as yes, as in the engine; LibreOffice recalculates the formulas
    from engine.study import run_study
    from engine.study_spec import StudySpec

    rng = np.random.default_rng(4)
    n = 40
    x1 = rng.normal(size=n)
    mark = rng.random(n) < 0.5
    y = 1.0 + x1 + 2.0 * mark + rng.normal(scale=0.2, size=n)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["y", "x1", "checked"])
    for i in range(n):
        ws.append([float(y[i]), float(x1[i]), "x" if mark[i] else None])
    book = tmp_path / "marks.xlsx"
    wb.save(book)
    res = run_study(StudySpec(source=str(book), response="y", methods=("ols",), folds=4))
    results = write_results(res, out=tmp_path / "results.xlsx")
    model = load_scoring_model(results)
    new = [(0.3, "x"), (0.3, None), (-1.0, " X "), (2.0, None)]
    pasted = paste_after_examples(results, ["x1", "checked"], new, tmp_path / "pasted.xlsx")
    (out,) = convert([pasted], "xlsx", tmp_path / "lo", make_profile(tmp_path))
    got = _predictions(out, 6, len(new))
    m = res.models[0]
    want = [
        m.intercept + m.coefficients["x1"] * a + m.coefficients["checked"] * (b is not None)
        for a, b in new
    ]
    np.testing.assert_allclose(got, want, rtol=1e-9)
    assert model.encodings[[e.name for e in model.encodings].index("checked")].fill == 0.0


def test_in_place_results_in_a_1904_dated_workbook_recalculate_to_the_engine(tmp_path):
    # ECMA-376 Part 1, workbookPr date1904: such a workbook counts date serial numbers from
    # 1904-01-01, 1462 days after the 1900 system's day 0 (computed: date(1904, 1, 1) -
    # date(1899, 12, 30)). Our sheets go into the user's package, so the date origins and example
    # dates they store must count from the same day, or every trend would be off by 1462 days.
    # LibreOffice recalculates the sheet; its predictions must equal the engine's.
    from openpyxl.utils.datetime import CALENDAR_MAC_1904

    from engine.report.package_merge import uses_1904_dates
    from engine.report.scoring_model import DAYS_1900_TO_1904
    from engine.study import run_study
    from engine.study_spec import StudySpec

    assert DAYS_1900_TO_1904 == (dt.date(1904, 1, 1) - dt.date(1899, 12, 30)).days == 1462
    rng = np.random.default_rng(8)
    n = 60
    wb = openpyxl.Workbook()
    wb.epoch = CALENDAR_MAC_1904
    ws = wb.active
    ws.title = "Batches"
    ws.append(["made_on", "temp", "strength"])
    for i in range(n):
        day = dt.datetime(2024, 1, 1) + dt.timedelta(days=3 * i)
        temp = float(rng.normal(80, 5))
        ws.append([day, temp, 50 + 0.4 * temp + 0.05 * i + float(rng.normal(0, 0.5))])
        ws.cell(i + 2, 1).number_format = "yyyy-mm-dd"
    book = tmp_path / "batches.xlsx"
    wb.save(book)
    assert uses_1904_dates(book)
    spec = StudySpec(
        source=str(book), response="strength", methods=("ols",), folds=4, date_parts=True
    )
    res = run_study(spec)
    write_results(res, in_place=True)
    model = load_scoring_model(book)
    new = [(dt.datetime(2024, 7, 15), 78.0), (dt.datetime(2024, 2, 29), 85.5)]
    assert openpyxl.load_workbook(book, read_only=True).epoch == CALENDAR_MAC_1904
    pasted = paste_after_examples(book, ["made_on", "temp"], new, tmp_path / "pasted.xlsx")
    new_book = _new_rows_book(tmp_path / "new.xlsx", ["made_on", "temp"], new)
    (out,) = convert([pasted], "xlsx", tmp_path / "lo", make_profile(tmp_path))
    got = _predictions(out, 1, 5 + len(new))
    fitted = res.models[0].fitted[:5]
    np.testing.assert_allclose(got[:5], fitted, rtol=1e-9)
    np.testing.assert_allclose(got[5:], model.predict(read_table(new_book)), rtol=1e-9)
    # the fitted rows run from January to June: July has no coefficient of its own (it is read
    # as the reference month), which both the sheet's check and the engine's cautions say
    sheet = openpyxl.load_workbook(out, data_only=True)["TM Scoring"]
    head, cols = scoring_layout(sheet)
    july, february = (sheet.cell(head + 6 + i, cols["Check"]).value or "" for i in range(2))
    assert "month not seen in fitting in A" in july and "month" not in february
    cautions = model.range_cautions(read_table(new_book))
    assert "'made_on' in month 7, which no fitted row was in" in cautions[0]
    assert "month" not in cautions[1]


def test_a_blank_with_no_stored_fill_is_named_in_the_check(tmp_path):
    # rows with a gap were dropped when fitting (the default), so the sheet has no fill for a
    # blank: the row gets no prediction, and the Check column says which cell is empty, as
    # `tamis score` says "no usable value"; a whole empty row stays quiet
    from open_data import engel_book

    from engine.study import run_study
    from engine.study_spec import StudySpec

    book = engel_book(tmp_path / "engel.xlsx")
    res = run_study(StudySpec(source=str(book), response="foodexp", methods=("ols",), folds=5))
    results = write_results(res, out=tmp_path / "results.xlsx")
    pasted = paste_after_examples(
        results, ["income"], [(None,), (1500.0,)], tmp_path / "pasted.xlsx"
    )
    (out,) = convert([pasted], "xlsx", tmp_path / "lo", make_profile(tmp_path))
    ws = openpyxl.load_workbook(out, data_only=True)["TM Scoring"]
    head, cols = scoring_layout(ws)
    pc = next(c for h, c in cols.items() if h.startswith("Prediction of"))
    r0 = head + 6
    # the first pasted row is blank in its only column, so it is an empty row: nothing said
    assert ws.cell(r0, pc).value in (None, "") and not ws.cell(r0, cols["Check"]).value
    assert ws.cell(r0 + 1, pc).value == pytest.approx(
        res.models[0].intercept + res.models[0].coefficients["income"] * 1500.0, rel=1e-9
    )
    assert not ws.cell(r0 + 1, cols["Check"]).value
    # a model of two columns: one blank and one given
    wb = openpyxl.Workbook()
    sheet = wb.active
    sheet.append(["income", "household", "foodexp"])
    rng = np.random.default_rng(3)
    income = rng.uniform(400, 4000, 80)
    size = rng.integers(1, 7, 80).astype(float)
    for a, b in zip(income, size):
        sheet.append([float(a), float(b), float(100 + 0.4 * a + 30 * b + rng.normal(0, 20))])
    two = tmp_path / "two.xlsx"
    wb.save(two)
    res2 = run_study(StudySpec(source=str(two), response="foodexp", methods=("ols",), folds=5))
    results2 = write_results(res2, out=tmp_path / "results2.xlsx")
    pasted2 = paste_after_examples(
        results2, ["income", "household"], [(1500.0, None)], tmp_path / "pasted2.xlsx"
    )
    (out2,) = convert([pasted2], "xlsx", tmp_path / "lo2", make_profile(tmp_path / "p2"))
    ws2 = openpyxl.load_workbook(out2, data_only=True)["TM Scoring"]
    head2, cols2 = scoring_layout(ws2)
    pc2 = next(c for h, c in cols2.items() if h.startswith("Prediction of"))
    letter = get_column_letter(cols2["household"])
    assert ws2.cell(head2 + 6, pc2).value == "#N/A"
    assert f"no value in {letter}" in ws2.cell(head2 + 6, cols2["Check"]).value


def test_filled_and_unread_cells_on_the_recalculated_scoring_sheet(tmp_path):
    # With the "fill" policy a cell intake reads as missing (blank, "n/a") takes the stored
    # fill on the sheet as in `tamis score`, and the check says so; text the formulas do not
    # read ("12.5 kg" in a number column, "maybe" in a yes/no column) gets no prediction and
    # is named, never a silent fill. LibreOffice recalculates; the Python mirror of each
    # formula (ScoringModel.cell_value) must give the same.
    from engine.study import run_study
    from engine.study_spec import StudySpec

    rng = np.random.default_rng(12)
    n = 48
    size = rng.normal(20, 4, size=n)
    express = rng.random(n) < 0.4
    y = 5.0 + 0.8 * size + 6.0 * express + rng.normal(scale=0.5, size=n)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["y", "size", "express"])
    for i in range(n):
        ws.append(
            [
                float(y[i]),
                None if i % 11 == 3 else float(size[i]),
                None if i % 13 == 5 else ("yes" if express[i] else "no"),
            ]
        )
    book = tmp_path / "parcels.xlsx"
    wb.save(book)
    res = run_study(
        StudySpec(source=str(book), response="y", methods=("ols",), folds=4, missing="fill")
    )
    results = write_results(res, out=tmp_path / "results.xlsx")
    model = load_scoring_model(results)
    fills = {e.source: e.fill for e in model.encodings if e.kind in ("number", "flag")}
    assert fills["size"] is not None and fills["express"] is not None
    new = [
        (18.0, "yes"),
        ("18.5 kg", "yes"),
        (None, "no"),
        ("n/a", "no"),
        (21.0, "maybe"),
        (21.0, None),
    ]
    pasted = paste_after_examples(results, ["size", "express"], new, tmp_path / "pasted.xlsx")
    (out,) = convert([pasted], "xlsx", tmp_path / "lo", make_profile(tmp_path))
    got = _predictions(out, 6, len(new))
    mirror = [model.sheet_prediction(model.row_values({"size": a, "express": b})) for a, b in new]
    np.testing.assert_allclose(got, mirror, rtol=1e-9)
    assert np.isnan(got[1]) and np.isnan(got[4])
    # the filled rows equal the score command's route (intake reads "n/a" as missing)
    new_book = _new_rows_book(tmp_path / "new.xlsx", ["size", "express"], new)
    engine = model.predict(read_table(new_book))
    np.testing.assert_allclose(got[[0, 2, 3, 5]], engine[[0, 2, 3, 5]], rtol=1e-9)
    sheet = openpyxl.load_workbook(out, data_only=True)["TM Scoring"]
    head, cols = scoring_layout(sheet)
    checks = [sheet.cell(head + 6 + i, cols["Check"]).value or "" for i in range(len(new))]
    size_col = get_column_letter(cols["size"])
    express_col = get_column_letter(cols["express"])
    assert checks[0] == ""
    assert f"not a number in {size_col}" in checks[1]
    assert f"{size_col} empty: the stored fill used" in checks[2]
    assert f"{size_col} empty: the stored fill used" in checks[3]
    assert f"not yes/no in {express_col}" in checks[4]
    assert f"{express_col} empty: the stored fill used" in checks[5]


def test_unread_cells_without_a_stored_fill_are_named_on_the_recalculated_sheet(tmp_path):
    # Under the "drop" policy nothing is stored to fill a cell: a blank, "n/a" or "?" in a
    # number column gives no prediction and the Check says "no value" (a "?" is not taken as
    # a wildcard); "12 kg" is named as not a number. LibreOffice recalculates.
    from engine.study import run_study
    from engine.study_spec import StudySpec

    rng = np.random.default_rng(13)
    n = 40
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["y", "size", "grade"])
    for _ in range(n):
        size = float(rng.normal(20, 3))
        ws.append([5.0 + 0.7 * size + float(rng.normal(0, 0.3)), size, str(rng.choice(["a", "b"]))])
    book = tmp_path / "crates.xlsx"
    wb.save(book)
    res = run_study(StudySpec(source=str(book), response="y", methods=("ols",), folds=4))
    results = write_results(res, out=tmp_path / "results.xlsx")
    new = [(None, "a"), ("n/a", "a"), ("?", "b"), ("12 kg", "b"), (20.0, "x")]
    pasted = paste_after_examples(results, ["size", "grade"], new, tmp_path / "pasted.xlsx")
    (out,) = convert([pasted], "xlsx", tmp_path / "lo", make_profile(tmp_path))
    got = _predictions(out, 6, len(new))
    assert np.isnan(got).all()
    sheet = openpyxl.load_workbook(out, data_only=True)["TM Scoring"]
    head, cols = scoring_layout(sheet)
    checks = [sheet.cell(head + 6 + i, cols["Check"]).value or "" for i in range(len(new))]
    a = get_column_letter(cols["size"])
    assert all(f"no value in {a}" in c for c in checks[:3]), checks
    assert f"not a number in {a}" in checks[3] and "unseen level in" in checks[4]


def test_a_check_split_into_helper_cells_recalculates_to_the_same_words(tmp_path):
    # a wide model's Check joins one helper cell per column (a formula must stay within
    # 8,192 characters); LibreOffice recalculates the helpers and the joined Check
    from engine.study import run_study
    from engine.study_spec import StudySpec

    p = 40
    book = write_wide_book(tmp_path / "wide.xlsx", 120, p, blank_every=29, seed=6)
    res = run_study(
        StudySpec(source=str(book), response="y", methods=("ols",), folds=4, missing="fill")
    )
    results = write_results(res, out=tmp_path / "results.xlsx")
    row = [0.1] * p
    row[3] = None  # filled
    row[7] = "lots"  # not a number
    pasted = paste_after_examples(
        results, [f"x{j}" for j in range(p)], [tuple(row)], tmp_path / "pasted.xlsx"
    )
    (out,) = convert([pasted], "xlsx", tmp_path / "lo", make_profile(tmp_path))
    sheet = openpyxl.load_workbook(out, data_only=True)["TM Scoring"]
    head, cols = scoring_layout(sheet)
    assert "check: x3" in cols  # the split happened
    check = sheet.cell(head + 6, cols["Check"]).value or ""
    x3, x7 = get_column_letter(cols["x3"]), get_column_letter(cols["x7"])
    assert check == f"{x3} empty: the stored fill used; not a number in {x7} (type it as a number)"


def test_a_level_spelled_like_a_placeholder_and_a_number_in_a_yes_no_column(tmp_path):
    # "none" is a real level of 'promo' (intake keeps every word of a category as a label), so
    # the Check never calls it a missing value; a 2 in a yes/no column is no yes/no value: no
    # prediction and a Check that says so, as `tamis score` gives none (common practice:
    # yes/no coded 0/1)
    from engine.study import run_study
    from engine.study_spec import StudySpec

    rng = np.random.default_rng(8)
    wb = openpyxl.Workbook()
    sheet = wb.active
    sheet.append(["y", "promo", "holiday", "x"])
    for i in range(60):
        promo = ["none", "flyer", "loyalty"][i % 3]
        holiday = "yes" if i % 4 == 0 else "no"
        x = float(rng.normal())
        y = 5 + 2 * (promo == "flyer") + 3 * (holiday == "yes") + x + rng.normal(0, 0.1)
        sheet.append([float(y), promo, holiday, x])
    book = tmp_path / "promo.xlsx"
    wb.save(book)
    res = run_study(StudySpec(source=str(book), response="y", methods=("ols",), folds=5))
    results = write_results(res, out=tmp_path / "results.xlsx")
    rows = [("none", "no", 0.5), ("flyer", 2, 0.5), ("none", 1, 0.5)]
    pasted = paste_after_examples(
        results, ["promo", "holiday", "x"], rows, tmp_path / "pasted.xlsx"
    )
    (out,) = convert([pasted], "xlsx", tmp_path / "lo", make_profile(tmp_path))
    ws = openpyxl.load_workbook(out, data_only=True)["TM Scoring"]
    head, cols = scoring_layout(ws)
    pc = next(c for h, c in cols.items() if h.startswith("Prediction of"))
    r0 = head + 6
    checks = [ws.cell(r0 + i, cols["Check"]).value or "" for i in range(3)]
    assert checks[0] == "" and checks[2] == "", checks
    assert ws.cell(r0 + 1, pc).value == "#N/A"
    assert "not yes/no in" in checks[1] and checks[1].endswith("(0 or 1)")  # no stray "; "
    # `tamis score` on the same rows: the same predictions, and none for the 2 either
    new = _new_rows_book(tmp_path / "new.xlsx", ["promo", "holiday", "x"], rows)
    pred, notes = load_scoring_model(results).predict_with_notes(read_table(new))
    assert np.isnan(pred[1]) and "holiday" in notes[1]
    m = res.models[0]
    by_hand = m.intercept + m.coefficients["x"] * 0.5 + m.coefficients.get("promo=none", 0.0)
    assert pred[0] == pytest.approx(by_hand, rel=1e-9)
    for i in (0, 2):
        assert ws.cell(r0 + i, pc).value == pytest.approx(pred[i], rel=1e-9)
