"""The one error boundary: every failure becomes plain words, engine places are kept."""

from __future__ import annotations

from desktop.messages import describe_failure
from engine.errors import Cancelled, InputProblem, Place, SourceChanged, WriteProblem


def test_input_problem_keeps_the_column_and_says_where():
    msg = describe_failure(
        InputProblem("the column holds text", Place(sheet="S", column="price", row=4))
    )
    assert msg.tone == "problem" and msg.column == "price"
    assert msg.headline == "The column holds text."
    assert "sheet 'S'" in msg.detail and "row 4" in msg.detail


def test_cancel_is_not_an_error():
    msg = describe_failure(Cancelled())
    assert msg.tone == "stopped" and "Nothing was written" in msg.headline


def test_write_problem_says_the_file_is_untouched():
    msg = describe_failure(WriteProblem("the workbook is locked"), "saving")
    assert "left as it was" in msg.detail


def test_a_workbook_changed_since_it_was_read_asks_to_open_it_again():
    # closing other programs would not help: the study must read the file as it is now
    msg = describe_failure(SourceChanged("'a.xlsx' changed on disk since it was read"), "saving")
    assert "left as it was" in msg.detail and "Open it again" in msg.detail
    assert "Close it in other programs" not in msg.detail


def test_unexpected_failure_names_the_type_and_where_the_details_went(tmp_path):
    try:
        1 / 0  # noqa: B018 - a real traceback to log
    except ZeroDivisionError as exc:
        msg = describe_failure(exc)
    assert (
        msg.tone == "fault" and "ZeroDivisionError" in msg.detail and "Traceback" not in msg.detail
    )
    log = tmp_path / "config" / "tamis-error.log"  # TAMIS_CONFIG_DIR of this test
    assert str(log) in msg.detail and "1 / 0" in log.read_text()


def test_engine_advice_names_the_window_settings_not_command_line_options(qtbot):
    # the engine's refusals advise with the command line's options; the window must name the
    # setting a desktop user can change, with the labels the settings panel really shows
    from pathlib import Path

    import numpy as np
    from PySide6.QtWidgets import QLabel

    from desktop.messages import window_words
    from desktop.settings_panel import SettingsPanel
    from engine.design import build_design
    from engine.intake.table import Column, ColumnKind, Table
    from engine.study_spec import StudySpec

    def num(name, values):
        v = np.asarray(values, dtype=float)
        return Column(name=name, heading=name, letter="A", kind=ColumnKind.NUMBER, values=v)

    table = Table(
        source=Path("book.xlsx"),
        sheet="Data",
        sheets=[],
        header_row=1,
        columns=[num("y", [1, 2, 3, 4, 5]), num("x", [1, np.nan, np.nan, np.nan, 2])],
        row_numbers=np.arange(2, 7),
    )
    spec = StudySpec(source="book.xlsx", response="y", candidates=("x",))
    try:
        build_design(table, spec)
        raise AssertionError("two rows left must be refused")
    except InputProblem as exc:
        assert "--missing fill" in exc.message  # the command line's advice
        shown = describe_failure(exc).headline
    panel = SettingsPanel()
    qtbot.addWidget(panel)
    labels = {lab.text() for lab in panel.widget().findChildren(QLabel)}
    assert "--" not in shown and "'Missing values'" in shown
    assert "Missing values" in labels
    assert "Fill with the median and mark the gap" in shown
    assert panel.missing.findText("Fill with the median and mark the gap") >= 0
    folds = window_words("10 rows are used but 20 folds were asked; use --folds 5 or fewer")
    assert folds.endswith("set 'Parts (folds)' under Run settings to 5 or fewer")
    assert "Parts (folds)" in labels
    assert {"Focal effect penalty"} <= labels
    assert panel.focal_penalty.findText("By validation") >= 0
    assert panel.scheme.findText("Shuffled folds") >= 0 and "Validation" in labels
    for text in (
        "grouped folds need a group column (--group COLUMN)",
        "time-ordered folds need a time-order column (--time-order COLUMN)",
        "--folds must be at least 2 (got 1)",
        "a wider grid (a smaller penalty ratio: --penalty-ratio) may fit better",
        "(raise the limit, --exact-subset-limit, to search exactly; the time can grow quickly)",
        "can make every method look worse (fewer parts, --folds, give the first part more rows)",
        "compare with the cross-validated penalty (--focal-penalty cv)",
        "to add the sheets to it use in-place writing, or choose another output name",
        "Their natural log (--log COLUMN) often suits such a column better",
        "constant (--missing fill keeps what it says, whether a cell is blank, as a 0/1 indicator",
        "choose a column with more groups, or shuffled folds (--scheme kfold) without one",
    ):
        out = window_words(text)
        assert out != text and ("--" not in out or "command line" in out), out
