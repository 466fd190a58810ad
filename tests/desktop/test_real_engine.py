"""The window over the real engine: run, drag the path cursor, cancel a long run, save and read back."""

from __future__ import annotations

import shutil
import time
from pathlib import Path

import numpy as np
from conftest import TableCalls, simulated_table
from openpyxl import load_workbook
from test_main_window import make_window, open_and_wait, wait_idle

from desktop.roles import Role
from engine.report import read_settings

DEMO = Path(__file__).resolve().parents[2] / "demo" / "tamis_demo.xlsx"


def test_real_run_cursor_and_save_in_place(qtbot, store, book):
    w = make_window(qtbot, store)  # the real EngineCalls
    open_and_wait(qtbot, w, book)
    w.ledger.model.set_roles({"response_y": Role.RESPONSE})
    w.settings_panel.set_values({"methods": ["lasso"], "folds": 5, "n_penalties": 50})
    with qtbot.waitSignal(w.study_finished, timeout=120_000):
        w.run_study()
    wait_idle(qtbot, w)
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
