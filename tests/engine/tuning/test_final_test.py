"""Rows held back as a final test (StudySpec.test_share, `--hold-back`).

Checks: the test rows never reach a fit (the models equal fits on the other rows alone); each
model's test error and R squared equal scikit-learn's mean_squared_error and r2_score on those
rows (general-purpose reference library); with a time order the test rows are the latest and
rows of one time stay together; with groups whole groups are held back; refusals name the sheet.
"""

from __future__ import annotations

import numpy as np
import openpyxl
import pytest
from sklearn.metrics import mean_squared_error, r2_score

from engine.errors import InputProblem
from engine.study import run_study
from engine.study_spec import StudySpec


def _book(path, n=120, seed=3):
    rng = np.random.default_rng(seed)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Weeks"
    ws.append(["week", "store", "x1", "x2", "x3", "y"])
    for i in range(n):
        x = rng.normal(size=3)
        y = 4.0 + 2.0 * x[0] - 1.0 * x[2] + rng.normal(0, 0.5)
        ws.append([i // 4, f"s{i % 8}", *map(float, x), float(y)])
    wb.save(path)
    return path


def _spec(book, **kw):
    kw.setdefault("methods", ("ols", "lasso"))
    kw.setdefault("folds", 5)
    return StudySpec(
        source=str(book), response="y", candidates=("x1", "x2", "x3"), test_share=0.25, **kw
    )


def test_test_rows_are_unseen_and_measured_like_sklearn(tmp_path):
    from sklearn.linear_model import LinearRegression

    book = _book(tmp_path / "w.xlsx")
    res = run_study(_spec(book))
    test = set(res.test_rows.tolist())
    assert len(test) == 30 and not test & set(res.design.row_numbers.tolist())
    assert res.design.n_rows == 90
    raw = openpyxl.load_workbook(book).active
    rows = {r: [raw.cell(r, c).value for c in range(3, 7)] for r in range(2, 122)}
    train = np.array([rows[r] for r in res.design.row_numbers])
    held = np.array([rows[r] for r in res.test_rows])
    # least squares on the other rows alone (the test rows never reach a fit)
    ref = LinearRegression().fit(train[:, :3], train[:, 3])
    ols = res.model("ols")
    np.testing.assert_allclose(
        [ols.coefficients[c] for c in ("x1", "x2", "x3")], ref.coef_, rtol=1e-10
    )
    for m in res.models:
        pred = m.intercept + held[:, :3] @ np.array([m.coefficients[c] for c in ("x1", "x2", "x3")])
        assert m.test_error == pytest.approx(mean_squared_error(held[:, 3], pred), rel=1e-12)
        assert m.test_r2 == pytest.approx(r2_score(held[:, 3], pred), rel=1e-12)
    doc = res.to_json()
    assert doc["test_rows"] == 30 and "test_error" in doc["models"][0]


def test_with_a_time_order_the_latest_rows_are_held_back_whole_times_together(tmp_path):
    book = _book(tmp_path / "w.xlsx")
    res = run_study(_spec(book, time_order="week", scheme="time"))
    # 4 rows a week: 30 test rows would cut week 22 in two; its rows all go to the test
    weeks_test = {(r - 2) // 4 for r in res.test_rows}
    weeks_fit = {(r - 2) // 4 for r in res.design.row_numbers}
    assert min(weeks_test) > max(weeks_fit)
    assert len(res.test_rows) == 32


def test_with_groups_whole_groups_are_held_back(tmp_path):
    book = _book(tmp_path / "w.xlsx")
    res = run_study(_spec(book, group="store", scheme="grouped", folds=3))
    stores_test = {(r - 2) % 8 for r in res.test_rows}
    stores_fit = {(r - 2) % 8 for r in res.design.row_numbers}
    assert not stores_test & stores_fit and len(res.test_rows) >= 30


@pytest.mark.parametrize(
    "share, fragment",
    [(0.02, "fewer than 5"), (0.6, "between 0 and 0.5")],
)
def test_too_small_or_too_large_a_share_is_refused(tmp_path, share, fragment):
    book = _book(tmp_path / "w.xlsx", n=60)
    with pytest.raises(InputProblem, match=fragment):
        run_study(_spec(book).replace(test_share=share))


def test_same_seed_same_test_rows_and_the_cli_option(tmp_path):
    import io
    import json

    from engine import cli
    from engine.context import Context

    book = _book(tmp_path / "w.xlsx")
    a = run_study(_spec(book, seed=9))
    b = run_study(_spec(book, seed=9))
    c = run_study(_spec(book, seed=10))
    assert a.test_rows.tolist() == b.test_rows.tolist() != c.test_rows.tolist()
    out, err = io.StringIO(), io.StringIO()
    argv = ["fit", str(book), "--response", "y", "--hold-back", "0.25", "--methods", "lasso",
            "--folds", "5", "--seed", "9", "--json"]  # fmt: skip
    assert cli.main(argv, Context(stdout=out, stderr=err, config_dir=tmp_path)) == 0, err.getvalue()
    doc = json.loads(out.getvalue())
    assert doc["test_rows"] == 30 and doc["spec"]["test_share"] == 0.25


def test_a_column_constant_on_the_rows_left_goes_with_its_products(tmp_path):
    # 'open' is 1 in every week but the last ones, which the time order holds back: constant
    # on the rows left, so left out, and its product with x1 (equal to x1 there) with it
    rng = np.random.default_rng(5)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["week", "x1", "x2", "open", "y"])
    for i in range(80):
        x1, x2 = rng.normal(size=2)
        ws.append([i, float(x1), float(x2), 1.0 if i < 60 else 0.0, float(x1 + rng.normal(0, 0.3))])
    wb.save(tmp_path / "o.xlsx")
    spec = StudySpec(
        source=str(tmp_path / "o.xlsx"), response="y", candidates=("x1", "x2", "open"),
        time_order="week", scheme="time", folds=4, methods=("ols",), test_share=0.25,
        interactions=(("x1", "open"),),
    )  # fmt: skip
    res = run_study(spec)
    assert res.design.names == ["x1", "x2"]
    assert {"open", "x1 × open"} <= set(res.design.dropped_columns)
    assert any("x1 × open" in w and "multiplies" in w for w in res.warnings)
    assert res.models[0].test_error is not None


def test_whole_times_nearest_the_share_and_never_more_than_half(tmp_path):
    # quarters holding 46, 11, 67 and 5 rows: 20% of 129 rows is 26; the latest quarter (5
    # rows) is nearer that than the latest two (72 rows, more than half, which the share's own
    # limit of 0.5 forbids); a test of one time holding more than half is refused
    from types import SimpleNamespace

    from engine.tuning.final_test import _test_index

    order = np.repeat([1.0, 2.0, 3.0, 4.0], [46, 11, 67, 5])
    design = SimpleNamespace(n_rows=order.size, order=order, groups=None)
    spec = SimpleNamespace(seed=0)
    test = _test_index(design, spec, 26)
    assert test.size == 5 and set(order[test]) == {4.0}
    lopsided = np.repeat([1.0, 2.0], [20, 100])
    design2 = SimpleNamespace(n_rows=lopsided.size, order=lopsided, groups=None)
    assert _test_index(design2, spec, 24).size == 0  # the caller refuses, naming the share


def test_a_final_test_of_whole_times_that_cannot_be_near_the_share_is_refused(tmp_path):
    book = _book(tmp_path / "w.xlsx")
    wb = openpyxl.load_workbook(book)
    ws = wb.active
    for r in range(2, 122):  # 100 of the 120 rows in the last week: half at most is 60
        ws.cell(r, 1).value = 0 if r < 22 else 1
    wb.save(book)
    with pytest.raises(InputProblem, match="final test of whole times near 25% of the 120 rows"):
        run_study(_spec(book, time_order="week", scheme="time", folds=2))


def test_whole_groups_nearest_the_share_whatever_the_seed():
    # groups of 60, 15, 15, 15 and 15 rows, 24 asked: a group that would take the test past
    # half the rows, or farther from the share, is passed over whichever comes first
    from types import SimpleNamespace

    from engine.tuning.final_test import _test_index

    groups = np.repeat(np.array(["big", "a", "b", "c", "d"]), [60, 15, 15, 15, 15])
    design = SimpleNamespace(n_rows=groups.size, order=None, groups=groups)
    for seed in range(12):
        test = _test_index(design, SimpleNamespace(seed=seed), 24)
        assert test.size in (15, 30) and "big" not in set(groups[test]), seed
