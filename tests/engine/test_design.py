"""Design matrix: encodings, missing-value policies, dropped columns and refusals.

Known answers are computed by hand from small tables; one check compares the one-hot encoding
with pandas.get_dummies (general-purpose reference library).
"""

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from engine.design import build_design
from engine.errors import InputProblem
from engine.intake.table import Column, ColumnKind, Table
from engine.study_spec import StudySpec


def _col(name, kind, values, letter="A", levels=None):
    values = np.asarray(
        values, dtype=object if kind in (ColumnKind.CATEGORY, ColumnKind.IDENTIFIER) else None
    )
    if kind == ColumnKind.DATE:
        values = np.asarray(values, dtype="datetime64[ns]")
    elif kind in (ColumnKind.NUMBER, ColumnKind.FLAG):
        values = np.asarray(values, dtype=float)
    return Column(
        name=name, heading=name, letter=letter, kind=kind, values=values, levels=levels or []
    )


def _table(*cols):
    n = len(cols[0].values)
    return Table(
        source=Path("book.xlsx"),
        sheet="Data",
        sheets=[],
        header_row=1,
        columns=list(cols),
        row_numbers=np.arange(2, n + 2),
    )


def _spec(**kw):
    kw.setdefault("source", "book.xlsx")
    kw.setdefault("response", "y")
    return StudySpec(**kw)


def test_category_one_hot_against_most_frequent_level_matches_pandas():
    colour = ["red", "blue", "red", "green", "red", "blue"]
    t = _table(
        _col("y", ColumnKind.NUMBER, [1, 2, 3, 4, 5, 7]),
        _col("colour", ColumnKind.CATEGORY, colour, "B", levels=["red", "blue", "green"]),
    )
    d = build_design(t, _spec())
    assert d.names == ["colour=blue", "colour=green"]
    # Source: pandas.get_dummies (general-purpose reference library), reference level dropped
    ref = pd.get_dummies(pd.Series(colour), dtype=float)[["blue", "green"]].to_numpy()
    np.testing.assert_array_equal(d.X, ref)
    assert d.encodings[0].reference == "red" and d.encodings[0].kind == "level"


def test_missing_policy_drop_counts_rows_and_keeps_sheet_row_numbers():
    t = _table(
        _col("y", ColumnKind.NUMBER, [1, np.nan, 3, 4, 5, 6]),
        _col("x", ColumnKind.NUMBER, [1, 2, np.nan, 4, 5, 7], "B"),
        _col("w", ColumnKind.NUMBER, [3, 1, 4, 1, 5, 9], "C"),
    )
    d = build_design(t, _spec())
    assert d.n_rows == 4 and d.rows_dropped == 2
    assert d.drop_reasons == {"response 'y' missing": 1, "missing in candidate 'x'": 1}
    np.testing.assert_array_equal(d.row_numbers, [2, 5, 6, 7])


def test_missing_policy_fill_uses_median_and_adds_indicator():
    t = _table(
        _col("y", ColumnKind.NUMBER, [1, 2, 3, 4, 5]),
        _col("x", ColumnKind.NUMBER, [10, np.nan, 30, 40, 50], "B"),
    )
    d = build_design(t, _spec(missing="fill"))
    assert d.names == ["x", "x:missing"]
    assert d.X[1, 0] == 35.0  # median of 10, 30, 40, 50
    np.testing.assert_array_equal(d.X[:, 1], [0, 1, 0, 0, 0])
    assert d.encodings[0].fill == 35.0


def test_date_becomes_day_trend_and_optional_parts():
    dates = ["2024-01-01", "2024-01-08", "2024-02-05", "2024-03-04", "2024-03-11"]
    t = _table(
        _col("y", ColumnKind.NUMBER, [1, 2, 3, 5, 4]), _col("week", ColumnKind.DATE, dates, "B")
    )
    d = build_design(t, _spec(date_parts=True))
    assert d.names[0] == "week:trend"
    np.testing.assert_array_equal(d.X[:, 0], [0, 7, 35, 63, 70])
    assert "week:month=2" in d.names and "week:month=3" in d.names
    # every date above is a Monday (ISO weekday 1), so weekday parts are constant and dropped
    assert not any(n.startswith("week:weekday") for n in d.names)


