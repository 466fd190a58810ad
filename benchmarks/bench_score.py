"""Speed of `tamis score` on many new rows (not a test).

Writes a workbook of simulated new rows (numbers and one category column), fits least squares
on its first rows, then times the three steps of scoring all rows: reading them (intake),
predicting, and writing the predictions workbook. The writing is compared with the reference
a scripting analyst would use, xlsxwriter writing the same cells one by one (constant-memory
mode), and the ratio is printed.

    python benchmarks/bench_score.py --rows 100000 --cols 20
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, os.path.join(os.path.dirname(__file__), ".."))
import engine  # noqa: E402, F401, I001

import numpy as np  # noqa: E402
import xlsxwriter  # noqa: E402


def make_book(path: Path, rows: int, cols: int, seed: int = 0) -> None:
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(rows, cols))
    levels = np.array(["north", "south", "east", "west"], dtype=object)
    region = levels[rng.integers(0, 4, rows)]
    y = 2.0 + X[:, 0] - 0.5 * X[:, 1] + (region == "east") + rng.normal(0, 0.3, rows)
    book = xlsxwriter.Workbook(str(path), {"constant_memory": True})
    ws = book.add_worksheet("Rows")
    ws.write_row(0, 0, ["y", "region", *[f"x{j}" for j in range(cols)]])
    for i in range(rows):
        ws.write_number(i + 1, 0, float(y[i]))
        ws.write_string(i + 1, 1, str(region[i]))
        for j in range(cols):
            ws.write_number(i + 1, 2 + j, float(X[i, j]))
    book.close()


def reference_write(path: Path, table, model, preds: np.ndarray) -> None:
    """The same cells written one by one with xlsxwriter."""
    book = xlsxwriter.Workbook(str(path), {"constant_memory": True})
    ws = book.add_worksheet("TM Predictions")
    cols = {c.name: c for c in table.columns}
    sources = model.sources
    ws.write_row(3, 0, ["Source row", *sources, "Prediction", "Note"])
    for i in range(table.n_rows):
        r = 4 + i
        ws.write_number(r, 0, int(table.row_numbers[i]))
        for c, s in enumerate(sources, start=1):
            v = cols[s].values[i]
            if isinstance(v, str):
                ws.write_string(r, c, v)
            elif v is not None and np.isfinite(v):
                ws.write_number(r, c, float(v))
        ws.write_number(r, len(sources) + 1, float(preds[i]))
    book.close()


def main(argv=None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rows", type=int, default=100_000)
    ap.add_argument("--cols", type=int, default=20)
    args = ap.parse_args(argv)
    from engine.intake import read_table
    from engine.report import ScoringModel
    from engine.report.predictions import write_predictions
    from engine.study import run_study
    from engine.study_spec import StudySpec

    with tempfile.TemporaryDirectory() as tmp:
        big = Path(tmp) / "rows.xlsx"
        small = Path(tmp) / "fit.xlsx"
        make_book(big, args.rows, args.cols)
        make_book(small, 300, args.cols, seed=1)
        res = run_study(StudySpec(source=str(small), response="y", methods=("ols",), folds=5))
        model = ScoringModel.from_result(res)
        t0 = time.perf_counter()
        table = read_table(big)
        t1 = time.perf_counter()
        preds, notes = model.predict_with_notes(table)
        t2 = time.perf_counter()
        write_predictions(table, model, preds, notes, big, Path(tmp) / "ours.xlsx", "bench")
        t3 = time.perf_counter()
        reference_write(Path(tmp) / "ref.xlsx", table, model, preds)
        t4 = time.perf_counter()
    cells = table.n_rows * (len(model.sources) + 2)
    print(
        f"{args.rows} rows x {args.cols + 2} columns ({cells:,} cells written): read "
        f"{t1 - t0:.2f} s, predict {t2 - t1:.2f} s, write {t3 - t2:.2f} s (a copy of the book "
        f"with the predictions sheet); xlsxwriter cell by cell {t4 - t3:.2f} s (that sheet "
        f"alone); ratio ours / reference {(t3 - t2) / (t4 - t3):.2f}"
    )


if __name__ == "__main__":
    main()
