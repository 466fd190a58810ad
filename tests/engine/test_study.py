"""The study entry point and `tamis fit`, end to end on CSV files written in the test.

Data are simulated with a known sparse truth (stated as such; not an outside source). The JSON
keys and meanings are the contract of DESIGN.md.
"""

import io
import json

import numpy as np
import pytest

from engine import cli
from engine.context import Context
from engine.errors import Cancelled, InputProblem
from engine.progress import CancelToken, Progress
from engine.study import run_study
from engine.study_spec import StudySpec


def _write_csv(path, X, y, names=None, extra=None):
    names = names or [f"x{j + 1}" for j in range(X.shape[1])]
    cols = {"y": y, **{nm: X[:, j] for j, nm in enumerate(names)}, **(extra or {})}
    keys = list(cols)
    lines = [",".join(keys)]
    for i in range(len(y)):
        lines.append(
            ",".join(
                repr(float(cols[k][i])) if not isinstance(cols[k][i], str) else cols[k][i]
                for k in keys
            )
        )
    path.write_text("\n".join(lines) + "\n")
    return path


def _sparse_problem(n=80, p=12, seed=0):
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, p))
    beta = np.zeros(p)
    truth = [j for j in (0, 3, 7) if j < p]
    beta[truth] = [3.0, -2.0, 1.5][: len(truth)]
    y = 5.0 + X @ beta + rng.normal(scale=0.5, size=n)
    return X, y, beta


def _fit(argv, tmp_path):
    out, err = io.StringIO(), io.StringIO()
    code = cli.main(argv, Context(stdout=out, stderr=err, config_dir=tmp_path / "cfg"))
    return code, out.getvalue(), err.getvalue()


def _fit_json_argv(book, folds, methods, *extra):
    """`tamis fit BOOK --response y --json --folds F --methods M` plus extra options."""
    return [
        "fit",
        str(book),
        "--response",
        "y",
        "--json",
        "--folds",
        str(folds),
        "--methods",
        methods,
        *extra,
    ]


def test_fit_json_contract_and_truth_recovered(tmp_path):
    X, y, beta = _sparse_problem()
    book = _write_csv(tmp_path / "sim.csv", X, y)
    code, out, err = _fit(
        _fit_json_argv(book, 5, "ols,ridge,lasso,elastic-net"),
        tmp_path,
    )
    assert code == 0, err
    doc = json.loads(out)
    assert doc["response"] == "y" and doc["rows_used"] == 80 and doc["rows_dropped"] == 0
    assert doc["candidates"] == [f"x{j + 1}" for j in range(12)]
    assert [m["method"] for m in doc["models"]] == ["ols", "ridge", "lasso", "elastic-net"]
    for m in doc["models"]:
        assert set(m["coefficients"]) == set(doc["candidates"])
        assert m["cv_error"] > 0 and m["cv_error_se"] > 0
    lasso = doc["models"][2]
    assert {"x1", "x4", "x8"} <= set(lasso["selected"])
    assert lasso["coefficients"]["x1"] == pytest.approx(3.0, abs=0.3)
    ridge = doc["models"][1]
    assert len(ridge["selected"]) == 12  # ridge shrinks but keeps every column (common practice)
    assert doc["output"] is None
    # the cautions travel with the numbers (selection is not causation, ...)
    assert any("not causation" in c for c in doc["cautions"])
    assert any("extrapolation" in c for c in doc["cautions"])


def test_cross_validated_r_squared_of_least_squares_is_the_press_statistic(tmp_path):
    # predictive R squared = 1 - PRESS / total sum of squares (common practice); with one row
    # held out at a time, least squares' held-out residuals are statsmodels' resid_press
    # (general-purpose reference library), e_i / (1 - h_ii)
    import statsmodels.api as sm

    X, y, _ = _sparse_problem(n=30, p=4, seed=2)
    book = _write_csv(tmp_path / "loo.csv", X, y)
    argv = ["fit", str(book), "--response", "y", "--json", "--methods", "ols,lasso"]
    code, out, err = _fit(argv + ["--scheme", "loo"], tmp_path)
    assert code == 0, err
    ols, lasso = json.loads(out)["models"]
    press = sm.OLS(y, sm.add_constant(X)).fit().get_influence().resid_press
    tss = float(np.sum((y - y.mean()) ** 2))
    assert ols["cv_r2"] == pytest.approx(1.0 - float(np.sum(press**2)) / tss, rel=1e-10)
    assert ols["cv_r2"] < ols["r2"]  # held-out rows are predicted worse than fitted ones
    assert lasso["cv_r2"] == pytest.approx(1.0 - lasso["cv_error"] / (tss / 30), rel=1e-12)


