"""Realistic study results built from the result dataclasses, for the report tests.

Simulated data with a known truth (stated as such): coffee-lot style rows with numeric, category,
yes/no and date columns, one numeric column with gaps (filled with its median plus a missing
indicator). The fits are real: lasso and elastic-net paths from scikit-learn's ``enet_path``
on columns standardized with the population standard deviation (the convention of Friedman,
Hastie & Tibshirani 2010, which scikit-learn's objective (1/(2n))||y - Zw||^2 + alpha * penalty
shares), K-fold curves with per-fold scaling, ridge in closed form, least squares after lasso
with HC1 standard errors, forward stepwise by residual sum of squares. These do not depend on
the study module, so the report tests run on their own.
"""

from __future__ import annotations

import copy
import datetime as dt
from pathlib import Path

import numpy as np
import xlsxwriter
from sklearn.linear_model import enet_path
from sklearn.model_selection import KFold

from engine.design import Design, Encoding
from engine.fitting.path import PenaltyPath
from engine.study_result import FocalResult, ModelResult, SizeRow, StabilityResult, StudyResult
from engine.study_spec import StudySpec
from engine.tuning.curve import ValidationCurve, choose_index

HEADINGS = ["lot", "altitude", "rain", "density", "process", "organic", "harvest", "price", "score"]
PROCESSES = ["washed", "natural", "honey"]
ORIGIN = dt.date(2023, 1, 1)


def simulate_rows(n: int, seed: int, gaps: bool = True) -> list[dict]:
    """Rows of raw cell values; the response follows a known linear truth plus noise."""
    rng = np.random.default_rng(seed)
    rows = []
    for i in range(n):
        proc = PROCESSES[0] if i % 5 in (0, 1) else PROCESSES[1 + (i % 2)]
        org = bool(rng.random() < 0.4)
        day = ORIGIN + dt.timedelta(days=int(rng.integers(0, 700)))
        alt = float(rng.normal(1500, 200))
        rain = None if (gaps and i % 9 == 4) else float(rng.normal(120, 30))
        dens = float(rng.normal(0.7, 0.05))
        price = float(rng.normal(10, 2))
        y = (
            80
            + 0.01 * (alt - 1500)
            + 2.0 * (proc == "natural")
            - 1.0 * (proc == "honey")
            + 1.5 * org
            + 0.004 * (day - ORIGIN).days
            + 0.3 * price
            + rng.normal(0, 0.8)
        )
        rows.append(
            {
                "lot": f"L{i:03d}",
                "altitude": alt,
                "rain": rain,
                "density": dens,
                "process": proc,
                "organic": "yes" if org else "no",
                "harvest": day,
                "price": price,
                "score": float(y),
            }
        )
    return rows


def write_rows(path: Path, rows: list[dict], sheet: str = "Lots", headings=HEADINGS) -> None:
    wb = xlsxwriter.Workbook(str(path))
    fill_sheet(wb, wb.add_worksheet(sheet), rows, headings)
    wb.close()


def fill_sheet(wb, ws, rows: list[dict], headings=HEADINGS, heading_format=None) -> None:
    """Headings in row 1, then one row per dict: dates as dates, text as text, numbers as numbers."""
    datef = wb.add_format({"num_format": "yyyy-mm-dd"})
    for c, h in enumerate(headings):
        ws.write_string(0, c, h, heading_format)
    for r, row in enumerate(rows, start=1):
        for c, h in enumerate(headings):
            v = row.get(h)
            if v is None:
                continue
            if isinstance(v, dt.date):
                ws.write_datetime(r, c, dt.datetime(v.year, v.month, v.day), datef)
            elif isinstance(v, str):
                ws.write_string(r, c, v)
            else:
                ws.write_number(r, c, v)


