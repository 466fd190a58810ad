"""Benchmark: adding our result sheets in place to a workbook with a large user sheet.

Not a test. Prints time and peak memory (each measured in a fresh child process, peak resident
set size from getrusage) of

- ours: ``write_results(result, in_place=True)`` on a workbook whose user sheet holds
  ROWS x COLS numbers, with large tables of our own (a path of 2,000 candidates x 100 penalties,
  fitted values for 100,000 rows) written by xlsxwriter in constant_memory mode;
- ours again on a user sheet a tenth that size (memory should not follow the user's sheet);
- the reference: openpyxl load_workbook + add one sheet + save on the same file.

Target: ours at most a tenth of the reference time, memory independent of the user's sheet.

    python benchmarks/bench_inplace.py [--rows 100000] [--cols 50] [--skip-openpyxl]
"""

from __future__ import annotations

import argparse
import json
import resource
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

N_CANDIDATES = 2000
N_PENALTIES = 100
N_FITTED = 100_000


def make_user_book(path: Path, rows: int, cols: int) -> None:
    import xlsxwriter

    wb = xlsxwriter.Workbook(str(path), {"constant_memory": True})
    ws = wb.add_worksheet("Data")
    rng = np.random.default_rng(0)
    for c in range(cols):
        ws.write_string(0, c, f"x{c + 1}")
    block = 10_000
    for start in range(0, rows, block):
        values = rng.normal(size=(min(block, rows - start), cols))
        for i, row in enumerate(values):
            r = start + 1 + i
            for c, v in enumerate(row):
                ws.write_number(r, c, float(v))
    wb.close()


def make_result(source: Path):
    """A study result of the benchmark's size (synthetic numbers; only sizes matter here)."""
    from engine.design import Design, Encoding
    from engine.fitting.path import PenaltyPath
    from engine.study_result import ModelResult, StudyResult
    from engine.study_spec import StudySpec
    from engine.tuning.curve import ValidationCurve

    rng = np.random.default_rng(1)
    p, L, n = N_CANDIDATES, N_PENALTIES, N_FITTED
    names = [f"x{j + 1}" for j in range(p)]
    encs = [Encoding(nm, nm, "A", "number") for nm in names]
    row = rng.normal(size=p)
    X = np.broadcast_to(row, (n, p))  # the design's size without its memory (only row 0-4 are read)
    y = rng.normal(size=n)
    design = Design(
        source=str(source),
        sheet="Data",
        header_row=1,
        response="y",
        names=names,
        encodings=encs,
        X=X,
        y=y,
        row_numbers=np.arange(2, n + 2),
        means=np.zeros(p),
        sds=np.ones(p),
    )
    pen = np.logspace(0, -3, L)
    B = rng.normal(size=(L, p)) * (rng.random((L, p)) < np.linspace(0.01, 1, L)[:, None])
    B[:, :40] = rng.normal(size=(L, 40))  # at least 40 columns nonzero everywhere
    path = PenaltyPath(pen, B, np.ones(B.shape[1]), np.zeros(L), 1.0)
    mean = 1 + (np.log(pen) + 3) ** 2
    se = np.full(L, 0.1)
    curve = ValidationCurve(
        pen,
        "penalty",
        mean,
        se,
        (B != 0).sum(axis=1),
        np.vstack([mean] * 5),
        int(np.argmin(mean)),
        int(np.argmin(mean)) - 3,
    )
    k = int(np.argmin(mean))
    coef = {nm: (float(B[k, j]) if j < 40 else 0.0) for j, nm in enumerate(names)}
    lasso = ModelResult(
        "lasso",
        0.0,
        coef,
        dict(coef),
        [nm for nm in names[:40]],
        penalty=float(pen[k]),
        mix=1.0,
        choice="min",
        cv_error=float(mean[k]),
        cv_error_se=0.1,
        r2=0.5,
        fitted=y + rng.normal(size=n) * 0.1,
        path=path,
        curve=curve,
    )
    spec = StudySpec(source=str(source), response="y", sheet="Data", methods=("lasso",))
    return StudyResult(spec=spec, design=design, models=[lasso], tool_version="bench")


