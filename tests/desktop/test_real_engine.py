"""The window over the real engine: run, drag the path cursor, cancel a long run, save and read back."""

from __future__ import annotations

import shutil
import time
from pathlib import Path

import numpy as np
import pytest
from conftest import TableCalls, simulated_table, write_book
from openpyxl import load_workbook
from PySide6.QtCore import Qt
from test_main_window import StandIn, make_window, open_and_wait, wait_idle, window_with_a_study

from desktop.engine_calls import EngineCalls
from desktop.roles import Role
from engine.report import read_settings

DEMO = Path(__file__).resolve().parents[2] / "demo" / "tamis_demo.xlsx"


def test_real_run_cursor_and_save_in_place(qtbot, store, book):
    settings = {"methods": ["lasso"], "folds": 5, "n_penalties": 50}
    w = window_with_a_study(qtbot, store, book, EngineCalls(), settings)
    res = w.result
    lasso = res.model("lasso")
    # simulated truth: x0, x1, x2 carry the signal, so the lasso keeps them
    assert {"x0", "x1", "x2"} <= set(lasso.selected)
    # drag the cursor to the strongest penalty end: nothing is selected there
    chart = w.results.path_chart
    chart.move_cursor_to(float(chart.x_values()[0]))
    assert w.results.selected_at_cursor() == []
    # and to the weakest end: the set agrees with the engine's own path there
    chart.move_cursor_to(float(chart.x_values()[-1]))
    names = res.design.names
    expect = {names[j] for j in np.flatnonzero(lasso.path.std_coefs[-1])}
    assert set(w.results.selected_at_cursor()) == expect
    sheets_before = load_workbook(book, read_only=True).sheetnames
    with qtbot.waitSignal(w.saved, timeout=120_000):
        assert w.save_in_place()
    wait_idle(qtbot, w)
    assert w.last_message.tone == "info", w.last_message
    sheets_after = load_workbook(book, read_only=True).sheetnames
    assert sheets_after[: len(sheets_before)] == sheets_before and len(sheets_after) > len(
        sheets_before
    )
    spec = read_settings(book)
    assert spec.response == "response_y" and spec.methods == ("lasso",)
    assert spec.sheet == "Lots" and spec.header_row == 3


def test_real_cancel_of_a_long_stability_run_stops_within_a_second(qtbot, store):
    """Big simulated data with many stability half-samples; Stop must end the thread within 1 s."""
    table = simulated_table(n=3000, p=150, seed=3)
    w = make_window(qtbot, store, TableCalls(table))
    open_and_wait(qtbot, w, "big.xlsx")
    w.ledger.model.set_roles({"response_y": Role.RESPONSE})
    w.settings_panel.set_values({"methods": ["lasso"], "stability_runs": 1000})
    assert w.run_study()
    qtbot.waitUntil(lambda: "stability" in w.step_label.text().lower(), timeout=60_000)
    t0 = time.monotonic()
    w.stop_button.click()
    wait_idle(qtbot, w, timeout=10_000)
    assert time.monotonic() - t0 < 1.0
    assert w.result is None and w.last_message.tone == "stopped"


def test_demo_workbook_opens_with_its_sheets(qtbot, store, tmp_path):
    book = Path(shutil.copy(DEMO, tmp_path / "demo.xlsx"))
    w = make_window(qtbot, store)
    open_and_wait(qtbot, w, book)
    names = [w.sheet_box.itemData(i) for i in range(w.sheet_box.count())]
    assert {"Roastery lots", "Bakery demand"} <= set(names)
    w.sheet_box.setCurrentIndex(names.index("Bakery demand"))
    w.sheet_box.activated.emit(names.index("Bakery demand"))
    wait_idle(qtbot, w)
    assert w.book.table.sheet == "Bakery demand"
    assert w.ledger.model.row_of("loaves_sold") >= 0 and w.ledger.model.row_of("price") >= 0


def test_real_run_with_ln_ticks_saves_and_reopens_them(qtbot, store, tmp_path):
    # units sold falls with price at a constant elasticity (-1.2): ticking ln on both makes the
    # window's study explain ln(units), and the saved analysis ticks them again on reopening
    from openpyxl import Workbook

    from desktop.table_models import COL_LOG

    rng = np.random.default_rng(5)
    wb = Workbook()
    ws = wb.active
    ws.title = "Sales"
    ws.append(["units", "price", "shelf_m"])
    for _ in range(80):
        price, shelf = float(rng.uniform(1.5, 4.0)), float(rng.uniform(5, 15))
        units = float(np.exp(5.0 - 1.2 * np.log(price) + 0.03 * shelf + rng.normal(0, 0.1)))
        ws.append([units, price, shelf])
    book = tmp_path / "sales.xlsx"
    wb.save(book)
    w = make_window(qtbot, store, EngineCalls())
    open_and_wait(qtbot, w, book)
    m = w.ledger.model
    m.set_roles({"units": Role.RESPONSE})
    check = Qt.ItemDataRole.CheckStateRole
    for name in ("units", "price"):
        assert m.setData(m.index(m.row_of(name), COL_LOG), Qt.CheckState.Checked.value, check)
    w.settings_panel.set_values({"methods": ["ols"], "folds": 5})
    with qtbot.waitSignal(w.study_finished, timeout=120_000):
        w.run_study()
    wait_idle(qtbot, w)
    res = w.result
    assert res.design.response_log and "ln(price)" in res.design.names
    assert res.model("ols").coefficients["ln(price)"] == pytest.approx(-1.2, abs=0.1)
    assert res.model("ols").smearing > 1.0
    with qtbot.waitSignal(w.saved, timeout=120_000):
        assert w.save_in_place()
    wait_idle(qtbot, w)
    assert read_settings(book).log_columns == ("units", "price")
    w2 = make_window(qtbot, store, StandIn())
    open_and_wait(qtbot, w2, book)
    with qtbot.waitSignal(w2.study_finished, timeout=60_000):
        w2.message.action_button.click()
    wait_idle(qtbot, w2)
    assert w2.ledger.model.logged() == ("units", "price")


