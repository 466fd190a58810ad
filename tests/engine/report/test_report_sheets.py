"""What the result sheets hold: names, charts pointing at the right ranges, zeros marked, inert
user text, cached values present, fitted values by source row."""

from __future__ import annotations

import re
import zipfile

import numpy as np
import openpyxl
import pytest
from study_fixture import make_result

from engine.report import SHEET_NAMES, write_results


@pytest.fixture(scope="module")
def written(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("sheets")
    result, rows = make_result(tmp)
    out = write_results(result, out=tmp / "results.xlsx")
    return result, out


def test_sheet_names_are_plain_with_one_prefix(written):
    _, out = written
    names = openpyxl.load_workbook(out, read_only=True).sheetnames
    ours = [n for n in names if n.startswith("TM ")]
    assert ours == list(SHEET_NAMES)
    assert all(re.fullmatch(r"[A-Za-z ]+", n) for n in ours)


def _charts(out):
    with zipfile.ZipFile(out) as zf:
        return {n: zf.read(n).decode() for n in zf.namelist() if n.startswith("xl/charts/chart")}


def test_path_charts_reference_the_penalty_column_and_mark_the_choice(written):
    result, out = written
    wb = openpyxl.load_workbook(out)
    ws = wb["TM Path"]
    charts = [c for c in _charts(out).values() if "Coefficient path: lasso" in c]
    assert len(charts) == 1
    refs = re.findall(r"<c:f>(.*?)</c:f>", charts[0])
    xs = [r for r in refs if "$A$" in r]
    first = re.search(r"\$A\$(\d+):\$A\$(\d+)", xs[0])
    head = int(first.group(1)) - 1
    assert ws.cell(head, 1).value == "Penalty"
    lasso = result.model("lasso")
    assert int(first.group(2)) - head == len(lasso.path)
    assert ws.cell(head + 1, 1).value == pytest.approx(lasso.path.penalties[0])
    assert "log" in charts[0] and '<c:logBase val="10"/>' in charts[0]
    assert "chosen penalty" in charts[0]
    # every line has its own look (colour and line style), and the table's columns come in
    # the order of the lines: those kept at the chosen penalty first
    looks = re.findall(
        r'<c:spPr><a:ln w="\d+"><a:solidFill><a:srgbClr val="(\w+)"/></a:solidFill>'
        r'(?:<a:prstDash val="(\w+)"/>)?',
        charts[0],
    )
    drawn = [look for look in looks if look[0] != "000000"]  # the marker line is black
    assert len(drawn) >= 2 and len(set(drawn)) == len(drawn)
    names = [ws.cell(head, c).value for c in range(5, 5 + len(drawn))]
    kept = set(lasso.selected)
    firsts = [n in kept for n in names]
    assert firsts == sorted(firsts, reverse=True)  # kept columns before the others


def test_path_lines_come_kept_first_then_by_entry():
    # a path where column 1 enters and leaves again: at the chosen (last) penalty columns
    # 0 and 2 are kept, so they are drawn first, in their order of entry, column 1 after
    from engine.report.sheets.path import _charted

    path = type("Path", (), {})()
    path.std_coefs = np.array(
        [[0, 0, 0], [0.5, 0, 0], [0.6, 0.2, 0], [0.7, 0, 0.1], [0.8, 0, 0.3]], dtype=float
    )
    ever = (path.std_coefs != 0).any(axis=0)
    assert _charted(path, ["a", "b", "c"], ever, 4) == [0, 2, 1]


def test_validation_chart_has_custom_error_bars_on_the_se_column(written):
    result, out = written
    chart = next(c for c in _charts(out).values() if "Cross-validation: lasso" in c)
    assert "<c:errBars>" in chart and '<c:errBarType val="both"/>' in chart
    assert '<c:errValType val="cust"/>' in chart
    plus = re.search(r"<c:plus>.*?<c:f>(.*?)</c:f>", chart, re.S).group(1)
    assert plus.startswith("'TM Validation'!$C$")
    wb = openpyxl.load_workbook(out)
    row = int(re.search(r"\$C\$(\d+)", plus).group(1))
    assert wb["TM Validation"].cell(row - 1, 3).value == "Standard error"
    se = result.model("lasso").curve.se
    assert wb["TM Validation"].cell(row, 3).value == pytest.approx(se[0])
    assert "smallest error" in chart and "one standard error" in chart


def test_zero_coefficients_are_dots_and_kept_column_names_methods(written):
    result, out = written
    ws = openpyxl.load_workbook(out)["TM Coefficients"]
    heads = [c.value for c in ws[5]]
    step_col = heads.index("forward-stepwise") + 1
    step = result.model("forward-stepwise")
    zeros = [k for k, v in step.coefficients.items() if v == 0.0]
    assert zeros, "the stepwise fit should leave at least one column out"
    for r in range(7, 7 + len(result.design.names)):
        name = ws.cell(r, 1).value
        cell = ws.cell(r, step_col)
        if name in zeros:
            assert cell.value == 0 and '"·"' in cell.number_format and cell.font.i
        else:
            assert cell.value == pytest.approx(step.coefficients[name])
            kept = ws.cell(r, 4).value
            assert "forward-stepwise" in kept


def test_user_text_is_written_inert(tmp_path):
    result, _ = make_result(tmp_path)
    evil = "=cmd|' /C calc'!A0"
    d = result.design
    j = d.names.index("density")
    d.names[j] = evil
    from dataclasses import replace

    d.encodings[j] = replace(d.encodings[j], name=evil, source=evil)
    for m in result.models:
        for table in (m.coefficients, m.std_coefficients):
            table[evil] = table.pop("density")
    out = write_results(result, out=tmp_path / "r.xlsx")
    with zipfile.ZipFile(out) as zf:
        for n in zf.namelist():
            if n.startswith("xl/worksheets/sheet"):
                xml = zf.read(n).decode()
                assert "cmd|" not in "".join(re.findall(r"<f>(.*?)</f>", xml))
    ws = openpyxl.load_workbook(out)["TM Coefficients"]
    cells = [c for row in ws.iter_rows() for c in row if c.value == evil]
    assert cells and all(c.data_type == "s" for c in cells)


def test_fitted_sheet_lists_source_rows_and_residuals(written):
    result, out = written
    ws = openpyxl.load_workbook(out, read_only=True)["TM Fitted"]
    rows = list(ws.iter_rows(min_row=5, values_only=True))
    d = result.design
    assert [int(r[0]) for r in rows] == list(d.row_numbers)
    lasso = result.model("lasso")
    k = [c for c in next(ws.iter_rows(min_row=4, max_row=4, values_only=True))].index(
        "Fitted (lasso)"
    )
    fit = np.array([r[k] for r in rows], dtype=float)
    res = np.array([r[k + 1] for r in rows], dtype=float)
    np.testing.assert_allclose(fit, lasso.fitted, rtol=1e-14)
    np.testing.assert_allclose(res, d.y - lasso.fitted, rtol=1e-9, atol=1e-12)


def test_formulas_carry_cached_numbers(written):
    result, out = written
    ws = openpyxl.load_workbook(out, data_only=True)["TM Scoring"]
    header = next(
        r
        for r in range(1, 40)
        if ws.cell(r, 1).value == "altitude" or str(ws.cell(r, 1).value) in result.design.names
    )
    preds = [c.value for c in next(ws.iter_rows(min_row=header, max_row=header))]
    col = next(i for i, v in enumerate(preds) if str(v).startswith("Prediction"))
    values = [ws.cell(header + 1 + i, col + 1).value for i in range(5)]
    assert all(isinstance(v, float) for v in values)


def test_summary_names_source_methods_and_cautions(written):
    result, out = written
    ws = openpyxl.load_workbook(out, read_only=True)["TM Summary"]
    text = " ".join(str(v) for row in ws.iter_rows(values_only=True) for v in row if v is not None)
    for needle in (
        "Lots",
        "score",
        "lasso",
        "forward-stepwise",
        "Seed",
        "causes" if False else "does not",
        "review practice",
        "extrapolate",
    ):
        assert needle in text


def test_a_model_without_columns_scores_its_constant(tmp_path):
    """Invariant: with every coefficient zero the prediction is the intercept, with no formula
    referring to its own cell."""
    result, _ = make_result(tmp_path)
    lasso = result.model("lasso")
    for k in lasso.coefficients:
        lasso.coefficients[k] = 0.0
        lasso.std_coefficients[k] = 0.0
    lasso.intercept = float(result.design.y.mean())
    lasso.cv_error = 0.0  # make it the scoring model
    out = write_results(result, out=tmp_path / "null.xlsx")
    ws = openpyxl.load_workbook(out)["TM Scoring"]
    head = next(r for r in range(1, 40) if str(ws.cell(r, 1).value).startswith("Prediction of"))
    formula = ws.cell(head + 1, 1).value
    assert formula.startswith("=") and "A" + str(head + 1) not in formula
    cached = openpyxl.load_workbook(out, data_only=True)["TM Scoring"].cell(head + 1, 1).value
    assert cached == pytest.approx(lasso.intercept)


def test_numbers_show_six_significant_digits_and_keep_them_all(written):
    # display only: the cell holds the full value (common practice for result tables)
    from engine.report.sheets.cells import Formats

    result, out = written
    ws = openpyxl.load_workbook(out)["TM Summary"]
    cells = [c for row in ws.iter_rows() for c in row if isinstance(c.value, float)]
    cv = next(c for c in cells if c.value == result.models[0].cv_error)
    digits = len(cv.number_format.partition(".")[2])
    shown = f"{cv.value:.{digits}f}"
    assert len(shown.replace(".", "").replace("-", "").lstrip("0")) == 6
    assert cv.value == result.models[0].cv_error  # nothing rounded in the cell
    fm = Formats(type("Book", (), {"add_format": lambda self, d: d})())
    assert fm.digits(1506.6626601456)["num_format"] == "0.00"
    assert fm.digits(0.000380649)["num_format"] == "0.000000000"
    assert fm.digits(12.0) is fm.number and fm.digits(3.2e-7) is fm.number


def test_predictions_on_the_scoring_sheet_read_alike(written):
    # one format per column, six significant digits of a typical prediction (the convention of
    # the result tables above, common practice); the cells keep every digit
    from engine.report import ScoringModel

    result, out = written
    model = ScoringModel.from_result(result)
    ws = openpyxl.load_workbook(out)["TM Scoring"]
    head, col = next(
        (r, c)
        for r in range(1, 60)
        for c in range(1, 40)
        if str(ws.cell(r, c).value).startswith("Prediction of")
    )
    formats = {ws.cell(head + i, col + j).number_format for i in range(1, 6) for j in range(3)}
    assert len(formats) == 1
    decimals = len(formats.pop().partition(".")[2])
    size = model.typical_size
    assert len(f"{size:.{decimals}f}".replace(".", "").lstrip("0")) == 6
    assert ws.cell(head + 1, col).font.b  # the prediction itself stays bold


def test_typical_size_of_a_prediction():
    from engine.report import ScoringModel

    def model(intercept, cv_error, smearing=None):
        return ScoringModel.from_parts(
            "lasso", "y", intercept, [], {}, {}, {}, {}, cv_error, None, smearing
        )

    assert model(1506.66, 25.0).typical_size == pytest.approx(1506.66)
    # a response centred near 0: the error's size sets the decimals, not the tiny centre
    assert model(0.0001, 2500.0).typical_size == pytest.approx(50.0)
    # ln scale: the low end of the 95% range at the centre, in the response's units, so a
    # response spanning factors keeps the digits of its smaller predictions
    h = 1.959963984540054 * 0.2
    assert model(2.0, 0.04, smearing=1.02).typical_size == pytest.approx(np.exp(2.0 - h))


def test_each_coefficient_says_what_one_unit_of_its_column_is(written):
    # a colleague without Tamis reads a category's coefficient against its reference level
    # and a date's per day from its first day (common practice for dummy and trend coding)
    from engine.report.sheets.coefficients import reads_as

    result, out = written
    ws = openpyxl.load_workbook(out)["TM Coefficients"]
    head = next(r for r in range(1, 20) if ws.cell(r, 3).value == "One unit is")
    shown = {ws.cell(r, 1).value: ws.cell(r, 3).value for r in range(head + 2, ws.max_row + 1)}
    encs = {e.name: e for e in result.design.encodings}
    for name, enc in encs.items():
        assert shown[name] == reads_as(enc)
    level = next(e for e in encs.values() if e.kind == "level")
    assert shown[level.name] == f"'{level.level}' against '{level.reference}'"
    trend = next(e for e in encs.values() if e.kind == "trend")
    assert shown[trend.name] == f"per day from {trend.origin}"
    assert shown["organic"] == "yes against no"


def test_month_and_weekday_levels_read_by_name():
    from engine.design import Encoding
    from engine.report.sheets.coefficients import reads_as

    month = Encoding("d:month=3.0", "d", "A", "month", level="3.0", reference="1.0")
    assert reads_as(month) == "March against January"
    day = Encoding("d:weekday=7", "d", "A", "weekday", level="7", reference="1")
    assert reads_as(day) == "Sunday against Monday"


def test_a_path_of_many_lines_keeps_a_legend_for_the_first_ones(tmp_path):
    # more lines than a legend can hold: the legend names the first LEGEND_UP_TO (the columns
    # kept at the chosen penalty first) and the chosen-penalty line; the others' entries are
    # deleted (ECMA-376 Part 1, 21.2.2.94 legendEntry with delete), the table names them all
    from engine.report.sheets.path import LEGEND_UP_TO
    from engine.study import run_study
    from engine.study_spec import StudySpec

    rng = np.random.default_rng(2)
    wb = openpyxl.Workbook()
    ws = wb.active
    p = 45
    ws.append(["y"] + [f"x{j}" for j in range(p)])
    for _ in range(90):
        x = rng.normal(size=p)
        ws.append([float(x @ np.linspace(1, 0.2, p) + rng.normal())] + [float(v) for v in x])
    wb.save(tmp_path / "many.xlsx")
    res = run_study(
        StudySpec(source=str(tmp_path / "many.xlsx"), response="y", methods=("lasso",), folds=5)
    )
    out = write_results(res, out=tmp_path / "results.xlsx")
    chart = next(c for c in _charts(out).values() if "Coefficient path: lasso" in c)
    lines = chart.count("<c:ser>") - 1  # the chosen-penalty line is the last series
    assert lines > LEGEND_UP_TO
    assert "<c:legend>" in chart and '<c:legendPos val="r"/>' in chart
    deleted = {
        int(i) for i in re.findall(r'<c:legendEntry><c:idx val="(\d+)"/><c:delete val="1"/>', chart)
    }
    assert deleted == set(range(LEGEND_UP_TO, lines))
    # the table's coefficients to six significant digits of the largest, a zero as 0
    sheet = openpyxl.load_workbook(out)["TM Path"]
    head = next(r for r in range(1, 80) if sheet.cell(r, 1).value == "Penalty")
    fmt = sheet.cell(head + 1, 5).number_format
    assert re.fullmatch(r"0\.0+;-0\.0+;0", fmt), fmt


def test_the_post_selection_caution_sits_above_the_standard_errors(written):
    # the caution where a reader reads the numbers (common practice: standard errors after
    # selection ignore the selection step), not only among the Summary's cautions
    result, out = written
    ws = openpyxl.load_workbook(out)["TM Coefficients"]
    head = next(r for r in range(1, 20) if ws.cell(r, 3).value == "One unit is")
    se_col = next(
        c for c in range(1, ws.max_column + 1)
        if str(ws.cell(head, c).value).endswith("robust standard error")
    )  # fmt: skip
    assert ws.cell(head - 1, se_col).value.startswith("standard errors after selection")
