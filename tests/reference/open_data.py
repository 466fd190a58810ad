"""Open datasets as workbooks, shared by the reference checks.

- The Engel food expenditure data: 235 Belgian working-class households, income and food
  expenditure (Koenker & Bassett 1982, Econometrica 50), shipped with statsmodels.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import openpyxl


def engel() -> tuple[np.ndarray, np.ndarray]:
    """(income, food expenditure) of the 235 households, as floats."""
    from statsmodels.datasets import engel as data

    d = data.load_pandas().data
    return d["income"].to_numpy(dtype=float), d["foodexp"].to_numpy(dtype=float)


def engel_book(
    path: Path, income: np.ndarray | None = None, food: np.ndarray | None = None
) -> Path:
    """The Engel data (or the given columns in its place) in sheet "Households": headings
    income, foodexp on row 1, household i on sheet row i + 2."""
    if income is None or food is None:
        income, food = engel()
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Households"
    ws.append(["income", "foodexp"])
    for a, b in zip(income, food):
        ws.append([float(a), float(b)])
    wb.save(path)
    return path
