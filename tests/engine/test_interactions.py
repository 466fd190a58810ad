"""Interactions: product columns in the design, refusals, scoring and the saved settings.

Known answers by hand (products of the encoded columns, computed with numpy on the same cells);
checks against statsmodels and LibreOffice are in tests/reference/test_interactions_reference.py.
"""

from __future__ import annotations

import io
import json

import numpy as np
import openpyxl
import pytest

from engine import cli
from engine.context import Context
from engine.design import build_design
from engine.errors import InputProblem
from engine.intake import read_table
from engine.report import load_scoring_model, write_results
from engine.study import run_study
from engine.study_spec import StudySpec


def _book(path, n=90, seed=4):
    rng = np.random.default_rng(seed)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Sales"
    ws.append(["units", "price", "promo", "shelf", "code"])
    # 'none' on half the rows: the most frequent level, so the reference one
    promos = ["none", "flyer", "none", "tv"]
    for i in range(n):
        price, promo, shelf = float(rng.uniform(1, 4)), promos[i % 4], float(rng.uniform(5, 9))
        slope = {"none": -10.0, "flyer": -14.0, "tv": -20.0}[promo]
        ws.append(
            [80 + slope * price + shelf + float(rng.normal(0, 1)), price, promo, shelf, f"C{i}"]
        )
    wb.save(path)
    return path


def _spec(book, **kw):
    kw.setdefault("methods", ("ols",))
    kw.setdefault("folds", 5)
    kw.setdefault("candidates", ("price", "promo", "shelf"))
    return StudySpec(source=str(book), response="units", **kw)


def test_a_number_and_a_category_give_one_product_per_level(tmp_path):
    book = _book(tmp_path / "s.xlsx")
    d = build_design(read_table(book), _spec(book, interactions=(("price", "promo"),)))
    assert d.names[-2:] == ["price × promo=flyer", "price × promo=tv"]
    j = d.names.index
    for level in ("flyer", "tv"):
        np.testing.assert_array_equal(
            d.X[:, j(f"price × promo={level}")], d.X[:, j("price")] * d.X[:, j(f"promo={level}")]
        )
    assert d.encodings[-1].kind == "product"
    assert d.encodings[-1].factors == ("price", "promo=tv")


def test_the_fit_recovers_slopes_that_differ_by_level(tmp_path):
    res = run_study(_spec(_book(tmp_path / "s.xlsx", n=300), interactions=(("promo", "price"),)))
    c = res.model("ols").coefficients
    # reference level: the most frequent, 'none' (slope -10)
    assert c["price"] == pytest.approx(-10.0, abs=0.4)
    assert c["promo=flyer × price"] == pytest.approx(-4.0, abs=0.6)
    assert c["promo=tv × price"] == pytest.approx(-10.0, abs=0.6)


@pytest.mark.parametrize(
    "pair, fragment",
    [
        (("price", "units"), "is in an interaction but is not a candidate"),
        (("price", "code"), "is in an interaction but is not a candidate"),
        (("promo", "promo"), "paired with itself, which adds its square"),
    ],
)
def test_an_interaction_outside_the_candidates_is_refused(tmp_path, pair, fragment):
    book = _book(tmp_path / "s.xlsx")
    with pytest.raises(InputProblem, match=fragment):
        run_study(_spec(book, interactions=(pair,)))


def test_scoring_a_kept_product_brings_its_factors_along(tmp_path):
    book = _book(tmp_path / "s.xlsx")
    res = run_study(_spec(book, interactions=(("price", "promo"),), methods=("ols", "lasso")))
    out = write_results(res, out=tmp_path / "r.xlsx")
    for method in ("ols", "lasso"):
        model = load_scoring_model(out, method)
        m = res.model(method)
        names = [e.name for e in model.encodings]
        for e in model.encodings:
            if e.kind == "product":
                assert set(e.factors) <= set(names)
        np.testing.assert_allclose(model.predict(read_table(book)), m.fitted, rtol=1e-12)
    rows = list(
        openpyxl.load_workbook(out, read_only=True)["TM Settings"].iter_rows(values_only=True)
    )
    assert rows[0][:2] == ("Tamis settings", 2)


def test_a_product_whose_factor_is_left_out_goes_too(tmp_path):
    # 'flag' is 1 on every row: constant, so left out; its product with price equals price and
    # would need the missing factor on the scoring sheet, so it is left out as well
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["y", "price", "flag", "other"])
    rng = np.random.default_rng(1)
    for _ in range(40):
        ws.append([float(rng.normal()), float(rng.uniform(1, 3)), 1.0, float(rng.normal())])
    wb.save(tmp_path / "f.xlsx")
    spec = StudySpec(
        source=str(tmp_path / "f.xlsx"), response="y", methods=("lasso",), folds=4,
        interactions=(("price", "flag"),),
    )  # fmt: skip
    res = run_study(spec)
    assert "price × flag" not in res.design.names
    assert any("price × flag" in w and "multiplies" in w for w in res.warnings)


def test_interactions_from_the_command_line_and_back_from_the_settings(tmp_path):
    book = _book(tmp_path / "s.xlsx")
    out, err = io.StringIO(), io.StringIO()
    argv = ["fit", str(book), "--response", "units", "--candidates", "price", "promo", "shelf",
            "--interact", "price", "promo", "--interact", "shelf", "price",
            "--methods", "ols", "--folds", "4", "--json", "--out", str(tmp_path / "r.xlsx")]  # fmt: skip
    assert cli.main(argv, Context(stdout=out, stderr=err, config_dir=tmp_path)) == 0, err.getvalue()
    doc = json.loads(out.getvalue())
    assert doc["spec"]["interactions"] == [["price", "promo"], ["shelf", "price"]]
    assert "shelf × price" in doc["candidates"]
    spec = StudySpec.from_dict(doc["spec"])
    assert spec.interactions == (("price", "promo"), ("shelf", "price"))
    assert spec.schema_version == 2


def test_a_focal_column_in_an_interaction_says_what_its_estimate_means(tmp_path):
    book = _book(tmp_path / "s.xlsx", n=200)
    res = run_study(_spec(book, focal="price", interactions=(("price", "promo"),)))
    assert any("interaction with 'promo'" in n and "reference" in n for n in res.focal.notes)
    plain = run_study(_spec(book, focal="price"))
    assert not any("interaction" in n for n in plain.focal.notes)
    curved = run_study(_spec(book, focal="price", interactions=(("price", "price"),)))
    assert any("through its square" in n for n in curved.focal.notes)


def test_a_number_paired_with_itself_adds_its_square(tmp_path):
    book = _book(tmp_path / "s.xlsx")
    d = build_design(read_table(book), _spec(book, interactions=(("shelf", "shelf"),)))
    j = d.names.index
    assert d.names[-1] == "shelf²" and d.encodings[-1].factors == ("shelf", "shelf")
    np.testing.assert_array_equal(d.X[:, j("shelf²")], d.X[:, j("shelf")] ** 2)
    res = run_study(_spec(book, interactions=(("shelf", "shelf"),)))
    model = load_scoring_model(write_results(res, out=tmp_path / "r.xlsx"))
    np.testing.assert_allclose(model.predict(read_table(book)), res.model("ols").fitted, rtol=1e-12)