def test_same_seed_same_output_to_the_last_digit(tmp_path):
    X, y, _ = _sparse_problem(seed=3)
    book = _write_csv(tmp_path / "sim.csv", X, y)
    argv = _fit_json_argv(book, 4, "lasso,elastic-net", "--seed", "7")
    first = _fit(argv, tmp_path)[1]
    second = _fit(argv, tmp_path)[1]
    assert first == second
    third = _fit(argv[:-1] + ["8"], tmp_path)[1]
    assert third != first  # another seed gives other folds


def test_more_columns_than_rows_runs_and_skips_least_squares_with_a_note(tmp_path):
    rng = np.random.default_rng(5)
    X = rng.normal(size=(30, 60))
    y = 2 * X[:, 0] - X[:, 1] + rng.normal(scale=0.3, size=30)
    book = _write_csv(tmp_path / "wide.csv", X, y)
    code, out, err = _fit(
        _fit_json_argv(book, 5, "ols,lasso"),
        tmp_path,
    )
    assert code == 0, err
    doc = json.loads(out)
    assert [m["method"] for m in doc["models"]] == ["lasso"]
    assert any("least squares left out" in w for w in doc["warnings"])
    # least squares alone has nothing to show: refused before any work, saying what to change
    code, out, err = _fit(_fit_json_argv(book, 5, "ols"), tmp_path)
    assert code == 2
    # with --json the failure is one JSON document on stdout as well (nothing else there)
    failure = json.loads(out)
    assert failure["exit_code"] == 2 and failure["place"]["sheet"] == "wide"
    assert failure["error"].startswith("least squares, the only method chosen")
    assert "least squares, the only method chosen, needs more rows" in err
    assert "(30 rows, 60 columns in sheet 'wide')" in err and "choose a penalized method" in err


@pytest.mark.parametrize(
    "extra_args, fragment",
    [
        (["--folds", "50"], "50 folds were asked"),
        (["--response", "name"], "not numbers"),
        (["--scheme", "grouped", "--group", "team", "--folds", "5"], "group"),
        (["--group", "team"], "only 3 groups"),  # --group alone means grouped folds
        (["--group", "team", "--scheme", "kfold"], "--group is used by grouped folds only"),
        (["--repeats", "3"], "--repeats applies to --scheme repeated only"),
        (["--scheme", "loo", "--folds", "5"], "leave --folds out"),
        (["--seed", "-1"], "the seed must be 0 or more"),
        (["--focal", "y"], "the focal column 'y' in sheet 'b' is the response"),
        (
            ["--focal", "x1", "--exclude", "x1"],
            "the focal column 'x1' in sheet 'b' is also excluded",
        ),
    ],
)
def test_bad_input_exit_2_says_what_to_change(tmp_path, extra_args, fragment):
    X, y, _ = _sparse_problem(n=20, p=3)
    names = ["x1", "x2", "x3"]
    extra = {"name": [f"lot{i}" for i in range(20)], "team": [float(i % 3) for i in range(20)]}
    book = _write_csv(tmp_path / "b.csv", X, y, names, extra)
    argv = ["fit", str(book), "--response", "y", "--methods", "lasso"]
    if "--response" in extra_args:
        argv = ["fit", str(book), "--methods", "lasso"]
    code, out, err = _fit(argv + extra_args, tmp_path)
    assert code == 2, err
    assert fragment in err and err.startswith("tamis: error:")


def test_too_few_rows_for_the_folds_says_where_the_rows_went(tmp_path):
    # a sparse candidate column leaves few rows under the default missing-value policy: the
    # refusal must name it, not only the count
    X, y, _ = _sparse_problem(n=20, p=3)
    sparse = [str(i) if i % 4 == 0 else "" for i in range(20)]
    book = _write_csv(tmp_path / "s.csv", X, y, ["x1", "x2", "x3"], {"sparse": sparse})
    argv = ["fit", str(book), "--response", "y", "--methods", "lasso"]
    code, out, err = _fit(argv + ["--candidates", "x1", "x2", "x3", "sparse"], tmp_path)
    assert code == 2, err
    assert "15 left out: missing in candidate 'sparse': 15" in err and "10 folds" in err
    assert "to keep the rows, leave out the candidate 'sparse' or use --missing fill" in err
    # not named, a candidate blank in most rows is left out instead (with a warning)
    code, out, err = _fit(argv, tmp_path)
    assert code == 0, err
    assert "column 'sparse' left out: it is blank in 15 of the 20 rows" in out + err