def build_design(rows: list[dict], source: str) -> Design:
    n = len(rows)
    rain = np.array([np.nan if r["rain"] is None else r["rain"] for r in rows])
    fill = float(np.nanmedian(rain))
    days = np.array([(r["harvest"] - ORIGIN).days for r in rows], dtype=float)
    origin = ORIGIN + dt.timedelta(days=int(days.min()))
    days -= days.min()
    months = np.array([r["harvest"].month for r in rows])
    encs = [
        Encoding("altitude", "altitude", "B", "number"),
        Encoding("rain", "rain", "C", "number", fill=fill),
        Encoding("density", "density", "D", "number"),
        Encoding("process=natural", "process", "E", "level", level="natural", reference="washed"),
        Encoding("process=honey", "process", "E", "level", level="honey", reference="washed"),
        Encoding("organic", "organic", "F", "flag"),
        Encoding("harvest:trend", "harvest", "G", "trend", origin=origin.isoformat()),
        Encoding("harvest:month=7", "harvest", "G", "month", level="7", reference="1"),
        Encoding("price", "price", "H", "number"),
        Encoding("rain:missing", "rain", "C", "missing"),
    ]
    cols = [
        np.array([r["altitude"] for r in rows]),
        np.where(np.isfinite(rain), rain, fill),
        np.array([r["density"] for r in rows]),
        np.array([r["process"] == "natural" for r in rows], dtype=float),
        np.array([r["process"] == "honey" for r in rows], dtype=float),
        np.array([r["organic"] == "yes" for r in rows], dtype=float),
        days,
        (months == 7).astype(float),
        np.array([r["price"] for r in rows]),
        (~np.isfinite(rain)).astype(float),
    ]
    X = np.column_stack(cols)
    y = np.array([r["score"] for r in rows])
    return Design(
        source=source,
        sheet="Lots",
        header_row=1,
        response="score",
        names=[e.name for e in encs],
        encodings=encs,
        X=X,
        y=y,
        row_numbers=np.arange(2, n + 2),
        means=X.mean(axis=0),
        sds=X.std(axis=0),
        category_levels={"process": ["washed", "natural", "honey"]},
        focal_index=8,
        warnings=["column 'lot' left out: it looks like an identifier"],
    )


def _std(X):
    m, s = X.mean(axis=0), X.std(axis=0)
    return (X - m) / s, m, s


def _enet_path(X, y, mix, penalties):
    Z, m, s = _std(X)
    yc = y - y.mean()
    if mix == 0.0:  # ridge: (Z'Z/n + lambda I) beta = Z'y/n
        n, p = Z.shape
        G, c = Z.T @ Z / n, Z.T @ yc / n
        B = np.array([np.linalg.solve(G + lam * np.eye(p), c) for lam in penalties])
    else:
        _, coefs, _ = enet_path(Z, yc, l1_ratio=mix, alphas=penalties, max_iter=20_000, tol=1e-9)
        B = coefs.T
    b = B / s
    return B, b, y.mean() - b @ m


def _grid(X, y, mix, L=40):
    Z, _, _ = _std(X)
    top = np.abs(Z.T @ (y - y.mean())).max() / len(y) / max(mix, 1e-2)
    return top * np.logspace(0, -3, L)


def _penalized(design, method, mix, folds, choose="min"):
    X, y = design.X, design.y
    pen = _grid(X, y, mix)
    B, b, icpt = _enet_path(X, y, mix, pen)
    errs = []
    for tr, te in folds:
        _, bf, cf = _enet_path(X[tr], y[tr], mix, pen)
        pred = cf[:, None] + bf @ X[te].T
        errs.append(((pred - y[te]) ** 2).mean(axis=1))
    E = np.array(errs)
    mean, se = E.mean(axis=0), E.std(axis=0, ddof=1) / np.sqrt(len(folds))
    i_min, i_1se = choose_index(mean, se, "min"), choose_index(mean, se, "one-se")
    k = i_min if choose == "min" else i_1se
    curve = ValidationCurve(
        pen, "penalty", mean, se, (B != 0).sum(axis=1), E, i_min, i_1se, "kfold", len(folds)
    )
    path = PenaltyPath(pen, B, 1.0 / _std(X)[2], icpt, mix)
    names = design.names
    fitted = icpt[k] + X @ b[k]
    r2 = 1 - ((y - fitted) ** 2).sum() / ((y - y.mean()) ** 2).sum()
    return ModelResult(
        method=method,
        intercept=float(icpt[k]),
        coefficients={nm: float(v) for nm, v in zip(names, b[k])},
        std_coefficients={nm: float(v) for nm, v in zip(names, B[k])},
        selected=[nm for nm, v in zip(names, B[k]) if v != 0],
        penalty=float(pen[k]),
        mix=mix,
        choice=choose,
        cv_error=float(mean[k]),
        cv_error_se=float(se[k]),
        r2=float(r2),
        fitted=fitted,
        path=path,
        curve=curve,
    )