def test_constant_identifier_and_empty_columns_are_dropped_with_reasons():
    t = _table(
        _col("y", ColumnKind.NUMBER, [1, 2, 3, 4]),
        _col("x", ColumnKind.NUMBER, [1, 3, 2, 5], "B"),
        _col("k", ColumnKind.NUMBER, [7, 7, 7, 7], "C"),
        _col("id", ColumnKind.IDENTIFIER, ["a1", "a2", "a3", "a4"], "D"),
        _col("blank", ColumnKind.EMPTY, [None] * 4, "E"),
    )
    d = build_design(t, _spec())
    assert d.names == ["x"]
    assert set(d.dropped_columns) == {"k", "id", "blank"}
    assert any("'k' left out: constant" in w for w in d.warnings)


@pytest.mark.parametrize(
    "column",
    [
        _col(
            "note", ColumnKind.CATEGORY, ["check", None, None, "check", None, None], "C", ["check"]
        ),
        _col("batch", ColumnKind.NUMBER, [4.0, np.nan, 4.0, np.nan, np.nan, np.nan], "C"),
    ],
)
def test_a_column_with_one_value_besides_blanks_costs_no_rows(column):
    # common practice (listwise deletion): rows are dropped for a candidate's missing cells
    # only if the candidate can still be used on the remaining rows; a note column holding one
    # word or nothing would otherwise remove most rows and then be constant itself
    t = _table(
        _col("y", ColumnKind.NUMBER, [1, 2, 3, 4, 5, 7]),
        _col("x", ColumnKind.NUMBER, [1, 3, 2, 5, 4, 6], "B"),
        column,
    )
    d = build_design(t, _spec())
    assert d.n_rows == 6 and d.rows_dropped == 0 and d.names == ["x"]
    assert column.name in d.dropped_columns
    assert any(f"'{column.name}' left out: it holds one value" in w for w in d.warnings)
    # filling missing values keeps the information: the blanks become a level (category,
    # no separate indicator that would copy it) or an indicator (number, then constant itself)
    filled = build_design(t, _spec(missing="fill"))
    assert filled.n_rows == 6
    expected = {"note": ["x", "note=(blank)"], "batch": ["x", "batch:missing"]}[column.name]
    assert filled.names == expected
    assert not any("exact copy" in w for w in filled.warnings)


def test_a_default_candidate_blank_in_most_rows_is_left_out_unless_named():
    # common practice (listwise deletion): dropping the rows where a candidate is blank is the
    # default; a column nobody named that is blank in most rows would cost most of the data, so
    # it is left out with a warning, while a column the user named keeps its rows' cost
    y = [1, 2, 3, 4, 5, 7, 6, 8]
    x = [1, 3, 2, 5, 4, 6, 8, 7]
    sparse = [2.0, 5.0, 1.0, np.nan, np.nan, np.nan, np.nan, np.nan]  # blank in 5 of 8
    half = [2.0, 5.0, 1.0, 4.0, np.nan, np.nan, np.nan, np.nan]  # blank in 4 of 8: kept
    t = _table(
        _col("y", ColumnKind.NUMBER, y),
        _col("x", ColumnKind.NUMBER, x, "B"),
        _col("sparse", ColumnKind.NUMBER, sparse, "C"),
        _col("half", ColumnKind.NUMBER, half, "D"),
    )
    d = build_design(t, _spec())
    assert d.names == ["x", "half"] and d.n_rows == 4
    assert any("'sparse' left out: it is blank in 5 of the 8 rows" in w for w in d.warnings)
    named = build_design(t, _spec(candidates=("x", "sparse")))
    assert named.names == ["x", "sparse"] and named.n_rows == 3
    filled = build_design(t, _spec(missing="fill"))  # filling costs no rows: nothing left out
    assert "sparse" in filled.names and filled.n_rows == 8
    # the share is taken on the rows with a response: blank responses do not count
    t2 = _table(
        _col("y", ColumnKind.NUMBER, [1, 2, 3, 5, np.nan, np.nan, np.nan]),
        _col("x", ColumnKind.NUMBER, [1, 3, 2, 5, 4, 6, 7], "B"),
        _col("z", ColumnKind.NUMBER, [4.0, 1.0, 3.0, np.nan, np.nan, np.nan, np.nan], "C"),
    )  # z is blank in 4 of the 7 rows but in 1 of the 4 with a response
    assert build_design(t2, _spec()).names == ["x", "z"]


