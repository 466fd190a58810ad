"""Far-out values named in a number column's notes when the sheet is read (Tukey's outer fences,
engine.intake.far_out; the fences themselves are checked in tests/reference/
test_unusual_rows_reference.py)."""

from __future__ import annotations

import numpy as np
import openpyxl

from engine.intake import read_table


def _book(path, values, name="weight_g"):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Batches"
    ws.append(["batch", name])
    for i, v in enumerate(values):
        ws.append([f"B{i:03d}", v])
    wb.save(path)
    return path


def test_a_slipped_decimal_point_is_named_by_cell(tmp_path):
    rng = np.random.default_rng(5)
    values = [float(v) for v in np.round(rng.normal(250, 6, 120), 1)]
    values[40] = values[40] * 10  # 2500 typed for 250.0
    table = read_table(_book(tmp_path / "b.xlsx", values))
    col = next(c for c in table.columns if c.name == "weight_g")
    note = next(n for n in col.notes if "far outside" in n)
    assert note.startswith("1 value far outside the rest")
    assert "B42 (" in note  # data row 41 is sheet row 42 (headings on row 1)


def test_a_long_right_tail_of_true_values_is_not_named(tmp_path):
    rng = np.random.default_rng(6)
    values = [float(v) for v in np.round(rng.lognormal(3, 0.9, 300), 2)]
    table = read_table(_book(tmp_path / "t.xlsx", values, "order_value"))
    col = next(c for c in table.columns if c.name == "order_value")
    assert not any("far outside" in n for n in col.notes)


def test_values_put_in_for_results_below_a_limit_are_not_called_far_out(tmp_path):
    # "<0.5" is read as 0.25 (half the limit, said in its own note); beside moisture values
    # around 12 that substitute lies far out, but it is intake's, not a slip
    from engine.study import run_study
    from engine.study_spec import StudySpec

    rng = np.random.default_rng(8)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["y", "moisture"])
    for i in range(80):
        m = float(np.round(rng.normal(12, 0.8), 2))
        ws.append([float(2 + 0.3 * m + rng.normal(0, 0.2)), "<0.5" if i % 16 == 0 else m])
    book = tmp_path / "lab.xlsx"
    wb.save(book)
    table = read_table(book)
    col = next(c for c in table.columns if c.name == "moisture")
    assert any("below a detection limit" in n for n in col.notes)
    assert not any("far outside" in n for n in col.notes)
    res = run_study(StudySpec(source=str(book), response="y", methods=("ols",), folds=5))
    assert res.far_cells == []
    assert not any("long tail" in w or "far outside" in w for w in res.warnings)
