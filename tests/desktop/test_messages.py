"""The one error boundary: every failure becomes plain words, engine places are kept."""

from __future__ import annotations

from desktop.messages import describe_failure
from engine.errors import Cancelled, InputProblem, Place, WriteProblem


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
