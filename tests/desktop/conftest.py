"""Desktop test setup: offscreen Qt, an injected settings folder, no thread left running.

Builders here make simulated data with a known truth (stated as such) and, where a real engine
run is not the point of a test, a StudyResult whose path comes from scikit-learn's
``lasso_path`` (a reference library) so the widgets draw a genuine penalty path.
"""

from __future__ import annotations

import os

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

import functools  # noqa: E402
import threading  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402
import pytest  # noqa: E402

from desktop.settings_store import SettingsStore  # noqa: E402
from desktop.worker import TaskRunner  # noqa: E402


@pytest.fixture(autouse=True)
def no_thread_left_running(request):
    """Fail a test that leaves a background task or a new Python thread running."""
    before = {t.ident for t in threading.enumerate()}
    yield
    deadline = time.monotonic() + 3.0
    while time.monotonic() < deadline:
        busy = [r for r in list(TaskRunner.live) if r.busy]
        extra = [
            t
            for t in threading.enumerate()
            if t.ident not in before and t.is_alive() and not t.daemon
        ]
        if not busy and not extra:
            break
        try:
            from PySide6.QtWidgets import QApplication

            if QApplication.instance() is not None:
                QApplication.processEvents()
        except ImportError:
            pass
        time.sleep(0.02)
    busy = [r for r in list(TaskRunner.live) if r.busy]
    for r in busy:  # stop them so later tests start clean, then fail this one
        r.shutdown()
    assert not busy, f"{request.node.name} left a background task running"
    assert not extra, f"{request.node.name} left threads running: {[t.name for t in extra]}"


@pytest.fixture(autouse=True)
def own_config_folder(tmp_path: Path, monkeypatch):
    """Error logs of unexpected failures go to the test's folder, not the user's."""
    monkeypatch.setenv("TAMIS_CONFIG_DIR", str(tmp_path / "config"))


@pytest.fixture
def store(tmp_path: Path) -> SettingsStore:
    return SettingsStore(tmp_path / "profile")


def simulated_frame(n: int = 80, p: int = 12, seed: int = 7):
    """Simulated data with a known truth: y = 3 x0 - 2 x1 + 1.5 x2 + noise(sd 1); x3..x(p-1) are noise."""
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, p))
    y = 3 * X[:, 0] - 2 * X[:, 1] + 1.5 * X[:, 2] + rng.normal(scale=1.0, size=n)
    return X, y


def write_book(
    path: Path, n: int = 80, p: int = 12, seed: int = 7, extra_sheet: bool = True
) -> Path:
    """An .xlsx with a notes row above the headings, a category, an id column and a hidden sheet."""
    from openpyxl import Workbook

    X, y = simulated_frame(n, p, seed)
    wb = Workbook()
    ws = wb.active
    ws.title = "Lots"
    ws.append(["Simulated lots for the desktop tests"])
    ws.append([])
    ws.append(["lot_id", "response_y", "region"] + [f"x{j}" for j in range(p)])
    regions = ["north", "south", "east"]
    for i in range(n):
        ws.append([f"L-{i:04d}", float(y[i]), regions[i % 3]] + [float(v) for v in X[i]])
    if extra_sheet:
        hidden = wb.create_sheet("Scratch")
        hidden.append(["a", "b"])
        hidden.append([1, 2])
        hidden.sheet_state = "hidden"
    wb.save(path)
    return path


@pytest.fixture
def book(tmp_path: Path) -> Path:
    return write_book(tmp_path / "lots.xlsx")


