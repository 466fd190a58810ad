"""Findings: the path cursor, axes, hover, highlight and export, driven both ways."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from conftest import simulated_result, write_book
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QToolButton

from desktop.charts.common import export_plot
from desktop.result_view import ResultView, cursor_rows


@pytest.fixture
def view(qtbot):
    v = ResultView()
    qtbot.addWidget(v)
    v.resize(1100, 700)
    v.show()
    v.show_result(simulated_result())
    return v


def _lasso(v: ResultView):
    return v.result.model("lasso")


def test_cursor_starts_at_the_chosen_penalty(view):
    m = _lasso(view)
    i = view.path_chart.index
    assert m.path.penalties[i] == pytest.approx(m.penalty)
    assert sorted(view.selected_at_cursor()) == sorted(m.selected)


def test_dragging_the_cursor_changes_the_selected_set_live(view):
    """Two routes: the table read at the cursor agrees with the path's own nonzeros at that point."""
    m = _lasso(view)
    path, names = m.path, view.result.design.names
    chart = view.path_chart
    sizes = set()
    for x in np.linspace(chart.x_values().max(), chart.x_values().min(), 9):
        chart.move_cursor_to(float(x))  # what a drag does to the line
        i = chart.index
        expect = {names[j] for j in np.flatnonzero(path.std_coefs[i])}
        assert set(view.selected_at_cursor()) == expect
        sizes.add(len(expect))
    assert len(sizes) >= 3  # the set really changed along the way
    assert "columns selected" in view.readout.text()
    view.back_button.click()
    assert path.penalties[chart.index] == pytest.approx(m.penalty)


def test_cursor_drag_with_the_mouse(view, qtbot):
    """A real mouse drag on the cursor line moves it and updates the table."""
    from PySide6.QtCore import QPoint, Qt
    from PySide6.QtTest import QTest

    chart = view.path_chart
    vb = chart.item.getViewBox()
    start_i = chart.index
    y_mid = float(np.mean(vb.viewRange()[1]))
    from PySide6.QtCore import QPointF

    def to_widget(x):
        scene = vb.mapViewToScene(QPointF(x, y_mid))
        return chart.plot.mapFromScene(scene)

    x0 = chart.x_values()[start_i]
    x1 = chart.x_values()[min(start_i + 15, len(chart.x_values()) - 1)]
    p0, p1 = to_widget(x0), to_widget(x1)
    vp = chart.plot.viewport()
    QTest.mousePress(vp, Qt.MouseButton.LeftButton, Qt.KeyboardModifier.NoModifier, p0)
    for k in range(1, 11):
        pos = p0 + (p1 - p0) * (k / 10)
        QTest.mouseMove(vp, QPoint(int(pos.x()), int(pos.y())))
        qtbot.wait(5)
    QTest.mouseRelease(vp, Qt.MouseButton.LeftButton, Qt.KeyboardModifier.NoModifier, p1)
    assert chart.index != start_i
    path = _lasso(view).path
    assert len(view.selected_at_cursor()) == int(path.n_selected[chart.index])


def test_budget_axis_is_the_l1_budget(view):
    m = _lasso(view)
    view.axis_box.setCurrentIndex(1)  # against the budget t
    np.testing.assert_allclose(view.path_chart.x_values(), np.abs(m.path.std_coefs).sum(axis=1))
    view.path_chart.move_cursor_to(float(m.path.l1_budget[5]))
    assert view.path_chart.index == 5
    view.axis_box.setCurrentIndex(0)
    np.testing.assert_allclose(view.path_chart.x_values(), np.log10(m.path.penalties))
    assert view.path_chart.index == 5  # the cursor stays at its point when the axis changes
    view.axis_box.setCurrentIndex(1)
    assert view.path_chart.index == 5 and "point 6 of" in view.readout.text()


