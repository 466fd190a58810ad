"""The demo workbook: deterministic, shaped as documented, and carrying the truth it claims.

The data are simulated with a known truth (stated as such): the checks fit ordinary least
squares on the true columns with statsmodels and numpy (two routes that must agree) and ask that
every true coefficient lies within four standard errors of the estimate.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import openpyxl
import pandas as pd
import pytest
import statsmodels.api as sm

import demo
from demo import generate as g

COMMITTED = Path(g.__file__).with_name("tamis_demo.xlsx")
TRUTH_MD = Path(g.__file__).with_name("TRUTH.md")


def _cells(path: Path, data_only: bool) -> dict[str, list[tuple]]:
    """Every sheet as rows of (value, data_type) pairs, read by openpyxl."""
    book = openpyxl.load_workbook(path, read_only=True, data_only=data_only)
    try:
        out = {}
        for ws in book.worksheets:
            out[ws.title] = [
                tuple((c.value, getattr(c, "data_type", None)) for c in row)
                for row in ws.iter_rows()
            ]
        return out
    finally:
        book.close()


@pytest.fixture(scope="module")
def rebuilt(tmp_path_factory) -> Path:
    return g.build_demo_workbook(tmp_path_factory.mktemp("demo") / "again.xlsx")


@pytest.fixture(scope="module")
def bakery() -> pd.DataFrame:
    """The committed "Bakery demand" sheet parsed cell by cell the way a careful analyst would."""
    book = openpyxl.load_workbook(COMMITTED, read_only=True, data_only=True)
    try:
        rows = list(book[g.BAKERY_SHEET].iter_rows(values_only=True))
    finally:
        book.close()
    header = rows[g.BAKERY_HEADER_ROW - 1]
    body = [r for r in rows[g.BAKERY_HEADER_ROW :] if any(v is not None for v in r)]

    def number(v):
        if isinstance(v, str):
            if v.startswith("#"):
                return np.nan
            return float(v.replace(",", "").strip())
        return np.nan if v is None else float(v)

    frame = pd.DataFrame(body, columns=header)
    for name in (
        "loaves_sold",
        "footfall_count",
        "price",
        "tourism_index",
        "mean_temp_c",
        "rain_mm",
    ):
        frame[name] = frame[name].map(number)
    return frame


def test_same_seed_gives_the_committed_cell_values(rebuilt):
    # invariant: regenerating with the default seed reproduces the shipped file cell for cell,
    # both the cached values and the formulas
    for data_only in (True, False):
        assert _cells(rebuilt, data_only) == _cells(COMMITTED, data_only)


def test_another_seed_gives_other_values():
    # invariant: the seed is what decides the numbers (a generator ignoring it would pass the above)
    a, b = g.roastery_frame(1), g.roastery_frame(2)
    assert list(a.columns) == list(b.columns)
    assert not np.allclose(a[g.ROASTERY_RESPONSE], b[g.ROASTERY_RESPONSE])


def test_shipped_path_and_size():
    assert demo.shipped_workbook() == COMMITTED
    assert COMMITTED.stat().st_size < 1.5e6


def test_sheets_and_shapes_as_documented():
    book = openpyxl.load_workbook(COMMITTED, read_only=True, data_only=True)
    try:
        assert book.sheetnames == [g.ROASTERY_SHEET, g.BAKERY_SHEET, g.ABOUT_SHEET]
        roast = list(book[g.ROASTERY_SHEET].iter_rows(values_only=True))
        bake = list(book[g.BAKERY_SHEET].iter_rows(values_only=True))
    finally:
        book.close()
    # roastery: heading row + 96 lots; lot_id, 240 numeric candidates, cup_score
    assert len(roast) == 1 + 96
    header = roast[0]
    assert header[0] == "lot_id" and header[-1] == g.ROASTERY_RESPONSE
    assert len(header) == 1 + 240 + 1
    assert all(isinstance(v, float | int) for row in roast[1:] for v in row[1:])
    assert len(set(r[0] for r in roast[1:])) == 96  # lot_id is unique: an identifier
    assert len(header) - 2 > len(roast) - 1  # more candidates than rows
    assert all(80 <= row[-1] <= 90 for row in roast[1:])
    # bakery: two note rows, headings on row 3, 936 data rows and 3 blank rows
    bheader = bake[g.BAKERY_HEADER_ROW - 1]
    assert bake[0][0] and bake[1][0] and all(v is None for v in bake[0][1:])
    assert bheader[0] == "week_start" and bheader[-1] == g.BAKERY_RESPONSE
    assert len(bheader) == 45 + 1
    body = bake[g.BAKERY_HEADER_ROW :]
    blank = [r for r in body if all(v is None for v in r)]
    assert len(blank) == 3
    assert len(body) - len(blank) == 6 * 156
    col = {name: j for j, name in enumerate(bheader)}
    data = [r for r in body if any(v is not None for v in r)]
    assert {r[col["promotion"]] for r in data} == set(g.BAKERY_LEVEL_TRUTH["promotion"])
    assert {r[col["bakery"]] for r in data} == set(g.BAKERY_LEVEL_TRUTH["bakery"])
    assert {r[col["school_holiday"]] for r in data} == {"yes", "no"}


def test_bakery_mess_is_there(rebuilt):
    book = openpyxl.load_workbook(COMMITTED, read_only=True, data_only=True)
    try:
        ws = book[g.BAKERY_SHEET]
        header = [c.value for c in next(ws.iter_rows(min_row=3, max_row=3))]
        errors: dict[str, list[str]] = {}
        text_numbers: dict[str, int] = {}
        for row in ws.iter_rows(min_row=4):
            for name, cell in zip(header, row):
                if cell.data_type == "e":
                    errors.setdefault(name, []).append(cell.value)
                elif isinstance(cell.value, str) and re.fullmatch(r"\s*[\d,]+\s*", cell.value):
                    text_numbers[name] = text_numbers.get(name, 0) + 1
    finally:
        book.close()
    clean = g.bakery_frame()
    assert errors["sunshine_hours"] == ["#N/A"] * 6
    assert errors["rain_per_wet_day_mm"] == ["#DIV/0!"] * int((clean["rain_days"] == 0).sum())
    assert 0 < len(errors["rain_per_wet_day_mm"]) < 40  # "a few", as documented
    assert text_numbers == {"footfall_count": 45, "loaves_sold": 9}


def test_bakery_truth_recovered_by_least_squares_on_the_true_columns(bakery):
    # Source: statsmodels OLS (reference library) and numpy.linalg.lstsq, two routes that must
    # agree; simulated data with a known truth.
    frame = bakery.copy()
    for name in ("school_holiday", "local_event"):
        frame[name] = (frame[name] == "yes").astype(float)
    shops = list(g.BAKERY_LEVEL_TRUTH["bakery"])
    promos = [p for p in g.BAKERY_LEVEL_TRUTH["promotion"] if p != "none"]
    X = pd.concat(
        [
            pd.DataFrame({f"bakery={s}": (frame["bakery"] == s).astype(float) for s in shops}),
            pd.DataFrame(
                {f"promotion={p}": (frame["promotion"] == p).astype(float) for p in promos}
            ),
            frame[list(g.BAKERY_TRUTH)],
        ],
        axis=1,
    )
    y = frame[g.BAKERY_RESPONSE].to_numpy()
    assert not np.isnan(X.to_numpy()).any() and not np.isnan(y).any()
    fit = sm.OLS(
        y, X
    ).fit()  # one dummy per shop and no common intercept: levels are the shop bases
    beta_np, *_ = np.linalg.lstsq(X.to_numpy(), y, rcond=None)
    np.testing.assert_allclose(beta_np, fit.params.to_numpy(), rtol=1e-7, atol=1e-9)

    truth = {f"bakery={s}": v for s, v in g.BAKERY_LEVEL_TRUTH["bakery"].items()}
    truth |= {f"promotion={p}": g.BAKERY_LEVEL_TRUTH["promotion"][p] for p in promos}
    truth |= g.BAKERY_TRUTH
    z = {name: (fit.params[name] - value) / fit.bse[name] for name, value in truth.items()}
    assert all(abs(v) < 4.0 for v in z.values()), z
    # the residual spread matches the documented noise (rounding to whole loaves adds ~1/12)
    assert np.sqrt(fit.scale) == pytest.approx(g.BAKERY_NOISE_SD, rel=0.1)


def test_plain_price_regression_is_biased_by_design(bakery):
    # invariant of the scenario: price reacts to season, events and promotions, so demand on
    # price alone misses the true effect by far more than its standard error (statsmodels OLS)
    X = sm.add_constant(bakery[["price"]])
    naive = sm.OLS(bakery[g.BAKERY_RESPONSE], X).fit()
    assert abs(naive.params["price"] - g.BAKERY_TRUTH["price"]) > 8 * naive.bse["price"]


def test_roastery_truth_recovered_by_least_squares_on_the_true_columns():
    # Source: statsmodels OLS vs numpy.linalg.lstsq; simulated data with a known truth.
    book = openpyxl.load_workbook(COMMITTED, read_only=True, data_only=True)
    try:
        rows = list(book[g.ROASTERY_SHEET].iter_rows(values_only=True))
    finally:
        book.close()
    frame = pd.DataFrame(rows[1:], columns=rows[0])
    X = sm.add_constant(frame[list(g.ROASTERY_TRUTH)].astype(float))
    y = frame[g.ROASTERY_RESPONSE].astype(float).to_numpy()
    fit = sm.OLS(y, X).fit()
    beta_np, *_ = np.linalg.lstsq(X.to_numpy(), y, rcond=None)
    np.testing.assert_allclose(beta_np, fit.params.to_numpy(), rtol=1e-6)
    truth = {"const": g.ROASTERY_INTERCEPT} | g.ROASTERY_TRUTH
    z = {name: (fit.params[name] - value) / fit.bse[name] for name, value in truth.items()}
    assert all(abs(v) < 4.0 for v in z.values()), z
    assert np.sqrt(fit.scale) == pytest.approx(g.ROASTERY_NOISE_SD, rel=0.2)


def test_truth_page_lists_the_coefficients_the_code_uses():
    # two routes: the documented table and the constants that generated the data
    text = TRUTH_MD.read_text(encoding="utf-8")
    table = {m[1]: float(m[2]) for m in re.finditer(r"^\| `(\w+)` \| (-?[\d.]+) \|", text, re.M)}
    assert table == g.ROASTERY_TRUTH | g.BAKERY_TRUTH
    for shop, level in g.BAKERY_LEVEL_TRUTH["bakery"].items():
        assert f"{shop} {level:g}" in text
    for promo, shift in g.BAKERY_LEVEL_TRUTH["promotion"].items():
        if promo != "none":
            assert f"{promo} {shift:+g}" in text
    assert f"cup_score = {g.ROASTERY_INTERCEPT}" in text
    assert str(g.DEFAULT_SEED) in text
