"""The column ledger and the sheet preview: roles set on the column rows, both ways."""

from __future__ import annotations

import numpy as np
from conftest import simulated_table
from PySide6.QtCore import Qt

from desktop.column_ledger import ColumnLedger
from desktop.roles import Role, default_roles
from desktop.table_models import (
    COL_CHECK,
    COL_KIND,
    COL_MISSING,
    COL_ROLE,
    SheetPreviewModel,
    format_value,
)
from engine.intake.table import Column, ColumnKind, SheetInfo, Table


def test_ledger_lists_every_column_with_kind_and_missing(qtbot):
    t = simulated_table()
    t.columns[3].missing = 4
    led = ColumnLedger()
    qtbot.addWidget(led)
    led.model.set_table(t, default_roles(t))
    m = led.model
    assert m.rowCount() == len(t.columns)
    assert m.data(m.index(0, COL_KIND)) == "identifier"
    assert m.data(m.index(3, COL_MISSING)) == "4"
    assert m.data(m.index(1, COL_ROLE)) == "candidate"


def _ledger_watching_roles(qtbot):
    """A ledger on the simulated table with its default roles, and the list of role maps it
    announces."""
    t = simulated_table()
    led = ColumnLedger()
    qtbot.addWidget(led)
    led.model.set_table(t, default_roles(t))
    seen: list = []
    led.model.roles_changed.connect(seen.append)
    return led, seen


def test_editing_a_role_cell_reaches_the_model_and_back(qtbot):
    led, seen = _ledger_watching_roles(qtbot)
    # model -> view
    assert led.model.setData(led.model.index(1, COL_ROLE), "response")
    assert led.model.roles()["response_y"] is Role.RESPONSE
    assert seen and seen[-1]["response_y"] is Role.RESPONSE
    # view -> model through the delegate's editor, applied to every selected row
    led.select_names(["x3", "x4", "x5"])
    idx = led.proxy.mapFromSource(led.model.index(led.model.row_of("x4"), COL_ROLE))
    led.view.edit(idx)
    editor = led.view.indexWidget(idx)
    assert editor is not None
    editor.setCurrentIndex(editor.findData("ignore"))
    led.view.itemDelegateForColumn(COL_ROLE).setModelData(editor, led.proxy, idx)
    roles = led.model.roles()
    assert [roles[n] for n in ("x3", "x4", "x5")] == [Role.IGNORE] * 3
    assert roles["x6"] is Role.CANDIDATE


def test_quick_actions_and_role_box_for_a_selection(qtbot):
    t = simulated_table()
    led = ColumnLedger()
    qtbot.addWidget(led)
    led.model.set_table(t, default_roles(t))
    led.none_button.click()
    assert set(led.model.roles().values()) == {Role.IGNORE}
    led.numeric_button.click()
    assert led.model.roles()["x0"] is Role.CANDIDATE and led.model.roles()["region"] is Role.IGNORE
    led.select_names(["region"])
    led.set_role_box.setCurrentIndex(led.set_role_box.findData("group"))
    led.set_role_box.activated.emit(led.set_role_box.currentIndex())
    assert led.model.roles()["region"] is Role.GROUP


def test_filter_keeps_roles_on_the_right_columns(qtbot):
    t = simulated_table()
    led = ColumnLedger()
    qtbot.addWidget(led)
    led.model.set_table(t, default_roles(t))
    led.filter.setText("x1")  # x1, x10, x11
    assert led.proxy.rowCount() == 3
    led.view.selectAll()
    led.set_role_of_selected(Role.IGNORE)
    r = led.model.roles()
    assert r["x1"] is r["x10"] is r["x11"] is Role.IGNORE and r["x2"] is Role.CANDIDATE


def test_problem_text_shows_beside_its_column(qtbot):
    t = simulated_table()
    led = ColumnLedger()
    qtbot.addWidget(led)
    led.model.set_table(t, default_roles(t))
    led.model.set_problems({"region": "The response must hold numbers."})
    row = led.model.row_of("region")
    assert led.model.data(led.model.index(row, COL_CHECK)) == "The response must hold numbers."
    assert (
        led.model.data(led.model.index(row, COL_CHECK), Qt.ItemDataRole.BackgroundRole) is not None
    )