def test_progress_is_monotone_and_cancel_stops_the_run(tmp_path):
    X, y, _ = _sparse_problem()
    book = _write_csv(tmp_path / "sim.csv", X, y)
    seen = []
    spec = StudySpec(source=str(book), response="y", methods=("lasso", "ridge"), folds=5)
    run_study(spec, Progress(lambda f, w: seen.append(f)))
    assert seen[-1] == 1.0 and all(b >= a - 1e-12 for a, b in zip(seen, seen[1:]))

    token = CancelToken()

    def cancel_midway(f, w):
        if f > 0.3:
            token.cancel()

    with pytest.raises(Cancelled):
        run_study(spec, Progress(cancel_midway, token))


def test_response_with_zero_variance_is_refused(tmp_path):
    X, _, _ = _sparse_problem(n=20, p=3)
    book = _write_csv(tmp_path / "c.csv", X, np.full(20, 4.0))
    with pytest.raises(InputProblem, match="same value"):
        run_study(StudySpec(source=str(book), response="y", methods=("lasso",), folds=5))


def test_subset_methods_focal_and_stability_reach_the_json(tmp_path):
    # simulated known truth (stated as such): y depends on x1, x4 and the focal column d
    rng = np.random.default_rng(11)
    n, p = 120, 8
    X = rng.normal(size=(n, p))
    d = 0.8 * X[:, 0] + rng.normal(size=n)  # the focal column is confounded by x1
    y = 1.0 + 2.0 * X[:, 0] - 1.5 * X[:, 3] + 0.7 * d + rng.normal(scale=0.5, size=n)
    book = _write_csv(tmp_path / "f.csv", X, y, extra={"d": d})
    code, out, err = _fit(
        _fit_json_argv(
            book,
            5,
            "adaptive-lasso,post-lasso,best-subset,forward-stepwise",
            "--focal",
            "d",
            "--stability",
            "20",
        ),
        tmp_path,
    )
    assert code == 0, err
    doc = json.loads(out)
    by = {m["method"]: m for m in doc["models"]}
    for name in ("best-subset", "forward-stepwise"):
        sizes = by[name]["by_size"]
        assert [r["size"] for r in sizes] == list(range(1, len(sizes) + 1))
        assert all(
            a["rss"] >= b["rss"] - 1e-9 for a, b in zip(sizes, sizes[1:])
        )  # more columns, less RSS
        assert {"x1", "x4", "d"} <= set(by[name]["selected"])
    # best subset is never worse than the greedy sequence at any size (invariant)
    for a, b in zip(by["best-subset"]["by_size"], by["forward-stepwise"]["by_size"]):
        assert a["rss"] <= b["rss"] + 1e-8
    assert set(by["post-lasso"]["std_errors"]) == set(by["post-lasso"]["selected"])
    focal = doc["focal"]
    assert focal["column"] == "d" and focal["ci_low"] < 0.7 < focal["ci_high"]
    assert "x1" in focal["controls"]
    assert doc["stability"]["runs"] == 20 and doc["stability"]["shares"]["x1"] >= 0.6


