"""Near-duplicate detection: pairwise-complete correlations checked against pandas and numpy."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from engine.intake.classify import classify_column
from engine.intake.similarity import (
    NEAR_DUPLICATE_CORRELATION,
    mark_near_duplicates,
    pairwise_correlation,
)


def test_pairwise_correlation_matches_pandas_with_missing_values():
    # Simulated data (stated as such): 6 columns with holes in different rows.
    rng = np.random.default_rng(7)
    x = rng.normal(size=(300, 6)) + 50.0
    x[:, 3] = 2.0 * x[:, 0] + rng.normal(scale=0.1, size=300)
    x[rng.random(x.shape) < 0.1] = np.nan
    ours, n_common = pairwise_correlation(x)
    # Source: general-purpose reference library pandas (DataFrame.corr uses pairwise-complete rows).
    ref = pd.DataFrame(x).corr().to_numpy()
    assert np.allclose(ours, ref, atol=1e-10)
    present = ~np.isnan(x)
    assert n_common[0, 3] == np.sum(present[:, 0] & present[:, 3])


def test_pairwise_correlation_matches_numpy_without_missing_values():
    rng = np.random.default_rng(8)
    x = rng.normal(size=(50, 4)) * [1, 10, 100, 1e6] + [0, 1e3, -5, 1e7]
    ours, _ = pairwise_correlation(x)
    # Source: general-purpose reference library numpy (numpy.corrcoef).
    assert np.allclose(ours, np.corrcoef(x, rowvar=False), atol=1e-9)


def _number_columns(data: dict[str, np.ndarray]):
    cols = []
    for name, values in data.items():
        cells = np.empty(len(values), dtype=object)
        cells[:] = [float(v) if np.isfinite(v) else "" for v in values]
        cols.append(
            classify_column(
                cells, name=name, heading=name, letter="A", row_numbers=np.arange(len(values)) + 2
            )
        )
    return cols


def test_marks_copies_scaled_copies_and_mirrors_but_not_look_alikes():
    rng = np.random.default_rng(3)
    base = rng.normal(size=200)
    noisy = base + rng.normal(scale=0.05, size=200)  # correlation near 0.9987: not flagged
    copy = base.copy()
    copy[5] = np.nan  # a hole in the copy does not hide it
    cols = _number_columns(
        {
            "base": base,
            "noisy": noisy,
            "copy": copy,
            "cents": base * 100 + 3,
            "mirror": -base,
            "constant": np.full(200, 4.0),
        }
    )
    mark_near_duplicates(cols)
    found = {c.name: c.near_duplicate_of for c in cols}
    assert np.corrcoef(base, noisy)[0, 1] < NEAR_DUPLICATE_CORRELATION
    assert found == {
        "base": None,
        "noisy": None,
        "copy": "base",
        "cents": "base",
        "mirror": "base",
        "constant": None,
    }
    assert "same values as column 'base'" in cols[2].notes
    assert any("correlation -1" in n for n in cols[4].notes)


def test_too_few_common_rows_are_not_compared():
    a = np.array([1.0, 2.0, np.nan, np.nan, np.nan])
    b = np.array([np.nan, np.nan, 3.0, 4.0, 5.0])
    r, n = pairwise_correlation(np.column_stack([a, b]))
    assert n[0, 1] == 0 and np.isnan(r[0, 1])
    assert r[0, 0] == pytest.approx(np.nan, nan_ok=True)  # 2 rows only: below the minimum of 3


def test_columns_compared_in_blocks_find_the_same_first_earlier_column(monkeypatch):
    # Simulated data (stated as such): copies placed within and across blocks of columns, with
    # holes. Source of the expected answer: pandas' pairwise-complete DataFrame.corr, the first
    # earlier column beyond the threshold (general-purpose reference library).
    from engine.intake import similarity

    rng = np.random.default_rng(11)
    x = rng.normal(size=(60, 14))
    x[:, 5] = x[:, 1] * 3 - 2  # same block as its original (blocks of 4: 4..7 vs 0..3)
    x[:, 9] = x[:, 1]  # two copies of column 1: the first earlier one is named
    x[:, 12] = -x[:, 6]
    x[:, 13] = x[:, 12]
    x[rng.random(x.shape) < 0.08] = np.nan
    ref = pd.DataFrame(x).corr().to_numpy()
    expected = []
    for j in range(14):
        hits = [i for i in range(j) if abs(ref[i, j]) > NEAR_DUPLICATE_CORRELATION]
        expected.append(f"c{hits[0]}" if hits else None)
    monkeypatch.setattr(similarity, "_BLOCK_COLUMNS", 4)
    cols = _number_columns({f"c{j}": x[:, j] for j in range(14)})
    mark_near_duplicates(cols)
    assert [c.near_duplicate_of for c in cols] == expected
    assert expected[9] == "c1" and expected[13] == "c6"


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_projection_screen_finds_what_the_exact_pass_finds(monkeypatch, seed):
    # Simulated wide data (stated as such) with planted copies, scaled copies and mirrors,
    # among gap-free columns and columns with holes. Source of the expected answer: pandas'
    # pairwise-complete DataFrame.corr (general-purpose reference library), the first earlier
    # column beyond the threshold; the screen must neither miss one nor name another.
    from engine.intake import similarity

    rng = np.random.default_rng(seed)
    n, p = 80, 300
    x = rng.normal(size=(n, p))
    for _ in range(25):
        i, j = sorted(rng.choice(p, size=2, replace=False))
        x[:, j] = rng.choice([-3.0, -1.0, 0.5, 1.0, 2.0]) * x[:, i] + rng.normal()
    # a pair just inside and one just outside the threshold
    x[:, 40] = x[:, 10] + 0.005 * np.std(x[:, 10]) * rng.normal(size=n)  # r about 0.99999
    x[:, 41] = x[:, 11] + 0.03 * np.std(x[:, 11]) * rng.normal(size=n)  # r about 0.9996
    holes = rng.choice(p, size=30, replace=False)
    for j in holes:
        x[rng.random(n) < 0.1, j] = np.nan
    ref = pd.DataFrame(x).corr().to_numpy()
    expected = []
    for j in range(p):
        hits = [i for i in range(j) if abs(ref[i, j]) > NEAR_DUPLICATE_CORRELATION]
        expected.append(f"c{hits[0]}" if hits else None)
    monkeypatch.setattr(similarity, "_SCREEN_FROM", 2)  # screen even this small sheet
    cols = _number_columns({f"c{j}": x[:, j] for j in range(p)})
    mark_near_duplicates(cols)
    assert [c.near_duplicate_of for c in cols] == expected
    assert expected[40] == "c10" and expected[41] is None
    assert sum(e is not None for e in expected) >= 20