def _ols(X, y):
    A = np.column_stack([np.ones(len(y)), X])
    coef, *_ = np.linalg.lstsq(A, y, rcond=None)
    return coef


def _post_lasso(design, lasso):
    X, y, names = design.X, design.y, design.names
    keep = [names.index(s) for s in lasso.selected]
    coef = _ols(X[:, keep], y)
    A = np.column_stack([np.ones(len(y)), X[:, keep]])
    resid = y - A @ coef
    n, k = A.shape
    bread = np.linalg.inv(A.T @ A)
    meat = (A * resid[:, None] ** 2).T @ A
    cov = bread @ meat @ bread * n / (n - k)  # HC1 (MacKinnon & White 1985)
    se = np.sqrt(np.diag(cov))[1:]
    b = np.zeros(len(names))
    b[keep] = coef[1:]
    fitted = A @ coef
    r2 = 1 - (resid**2).sum() / ((y - y.mean()) ** 2).sum()
    return ModelResult(
        method="post-lasso",
        intercept=float(coef[0]),
        coefficients={nm: float(v) for nm, v in zip(names, b)},
        std_coefficients={nm: float(v * s) for nm, v, s in zip(names, b, design.sds)},
        selected=list(lasso.selected),
        cv_error=lasso.cv_error,
        cv_error_se=lasso.cv_error_se,
        r2=float(r2),
        fitted=fitted,
        std_errors={names[j]: float(s) for j, s in zip(keep, se)},
    )


def _stepwise(design, folds):
    X, y, names = design.X, design.y, design.names
    p = X.shape[1]
    order: list[int] = []
    rows = []
    tss = ((y - y.mean()) ** 2).sum()
    rows.append(SizeRow(0, [], float(tss), 0.0))
    for _ in range(p):
        best = None
        for j in range(p):
            if j in order:
                continue
            cols = order + [j]
            c = _ols(X[:, cols], y)
            rss = ((y - c[0] - X[:, cols] @ c[1:]) ** 2).sum()
            if best is None or rss < best[0]:
                best = (rss, j)
        order.append(best[1])
        rows.append(
            SizeRow(len(order), [names[j] for j in order], float(best[0]), float(1 - best[0] / tss))
        )
    sizes = np.arange(p + 1)
    E = []
    for tr, te in folds:
        e = []
        for s in sizes:
            cols = order[:s]
            c = _ols(X[tr][:, cols], y[tr])
            e.append(((y[te] - c[0] - X[te][:, cols] @ c[1:]) ** 2).mean())
        E.append(e)
    E = np.array(E)
    mean, se = E.mean(axis=0), E.std(axis=0, ddof=1) / np.sqrt(len(folds))
    i_min, i_1se = choose_index(mean, se, "min"), choose_index(mean, se, "one-se")
    cols = order[:i_min]
    c = _ols(X[:, cols], y)
    b = np.zeros(p)
    b[cols] = c[1:]
    fitted = c[0] + X @ b
    return ModelResult(
        method="forward-stepwise",
        intercept=float(c[0]),
        coefficients={nm: float(v) for nm, v in zip(names, b)},
        std_coefficients={nm: float(v * s) for nm, v, s in zip(names, b, design.sds)},
        selected=[names[j] for j in cols],
        choice="min",
        cv_error=float(mean[i_min]),
        cv_error_se=float(se[i_min]),
        r2=rows[i_min].r2,
        fitted=fitted,
        curve=ValidationCurve(sizes.astype(float), "size", mean, se, sizes, E, i_min, i_1se),
        by_size=rows,
    )