def test_focal_effect_with_a_group_column_uses_clustered_errors_and_the_grouped_folds(tmp_path):
    # simulated rows in 30 groups (stated as such). Source: statsmodels OLS(...).fit(
    # cov_type="cluster") (reference library) for the standard error; the cross-validated
    # penalty must come from the study's own grouped folds, not from shuffled rows
    import statsmodels.api as sm

    from engine.design import build_design
    from engine.fitting.double_selection import double_selection
    from engine.intake import read_table
    from engine.tuning.folds import make_folds

    rng = np.random.default_rng(4)
    n, p, n_groups = 180, 10, 30
    g = np.arange(n) % n_groups
    X = rng.normal(size=(n, p)) + rng.normal(size=(n_groups, p))[g]
    d = 0.8 * X[:, 0] + rng.normal(size=n_groups)[g] + rng.normal(size=n)
    y = 2.0 * X[:, 0] - X[:, 3] + 0.7 * d + rng.normal(size=n_groups)[g] + rng.normal(size=n)
    extra = {"d": d, "site": [f"site{k:02d}" for k in g]}
    book = _write_csv(tmp_path / "g.csv", X, y, extra=extra)
    spec = StudySpec(
        source=str(book), response="y", methods=("lasso",), folds=5, scheme="grouped", group="site",
        focal="d", focal_penalty="cv",
    )  # fmt: skip
    result = run_study(spec)
    focal = result.focal
    assert focal.covariance == "CR1, clustered by 'site'"
    assert any("30 groups" in w and "rough" in w for w in result.warnings)
    assert any("30 groups" in note and "rough" in note for note in focal.notes)
    design = build_design(read_table(book), spec)
    j = design.names.index("d")
    controls = [i for i in range(design.n_cols) if i != j]
    parts = make_folds(design.n_rows, "grouped", 5, 0, groups=design.groups)
    same = double_selection(
        design.y, design.X[:, j], design.X[:, controls], penalty="cv", groups=design.groups,
        parts=parts,
    )  # fmt: skip
    assert focal.estimate == pytest.approx(same.estimate, rel=1e-12)
    shuffled = double_selection(
        design.y, design.X[:, j], design.X[:, controls], penalty="cv", folds=5,
        groups=design.groups,
    )  # fmt: skip
    assert shuffled.penalties != same.penalties  # the folds do matter to the penalties
    A = sm.add_constant(np.column_stack([design.X[:, j], design.X[:, same.controls]]))
    ref = sm.OLS(design.y, A).fit(cov_type="cluster", cov_kwds={"groups": design.groups})
    assert focal.std_error == pytest.approx(ref.bse[1], rel=1e-9)
    # least squares after the lasso clusters its standard errors by the same groups
    spec2 = StudySpec(
        source=str(book), response="y", methods=("post-lasso",), folds=5, scheme="grouped",
        group="site",
    )  # fmt: skip
    post = run_study(spec2).models[0]
    cols = [design.names.index(c) for c in post.selected]
    A = sm.add_constant(design.X[:, cols])
    ref = sm.OLS(design.y, A).fit(cov_type="cluster", cov_kwds={"groups": design.groups})
    got = [post.std_errors[c] for c in post.selected]
    np.testing.assert_allclose(got, ref.bse[1:], rtol=1e-9)
    assert any("clustered by 'site'" in note for note in post.notes)


def test_column_names_are_matched_ignoring_case_and_spacing_and_typos_are_refused(tmp_path):
    # a name typed as " Y" or "X2" means the sheet's "y" and "x2"; an exclusion that names no
    # column is a typo to report, not to ignore
    X, y, _ = _sparse_problem(n=60, p=5)
    book = _write_csv(tmp_path / "b.csv", X, y)
    exact = run_study(
        StudySpec(source=str(book), response="y", methods=("lasso",), exclude=("x2",))
    )
    loose = run_study(
        StudySpec(source=str(book), response=" Y", methods=("lasso",), exclude=("X2 ",))
    )
    assert loose.to_json()["models"] == exact.to_json()["models"]
    assert "x2" not in exact.models[0].coefficients and "x1" in exact.models[0].coefficients
    with pytest.raises(InputProblem, match="no column named 'x9'.*columns are: y, x1"):
        run_study(StudySpec(source=str(book), response="y", methods=("lasso",), exclude=("x9",)))


def test_a_workbook_column_can_be_named_by_its_letter(tmp_path):
    import openpyxl

    X, y, _ = _sparse_problem(n=40, p=3)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["a", "b", "c", "target"])
    for i in range(40):
        ws.append([*map(float, X[i]), float(y[i])])
    book = tmp_path / "b.xlsx"
    wb.save(book)
    by_letter = run_study(StudySpec(source=str(book), response="D", methods=("lasso",)))
    assert by_letter.to_json()["spec"]["response"] == "target"