def test_changing_the_method_puts_the_cursor_at_its_chosen_point(view):
    # in either order: a path of another length or range must not drag the old position along
    for order in (range(view.method_box.count()), reversed(range(view.method_box.count()))):
        for k in order:
            view.method_box.setCurrentIndex(k)
            chosen = view._chosen_index(view.current)
            if chosen is not None:
                assert view.path_chart.index == chosen
                assert "(the chosen point)" in view.readout.text()


def test_clear_and_outdated_mark(view):
    view.set_outdated(True)
    assert view.outdated_note.isVisibleTo(view) and "Run again" in view.outdated_note.text()
    view.set_outdated(False)
    assert not view.outdated_note.isVisibleTo(view)
    view.clear()
    assert view.result is None and view.method_box.count() == 0
    assert view.coef_model.rows == [] and view.path_chart.path is None


def test_hover_names_the_line_and_click_highlights_it(view):
    chart = view.path_chart
    m = _lasso(view)
    names = view.result.design.names
    i = len(m.path) - 5
    j = names.index("x1")
    assert chart.name_near(chart.x_values()[i], m.path.std_coefs[i, j]) == "x1"
    assert chart.name_near(chart.x_values()[i], m.path.std_coefs[i, j] + 100.0) == ""
    view.coef_view.clicked.emit(view.coef_model.index(1, 0))
    picked = view.coef_model.rows[1][0]
    assert chart.highlighted == picked
    assert chart.line_width(picked) > chart.line_width(next(n for n in chart._lines if n != picked))


def test_validation_curve_marks_both_choices(view):
    c = _lasso(view).curve
    marks = view.curve_chart.marks
    assert marks["min"] == pytest.approx(np.log10(c.grid[c.index_min]))
    assert marks["one-se"] == pytest.approx(np.log10(c.grid[c.index_one_se]))
    assert "Lowest error" in view.curve_note.text()


def test_other_tabs_are_filled(view):
    view.tabs.setCurrentIndex(view.STABILITY_TAB)
    view.tabs.setCurrentIndex(view.FOCAL_TAB)
    assert view.compare_model.rowCount() == 2
    from engine.methods import method_info

    titles = [view.compare_model.data(view.compare_model.index(r, 0)) for r in range(2)]
    marked = [t for t in titles if t.endswith(" · scoring sheet")]
    assert marked == [method_info(view.result.scoring_method()).title + " · scoring sheet"]
    # no rows held back as a final test: its two columns stay hidden
    heads = [view.compare_model.headerData(c, Qt.Orientation.Horizontal) for c in range(11)]
    for name in ("Test error", "Test R squared"):
        assert view.compare_view.isColumnHidden(heads.index(name))
    assert view.sizes_model.rowCount() == 4
    assert "x0" in view.focal_text.text()
    assert view.share_chart.shown[0] in view.result.stability.stable
    html = view.cautions.toHtml()
    assert (
        "causing" in html
        and "Standard errors after selection" in html
        and "a simulated note" in html
    )


def test_cursor_rows_sorted_by_standardized_size(result):
    m = result.model("lasso")
    rows = cursor_rows(m.path, result.design.names, len(m.path) - 1)
    sizes = [abs(r[2]) for r in rows]
    assert sizes == sorted(sizes, reverse=True)


@pytest.mark.parametrize("suffix,magic", [(".png", b"\x89PNG"), (".svg", b"<?xml")])
def test_charts_export_to_png_and_svg(view, tmp_path: Path, suffix, magic):
    view.tabs.setCurrentIndex(view.STABILITY_TAB)
    view.tabs.setCurrentIndex(view.FOCAL_TAB)
    for chart in (view.path_chart, view.curve_chart, view.share_chart, view.focal_chart):
        out = export_plot(chart.plot, tmp_path / f"{type(chart).__name__}{suffix}")
        assert out.read_bytes()[: len(magic)] == magic
        assert out.stat().st_size > 1000


