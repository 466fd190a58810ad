"""Tamis demo data: one invented workbook with a known truth, so users can see what methods recover.

- ``demo.generate``            builds the workbook from a fixed seed (``python -m demo.generate``)
- ``demo.generate.build_demo_workbook(path, seed=20261201) -> Path``   write it anywhere
- ``demo.tamis_demo.xlsx``     the generated workbook, shipped as package data
- ``demo/TRUTH.md``            the true coefficients of both scenarios, in plain words

Sheets of the workbook: "Roastery lots" (96 coffee lots, 241 candidate columns, response
``cup_score``), "Bakery demand" (936 bakery-weeks, 45 candidates, response ``loaves_sold``,
focal column ``price``, headings on sheet row 3) and "About".
"""

from __future__ import annotations

__all__ = ["shipped_workbook", "build_demo_workbook"]

from pathlib import Path


def shipped_workbook() -> Path:
    """Path of the demo workbook installed with the package (read it; copy before changing)."""
    return Path(__file__).with_name("tamis_demo.xlsx")


def build_demo_workbook(path: str | Path, seed: int | None = None) -> Path:
    """Generate the demo workbook at ``path``; see ``demo.generate.build_demo_workbook``."""
    from demo.generate import DEFAULT_SEED
    from demo.generate import build_demo_workbook as _build

    return _build(path, DEFAULT_SEED if seed is None else seed)
