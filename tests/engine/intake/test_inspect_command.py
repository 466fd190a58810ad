"""`tamis inspect`: the real command-line entry point, its stdout, stderr and exit status."""

from __future__ import annotations

import io
import json
import types

import pytest
from intake_corpus import MESSY_ROWS, write_messy_book

from engine.cli import main
from engine.commands.inspect import run
from engine.context import Context
from engine.intake import describe_table, read_table


@pytest.fixture
def messy_book(tmp_path):
    path = tmp_path / "bakery demand.xlsx"
    return path, write_messy_book(path)


def _ctx(tmp_path) -> Context:
    return Context(stdout=io.StringIO(), stderr=io.StringIO(), config_dir=tmp_path / "cfg")


def test_run_prints_an_aligned_report(messy_book, tmp_path):
    path, _ = messy_book
    ctx = _ctx(tmp_path)
    args = types.SimpleNamespace(book=str(path), sheet=None, header_row=None, json=False)
    assert run(args, ctx) == 0
    out = ctx.stdout.getvalue()
    assert "Lookup (hidden), Demand" in out
    assert "header row  4" in out
    assert f"{MESSY_ROWS} (sheet rows 5-" in out and "1 blank skipped" in out
    lines = out.splitlines()
    title = next(i for i, line in enumerate(lines) if line.startswith("col "))
    table_lines = lines[title + 1 : title + 14]
    assert [line.split()[0] for line in table_lines] == list("ABCDEFGHIJKLM")
    # columns line up: every row has its kind starting where the title's "kind" starts
    at = lines[title].index("kind")
    assert all(
        line[at:].split()[0] in {"number", "date", "category", "flag", "identifier", "empty"}
        for line in table_lines
    )
    assert "oven temp (2)" in out and "constant" in out and "same values as column 'price'" in out


def test_cli_json_is_one_document_with_the_same_facts(messy_book, tmp_path):
    path, _ = messy_book
    ctx = _ctx(tmp_path)
    assert main(["inspect", str(path), "--json"], ctx) == 0
    facts = json.loads(ctx.stdout.getvalue())
    assert facts == json.loads(json.dumps(describe_table(read_table(path))))
    assert facts["header_row"] == 4 and facts["rows"] == MESSY_ROWS
    assert ctx.stderr.getvalue() == ""


def test_cli_sheet_and_header_options(messy_book, tmp_path):
    path, _ = messy_book
    ctx = _ctx(tmp_path)
    assert (
        main(["inspect", str(path), "--sheet", "Lookup", "--header-row", "1", "--json"], ctx) == 0
    )
    facts = json.loads(ctx.stdout.getvalue())
    assert facts["sheet"] == "Lookup" and facts["columns"][0]["name"] == "code"


def test_cli_bad_input_exits_2_with_one_line(tmp_path):
    ctx = _ctx(tmp_path)
    missing = tmp_path / "gone.xlsx"
    assert main(["inspect", str(missing)], ctx) == 2
    err = ctx.stderr.getvalue()
    assert err.startswith("tamis: error: ") and "gone.xlsx" in err and err.count("\n") == 1
    assert ctx.stdout.getvalue() == ""


def test_cli_unknown_sheet_names_the_sheets(messy_book, tmp_path):
    path, _ = messy_book
    ctx = _ctx(tmp_path)
    assert main(["inspect", str(path), "--sheet", "Sales", "--json"], ctx) == 2
    assert "'Demand'" in ctx.stderr.getvalue()
    # with --json the failure is the one document on stdout
    failure = json.loads(ctx.stdout.getvalue())
    assert failure["exit_code"] == 2 and "'Demand'" in failure["error"]