def test_validation_close_up_shows_the_lowest_error_and_its_band(view):
    m = _lasso(view)
    chart = view.curve_chart
    assert view.close_up_box.isChecked() and chart.close_up
    c = m.curve
    lo, hi = chart.close_up_range()
    assert lo == pytest.approx(float(np.min(c.mean_error - c.se)))
    assert hi >= c.mean_error[c.index_min] + c.se[c.index_min]
    assert hi <= float(np.max(c.mean_error + c.se))
    view.close_up_box.setChecked(False)  # the whole curve again
    assert not chart.close_up


def test_stability_bars_only_for_columns_ever_chosen(qtbot):
    from desktop.charts.share_chart import ShareChart
    from engine.study_result import StabilityResult

    chart = ShareChart()
    qtbot.addWidget(chart)
    shares = {"a": 0.9, "b": 0.0, "c": 0.3, "d": 0.0}
    chart.set_stability(StabilityResult(runs=60, shares=shares, threshold=0.6, stable=["a"]))
    assert chart.shown == ["a", "c"]
    assert chart.item.titleLabel.text.endswith("the 2 columns ever chosen (2 never)")
    nothing = {k: 0.0 for k in shares}
    chart.set_stability(StabilityResult(runs=60, shares=nothing, threshold=0.6, stable=[]))
    assert chart.shown == []
    assert "No column was chosen" in chart.item.titleLabel.text


def test_choice_labels_sit_beside_their_lines_and_turn_inwards_at_the_edges(qtbot):
    # a label centred on its line was crossed by the other choice's line when the two were
    # close; each now goes to its own side (simplest left, lowest right on screen) unless
    # its line is in the outer 30% of the plot
    from desktop.charts.curve_chart import CurveChart
    from engine.tuning.curve import ValidationCurve

    chart = CurveChart()
    qtbot.addWidget(chart)

    def curve(kind, i_min, i_se):
        grid = np.logspace(1, -2, 50) if kind == "penalty" else np.arange(1.0, 51.0)
        err = np.ones(50)
        z = np.zeros(50)
        return ValidationCurve(grid, kind, err, z, z, np.ones((2, 50)), i_min, i_se)

    for kind in ("penalty", "size"):  # penalties fall to the right, sizes grow to the right
        chart.set_curve(curve(kind, 25, 20), "min")
        assert (chart.label_side("one-se"), chart.label_side("min")) == ("left", "right")
        chart.set_curve(curve(kind, 45, 40), "min")  # lowest error near the right edge
        assert chart.label_side("min") == "left"
        chart.set_curve(curve(kind, 8, 3), "one-se")  # simplest near the left edge
        assert chart.label_side("one-se") == "right"


def test_notes_on_the_focal_estimate_are_shown_beside_it(qtbot):
    # a warning the engine gives about the focal estimate (here: clustered errors from few
    # groups) must be read where the estimate is, not only among the run's notes
    result = simulated_result()
    note = "the standard error allows for errors moving together within each of the 12 groups"
    result.focal.notes.append(note)
    v = ResultView()
    qtbot.addWidget(v)
    v.show_result(result)
    v.tabs.setCurrentIndex(v.FOCAL_TAB)
    assert "The standard error allows for errors moving together" in v.focal_text.text()


def test_sizes_show_the_held_out_error_that_chose_the_size(qtbot, tmp_path):
    # a real forward-stepwise study: each size's held-out error sits beside its set, so the
    # choice can be checked against the table
    from engine.study import run_study
    from engine.study_spec import StudySpec

    book = write_book(tmp_path / "lots.xlsx", n=60, p=6)
    spec = StudySpec(
        source=str(book), response="response_y", methods=("forward-stepwise",), folds=5
    )
    v = ResultView()
    qtbot.addWidget(v)
    v.show_result(run_study(spec))
    m = v.result.models[0]
    errors = dict(zip(m.curve.grid.astype(int), m.curve.mean_error))
    assert v.sizes_model.rows and all(
        row[1] == pytest.approx(errors[row[0]]) for row in v.sizes_model.rows
    )
    chosen = len(m.selected)
    assert f"The chosen size is {chosen}." in v.sizes_note.text()
    best = min(errors, key=errors.get)
    assert chosen == best  # rule "min": the smallest held-out error