def simulated_table(n: int = 80, p: int = 12, seed: int = 7, source: Path | str = "simulated.xlsx"):
    """An intake Table built directly (no file): id, response, a category and p numeric columns."""
    from engine.intake.table import Column, ColumnKind, SheetInfo, Table

    X, y = simulated_frame(n, p, seed)
    regions = np.array(["north", "south", "east"], dtype=object)[np.arange(n) % 3]

    def num(name: str, letter: str, v: np.ndarray) -> Column:
        return Column(
            name,
            name,
            letter,
            ColumnKind.NUMBER,
            v.astype(float),
            distinct=len(np.unique(v)),
            minimum=float(v.min()),
            maximum=float(v.max()),
        )

    from engine.intake.cells import column_letter

    cols = [
        Column(
            "lot_id",
            "lot_id",
            "A",
            ColumnKind.IDENTIFIER,
            np.array([f"L-{i:04d}" for i in range(n)], dtype=object),
            distinct=n,
        ),
        num("response_y", "B", y),
        Column(
            "region",
            "region",
            "C",
            ColumnKind.CATEGORY,
            regions,
            distinct=3,
            levels=["north", "south", "east"],
        ),
    ]
    cols += [num(f"x{j}", column_letter(j + 3), X[:, j]) for j in range(p)]
    return Table(
        source=Path(source),
        sheet="Lots",
        sheets=[SheetInfo("Lots", 0), SheetInfo("Scratch", 1, hidden=True)],
        header_row=3,
        columns=cols,
        row_numbers=np.arange(4, 4 + n, dtype=np.int64),
    )


class TableCalls:
    """Engine calls that serve one prepared table (for tests that do not exercise intake)."""

    def __init__(self, table, run=None):
        from desktop.engine_calls import EngineCalls

        self.table = table
        self._real = EngineCalls()
        self._run = run

    def list_sheets(self, path):
        return list(self.table.sheets)

    def read_table(self, path, sheet, header_row, progress):
        progress.step(1.0, "read")
        return self.table

    def load_settings(self, path):
        from engine.errors import InputProblem

        raise InputProblem("no settings sheet")

    def run_study(self, spec, progress):
        if self._run is not None:
            return self._run(spec, progress)
        from engine.study import run_study

        return run_study(spec, progress, table=self.table)

    def write_results(self, result, *, out, in_place, progress):
        return self._real.write_results(result, out=out, in_place=in_place, progress=progress)


@pytest.fixture
def table():
    return simulated_table()


@functools.lru_cache(maxsize=4)
def simulated_result(n: int = 80, p: int = 12, seed: int = 7, focal: bool = True):
    """A StudyResult for widget tests over ``simulated_table`` (x0 focal when asked)."""
    from desktop.roles import Role, build_spec

    table = simulated_table(n, p, seed)
    roles = {c.name: Role.CANDIDATE for c in table.columns if c.name.startswith("x")}
    roles["response_y"] = Role.RESPONSE
    if focal:
        roles["x0"] = Role.FOCAL
    spec = build_spec(table, roles, {"methods": ("lasso", "forward-stepwise"), "folds": 5})
    return result_for(table, spec)


