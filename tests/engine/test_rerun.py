"""`tamis rerun`: a study run again from its results workbook alone, and the reproduction check.

Invariant (the issue's "same seed, same data: identical output"): running the saved settings on
the data the results workbook holds gives the saved cross-validated errors and kept columns; a
changed data cell is reported as not reproduced.
"""

from __future__ import annotations

import io
import json

import numpy as np
import openpyxl

from engine import cli
from engine.context import Context


def _main(argv, tmp_path):
    out, err = io.StringIO(), io.StringIO()
    code = cli.main(argv, Context(stdout=out, stderr=err, config_dir=tmp_path / "cfg"))
    return code, out.getvalue(), err.getvalue()


def _csv(path, n=60, seed=2):
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, 6))
    y = 1.0 + 2.0 * X[:, 0] - X[:, 3] + rng.normal(0, 0.5, n)
    lines = ["y," + ",".join(f"x{j}" for j in range(6))]
    lines += [",".join(repr(float(v)) for v in (y[i], *X[i])) for i in range(n)]
    path.write_text("\n".join(lines) + "\n")
    return path


def _lasso_results(tmp_path):
    """A results workbook of a lasso study of a text table (its data copied in as sheet 'lab')."""
    source = _csv(tmp_path / "lab.csv")
    results = tmp_path / "results.xlsx"
    argv = ["fit", str(source), "--response", "y", "--methods", "lasso", "--folds", "5"]
    code, _, err = _main([*argv, "--out", str(results)], tmp_path)
    assert code == 0, err
    return results


def test_rerun_from_the_results_workbook_alone_reproduces_the_study(tmp_path):
    source = _csv(tmp_path / "lab.csv")
    results = tmp_path / "results.xlsx"
    argv = ["fit", str(source), "--response", "y", "--methods", "lasso,ridge", "--folds", "5"]
    code, _, err = _main([*argv, "--seed", "4", "--out", str(results)], tmp_path)
    assert code == 0, err
    source.unlink()  # the workbook alone must suffice
    code, out, err = _main(["rerun", str(results), "--json"], tmp_path)
    assert code == 0, err
    doc = json.loads(out)
    assert doc["reproduced"] is True and doc["differences"] == []
    assert doc["spec"]["seed"] == 4 and doc["spec"]["methods"] == ["lasso", "ridge"]
    assert "saved results reproduced" in err


def test_a_changed_cell_is_reported_as_not_reproduced(tmp_path):
    results = _lasso_results(tmp_path)
    wb = openpyxl.load_workbook(results)
    ws = wb["lab"]
    ws.cell(10, 1).value = float(ws.cell(10, 1).value) + 25.0  # one response value changed
    wb.save(results)
    code, out, err = _main(["rerun", str(results)], tmp_path)
    assert code == 0, err
    assert "NOT reproduced" in err and "lasso cross-validated error" in err
    assert "not reproduced:" in out  # among the run's warnings too


def test_rerun_of_a_workbook_without_our_settings_exits_2(tmp_path):
    wb = openpyxl.Workbook()
    wb.active.append(["a", "b"])
    book = tmp_path / "plain.xlsx"
    wb.save(book)
    code, _, err = _main(["rerun", str(book)], tmp_path)
    assert code == 2 and "not a Tamis results workbook" in err


def test_rerun_names_a_renamed_data_sheet(tmp_path):
    results = _lasso_results(tmp_path)
    wb = openpyxl.load_workbook(results)
    wb["lab"].title = "lab (old)"
    wb.save(results)
    code, _, err = _main(["rerun", str(results)], tmp_path)
    assert code == 2 and "'lab'" in err and "'lab (old)'" in err


def test_rerun_of_a_workbook_study_reads_the_sheet_it_read(tmp_path):
    # a workbook whose data sheet is not named after the file, fitted without --sheet (the first
    # visible sheet is read and recorded with the design), written to a new book and in place
    rng = np.random.default_rng(8)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Pricing sheet"
    ws.append(["demand", "price", "promo", "season"])
    for _ in range(50):
        x = rng.normal(size=3)
        ws.append([float(10 - 2 * x[0] + x[1] + rng.normal(0, 0.3)), *map(float, x)])
    book = tmp_path / "pricing.xlsx"
    wb.save(book)
    argv = ["fit", str(book), "--response", "demand", "--methods", "lasso", "--folds", "5"]
    results = tmp_path / "pr_fit.xlsx"
    code, _, err = _main([*argv, "--out", str(results)], tmp_path)
    assert code == 0, err
    code, out, err = _main(["rerun", str(results), "--json"], tmp_path)
    assert code == 0, err
    assert json.loads(out)["reproduced"] is True
    code, _, err = _main([*argv, "--in-place"], tmp_path)
    assert code == 0, err
    code, out, err = _main(["rerun", str(book), "--json"], tmp_path)
    assert code == 0, err
    assert json.loads(out)["reproduced"] is True


def test_iso_dates_of_a_text_file_are_dates_in_the_copied_sheet_and_rerun_the_same(tmp_path):
    # a colleague sorts and filters by date in the results workbook: ISO 8601 dates of a text
    # file are copied as date cells (the same days), and the study still reproduces from it
    import datetime as dt

    import openpyxl

    rng = np.random.default_rng(6)
    lines = ["day,y,x"]
    for i in range(60):
        day = dt.date(2024, 1, 1) + dt.timedelta(days=3 * i)
        x = float(rng.normal())
        lines.append(f"{day.isoformat()},{1 + 0.01 * i + x + rng.normal(0, 0.2)!r},{x!r}")
    source = tmp_path / "daily.csv"
    source.write_text("\n".join(lines) + "\n")
    results = tmp_path / "results.xlsx"
    argv = ["fit", str(source), "--response", "y", "--methods", "lasso", "--folds", "5"]
    code, _, err = _main([*argv, "--out", str(results)], tmp_path)
    assert code == 0, err
    sheet = openpyxl.load_workbook(results)["daily"]
    assert sheet.cell(2, 1).value == dt.datetime(2024, 1, 1)
    assert sheet.cell(2, 1).number_format == "yyyy-mm-dd"
    code, out, err = _main(["rerun", str(results), "--json"], tmp_path)
    assert code == 0 and json.loads(out)["reproduced"] is True, err
    # a date before 1900 has no date cell in a spreadsheet: it stays text, as written
    from engine.report.data_copy import _iso_date

    assert _iso_date("1899-12-31") is None and _iso_date("1900-01-01") == dt.datetime(1900, 1, 1)