def test_a_yes_no_response_is_said_to_be_fitted_as_a_linear_probability_model():
    # common practice: least squares on a 1/0 response is the linear probability model; its
    # predictions are scores that can leave 0..1, which a credit or quality user must be told
    x = [1, 3, 2, 5, 4, 6, 8, 7]
    flag = _table(
        _col("y", ColumnKind.FLAG, [1, 0, 0, 1, 0, 0, 1, 0]), _col("x", ColumnKind.NUMBER, x, "B")
    )
    d = build_design(flag, _spec())
    note = [w for w in d.warnings if "linear probability model" in w]
    assert len(note) == 1 and "yes 37.5% of the rows used" in note[0]
    counts = _table(
        _col("y", ColumnKind.NUMBER, [1, 0, 2, 1, 0, 0, 1, 0]), _col("x", ColumnKind.NUMBER, x, "B")
    )
    assert not any("linear probability" in w for w in build_design(counts, _spec()).warnings)


def test_exact_duplicate_columns_are_reported():
    t = _table(
        _col("y", ColumnKind.NUMBER, [1, 2, 3, 4, 6]),
        _col("a", ColumnKind.NUMBER, [1, 3, 2, 5, 4], "B"),
        _col("b", ColumnKind.NUMBER, [2, 6, 4, 10, 8], "C"),
    )
    d = build_design(t, _spec())
    assert any(
        "'b' is an exact copy of 'a' on the rows used, once both are put on one scale" in w
        for w in d.warnings
    )


def test_population_standard_deviation_is_used():
    # Source: DESIGN.md penalty convention (divisor n), checked against numpy's ddof=0
    x = [1.0, 2.0, 4.0, 7.0]
    t = _table(_col("y", ColumnKind.NUMBER, [1, 2, 3, 5]), _col("x", ColumnKind.NUMBER, x, "B"))
    d = build_design(t, _spec())
    assert d.sds[0] == pytest.approx(np.std(x, ddof=0))


@pytest.mark.parametrize(
    "cols, spec, fragment",
    [
        (
            [
                _col("y", ColumnKind.CATEGORY, ["a", "b", "c"], levels=["a", "b", "c"]),
                _col("x", ColumnKind.NUMBER, [1, 2, 3]),
            ],
            {},
            "response column 'y' in sheet 'Data' holds category labels",
        ),
        (
            [
                _col("y", ColumnKind.NUMBER, [2, 2, 2, 2]),
                _col("x", ColumnKind.NUMBER, [1, 2, 3, 4]),
            ],
            {},
            "has the same value (2) on every row used",
        ),
        (
            [
                _col("y", ColumnKind.NUMBER, [1, 2, 3]),
                _col("id", ColumnKind.IDENTIFIER, ["a", "b", "c"]),
            ],
            {},
            "no usable candidate column in sheet 'Data'",
        ),
        (
            [_col("y", ColumnKind.NUMBER, [1, 2, 3]), _col("x", ColumnKind.NUMBER, [1, 2, 3])],
            {"candidates": ("nope",)},
            "no column named 'nope' in sheet 'Data'",
        ),
        (
            [
                _col("y", ColumnKind.NUMBER, [1, np.nan, 3, 4, 5]),
                _col("x", ColumnKind.NUMBER, [1, 2, 3, np.nan, np.nan]),
            ],
            {},
            "only 2 of 5 rows",
        ),
    ],
)
def test_refusals_name_the_sheet_and_column(cols, spec, fragment):
    with pytest.raises(InputProblem) as exc:
        build_design(_table(*cols), _spec(**spec))
    assert fragment in exc.value.message


def test_more_columns_than_rows_is_normal_input():
    rng = np.random.default_rng(1)
    cols = [_col("y", ColumnKind.NUMBER, rng.normal(size=10))]
    cols += [_col(f"x{j}", ColumnKind.NUMBER, rng.normal(size=10), "B") for j in range(40)]
    d = build_design(_table(*cols), _spec())
    assert d.X.shape == (10, 40)


def test_why_rows_were_left_out_reads_largest_first_and_stays_short():
    from engine.design import drop_reasons_text

    reasons = {f"missing in candidate 'a{j}'": 1 + (j % 3) for j in range(30)}
    reasons["response 'y' missing"] = 1
    text = drop_reasons_text(reasons)
    assert text.startswith("missing in candidate 'a2': 3 rows; missing in candidate 'a5': 3 rows")
    assert text.endswith(
        f"and 28 more reasons ({sum(reasons.values()) - 9} rows); "
        "each row counted once, under the first column it lacks"
    )
    assert drop_reasons_text({"response 'y' missing": 1}) == "response 'y' missing: 1 row"
    assert drop_reasons_text({}) == "none"