def test_preview_of_100000_rows_formats_only_what_is_asked(qtbot):
    n = 100_000
    rng = np.random.default_rng(1)
    v = rng.normal(size=n)
    v[5] = np.nan
    dates = (np.datetime64("2020-01-01") + np.arange(n).astype("timedelta64[D]")).astype(
        "datetime64[ns]"
    )
    cols = [
        Column("v", "v", "A", ColumnKind.NUMBER, v),
        Column("d", "d", "B", ColumnKind.DATE, dates),
    ]
    t = Table(
        source="big.csv",
        sheet="big",
        sheets=[SheetInfo("big", 0)],
        header_row=1,
        columns=cols,
        row_numbers=np.arange(2, n + 2, dtype=np.int64),
        file_format="csv",
    )
    m = SheetPreviewModel(t)
    assert m.rowCount() == n and m.columnCount() == 2
    assert m.data(m.index(5, 0)) == ""  # a missing number shows as an empty cell
    assert m.data(m.index(0, 0)) == f"{v[0]:.6g}"
    assert m.data(m.index(n - 1, 1)) == str(np.datetime_as_string(dates[-1], unit="D"))
    assert m.headerData(n - 1, Qt.Orientation.Vertical) == str(n + 1)  # the sheet's own row number
    assert format_value(cols[0], 1) == f"{v[1]:.6g}"


def test_ln_tick_box_only_on_number_columns_and_announced(qtbot):
    from desktop.table_models import COL_LOG

    t = simulated_table()
    led = ColumnLedger()
    qtbot.addWidget(led)
    led.model.set_table(t, default_roles(t))
    m = led.model
    seen = []
    m.roles_changed.connect(seen.append)
    ident, x2 = 0, m.row_of("x2")
    check = Qt.ItemDataRole.CheckStateRole
    assert not m.flags(m.index(ident, COL_LOG)) & Qt.ItemFlag.ItemIsUserCheckable
    assert m.data(m.index(ident, COL_LOG), check) is None
    assert not m.setData(m.index(ident, COL_LOG), Qt.CheckState.Checked.value, check)
    assert m.flags(m.index(x2, COL_LOG)) & Qt.ItemFlag.ItemIsUserCheckable
    assert m.data(m.index(x2, COL_LOG), check) == Qt.CheckState.Unchecked
    assert m.setData(m.index(x2, COL_LOG), Qt.CheckState.Checked.value, check)
    assert m.logged() == ("x2",) and len(seen) == 1
    assert m.data(m.index(x2, COL_LOG), check) == Qt.CheckState.Checked
    m.set_logged(["x2", "lot_id", "x4"])  # an identifier cannot be logged
    assert m.logged() == ("x2", "x4")
    m.set_table(t, default_roles(t))  # another sheet: no ticks carried silently
    assert m.logged() == ()


def test_two_selected_columns_interact_and_a_second_click_removes_it(qtbot):
    led, seen = _ledger_watching_roles(qtbot)
    led.select_names(["x1", "x2", "x3"])
    assert not led.toggle_interaction_of_selected()  # three columns: no pair
    assert "Select two columns" in led.summary.text()
    led.select_names(["x1"])
    assert led.toggle_interaction_of_selected()  # one column: its square
    assert led.model.interactions() == (("x1", "x1"),) and "interactions: x1²" in led.summary.text()
    assert led.toggle_interaction_of_selected() and led.model.interactions() == ()
    seen.clear()
    led.select_names(["x1", "region"])
    assert led.toggle_interaction_of_selected()  # the pair in sheet order
    assert led.model.interactions() == (("region", "x1"),) and len(seen) == 1
    assert "interactions: region × x1" in led.summary.text()
    led.pair_button.click()  # the same two again: removed
    assert led.model.interactions() == () and len(seen) == 2
    led.model.set_interactions([("x1", "region"), ("region", "x1"), ("x2", "nowhere")])
    assert led.model.interactions() == (("x1", "region"),)