def test_fit_out_replaces_its_own_output_but_never_a_users_file(tmp_path):
    import openpyxl

    X, y, _ = _sparse_problem(n=40, p=4)
    book = _write_csv(tmp_path / "b.csv", X, y)
    users = tmp_path / "plan.xlsx"
    wb = openpyxl.Workbook()
    wb.active["A1"] = "my plan"
    wb.save(users)
    before = users.read_bytes()
    argv = ["fit", str(book), "--response", "y", "--methods", "lasso", "--folds", "4"]
    code, out, err = _fit([*argv, "--out", str(users)], tmp_path)
    assert code == 2 and "plan.xlsx' already exists and was not written by Tamis" in err
    assert users.read_bytes() == before
    ours = tmp_path / "results.xlsx"
    for _ in range(2):  # the second run replaces the first run's results
        code, out, err = _fit([*argv, "--out", str(ours)], tmp_path)
        assert code == 0, err


def test_bic_near_saturation_is_called_no_guide(tmp_path):
    # common practice: with nearly as many columns as rows the residual sum falls to zero and
    # BIC with it, so a size chosen that way means nothing; the note says so instead
    rng = np.random.default_rng(12)
    X = rng.normal(size=(24, 40))
    y = X[:, 0] + rng.normal(scale=0.5, size=24)
    book = _write_csv(tmp_path / "w.csv", X, y)
    res = run_study(
        StudySpec(source=str(book), response="y", methods=("forward-stepwise",), folds=4)
    )
    (note,) = [n for n in res.models[0].notes if "BIC" in n]
    assert "BIC is no guide here" in note and "for 24 rows" in note


def test_a_check_mark_column_is_a_yes_no_candidate_in_the_fit_and_in_scoring(tmp_path):
    # common spreadsheet practice: "x" in the rows that have the feature, blank elsewhere. The
    # blanks mean no, in the fit and for new rows (the stored fill is 0), also when a batch of
    # new rows is all "x" or all blank
    import openpyxl

    from engine.intake import read_table
    from engine.report import load_scoring_model, write_results

    rng = np.random.default_rng(3)
    n = 60
    x1 = rng.normal(size=n)
    mark = rng.random(n) < 0.4
    y = 5.0 + 2.0 * x1 + 3.0 * mark + rng.normal(scale=0.3, size=n)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Lots"
    ws.append(["y", "x1", "organic"])
    for i in range(n):
        ws.append([float(y[i]), float(x1[i]), "x" if mark[i] else None])
    book = tmp_path / "lots.xlsx"
    wb.save(book)
    organic = read_table(book).column("organic")
    assert organic.kind.value == "flag" and organic.missing == 0 and organic.blank_means == 0.0
    res = run_study(StudySpec(source=str(book), response="y", methods=("ols",), folds=5))
    m = res.models[0]
    assert m.coefficients["organic"] == pytest.approx(3.0, abs=0.3)  # the simulated effect
    results = write_results(res, out=tmp_path / "results.xlsx")
    model = load_scoring_model(results)
    for marks in (["x", None, "X", None], ["x"] * 4, [None] * 4):
        new = openpyxl.Workbook()
        sheet = new.active
        sheet.append(["x1", "organic"])
        for k, v in enumerate(marks):
            sheet.append([0.5 * k, v])
        path = tmp_path / "new.xlsx"
        new.save(path)
        got = model.predict(read_table(path))
        want = [
            m.intercept
            + m.coefficients["x1"] * 0.5 * k
            + m.coefficients["organic"] * (v is not None)
            for k, v in enumerate(marks)
        ]
        np.testing.assert_allclose(got, want, rtol=1e-12)


def _book_with_sheets(path, sheets):
    """A workbook of several sheets: {name: rows}; returns its path."""
    import openpyxl

    wb = openpyxl.Workbook()
    wb.remove(wb.active)
    for name, rows in sheets.items():
        ws = wb.create_sheet(name)
        for row in rows:
            ws.append(row)
    wb.save(path)
    return path


def _sales_rows(seed):
    rng = np.random.default_rng(seed)
    rows = [["x1", "x2", "sales"]]
    for _ in range(30):
        a, b = rng.normal(size=2)
        rows.append([float(a), float(b), float(2 * a + rng.normal())])
    return rows


def test_without_a_sheet_named_the_one_sheet_holding_the_response_is_read(tmp_path):
    # a first sheet that is a table, but of something else (a lookup of regions): the data
    # with the response are on another sheet
    lookup = [["region", "manager"], ["North", "Ann"], ["South", "Bo"], ["East", "Cy"]]
    book = _book_with_sheets(tmp_path / "b.xlsx", {"Regions": lookup, "Data": _sales_rows(1)})
    res = run_study(StudySpec(source=str(book), response="sales", methods=("lasso",), folds=5))
    assert res.design.sheet == "Data" and res.spec.sheet == "Data"  # recorded for a re-run
    assert "sheet 'Data' read: it holds the response 'sales'" in " ".join(res.warnings)