def make_result(
    tmp: Path, n: int = 80, seed: int = 7, name: str = "lots.xlsx", writer=None
) -> tuple[StudyResult, list[dict]]:
    """Write the source workbook to ``tmp/name`` and return a study result on it plus the rows.

    ``writer(path, rows)`` writes the source (default: a plain workbook with one sheet "Lots").
    """
    rows = simulate_rows(n, seed)
    source = Path(tmp) / name
    (writer or write_rows)(source, rows)
    if (n, seed) not in _CACHE:
        _CACHE[(n, seed)] = _fit_all(rows, n, seed)
    result = copy.deepcopy(_CACHE[(n, seed)])
    result.design.source = str(source)
    result.spec = result.spec.replace(source=str(source))
    return result, rows


_CACHE: dict[tuple[int, int], StudyResult] = {}


def _fit_all(rows: list[dict], n: int, seed: int) -> StudyResult:
    design = build_design(rows, "")
    spec = StudySpec(
        source="",
        response="score",
        sheet="Lots",
        methods=("lasso", "ridge", "elastic-net", "post-lasso", "forward-stepwise"),
        folds=5,
        missing="fill",
        focal="price",
        stability_runs=10,
        exclude=("lot",),
        date_parts=True,
    )
    folds = [(tr, te) for tr, te in KFold(5, shuffle=True, random_state=0).split(design.X)]
    lasso = _penalized(design, "lasso", 1.0, folds)
    ridge = _penalized(design, "ridge", 0.0, folds)
    enet = _penalized(design, "elastic-net", 0.5, folds)
    post = _post_lasso(design, lasso)
    step = _stepwise(design, folds)
    # stability: share of half-samples in which the lasso at the chosen penalty kept each column
    rng = np.random.default_rng(seed)
    counts = np.zeros(design.n_cols)
    for _ in range(10):
        half = rng.choice(n, n // 2, replace=False)
        B, _, _ = _enet_path(design.X[half], design.y[half], 1.0, np.array([lasso.penalty]))
        counts += B[0] != 0
    shares = {nm: float(c / 10) for nm, c in zip(design.names, counts)}
    stab = StabilityResult(10, shares, 0.6, [k for k, v in shares.items() if v >= 0.6])
    controls = [c for c in lasso.selected if c != "price"]
    cols = [design.names.index(c) for c in ["price", *controls]]
    coef = _ols(design.X[:, cols], design.y)
    focal = FocalResult(
        "price",
        float(coef[1]),
        0.05,
        float(coef[1] - 0.098),
        float(coef[1] + 0.098),
        controls,
        controls,
        [],
        "plugin",
        naive_estimate=float(coef[1]) * 0.9,
    )
    return StudyResult(
        spec=spec,
        design=design,
        models=[lasso, ridge, enet, post, step],
        focal=focal,
        stability=stab,
        warnings=["column 'lot' left out: it looks like an identifier"],
        tool_version="0.1.0",
        started="2026-01-05T10:00:00+00:00",
        seconds=1.5,
    )


def write_wide_book(path: Path, n: int, p: int, *, blank_every: int, seed: int) -> Path:
    """A sheet of ``n`` rows: y, then x0 .. x{p-1} (standard normal; y is the sum of the first
    three plus noise), a blank wherever (row + column) is a multiple of ``blank_every``: a
    model wide enough to make long scoring formulas, with fills stored under "fill"."""
    import openpyxl

    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, p))
    y = X[:, :3].sum(axis=1) + rng.normal(size=n)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["y"] + [f"x{j}" for j in range(p)])
    for i in range(n):
        ws.append(
            [float(y[i])]
            + [None if (i + j) % blank_every == 0 else float(X[i, j]) for j in range(p)]
        )
    wb.save(path)
    return path