def test_a_narrow_view_scrolls_its_tabs_instead_of_cutting_their_names(view, qtbot):
    # at 1024 x 700 the findings' tab bar cut "Rows to check" and hid "Read before use"
    view.tabs.setFixedWidth(420)  # narrower than the tabs' names need
    view.show()
    qtbot.waitExposed(view)
    bar = view.tabs.tabBar()
    assert view.tabs.elideMode() == Qt.TextElideMode.ElideNone
    assert view.tabs.usesScrollButtons()
    widths = sum(bar.tabRect(i).width() for i in range(bar.count()))
    assert widths > bar.width()  # too many for the width: the arrows must be there
    arrows = [b for b in bar.findChildren(QToolButton) if b.isVisible()]
    assert len(arrows) == 2 and all(b.width() >= 12 for b in arrows)


def test_long_names_that_differ_in_their_middle_stay_told_apart(qtbot):
    # sensors named alike but for their number: middle elision showed every one as
    # "sens…name"; the shortened names must differ where the names do
    from PySide6.QtGui import QFontMetrics
    from PySide6.QtWidgets import QWidget

    from desktop.elided_label import differs_from, shorten_keeping_difference

    names = [f"sensor_{k:02d}_reading_with_a_long_descriptive_name" for k in (0, 10, 12)]
    names += ["promotion=none", "promotion=high", "s3"]
    starts = differs_from(names)
    assert starts["sensor_10_reading_with_a_long_descriptive_name"] == 8
    assert starts["promotion=none"] == 10 and starts["s3"] == 1
    w = QWidget()
    qtbot.addWidget(w)
    fm = QFontMetrics(w.font())
    width = fm.horizontalAdvance("0" * 14)
    shown = [
        shorten_keeping_difference(n, starts[n], lambda s: fm.horizontalAdvance(s) <= width)
        for n in names
    ]
    assert len(set(shown)) == len(names), shown
    assert all(fm.horizontalAdvance(s) <= width for s in shown)
    assert shown[-1] == "s3"  # what fits stays whole
    assert shown[3].endswith("none") and shown[4].endswith("high")  # the level kept


def test_a_stability_chart_of_long_names_fits_its_panel(qtbot):
    # long names widened the axis and a one-line title widened the plot past its panel:
    # the bars at 1.0 and the axis's right end were cut off
    from desktop.charts.share_chart import ShareChart
    from engine.study_result import StabilityResult

    chart = ShareChart()
    qtbot.addWidget(chart)
    chart.resize(700, 400)
    chart.show()
    qtbot.waitExposed(chart)
    shares = {
        f"sensor_{k:02d}_reading_with_a_very_long_descriptive_name": k / 60 for k in range(60)
    }
    shares["s3"] = 1.0
    chart.set_stability(StabilityResult(runs=30, shares=shares, threshold=0.6, stable=["s3"]))
    qtbot.wait(50)
    assert chart.item.sceneBoundingRect().width() <= chart.width() + 1
    ticks = [t for level in chart.item.getAxis("left")._tickLevels for _, t in level]
    assert ticks and max(len(t) for t in ticks) <= 24 and len(set(ticks)) == len(ticks)
    x0, x1 = chart.item.vb.viewRange()[0]
    assert x0 <= 0 and x1 >= 1.0


def test_a_method_without_a_path_shows_no_axes(view):
    # empty axes keeping the lasso's ranges read as a chart of the stepwise method
    box = view.method_box
    box.setCurrentIndex(box.findData("forward-stepwise"))
    item = view.path_chart.item
    assert not item.getAxis("bottom").isVisible() and not item.getAxis("left").isVisible()
    assert not view.back_button.isEnabled() and not view.path_export.isEnabled()
    box.setCurrentIndex(box.findData("lasso"))
    assert item.getAxis("bottom").isVisible() and item.getAxis("left").isVisible()