def test_a_cover_page_first_is_passed_over(tmp_path):
    # a cover page first (common in shared workbooks): the first sheet holding a table is read
    cover = [["Quarterly pricing review"], [], ["Prepared by: analytics"]]
    book = _book_with_sheets(tmp_path / "b.xlsx", {"Cover": cover, "Data": _sales_rows(1)})
    res = run_study(StudySpec(source=str(book), response="sales", methods=("lasso",), folds=5))
    assert res.design.sheet == "Data" and res.spec.sheet == "Data"
    assert "the first sheet, 'Cover', holds no table" in " ".join(res.warnings)


def test_a_response_in_several_other_sheets_asks_which(tmp_path):
    book = _book_with_sheets(
        tmp_path / "b.xlsx",
        {
            "Regions": [["region", "manager"], ["North", "Ann"], ["South", "Bo"], ["East", "Cy"]],
            "2024": _sales_rows(1),
            "2025": _sales_rows(2),
        },
    )
    with pytest.raises(InputProblem) as err:
        run_study(StudySpec(source=str(book), response="sales", methods=("lasso",), folds=5))
    assert (
        "no column named 'sales' in sheet 'Regions'; sheets '2024', '2025' each have one: "
        "choose the sheet to read" in err.value.message
    )


def test_a_response_found_nowhere_names_the_first_sheets_columns(tmp_path):
    book = _book_with_sheets(tmp_path / "b.xlsx", {"Data": _sales_rows(1), "Notes": [["a"]]})
    with pytest.raises(InputProblem) as err:
        run_study(StudySpec(source=str(book), response="revenue", methods=("lasso",), folds=5))
    assert "no column named 'revenue' in sheet 'Data'" in err.value.message


def test_elastic_net_degrees_of_freedom_are_the_trace_of_the_hat_matrix(tmp_path):
    # df of the elastic net at each penalty: trace of Z_A (Z_A'Z_A + n*lambda*(1-mix) I)^-1 Z_A'
    # on the active set (Zou & Hastie 2005, J. R. Stat. Soc. B 67(2)), computed here directly
    # from the hat matrix, against the study's own route
    rng = np.random.default_rng(7)
    n, p = 60, 8
    X = rng.normal(size=(n, p))
    X[:, 1] += X[:, 0]
    y = X[:, 0] - X[:, 2] + rng.normal(size=n)
    lines = [",".join(["y"] + [f"x{j}" for j in range(p)])]
    lines += [",".join(f"{v:.6f}" for v in [y[i], *X[i]]) for i in range(n)]
    path = tmp_path / "d.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    res = run_study(StudySpec(source=str(path), response="y", methods=("elastic-net",), folds=5))
    m = res.model("elastic-net")
    d = res.design
    Z = (d.X - d.means) / d.sds
    for i in range(0, len(m.path), 9):
        act = np.flatnonzero(m.path.std_coefs[i])
        want = 0.0
        if act.size:
            ZA = Z[:, act]
            shift = n * m.path.penalties[i] * (1 - m.path.mix)
            hat = ZA @ np.linalg.solve(ZA.T @ ZA + shift * np.eye(act.size), ZA.T)
            want = float(np.trace(hat))
        assert m.criteria.df[i] == pytest.approx(want, rel=1e-9, abs=1e-12)


def test_scoring_method_option_reaches_the_workbook_and_a_wrong_one_exits_2(tmp_path):
    from engine.report import load_scoring_model

    X, y, _ = _sparse_problem()
    book = _write_csv(tmp_path / "d.csv", X, y)
    out = tmp_path / "r.xlsx"
    argv = _fit_json_argv(book, 4, "lasso,ridge", "--scoring-method", "ridge", "--out", str(out))
    code, stdout, err = _fit(argv, tmp_path)
    assert code == 0, err
    assert json.loads(stdout)["spec"]["scoring_method"] == "ridge"
    assert load_scoring_model(out).method == "ridge"
    code, _, err = _fit(_fit_json_argv(book, 4, "lasso", "--scoring-method", "ridge"), tmp_path)
    assert code == 2 and "not among the methods run" in err


