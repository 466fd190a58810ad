"""Safe replacement: a crash at any step leaves the old file or the new one, never a broken one.

Invariants (common practice for atomic saves: temporary file in the same folder, fsync, rename):
after a simulated crash at each step the target is byte-identical to the old file or is a
complete new results workbook; no temporary or backup file is left behind.
"""

from __future__ import annotations

import os
import zipfile
from pathlib import Path

import pytest
from rich_workbook import write_rich
from study_fixture import make_result

from engine.errors import InputProblem, SourceChanged, WriteProblem
from engine.report import fingerprint, safe_write, write_results
from engine.report.writer import verify_results_file


class Crash(Exception):
    pass


@pytest.mark.parametrize("step", safe_write.STEPS)
@pytest.mark.parametrize("first_run", [True, False])
def test_crash_at_each_step_leaves_old_or_new(tmp_path, monkeypatch, step, first_run):
    result, _ = make_result(tmp_path, name="book.xlsx")
    book = Path(result.spec.source)
    if not first_run:
        write_results(result, in_place=True)
        result.source_fingerprint = fingerprint(book)
    old = book.read_bytes()

    def crash(name):
        if name == step:
            raise Crash(name)

    monkeypatch.setattr(safe_write, "_checkpoint", crash)
    with pytest.raises(Crash):
        write_results(result, in_place=True)
    now = book.read_bytes()
    if now != old:
        verify_results_file(book)  # a complete new workbook
        assert zipfile.ZipFile(book).testzip() is None
    assert sorted(p.name for p in tmp_path.iterdir() if p.is_file()) == ["book.xlsx"]


def test_locked_file_is_refused_and_untouched(tmp_path):
    result, _ = make_result(tmp_path, name="book.xlsx")
    book = Path(result.spec.source)
    old = book.read_bytes()
    (tmp_path / ".~lock.book.xlsx#").write_text("someone,host,2026")
    with pytest.raises(WriteProblem) as err:
        write_results(result, in_place=True)
    assert "book.xlsx" in err.value.message and "open" in err.value.message
    assert book.read_bytes() == old


def test_read_only_file_is_refused_and_untouched(tmp_path):
    result, _ = make_result(tmp_path, name="book.xlsx")
    book = Path(result.spec.source)
    old = book.read_bytes()
    os.chmod(book, 0o444)
    try:
        with pytest.raises(WriteProblem) as err:
            write_results(result, in_place=True)
        assert "read-only" in err.value.message and str(book) in err.value.message
    finally:
        os.chmod(book, 0o644)
    assert book.read_bytes() == old


def test_replace_refused_by_the_system_is_a_write_problem(tmp_path, monkeypatch):
    result, _ = make_result(tmp_path, name="book.xlsx")
    book = Path(result.spec.source)
    old = book.read_bytes()

    def locked(*a, **k):
        raise PermissionError(13, "locked")

    monkeypatch.setattr(safe_write.os, "replace", locked)
    with pytest.raises(WriteProblem) as err:
        write_results(result, in_place=True)
    assert "locked" in err.value.message
    monkeypatch.undo()
    assert book.read_bytes() == old
    assert sorted(p.name for p in tmp_path.iterdir() if p.is_file()) == ["book.xlsx"]


def test_file_changed_since_read_is_refused(tmp_path):
    result, rows = make_result(tmp_path, name="book.xlsx")
    book = Path(result.spec.source)
    result.source_fingerprint = fingerprint(book)
    write_rich(book, rows)  # someone saved the workbook after the study read it
    changed = book.read_bytes()
    with pytest.raises(SourceChanged) as err:
        write_results(result, in_place=True)
    assert "changed on disk" in err.value.message
    assert book.read_bytes() == changed


def test_saving_into_the_workbook_twice_is_not_taken_for_a_change(tmp_path):
    # the first save changed the file itself; a second save of the same result replaces our
    # sheets, while a change by someone else after it is still refused
    result, rows = make_result(tmp_path, name="book.xlsx")
    book = Path(result.spec.source)
    result.source_fingerprint = fingerprint(book)
    write_results(result, in_place=True)
    write_results(result, in_place=True)
    with open(book, "ab") as fh:
        fh.write(b"\0")
    with pytest.raises(WriteProblem, match="changed on disk"):
        write_results(result, in_place=True)


def test_change_during_writing_is_refused(tmp_path, monkeypatch):
    result, rows = make_result(tmp_path, name="book.xlsx")
    book = Path(result.spec.source)

    def someone_saves(name):
        if name == "verified-temp":
            with open(book, "ab") as fh:
                fh.write(b"\0")

    monkeypatch.setattr(safe_write, "_checkpoint", someone_saves)
    with pytest.raises(WriteProblem, match="changed on disk"):
        write_results(result, in_place=True)


def test_cancel_before_saving_writes_nothing(tmp_path):
    from engine.errors import Cancelled
    from engine.progress import CancelToken, Progress

    result, _ = make_result(tmp_path, name="book.xlsx")
    book = Path(result.spec.source)
    old = book.read_bytes()
    token = CancelToken()
    seen = []

    def cancel_midway(fraction, words):
        seen.append(words)
        if "fitted" in words:
            token.cancel()

    with pytest.raises(Cancelled):
        write_results(result, in_place=True, progress=Progress(cancel_midway, token))
    assert book.read_bytes() == old
    assert sorted(p.name for p in tmp_path.iterdir() if p.is_file()) == ["book.xlsx"]


def test_recorded_fingerprint_as_dict_is_accepted(tmp_path):
    result, _ = make_result(tmp_path, name="book.xlsx")
    book = Path(result.spec.source)
    result.source_fingerprint = fingerprint(book).to_dict()
    write_results(result, in_place=True)
    verify_results_file(book)


@pytest.mark.skipif(os.name != "posix", reason="file modes are POSIX")
def test_in_place_keeps_the_file_mode_and_new_files_get_the_usual_one(tmp_path):
    # common practice: replacing a file must not narrow who may read it
    result, _ = make_result(tmp_path, name="book.xlsx")
    book = Path(result.spec.source)
    os.chmod(book, 0o640)
    write_results(result, in_place=True)
    assert book.stat().st_mode & 0o777 == 0o640
    umask = os.umask(0o022)
    try:
        out = write_results(result, out=tmp_path / "copy.xlsx")
    finally:
        os.umask(umask)
    assert out.stat().st_mode & 0o777 == 0o644


def test_a_macro_enabled_source_needs_an_xlsm_output(tmp_path):
    # the copy keeps the workbook's parts as declared (macro-enabled), which an .xlsx name
    # would contradict (ECMA-376 Part 2 content types; a spreadsheet program refuses the file)
    result, _ = make_result(tmp_path, name="book.xlsm")
    with pytest.raises(InputProblem, match=r"macro-enabled workbook \(\.xlsm\).*ending in \.xlsm"):
        write_results(result, out=tmp_path / "results.xlsx")
    assert not (tmp_path / "results.xlsx").exists()
    assert write_results(result, out=tmp_path / "results.xlsm").exists()