def test_words_in_the_response_name_their_cells_and_warn_about_detection_limits(tmp_path):
    # common practice in lab work: "<0.5" marks a value below the detection limit, read as half
    # the limit (substitution) and said; "n.d." gives no limit and "n/a" no value: those rows
    # are left out, which the fit says, naming the cells, with why it matters for non-detects
    from engine.intake import read_table

    lines = ["site,dose,lead"] + [f"S{i},{i},{1.5 + i}" for i in range(14)]
    lines[4] = "S3,3,<0.5"
    lines[7] = "S6,6,n/a"
    lines[9] = "S8,8,n.d."
    path = tmp_path / "assay.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    table = read_table(path)
    design = build_design(table, _spec(source=str(path), response="lead"))
    assert design.n_rows == 12
    assert 0.25 in design.y
    assert any("below a detection limit (e.g. row 5, column 3 '<0.5')" in w for w in table.warnings)
    said = [w for w in design.warnings if w.startswith("response 'lead'")]
    assert any("'n/a'" in w and "its row was left out" in w for w in said)
    assert any("'n.d.'" in w and "biases the fit" in w for w in said)


def test_a_response_of_formulas_without_stored_results_says_so(tmp_path):
    # a workbook saved by a program that does not calculate formulas (openpyxl writes none)
    import openpyxl

    from engine.intake import read_table

    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Calc"
    ws.append(["a", "b", "y"])
    for i in range(2, 14):
        ws.append([i, i % 3, f"=A{i}*2+B{i}"])
    path = tmp_path / "calc.xlsx"
    wb.save(path)
    with pytest.raises(InputProblem) as err:
        build_design(read_table(path), _spec(source=str(path)))
    text = str(err.value)
    assert "'y' in sheet 'Calc' holds no values" in text
    assert "12 formula cells without a stored result (e.g. C2)" in text
    assert "save it to store the formula results" in text


def test_a_response_whose_heading_is_used_twice_says_which_column_it_took(tmp_path):
    # common in hand-made sheets: the same heading typed over two columns
    from engine.intake import read_table

    lines = ["sales,x,sales,z"] + [f"{i},{i * 2},{i + 1},{i % 3}" for i in range(12)]
    path = tmp_path / "dup.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    design = build_design(read_table(path), _spec(source=str(path), response="sales"))
    assert any(
        "the response 'sales' is column 1; the same heading is also on column 3 (read as "
        "'sales (2)')" in w
        for w in design.warnings
    )


def test_a_response_of_two_labels_says_how_to_fit_it_as_one_and_zero(tmp_path):
    # credit files mark outcomes with words ("Default", "Performing"); the linear methods here
    # need numbers, and the message says how to get the 1/0 coding
    from engine.intake import read_table

    lines = ["status,ltv,dti"] + [
        f"{'Default' if i % 4 == 0 else 'Performing'},{50 + i},{20 + i % 7}" for i in range(16)
    ]
    path = tmp_path / "loans.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    with pytest.raises(InputProblem) as err:
        build_design(read_table(path), _spec(source=str(path), response="status"))
    message = err.value.message
    assert "holds two labels ('Performing', 'Default')" in message
    assert "write the column as 1 and 0 or as yes and no" in message
    assert err.value.place.column == "status"


def test_a_nearly_empty_response_is_named_without_advice_to_fill():
    nan = np.nan
    t = _table(
        _col("y", ColumnKind.NUMBER, [1.0, nan, nan, nan, nan, 2.0]),
        _col("x", ColumnKind.NUMBER, [1, 2, 3, 4, 5, 6], "B"),
    )
    with pytest.raises(InputProblem) as exc:
        build_design(t, _spec(missing="fill"))
    msg = str(exc.value)
    assert "the response 'y' in sheet 'Data' has a value in only 2 of 6 rows" in msg
    assert "--missing fill" not in msg  # the response is never filled


def test_a_sheet_of_two_rows_says_so():
    t = _table(_col("y", ColumnKind.NUMBER, [1.0, 2.0]), _col("x", ColumnKind.NUMBER, [1, 2], "B"))
    with pytest.raises(InputProblem, match="sheet 'Data' has only 2 data rows"):
        build_design(t, _spec())