def test_a_column_named_by_its_letter_is_said_in_a_warning(tmp_path):
    import openpyxl

    rng = np.random.default_rng(4)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Prices"
    ws.append(["demand", "price", "promo"])
    for _ in range(40):
        p, q = rng.normal(size=2)
        ws.append([float(5 - p + 0.5 * q + rng.normal(0, 0.2)), float(p), float(q)])
    book = tmp_path / "prices.xlsx"
    wb.save(book)
    res = run_study(StudySpec(source=str(book), response="A", methods=("ols",), folds=5))
    assert res.design.response == "demand"
    assert any(
        "'A' was read as the column in letter A ('demand') of sheet 'Prices'" in w
        for w in res.warnings
    )


def test_forward_chaining_says_when_its_first_part_learns_from_few_rows(tmp_path):
    # time-ordered parts train on the past only (engine.tuning.folds): with 120 weekly rows in
    # 10 blocks the first part learns from 12 rows, which the study says; in 4 blocks, from 30
    import datetime as dt

    import openpyxl

    rng = np.random.default_rng(1)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["week", "sales", "x1", "x2"])
    for i in range(120):
        a, b = rng.normal(size=2)
        ws.append(
            [dt.datetime(2025, 1, 6) + dt.timedelta(weeks=i), float(a + b), float(a), float(b)]
        )
    book = tmp_path / "weeks.xlsx"
    wb.save(book)
    spec = StudySpec(
        source=str(book), response="sales", methods=("lasso",), scheme="time", time_order="week"
    )
    res = run_study(spec)
    note = next(w for w in res.warnings if w.startswith("time-ordered validation"))
    assert "the first part learns from 12 of the 120 rows" in note
    assert res.models[0].curve.scheme == "time"  # named with the curve (window, sheet)
    more = run_study(spec.replace(folds=4))
    assert not any(w.startswith("time-ordered validation") for w in more.warnings)


def test_a_category_of_two_labels_can_be_the_focal_column(tmp_path):
    # a treatment written as words: its effect is the difference of the second label from the
    # reference, the same number as for the column written as 0/1 (two routes that must agree)
    import openpyxl

    rng = np.random.default_rng(3)
    rows = []
    for _ in range(200):
        x = rng.normal(size=6)
        sme = rng.random() < 0.25 + 0.15 * (x[0] > 0)  # the rarer label: retail is the reference
        rows.append((float(2 * sme + x[0] + 0.5 * x[1] + rng.normal()), sme, x))
    books = {}
    for kind in ("words", "flags"):
        wb = openpyxl.Workbook()
        ws = wb.active
        ws.append(["loss", "segment"] + [f"x{j}" for j in range(6)])
        for y, sme, x in rows:
            label = ("sme" if sme else "retail") if kind == "words" else float(sme)
            ws.append([y, label, *map(float, x)])
        books[kind] = tmp_path / f"{kind}.xlsx"
        wb.save(books[kind])
    spec = dict(response="loss", focal="segment", methods=("lasso",), folds=5)
    words = run_study(StudySpec(source=str(books["words"]), **spec)).focal
    flags = run_study(StudySpec(source=str(books["flags"]), **spec)).focal
    assert words.column == "segment=sme"
    assert words.estimate == pytest.approx(flags.estimate, rel=1e-9)
    assert words.std_error == pytest.approx(flags.std_error, rel=1e-9)
    assert any("is 1 for 'sme' and 0 for 'retail'" in n for n in words.notes)


def test_least_squares_names_a_column_that_is_a_combination_of_others(tmp_path):
    # total = a + b on every row: least squares cannot tell the three apart; the note names
    # the column it left out, not a position
    import openpyxl

    rng = np.random.default_rng(4)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["y", "a", "b", "total"])
    for _ in range(30):
        a, b = rng.normal(size=2)
        ws.append([float(a - b + rng.normal(0, 0.1)), float(a), float(b), float(a + b)])
    book = tmp_path / "sums.xlsx"
    wb.save(book)
    res = run_study(StudySpec(source=str(book), response="y", methods=("ols",), folds=5))
    notes = [w for w in res.warnings if w.startswith("least squares:")]
    # (which of the three the pivoting leaves out is its choice; any one of them is right)
    assert notes and any(
        f"'{c}' is an exact combination of the other columns" in notes[0]
        for c in ("a", "b", "total")
    )
    assert "positions" not in " ".join(res.warnings)
