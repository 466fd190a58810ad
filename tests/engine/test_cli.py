"""The command line's error boundary: exit codes and one-line messages (DESIGN.md contract)."""

import io

import pytest

from engine import cli
from engine.context import Context


def _run(argv, tmp_path):
    out, err = io.StringIO(), io.StringIO()
    ctx = Context(stdout=out, stderr=err, config_dir=tmp_path / "config")
    code = cli.main(argv, ctx)
    return code, out.getvalue(), err.getvalue()


def test_help_is_printed_and_exit_zero(tmp_path):
    code, out, err = _run([], tmp_path)
    assert code == 0 and "inspect" in out and "fit" in out


def test_usage_problem_exits_2_with_one_line(tmp_path):
    code, out, err = _run(["fit", "book.xlsx"], tmp_path)  # --response missing
    assert code == 2 and out == ""
    assert err.startswith("tamis: error:") and "--response" in err and err.count("\n") == 1


def test_unknown_method_is_an_input_problem(tmp_path):
    book = tmp_path / "b.csv"
    book.write_text("y,x\n1,2\n2,3\n")
    code, out, err = _run(
        ["fit", str(book), "--response", "y", "--methods", "lasso,magic"], tmp_path
    )
    assert code == 2 and "unknown method 'magic'" in err


def test_missing_file_exit_2_names_the_file(tmp_path):
    code, out, err = _run(["fit", str(tmp_path / "nope.xlsx"), "--response", "y"], tmp_path)
    assert code == 2 and "nope.xlsx" in err and "does not exist" in err


def test_unexpected_failure_exit_1_with_log_and_no_traceback(tmp_path, monkeypatch):
    import engine.commands.fit as fit_cmd

    def boom(args, ctx):
        raise ZeroDivisionError("a bug")

    monkeypatch.setattr(fit_cmd, "run", boom)
    code, out, err = _run(["fit", "b.xlsx", "--response", "y"], tmp_path)
    assert code == 1 and "Traceback" not in err and "unexpected failure" in err
    log = (tmp_path / "config" / "tamis-error.log").read_text()
    assert "ZeroDivisionError" in log


def test_a_failure_after_writing_names_what_was_written(tmp_path, monkeypatch):
    # the results file already exists when printing the summary fails or is interrupted:
    # the message must not claim that nothing was written
    import engine.commands.fit as fit_cmd

    def write_then(exc):
        def run(args, ctx):
            ctx.written.append("/data/out.xlsx")
            raise exc

        return run

    monkeypatch.setattr(fit_cmd, "run", write_then(ZeroDivisionError("a bug")))
    code, out, err = _run(["fit", "b.xlsx", "--response", "y"], tmp_path)
    assert code == 1 and "written before it: /data/out.xlsx" in err
    assert "nothing was written" not in err
    monkeypatch.setattr(fit_cmd, "run", write_then(KeyboardInterrupt()))
    code, out, err = _run(["fit", "b.xlsx", "--response", "y"], tmp_path)
    assert code == 3 and err == "tamis: cancelled; written before it: /data/out.xlsx\n"


def test_a_reader_that_stops_early_is_not_a_failure(tmp_path):
    # ``tamis inspect book.csv | head -3``: the pipe closes while the table is printed
    class ClosedPipe(io.StringIO):
        def write(self, text):
            raise BrokenPipeError(32, "Broken pipe")

    book = tmp_path / "b.csv"
    book.write_text("y,x\n1,2\n2,3\n3,5\n")
    err = io.StringIO()
    ctx = Context(stdout=ClosedPipe(), stderr=err, config_dir=tmp_path / "config")
    assert cli.main(["inspect", str(book)], ctx) == 0
    assert err.getvalue() == ""
    assert not (tmp_path / "config" / "tamis-error.log").exists()


def test_traceback_flag_prints_it(tmp_path, monkeypatch):
    import engine.commands.fit as fit_cmd

    monkeypatch.setattr(fit_cmd, "run", lambda a, c: 1 / 0)
    code, out, err = _run(["--traceback", "fit", "b.xlsx", "--response", "y"], tmp_path)
    assert code == 1 and "Traceback" in err


@pytest.mark.parametrize(
    "argv",
    [
        ["fit", "b.xlsx", "--response", "y", "--folds", "1"],
        ["fit", "b.xlsx", "--response", "y", "--mix", "1.5"],
        ["fit", "b.xlsx", "--response", "y", "--scheme", "grouped"],
    ],
)
def test_bad_settings_exit_2(tmp_path, argv):
    (tmp_path / "b.xlsx").write_bytes(b"")
    argv = [a if a != "b.xlsx" else str(tmp_path / "b.xlsx") for a in argv]
    code, out, err = _run(argv, tmp_path)
    assert code == 2 and err.startswith("tamis: error:")


@pytest.mark.parametrize(
    "argv",
    [
        ["fit", "book.xlsx", "--json"],  # no --response
        ["fit", "book.xlsx", "--response", "y", "--folds", "abc", "--json"],
        ["score", "new.xlsx", "--json"],  # no --results
    ],
)
def test_arguments_that_cannot_be_read_still_give_one_json_document(tmp_path, argv):
    # README: with --json stdout holds exactly one JSON document, on failure too
    import json

    code, out, err = _run(argv, tmp_path)
    assert code == 2 and "tamis: error:" in err
    doc = json.loads(out)
    assert doc["exit_code"] == 2 and doc["error"] and doc["place"] == {}