def test_a_value_that_only_marks_blanks_is_kept_as_its_indicator_under_fill():
    nan = np.nan
    rng = np.random.default_rng(0)
    x = rng.normal(size=12)
    only = [7.0 if i == 3 else nan for i in range(12)]
    t = _table(
        _col("y", ColumnKind.NUMBER, x + rng.normal(size=12)),
        _col("x", ColumnKind.NUMBER, x, "B"),
        _col("sparse", ColumnKind.NUMBER, only, "C"),
    )
    dropped = build_design(t, _spec())
    assert "--missing fill keeps what it says" in dropped.dropped_columns["sparse"]
    filled = build_design(t, _spec(missing="fill"))
    assert "sparse:missing" in filled.names and "sparse" not in filled.names
    assert "kept as the column 'sparse:missing'" in filled.dropped_columns["sparse"]


def test_a_column_of_mostly_numbers_read_as_text_gives_intakes_reason():
    from engine.intake.notes import ColumnNote, Finding

    cost = _col("cost", ColumnKind.IDENTIFIER, [f"c{i}" for i in range(6)], "C")
    cost.notes = [
        ColumnNote(
            "4 of 6 values are numbers, too few for a number column (needs 80%); read as text",
            Finding.TOO_FEW_NUMBERS,
        )
    ]
    t = _table(
        _col("y", ColumnKind.NUMBER, [1, 2, 3, 4, 5, 7]),
        _col("x", ColumnKind.NUMBER, [1, 3, 2, 5, 4, 6], "B"),
        cost,
    )
    d = build_design(t, _spec())
    assert d.dropped_columns["cost"].startswith("4 of 6 values are numbers, too few")
    assert "write every cell as a plain number" in d.dropped_columns["cost"]
    assert "identifier" not in d.dropped_columns["cost"]


def test_a_named_candidate_whose_heading_is_used_twice_and_the_sheet_say_so(tmp_path):
    # a Python user or the command line naming "price" gets the first of two "price" columns:
    # the sheet's warnings list the renamed one, the design says which column the name took
    from engine.intake import read_table

    lines = ["y,price,temp,price"] + [f"{i},{i % 4},{i % 5},{i * 2}" for i in range(14)]
    path = tmp_path / "twice.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    table = read_table(path)
    assert any(
        "1 column repeats an earlier heading" in w and "4 'price (2)'" in w for w in table.warnings
    )
    design = build_design(
        table, _spec(source=str(path), response="y", candidates=("price", "temp"))
    )
    assert any(
        "the candidate 'price' is column 2; the same heading is also on column 4 (read as "
        "'price (2)')" in w
        for w in design.warnings
    )


def test_a_named_candidate_holding_another_role_is_said_to_be_left_out():
    y = _col("y", ColumnKind.NUMBER, [float(i % 7) for i in range(24)])
    x = _col("x", ColumnKind.NUMBER, [float(i % 5) for i in range(24)], "B")
    store = _col("store", ColumnKind.CATEGORY, [f"s{i % 4}" for i in range(24)], "C")
    design = build_design(
        _table(y, x, store),
        _spec(response="y", candidates=("x", "store", "y"), group="store", folds=4),
    )
    assert design.names == ["x"]
    assert any("'store' is the group column, so it is left out" in w for w in design.warnings)
    assert any(
        "'y' is the response, so it is not among the candidates" in w for w in design.warnings
    )


def test_a_python_user_may_pass_a_path_a_list_or_one_name():
    # what a script naturally passes is taken as meant; anything else is refused by name
    spec = StudySpec(
        source=Path("book.xlsx"), response="y", candidates="x", interactions=("x", "z"),
        log_columns=["y"], seed=np.int64(3),
    )  # fmt: skip
    assert spec.source == "book.xlsx" and spec.candidates == ("x",)
    assert spec.interactions == (("x", "z"),) and spec.log_columns == ("y",) and spec.seed == 3
    for bad, words in (
        (dict(seed=None), "seed must be a whole number"),
        (dict(candidates=[1]), "the candidates must be column names"),
        (dict(interactions=[("x",)]), "each interaction is a pair of column names"),
        (dict(source=3), "the source must be the path of a workbook or text file"),
    ):
        with pytest.raises(InputProblem, match=words):
            StudySpec(**{"source": "book.xlsx", "response": "y", **bad})