def result_for(table, spec, progress=None, slow_steps: int = 0):
    """A StudyResult built without engine.study (a stand-in while a test is about the window).

    The design comes from ``engine.design.build_design``; the lasso path and its validation
    errors come from scikit-learn (``lasso_path`` and ``LassoCV.mse_path_``), whose penalty
    convention equals ours for mix = 1 (Source: the scikit-learn Lasso docstring, objective
    (1/(2n))||y - Xw||^2 + alpha ||w||_1). ``slow_steps`` adds that many CPU-bound steps of
    about 20 ms each, reporting progress (and so honouring cancel) between them.
    """
    from sklearn.linear_model import LassoCV, lasso_path

    from engine.design import build_design
    from engine.fitting.path import PenaltyPath
    from engine.progress import silent
    from engine.study_result import FocalResult, ModelResult, SizeRow, StabilityResult, StudyResult
    from engine.tuning.curve import ValidationCurve, choose_index

    progress = progress or silent()
    progress.step(0.0, "building the design matrix")
    d = build_design(table, spec)
    n = d.n_rows
    rng = np.random.default_rng(0)
    for k in range(slow_steps):
        a = rng.normal(size=(120, 120))
        t_end = time.perf_counter() + 0.02
        while time.perf_counter() < t_end:
            a = np.tanh(a @ a.T / 120.0)
        progress.step(
            0.05 + 0.5 * k / slow_steps,
            f"stability of selection: half-sample {k + 1} of {slow_steps}",
        )
    Z = (d.X - d.means) / d.sds
    yc = d.y - d.y.mean()
    progress.step(0.6, "Lasso: path on all rows")
    alphas, coefs, _ = lasso_path(Z, yc, alphas=50, eps=1e-3)
    std = coefs.T  # (L, p)
    path = PenaltyPath(
        penalties=alphas,
        std_coefs=std,
        column_scale=1.0 / d.sds,
        intercepts=d.y.mean() - (std / d.sds) @ d.means,
        mix=1.0,
    )
    progress.step(0.7, "Lasso: cross-validation")
    cv = LassoCV(alphas=alphas, cv=5).fit(Z, yc)
    mse = cv.mse_path_  # (L, folds), same alpha order as given (decreasing)
    mean, se = mse.mean(axis=1), mse.std(axis=1, ddof=1) / np.sqrt(mse.shape[1])
    i_min, i_1se = choose_index(mean, se, "min"), choose_index(mean, se, "one-se")
    curve = ValidationCurve(
        grid=alphas,
        grid_kind="penalty",
        mean_error=mean,
        se=se,
        n_selected=(std != 0).sum(axis=1),
        part_errors=mse.T,
        index_min=i_min,
        index_one_se=i_1se,
        scheme="kfold",
        parts=5,
    )

    def model(method, coef_std, **kw):
        coef = coef_std / d.sds
        intercept = float(d.y.mean() - coef @ d.means)
        return ModelResult(
            method=method,
            intercept=intercept,
            coefficients=dict(zip(d.names, map(float, coef))),
            std_coefficients=dict(zip(d.names, map(float, coef_std))),
            selected=[nm for nm, b in zip(d.names, coef_std) if b != 0],
            fitted=intercept + d.X @ coef,
            **kw,
        )

    i = curve.chosen(spec.choose)
    lasso = model(
        "lasso",
        std[i],
        penalty=float(alphas[i]),
        mix=1.0,
        choice=spec.choose,
        cv_error=float(mean[i]),
        cv_error_se=float(se[i]),
        r2=0.9,
        path=path,
        curve=curve,
    )
    order = np.argsort(-np.abs(std[i_min]))
    by_size = []
    for k in range(1, 5):
        idx = sorted(order[:k].tolist())
        A = np.c_[np.ones(n), d.X[:, idx]]
        beta, *_ = np.linalg.lstsq(A, d.y, rcond=None)
        rss = float(np.sum((d.y - A @ beta) ** 2))
        by_size.append(SizeRow(k, [d.names[j] for j in idx], rss, 1 - rss / float(np.sum(yc**2))))
    sub = np.zeros(len(d.names))
    sub[order[:3]] = std[i_min][order[:3]]
    stepwise = model("forward-stepwise", sub, by_size=by_size, choice="min")
    focal_res = None
    if spec.focal:
        focal_res = FocalResult(
            spec.focal, 3.0, 0.12, 2.76, 3.24, [], [], [], "plugin", naive_estimate=3.05
        )
    shares = {nm: float(abs(b) > 0) * 0.9 + 0.05 for nm, b in zip(d.names, std[i_min])}
    stab = StabilityResult(50, shares, 0.6, [k for k, v in shares.items() if v >= 0.6])
    progress.step(1.0, "done")
    models = [m for m in (lasso, stepwise) if m.method in spec.methods] or [lasso]
    return StudyResult(
        spec=spec,
        design=d,
        models=models,
        focal=focal_res,
        stability=stab,
        warnings=["a simulated note"],
        seconds=0.5,
        tool_version="0.1.0",
        started="2026-01-01T00:00:00+00:00",
    )


@pytest.fixture
def result():
    return simulated_result()