def test_predict_new_rows_from_the_window_matches_the_engine(qtbot, store, book, tmp_path):
    # the window scores another workbook with the study's scoring model (the one its scoring
    # sheet would hold), through the same engine routine as `tamis score`
    from engine.intake import read_table
    from engine.report import ScoringModel

    w = make_window(qtbot, store, EngineCalls())
    open_and_wait(qtbot, w, book)
    assert not w.predict_action.isEnabled()  # no study yet
    w.ledger.model.set_roles({"response_y": Role.RESPONSE})
    w.settings_panel.set_values({"methods": ["lasso"], "folds": 5, "n_penalties": 50})
    with qtbot.waitSignal(w.study_finished, timeout=120_000):
        w.run_study()
    wait_idle(qtbot, w)
    assert w.predict_action.isEnabled()
    new = write_book(tmp_path / "new-lots.xlsx", n=30, seed=11, extra_sheet=False)
    before = new.read_bytes()
    out = tmp_path / "new-lots-scored.xlsx"
    with qtbot.waitSignal(w.predicted, timeout=120_000):
        assert w.predict_rows(new, out)
    wait_idle(qtbot, w)
    assert new.read_bytes() == before
    assert w.last_message.tone == "info", w.last_message
    assert "Predicted 30 of 30 rows with Lasso" in w.last_message.headline
    assert "Each prediction has a 95% range of ±" in w.last_message.headline
    ws = load_workbook(out, read_only=True)["TM Predictions"]
    head = next(ws.iter_rows(min_row=4, max_row=4, values_only=True))
    k = next(i for i, h in enumerate(head) if str(h).startswith("Prediction"))
    got = np.array([r[k] for r in ws.iter_rows(min_row=5, values_only=True)], dtype=float)
    want = ScoringModel.from_result(w.result).predict(read_table(new))
    np.testing.assert_allclose(got, want, rtol=1e-12)


def test_showing_a_saved_analysis_again_says_whether_it_reproduces(qtbot, store, book):
    settings = {"methods": ["lasso"], "folds": 5, "n_penalties": 40}
    w = window_with_a_study(qtbot, store, book, EngineCalls(), settings)
    with qtbot.waitSignal(w.saved, timeout=120_000):
        assert w.save_in_place()
    wait_idle(qtbot, w)

    def show_again():
        w2 = make_window(qtbot, store, EngineCalls())
        open_and_wait(qtbot, w2, book)
        with qtbot.waitSignal(w2.study_finished, timeout=120_000):
            w2.message.action_button.click()
        wait_idle(qtbot, w2)
        return w2.last_message.detail

    assert "The saved results are reproduced" in show_again()
    wb = load_workbook(book)
    ws = wb["Lots"]
    col = next(c.column for c in ws[3] if c.value == "response_y")
    ws.cell(10, col).value = float(ws.cell(10, col).value) + 30.0  # one response value changed
    wb.save(book)
    assert "NOT reproduced: lasso cross-validated error" in show_again()


def test_final_test_rows_from_the_window_show_in_the_comparison(qtbot, store, book):
    w = make_window(qtbot, store, EngineCalls())
    open_and_wait(qtbot, w, book)
    w.ledger.model.set_roles({"response_y": Role.RESPONSE})
    w.settings_panel.set_values({"methods": ["lasso"], "folds": 5, "test_share": 0.25})
    assert w.current_spec().test_share == 0.25
    with qtbot.waitSignal(w.study_finished, timeout=120_000):
        w.run_study()
    wait_idle(qtbot, w)
    res = w.result
    assert len(res.test_rows) == 20 and res.design.n_rows == 60
    view = w.results
    view.tabs.setCurrentIndex(view.tabs.indexOf(view.compare_view.parentWidget()))
    m = view.compare_model
    heads = [m.headerData(c, Qt.Orientation.Horizontal) for c in range(m.columnCount())]
    col = heads.index("Test R squared")
    assert not view.compare_view.isColumnHidden(col)
    shown = m.data(m.index(0, col))
    assert shown not in (None, "", "–") and float(shown) == pytest.approx(
        res.models[0].test_r2, abs=5e-4
    )