def child(kind: str, path: str) -> None:
    t0 = time.perf_counter()
    if kind == "ours":
        from engine.report import write_results

        result = make_result(Path(path))
        t_built = time.perf_counter()
        write_results(result, in_place=True)
    else:
        import openpyxl

        t_built = t0
        wb = openpyxl.load_workbook(path)
        ws = wb.create_sheet("TM Summary")
        ws["A1"] = "results"
        wb.save(path)
    t1 = time.perf_counter()
    peak_kb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    print(
        json.dumps({"seconds": t1 - t0, "write_seconds": t1 - t_built, "peak_mb": peak_kb / 1024})
    )


def run_child(kind: str, path: Path) -> dict:
    out = subprocess.run(
        [sys.executable, __file__, "--child", kind, str(path)],
        capture_output=True,
        text=True,
        check=True,
    )
    return json.loads(out.stdout.strip().splitlines()[-1])


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--rows", type=int, default=100_000)
    ap.add_argument("--cols", type=int, default=50)
    ap.add_argument("--skip-openpyxl", action="store_true")
    ap.add_argument("--child", nargs=2, metavar=("KIND", "PATH"))
    a = ap.parse_args()
    if a.child:
        child(*a.child)
        return
    with tempfile.TemporaryDirectory(prefix="tamis-bench-") as tmp:
        big = Path(tmp) / "big.xlsx"
        small = Path(tmp) / "small.xlsx"
        t = time.perf_counter()
        make_user_book(big, a.rows, a.cols)
        make_user_book(small, a.rows // 10, a.cols)
        print(
            f"user workbooks: {a.rows} x {a.cols} numbers ({big.stat().st_size / 1e6:.1f} MB) and "
            f"{a.rows // 10} x {a.cols} ({small.stat().st_size / 1e6:.1f} MB), made in "
            f"{time.perf_counter() - t:.1f} s"
        )
        print(
            f"our tables: path {N_CANDIDATES} candidates x {N_PENALTIES} penalties, fitted values "
            f"for {N_FITTED} rows"
        )
        ref_copy = Path(tmp) / "reference.xlsx"
        shutil.copy(big, ref_copy)
        ours_big = run_child("ours", big)
        ours_small = run_child("ours", small)
        print(
            f"ours, large user sheet : {ours_big['seconds']:7.1f} s (writing {ours_big['write_seconds']:.1f} s), "
            f"peak {ours_big['peak_mb']:7.0f} MB, file {big.stat().st_size / 1e6:.1f} MB"
        )
        print(
            f"ours, user sheet / 10  : {ours_small['seconds']:7.1f} s (writing {ours_small['write_seconds']:.1f} s), "
            f"peak {ours_small['peak_mb']:7.0f} MB"
        )
        print(
            f"memory ratio large/small user sheet: {ours_big['peak_mb'] / ours_small['peak_mb']:.2f} "
            "(1.0 = independent of the user's sheet)"
        )
        if a.skip_openpyxl:
            ref = {"seconds": 107.0, "peak_mb": 2500.0}
            print("openpyxl reference     : 107 s, 2500 MB (figures measured earlier, not run now)")
        else:
            ref = run_child("openpyxl", ref_copy)
            print(
                f"openpyxl load+add+save : {ref['seconds']:7.1f} s, peak {ref['peak_mb']:7.0f} MB"
            )
        print(
            f"time ratio ours/openpyxl: {ours_big['seconds'] / ref['seconds']:.3f} (target <= 0.1); "
            f"memory ratio: {ours_big['peak_mb'] / ref['peak_mb']:.3f}"
        )


if __name__ == "__main__":
    main()
