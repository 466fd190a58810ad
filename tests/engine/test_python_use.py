"""The engine as a Python user meets it: the README's example runs as written, and new rows
held in a pandas DataFrame score as the same rows read from a workbook do.

The README example is checked against the README's own command-line figures for the same
study (lasso penalty and cross-validated error of the roastery sheet, seed 1), which the
command line prints from the same engine; the DataFrame route against the workbook route
(pandas writes the workbook, a general-purpose library).
"""

from __future__ import annotations

import re
import runpy
import shutil
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import engine

ROOT = Path(__file__).resolve().parents[2]


def test_the_readme_python_example_runs_as_written(tmp_path, monkeypatch, capsys):
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    snippet = re.search(r"```python\n(.*?)```", text, re.S)
    assert snippet, "the README has a Python example"
    shutil.copy(ROOT / "demo" / "tamis_demo.xlsx", tmp_path / "tamis-demo.xlsx")
    (tmp_path / "example.py").write_text(snippet.group(1), encoding="utf-8")
    monkeypatch.chdir(tmp_path)
    names = runpy.run_path(str(tmp_path / "example.py"))
    lasso = names["lasso"]
    # the figures the README's command-line example prints for the same study
    cli = re.search(r"\n\s+lasso\s+([\d.]+)\s+([\d.]+)", text)
    assert cli is not None
    assert f"{lasso.penalty:.4f}" == cli.group(1) and f"{lasso.cv_error:.4f}" == cli.group(2)
    assert len(names["predictions"]) == 96 and np.isfinite(names["predictions"]).all()
    assert (tmp_path / "roastery-lasso.xlsx").exists()
    assert "Selection is not causation" in capsys.readouterr().out


def test_new_rows_in_a_dataframe_score_like_the_same_rows_in_a_workbook(tmp_path):
    rng = np.random.default_rng(3)
    n = 60
    frame = pd.DataFrame(
        {
            "sold": rng.normal(100, 10, n),
            "price": rng.uniform(1, 3, n),
            "region": rng.choice(["north", "south", "east"], n),
            "promo": rng.random(n) < 0.3,
            "day": pd.date_range("2025-01-06", periods=n, freq="D"),
        }
    )
    frame["sold"] += -8 * frame["price"] + 5 * frame["promo"]
    book = tmp_path / "sales.xlsx"
    frame.to_excel(book, index=False)
    result = engine.run_study(
        engine.StudySpec(source=book, response="sold", methods=["ols"], folds=5)
    )
    model = engine.ScoringModel.from_result(result)
    new = frame.drop(columns=["sold"]).iloc[:12].copy()
    new.loc[new.index[2], "price"] = np.nan  # no value: no prediction, said in the note
    new.loc[new.index[3], "region"] = "west"  # a level never seen
    new_book = tmp_path / "new.xlsx"
    new.to_excel(new_book, index=False)
    from_frame, notes = model.predict_with_notes(new)
    from_book, book_notes = model.predict_with_notes(engine.read_table(new_book))
    np.testing.assert_allclose(from_frame, from_book, rtol=1e-12)
    assert notes == book_notes and "no usable value in 'price'" in notes[2]
    assert "'west'" in notes[3]
    with pytest.raises(TypeError, match="expected a pandas DataFrame or an intake Table"):
        model.predict([[1.0, "north"]])
    # a label used twice among the new rows: the first such column is read, and it is said
    twice = pd.concat([new, new[["price"]] * 100], axis=1)
    with pytest.warns(
        engine.TamisWarning, match="new rows: 1 column repeats an earlier heading"
    ) as said:
        again = model.predict(twice)
    assert said[0].filename == __file__  # pointed at the user's line, not the engine's
    np.testing.assert_allclose(again, from_frame, rtol=1e-12)


def test_a_dataframe_with_missing_dates_and_a_repeated_label_reads_like_a_sheet():
    # pandas marks missing values as NaT, NA and NaN; a label used twice names two columns
    frame = pd.DataFrame(
        {
            "day": pd.to_datetime(["2024-01-01", None, "2024-01-03"]),
            "x": [1.0, np.nan, 3.0],
            "count": pd.array([1, None, 3], dtype="Int64"),
        }
    )
    frame = pd.concat([frame, frame[["x"]]], axis=1)
    table = engine.read_frame(frame)
    assert [c.name for c in table.columns] == ["day", "x", "count", "x (2)"]
    assert [c.missing for c in table.columns] == [1, 1, 1, 1]
    assert np.isnat(table.column("day").values[1])
    assert table.row_numbers.tolist() == [2, 3, 4]  # as on a sheet with headings in row 1
    # and said, in the sheet reader's words: a name alone means the first such column
    assert table.warnings == [
        "1 column repeats an earlier heading and is read under a numbered name "
        "(column 4 'x (2)'); a name alone means the first column with that heading"
    ]
    assert table.column("x (2)").notes[0].startswith("heading 'x' is also used")


def test_time_zone_aware_stamps_keep_their_local_day():
    # 00:30 in Berlin is 23:30 the day before in UTC; a sheet shows the local wall-clock time,
    # and so does a DataFrame read as one (pandas' tz_localize, general-purpose library)
    frame = pd.DataFrame(
        {
            "day": pd.to_datetime(["2024-03-01 00:30", "2024-03-02 00:30"]).tz_localize(
                "Europe/Berlin"
            ),
            "x": [1.0, 2.0],
        }
    )
    values = engine.read_frame(frame).column("day").values
    assert [str(v)[:16] for v in values] == ["2024-03-01T00:30", "2024-03-02T00:30"]