def test_an_interaction_made_in_the_window_is_fitted_saved_and_restored(qtbot, store, book):
    w = make_window(qtbot, store, EngineCalls())
    open_and_wait(qtbot, w, book)
    w.ledger.model.set_roles({"response_y": Role.RESPONSE})
    w.ledger.select_names(["x0", "region"])
    assert w.ledger.toggle_interaction_of_selected()
    w.settings_panel.set_values({"methods": ["lasso"], "folds": 5, "n_penalties": 40})
    with qtbot.waitSignal(w.study_finished, timeout=120_000):
        w.run_study()
    wait_idle(qtbot, w)
    products = [n for n in w.result.design.names if " × " in n]
    assert products == ["region=south × x0", "region=east × x0"]  # 'north' is the reference
    with qtbot.waitSignal(w.saved, timeout=120_000):
        assert w.save_in_place()
    wait_idle(qtbot, w)
    assert read_settings(book).interactions == (("region", "x0"),)
    w2 = make_window(qtbot, store, StandIn())
    open_and_wait(qtbot, w2, book)
    with qtbot.waitSignal(w2.study_finished, timeout=60_000):
        w2.message.action_button.click()
    wait_idle(qtbot, w2)
    assert w2.ledger.model.interactions() == (("region", "x0"),)


def test_a_slipped_cell_is_listed_under_rows_to_check(qtbot, store, tmp_path):
    """A value typed ten times too large (a slipped decimal point) in the response: the window's
    list names its cell as far out and its row as an outlier of the refit, as the engine does."""
    book = write_book(tmp_path / "lots.xlsx")
    wb = load_workbook(book)
    ws = wb["Lots"]
    ws["B30"] = ws["B30"].value * 10 + 50  # response_y is column B; data start on row 4
    wb.save(book)
    settings = {"methods": ["lasso"], "folds": 5, "n_penalties": 50}
    w = window_with_a_study(qtbot, store, book, EngineCalls(), settings)
    view = w.results
    rows = view.check_model.rows
    assert rows[0][:3] == ["B30", "far-out value", "response_y"]
    row30 = next(r for r in rows if r[0] == "row 30")
    assert row30[1].startswith("outlier")
    assert row30[4] == pytest.approx(dict(w.result.unusual_rows())[30].studentized)
    assert view.tabs.tabText(view.CHECK_TAB) == f"Rows to check ({len(rows)})"
    assert "least-squares refit" in view.check_note.text()
    assert "cells or rows stand apart from the rest: see 'Rows to check'" in w.last_message.detail
    # the actual-against-fitted chart, drawn when its tab is shown, marks and names that row
    view.tabs.setCurrentIndex(view.CHECK_TAB)
    assert view.fit_chart.named == [30]
    # picking a line of the list rings its point: the far-out cell B30 and the row are one point
    for line, want in ((0, 30), (rows.index(row30), 30)):
        view.check_view.setCurrentIndex(view.check_model.index(line, 0))
        assert view.fit_chart.marked == want


def test_saving_or_predicting_over_a_users_workbook_is_refused(qtbot, store, book, tmp_path):
    # the save dialog's "replace?" is easily said yes to: a workbook Tamis did not write is
    # never replaced, by "Save as" or by "Predict new rows"; Tamis's own output is
    settings = {"methods": ["lasso"], "folds": 5, "n_penalties": 30}
    w = window_with_a_study(qtbot, store, book, EngineCalls(), settings)
    theirs = write_book(tmp_path / "assay.xlsx", n=20, seed=3, extra_sheet=False)
    before = theirs.read_bytes()
    for start in (lambda: w.save_as(theirs), lambda: w.predict_rows(book, theirs)):
        assert start()
        wait_idle(qtbot, w)
        assert theirs.read_bytes() == before
        assert w.last_message.tone != "info"
        text = w.last_message.headline + " " + w.last_message.detail
        assert "choose another file name" in text and "--out" not in text
    ours = tmp_path / "results.xlsx"
    with qtbot.waitSignal(w.saved, timeout=120_000):
        assert w.save_as(ours)
    wait_idle(qtbot, w)
    with qtbot.waitSignal(w.saved, timeout=120_000):
        assert w.save_as(ours)  # an earlier output of Tamis may be replaced
    wait_idle(qtbot, w)
    assert w.last_message.tone == "info", w.last_message


def test_a_method_that_could_not_be_fitted_is_named_when_the_study_finishes(qtbot, store):
    # least squares has no unique fit with more model columns than rows (common practice):
    # the engine leaves it out with a warning, and the finish message names it
    table = simulated_table(n=30, p=40, seed=5)
    w = make_window(qtbot, store, TableCalls(table))
    open_and_wait(qtbot, w, "wide.xlsx")
    w.ledger.model.set_roles({"response_y": Role.RESPONSE})
    w.settings_panel.set_values({"methods": ["lasso", "ols"], "folds": 5})
    with qtbot.waitSignal(w.study_finished, timeout=120_000):
        assert w.run_study()
    wait_idle(qtbot, w)
    assert [m.method for m in w.result.models] == ["lasso"]
    assert "Not fitted: Least squares" in w.last_message.detail, w.last_message
