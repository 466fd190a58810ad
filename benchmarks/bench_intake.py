"""Intake speed: Tamis read_table versus pandas.read_excel(engine="openpyxl"), one run.

Writes a 100,000 x 50 sheet of numbers (xlsxwriter, constant_memory) to a temporary folder,
reads it with both, checks they agree, and prints the times and their ratio. Target: Tamis at
least 5x faster. Not a test: run `python benchmarks/bench_intake.py [ROWS COLS]`.
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

import numpy as np


def write_sheet(path: Path, rows: int, cols: int) -> None:
    import xlsxwriter

    rng = np.random.default_rng(20240601)
    book = xlsxwriter.Workbook(str(path), {"constant_memory": True})
    sheet = book.add_worksheet("Data")
    sheet.write_row(0, 0, [f"x{j + 1}" for j in range(cols)])
    block = rng.normal(size=(rows, cols)).round(6)
    for i in range(rows):
        sheet.write_row(i + 1, 0, block[i].tolist())
    book.close()


def main(argv: list[str]) -> int:
    rows = int(argv[0]) if argv else 100_000
    cols = int(argv[1]) if len(argv) > 1 else 50
    import pandas as pd

    from engine.intake import read_table

    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "bench.xlsx"
        t0 = time.perf_counter()
        write_sheet(path, rows, cols)
        print(
            f"wrote {rows} x {cols} sheet ({path.stat().st_size / 1e6:.1f} MB) in {time.perf_counter() - t0:.1f} s"
        )

        t0 = time.perf_counter()
        table = read_table(path)
        t_tamis = time.perf_counter() - t0
        print(f"Tamis read_table:                      {t_tamis:8.2f} s")

        t0 = time.perf_counter()
        frame = pd.read_excel(path, sheet_name="Data", engine="openpyxl")
        t_pandas = time.perf_counter() - t0
        print(f"pandas.read_excel(engine='openpyxl'):  {t_pandas:8.2f} s")

        ours = np.column_stack([c.values for c in table.columns])
        same = ours.shape == frame.shape and np.allclose(ours, frame.to_numpy(dtype=float))
        print(f"values agree: {same}")
        print(f"ratio pandas/Tamis: {t_pandas / t_tamis:.1f}x (target >= 5x)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