@pytest.mark.parametrize(
    ("missing", "then"), [("drop", "its row was left out"), ("fill", "filled like blank cells")]
)
def test_words_in_a_candidate_name_their_cells_like_the_response(tmp_path, missing, then):
    from engine.intake import read_table

    lines = ["y,x,z"] + [f"{i},{i % 5},{i % 3}" for i in range(20)]
    lines[5] = "4,twelve,1"
    path = tmp_path / "words.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    design = build_design(read_table(path), _spec(source=str(path), response="y", missing=missing))
    assert any(
        w.startswith(
            "candidate 'x': 1 cell that is not a number treated as missing: row 6, "
            "column 2 'twelve'"
        )
        and w.endswith(then)
        for w in design.warnings
    ), design.warnings


def test_a_scaled_copy_of_the_focal_column_is_left_out_of_the_controls():
    # price in another currency beside price: double selection would split the effect
    # between the two at random; the copy carries nothing the focal column does not
    rng = np.random.default_rng(2)
    n = 40
    price = rng.uniform(1, 3, n)
    other = rng.normal(size=n)
    y = 10 - 4 * price + other + rng.normal(scale=0.1, size=n)
    t = _table(
        _col("y", ColumnKind.NUMBER, y),
        _col("price", ColumnKind.NUMBER, price, "B"),
        _col("price_usd", ColumnKind.NUMBER, 1.1 * price, "C"),
        _col("other", ColumnKind.NUMBER, other, "D"),
    )
    d = build_design(t, _spec(focal="price"))
    assert d.names == ["price", "other"] and d.focal_index == 0
    assert "focal column 'price'" in d.dropped_columns["price_usd"]
    assert not any("exact copy" in w for w in d.warnings)


def test_a_row_number_column_is_not_a_default_candidate_but_may_be_named():
    # "id" 1..n beside the data: every fit could use it as a trend by accident
    n = 30
    y = _col("y", ColumnKind.NUMBER, [float(i % 7) for i in range(n)])
    rid = _col("id", ColumnKind.NUMBER, [float(i + 1) for i in range(n)], "B")
    x = _col("x", ColumnKind.NUMBER, [float(i % 5) for i in range(n)], "C")
    week = _col("week", ColumnKind.NUMBER, [float(i + 1) for i in range(n)], "D")
    d = build_design(_table(y, rid, x, week), _spec())
    assert "id" not in d.names and "looks like a row number" in d.dropped_columns["id"]
    assert "week" in d.names  # a count of weeks is a trend, not a row label
    named = build_design(_table(y, rid, x, week), _spec(candidates=("id", "x")))
    assert named.names == ["id", "x"]


def test_words_in_a_date_or_yes_no_candidate_are_named_too(tmp_path):
    # every kind of column costs rows for the words it cannot read, so each says which
    from engine.intake import read_table

    lines = ["y,when,member,x"] + [
        f"{i},2024-{1 + i % 12:02d}-{1 + i % 27:02d},{'yes' if i % 3 else 'no'},{i % 7}"
        for i in range(30)
    ]
    lines[4] = "3,soon,yes,3"
    lines[6] = "5,later,yes,5"
    lines[9] = "8,2024-09-09,perhaps,1"
    path = tmp_path / "words.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    design = build_design(read_table(path), _spec(source=str(path), response="y"))
    said = " | ".join(design.warnings)
    assert "candidate 'when': 2 cells that are not dates treated as missing: row 5" in said, said
    assert "'later'; their rows were left out" in said
    assert "candidate 'member': 1 cell that is not a yes/no value treated as missing" in said
    assert "'perhaps'; its row was left out" in said


def test_a_notes_finding_survives_pickling_and_copying(tmp_path):
    # a table pickled or copied keeps what its notes report, with their words
    import copy
    import pickle

    from engine.intake import read_table
    from engine.intake.far_out import screened
    from engine.intake.notes import Finding, finding_of

    lines = ["y,lead"] + [f"{i},{0.1 * (1 + i % 9):.1f}" for i in range(20)]
    lines[3] = "2,<0.05"
    path = tmp_path / "limits.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    lead = read_table(path).column("lead")
    back = pickle.loads(pickle.dumps(lead))
    assert [finding_of(n) for n in back.notes] == [finding_of(n) for n in lead.notes]
    assert [finding_of(n) for n in copy.deepcopy(lead).notes] == [finding_of(n) for n in lead.notes]
    assert Finding.LIMIT_SUBSTITUTES in {finding_of(n) for n in back.notes}
    assert not screened(back.notes) and back.notes == lead.notes
