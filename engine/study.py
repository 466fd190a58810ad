"""The one entry point: a study specification in, a study result out.

``run_study(spec, progress)`` reads the sheet, builds the design, makes the validation parts
once (the same parts and, per method, the same penalty grid for every part), fits each chosen
method, and collects warnings. Progress is reported in words between stages, folds and
penalties; a cancel stops the run with ``Cancelled`` and nothing is written (writing is a
separate step, ``engine.report.write_results``).
"""

from __future__ import annotations

import functools

__all__ = ["run_study", "load_table"]

import dataclasses
import datetime as _dt
import time
import warnings as _warnings

import numpy as np

from engine import __version__
from engine.design import Design, build_design, drop_reasons_text
from engine.errors import InputProblem, Place, TamisWarning
from engine.far_values import screen_far_values
from engine.fitting.influence import influence
from engine.intake.far_out import screened
from engine.intake.table import Table
from engine.methods import method_info
from engine.progress import Progress, silent
from engine.study_result import Criteria, ModelResult, StudyResult
from engine.study_spec import StudySpec
from engine.tuning.final_test import HeldBack, hold_back_test_rows

# a first forward-chaining part learning from fewer rows than this gets a note
_FEW_TRAINING_ROWS = 20
_UNUSUAL_SHOWN = 5  # rows named in the warning; the fitted-values sheet has them all

# relative cost of each method, to move one progress bar evenly
_COST = {
    "ols": 1,
    "ridge": 2,
    "lasso": 6,
    "elastic-net": 6,
    "adaptive-lasso": 8,
    "post-lasso": 4,
    "best-subset": 10,
    "forward-stepwise": 5,
}


def load_table(spec: StudySpec, progress: Progress | None = None) -> Table:
    """The sheet the study reads. Without a sheet named, the first visible one that holds a
    table (``read_table``); when that one has no column named as the response, the one other
    sheet that has, with a warning saying so."""
    from engine.intake import list_sheets, read_table

    try:
        table = read_table(
            spec.source, sheet=spec.sheet, header_row=spec.header_row, progress=progress
        )
    except InputProblem as problem:
        if spec.sheet is not None:
            raise
        first: Table | InputProblem = problem  # a cover page with no table: look further
    else:
        if spec.sheet is not None or _has_column(table, spec.response):
            return table
        first = table
    first_name = first.sheet if isinstance(first, Table) else first.place.sheet
    holding = []
    for info in list_sheets(spec.source):
        if info.hidden or info.name == first_name:
            continue
        try:
            other = read_table(spec.source, sheet=info.name, header_row=spec.header_row)
        except InputProblem:  # an empty sheet, a chart sheet: not the one
            continue
        if _has_column(other, spec.response):
            holding.append(other)
    if len(holding) == 1:
        found = holding[0]
        found.warnings.insert(
            0,
            f"sheet '{found.sheet}' read: it holds the response '{spec.response}', which "
            f"sheet '{first_name}' does not",
        )
        return found
    if len(holding) > 1:
        listed = ", ".join(f"'{t.sheet}'" for t in holding)
        raise InputProblem(
            f"no column named '{spec.response}' in sheet '{first_name}'; sheets {listed} "
            "each have one: choose the sheet to read",
            Place(file=str(spec.source), column=spec.response),
        )
    if isinstance(first, InputProblem):
        raise first
    return first  # the first sheet's own message follows, naming its columns


def _has_column(table: Table, name: str) -> bool:
    try:
        table.column(name)
    except InputProblem:
        return False
    return True


def _spec_in_sheet_names(spec: StudySpec, table: Table) -> StudySpec:
    """``spec`` with every column it names spelled as the sheet spells it: a name given in
    another case or spacing, or as a column letter, is resolved once, here (an unknown name,
    an exclusion too, is refused with the sheet's columns listed)."""

    def column(given: str) -> str:
        found = table.column(given)
        folded = " ".join(given.split()).casefold()
        if found.name != given and " ".join(found.name.split()).casefold() != folded:
            # taken as a column letter: say so, a mistyped name could land on another column
            note = (
                f"'{given}' was read as the column in letter {found.letter} ('{found.name}') of "
                f"sheet '{table.sheet}': no column has that name"
            )
            if note not in table.warnings:
                table.warnings.append(note)
        return found.name

    def name(given: str | None) -> str | None:
        return None if given is None else column(given)

    return dataclasses.replace(
        spec,
        response=column(spec.response),
        candidates=None if spec.candidates is None else tuple(column(n) for n in spec.candidates),
        exclude=tuple(column(n) for n in spec.exclude),
        log_columns=tuple(column(n) for n in spec.log_columns),
        interactions=tuple((column(a), column(b)) for a, b in spec.interactions),
        focal=name(spec.focal),
        group=name(spec.group),
        time_order=name(spec.time_order),
    )


def run_study(
    spec: StudySpec, progress: Progress | None = None, *, table: Table | None = None
) -> StudyResult:
    """Run every method of ``spec`` and return the result (nothing is written to disk).

    ``progress``: ``Progress(callback, cancel)``, the callback called on this thread with the
    fraction done (0 to 1) and the step in words; ``cancel.cancel()`` from another thread
    stops the run at its next step with ``Cancelled``. ``table``: the sheet already read
    (``read_table``), else ``spec.source`` is read. Raises ``InputProblem`` (a subclass of
    ``TamisError``, with ``.place`` naming the file, sheet, column, row or cell) for input
    that cannot be used, with a message saying what to change.
    """
    progress = _monotone(progress or silent())
    started = _dt.datetime.now().astimezone().isoformat(timespec="seconds")
    t0 = time.perf_counter()
    progress.step(0.0, "reading the sheet" if table is None else "checking the file")
    fingerprint = _fingerprint(spec.source)  # before reading: a later change must be noticed
    if table is None:
        table = load_table(spec, progress.part(0.0, 0.04))
        first_visible = next((s.name for s in table.sheets if not s.hidden), table.sheet)
        if spec.sheet is None and table.sheet != first_visible:
            # another sheet than the first was read: recorded, so that a re-run reads it too
            spec = dataclasses.replace(spec, sheet=table.sheet)
    spec = _spec_in_sheet_names(spec, table)
    progress.step(0.04, "building the design matrix")
    design = build_design(table, spec)
    notes: list[str] = list(table.warnings) + list(design.warnings)
    far = screen_far_values(
        design,
        {c.name: c.letter for c in table.columns},
        skip=[c.name for c in table.columns if not screened(c.notes)],
    )
    notes += far.notes()
    test: HeldBack | None = None
    if spec.test_share > 0:
        design, test = hold_back_test_rows(design, spec)
        notes.extend(test.notes)

    if set(spec.methods) == {"ols"} and design.n_rows <= design.n_cols + 1 and not spec.focal:
        raise InputProblem(
            f"least squares, the only method chosen, needs more rows than model columns "
            f"({design.n_rows} rows, {design.n_cols} columns in sheet '{table.sheet}'); choose "
            "a penalized method (lasso, ridge, elastic net ...) or fewer candidate columns",
            Place(file=str(table.source), sheet=table.sheet),
        )
    parts = _validation_parts(design, spec)
    notes.extend(_early_part_note(design, spec, parts))
    _start_workers_if_worthwhile(design, spec, parts)
    runner = _MethodRunner(design, spec, parts, notes)

    extra = []
    if spec.focal:
        extra.append(("focal", 6.0))
    if spec.stability_runs:
        extra.append(("stability", 0.2 * spec.stability_runs / 10 + 2))
    total = sum(_COST[m] for m in spec.methods) + sum(w for _, w in extra)
    done = 0.0
    lo, hi = 0.05, 0.99

    def span(weight: float, words: str) -> Progress:
        nonlocal done
        a = lo + (hi - lo) * done / total
        done += weight
        b = lo + (hi - lo) * done / total
        return progress.part(a, b, words)

    models: list[ModelResult] = []
    with _warnings.catch_warnings(record=True) as caught:
        _warnings.simplefilter("always", TamisWarning)
        for name in spec.methods:
            part = span(_COST[name], method_info(name).title)
            part.step(0.0, "starting")
            result = runner.fit(name, part)
            if result is not None:
                models.append(result)
        focal = None
        stability = None
        for what, weight in extra:
            part = span(weight, "double selection" if what == "focal" else "stability of selection")
            if what == "focal":
                focal = runner.focal(part)
            else:
                stability = runner.stability(part)
    for w in caught:
        if issubclass(w.category, TamisWarning):
            notes.append(str(w.message))
    if test is not None:
        test.measure(models, design.names)
    progress.step(1.0, "done")
    study = StudyResult(
        spec=spec,
        design=design,
        models=models,
        focal=focal,
        stability=stability,
        warnings=_unique(notes),
        tool_version=__version__,
        started=started,
        seconds=time.perf_counter() - t0,
        source_fingerprint=fingerprint,
        test_rows=None if test is None else test.row_numbers,
        far_cells=far.cells,
    )
    _check_unusual_rows(study)
    return study


def _check_unusual_rows(result: StudyResult) -> None:
    """Measure the scoring model's refit row by row and warn about the rows that stand apart."""
    if not result.models:
        return
    method = result.scoring_method()
    model = result.model(method)
    d = result.design
    kept = set(model.selected)
    if not kept:  # the prediction is the mean: the far-out check has said what there is to say
        return
    inf = influence(d.X[:, [j for j, name in enumerate(d.names) if name in kept]], d.y)
    if inf is None:
        return
    result.influence, result.influence_method = inf, method
    flagged = result.unusual_rows()
    if not flagged:
        return
    shown = []
    for row, u in flagged[:_UNUSUAL_SHOWN]:
        why = []
        if u.outlier:
            why.append(
                f"residual {abs(u.studentized):.1f} standard errors, beyond chance among {d.n_rows} rows"
            )
        if u.influential:
            why.append(f"leaving it out moves the coefficients: Cook's distance {u.cooks:.2g}")
        shown.append(f"row {row} ({'; '.join(why)})")
    more = len(flagged) - len(shown)
    result.warnings.append(
        f"Rows of sheet '{d.sheet}' that stand apart in a least-squares refit of the "
        f"{inf.n_coefficients - 1} columns of the {method_info(method).title} model: "
        + ", ".join(shown)
        + (f" and {more} more" if more else "")
        + ". Check them for typing or unit slips before relying on the model; the fitted-values "
        "sheet gives the measures for every row."
    )


def _fingerprint(source: str) -> dict | None:
    """Size, time and hash of the input file, so the writer can refuse a file changed since."""
    from engine.report import fingerprint

    try:
        return fingerprint(source).to_dict()
    except OSError:
        return None


def _monotone(progress: Progress) -> Progress:
    """The same progress, but the bar never moves back (parallel parts report out of order)."""
    callback = progress.callback
    if callback is None:
        return progress
    high = [progress.start]

    def forward(fraction: float, words: str) -> None:
        high[0] = max(high[0], fraction)
        callback(high[0], words)

    return Progress(forward, progress.cancel, progress.start, progress.end, progress.prefix)


def _unique(items: list[str]) -> list[str]:
    return list(dict.fromkeys(items))  # first occurrence of each, in order


# estimated seconds of penalized validation above which the worker processes are started
# right away, so they are ready (their start-up overlaps the fit on all rows) when it begins
_START_WORKERS_AT = 4.0


def _start_workers_if_worthwhile(design: Design, spec: StudySpec, parts: list) -> None:
    from engine.tuning.crossval import estimated_seconds
    from engine.tuning.parts import warm_process_pool, worker_count

    mixes = set()
    if {"lasso", "post-lasso"} & set(spec.methods):  # post-lasso selects with the lasso
        mixes.add(1.0)
    if "elastic-net" in spec.methods:
        mixes.add(spec.mix)
    n, p = design.X.shape
    work = sum(estimated_seconds(n, p, len(parts), spec.n_penalties, mix) for mix in mixes)
    if work >= _START_WORKERS_AT and worker_count(spec.workers, len(parts)) > 1:
        warm_process_pool(spec.workers)


def _validation_parts(design: Design, spec: StudySpec) -> list[tuple[np.ndarray, np.ndarray]]:
    from engine.tuning.folds import make_folds

    n = design.n_rows
    place = Place(file=design.source, sheet=design.sheet)
    if spec.scheme != "loo" and n < spec.folds:
        left_out = ""
        if design.rows_dropped:  # say where the rows went: often one sparse column
            left_out = (
                f" ({design.rows_dropped} left out: {drop_reasons_text(design.drop_reasons)})"
            )
        keep_rows = ""
        blanks = [why for why in design.drop_reasons if why.startswith("missing in candidate ")]
        if blanks:  # the rows are there: a sparse candidate took them
            worst = max(blanks, key=lambda why: design.drop_reasons[why])
            keep_rows = (
                f"; to keep the rows, leave out the candidate "
                f"{worst.removeprefix('missing in candidate ')} or use --missing fill"
            )
        raise InputProblem(
            f"{n} rows are used in sheet '{design.sheet}'{left_out} but {spec.folds} folds "
            f"were asked; use --folds {n} or fewer"
            + (f" ({n // 2} or fewer give every part two rows or more)" if n >= 4 else "")
            + f", or more rows{keep_rows}",
            place,
        )
    try:
        return make_folds(
            n,
            spec.scheme,
            folds=spec.folds,
            seed=spec.seed,
            repeats=spec.repeats,
            groups=design.groups,
            order=design.order,
        )
    except InputProblem as exc:
        col = {"grouped": spec.group, "time": spec.time_order}.get(spec.scheme)
        where = f"column '{col}' in sheet '{design.sheet}'" if col else f"sheet '{design.sheet}'"
        if spec.test_share > 0:  # the parts are made of the rows left after the final test
            where += (
                f", counted on the rows left after holding back {spec.test_share:.0%} as the "
                "final test" + (", whole groups at a time" if spec.scheme == "grouped" else "")
            )
        raise InputProblem(
            f"{exc.message} ({where})",
            Place(file=design.source, sheet=design.sheet, column=col),
        ) from None


def _early_part_note(design: Design, spec: StudySpec, parts) -> list[str]:
    """Forward chaining trains its first part on the earliest block alone: say so when that
    is few rows, since its error (often the largest) counts as much as any other."""
    if spec.scheme != "time" or not parts:
        return []
    first = min(len(tr) for tr, _ in parts)
    if first >= _FEW_TRAINING_ROWS:
        return []
    return [
        f"time-ordered validation trains each part on the rows before it: the first part "
        f"learns from {first} of the {design.n_rows} rows, and its error counts as much as the "
        "others in the cross-validated error, which can make every method look worse than it "
        "does on later rows (fewer parts, --folds, give the first part more rows)"
    ]


def _covariance_words(cov_type: str, spec: StudySpec) -> str:
    """How a robust covariance was computed, as the results name it."""
    return f"CR1, clustered by '{spec.group}'" if cov_type == "CR1" else cov_type


def _log_reading(
    response_log: bool, focal_log: bool, focal: str, y: str, step: str | None = None
) -> str:
    """How to read the focal estimate when logs were taken (common practice; close for small
    changes): an elasticity with both in ln, a relative change with the response alone.
    ``step``: what a change of the focal column is when it is not a unit (yes against no)."""
    if response_log and focal_log:
        return (
            f"both in ln: the estimate is an elasticity, the percent change in {y} for a 1% "
            f"change in {focal}"
        )
    if response_log:
        return (
            f"{y} in ln: 100 x the estimate is about the percent change in {y} "
            f"{step or f'per unit of {focal}'}"
        )
    if focal_log:
        return (
            f"{focal} in ln: the estimate / 100 is about the change in {y} for a 1% rise in {focal}"
        )
    return ""


class _MethodRunner:
    """Fits one method at a time on a fixed design and fixed validation parts."""

    def __init__(self, design: Design, spec: StudySpec, parts, notes: list[str]):
        self.d = design
        self.spec = spec
        self.parts = parts
        self.notes = notes
        self._lasso: ModelResult | None = None

    @functools.cached_property
    def _cross_products(self):
        """The design's cross products, formed once for the path on all rows and every
        validation part of every penalized method (None when rows do not outnumber columns)."""
        from engine.tuning.crossval import shared_cross_products

        return shared_cross_products(self.d.X, self.d.y, self.parts)

    # -- shared pieces -------------------------------------------------------------------
    def _ratio(self) -> float:
        if self.spec.penalty_ratio is not None:
            return self.spec.penalty_ratio
        return 1e-4 if self.d.n_rows > self.d.n_cols else 1e-2

    def _model(self, method: str, coef: np.ndarray, intercept: float, **kw) -> ModelResult:
        d = self.d
        coef = np.asarray(coef, dtype=float)
        fitted = intercept + d.X @ coef
        rss = float(np.sum((d.y - fitted) ** 2))
        tss = float(np.sum((d.y - d.y.mean()) ** 2))
        selected = [nm for nm, b in zip(d.names, coef) if b != 0.0]
        cv_error = kw.get("cv_error")
        # back to the response's own units from its ln: Duan's (1983) smearing estimate,
        # E[exp(error)] taken as the mean of exp(residual) on the rows used
        smearing = float(np.mean(np.exp(d.y - fitted))) if d.response_log else None
        cv_r2 = None
        if cv_error is not None and np.isfinite(cv_error) and tss > 0:
            cv_r2 = 1.0 - float(cv_error) / (tss / d.n_rows)
        return ModelResult(
            method=method,
            intercept=float(intercept),
            coefficients={nm: float(b) for nm, b in zip(d.names, coef)},
            std_coefficients={nm: float(b * s) for nm, b, s in zip(d.names, coef, d.sds)},
            selected=selected,
            # with no column kept the fit is the mean: R squared is 0, not the rounding left over
            r2=(1.0 - rss / tss if selected else 0.0) if tss > 0 else None,
            cv_r2=cv_r2,
            fitted=fitted,
            smearing=smearing,
            **kw,
        )

    def _singular_values(self) -> np.ndarray:
        if getattr(self, "_sv", None) is None:
            d = self.d
            self._sv = np.linalg.svd((d.X - d.means) / d.sds, compute_uv=False)
        return self._sv

    def _ridge_grid(self) -> np.ndarray:
        """Ridge penalties spanning the effective degrees of freedom from almost 0 to almost the rank.

        df(lambda) = sum s^2 / (s^2 + n lambda) over the singular values s of the standardized
        data, so n lambda = 1e3 s_max^2 leaves df below p/1000 and n lambda = 1e-3 s_min^2
        (smallest nonzero s) leaves it within 0.1% of the rank. A grid tied to the lasso's
        largest penalty can stop far short of least squares and force the choice onto its end.
        """
        s = self._singular_values()
        n = self.d.n_rows
        s_max = float(s.max())
        nonzero = s[s > s_max * 1e-10]
        top = 1e3 * s_max**2 / n
        bottom = max(1e-3 * float(nonzero.min()) ** 2 / n, top * 1e-10)
        if self.spec.penalty_ratio is not None:
            bottom = top * self.spec.penalty_ratio
        return np.geomspace(top, bottom, self.spec.n_penalties)

    def _path_rss(self, path) -> np.ndarray:
        d = self.d
        out = np.empty(len(path))
        for i in range(len(path)):  # one column at a time keeps memory at O(n)
            r = d.y - path.intercepts[i] - d.X @ path.coefs_at(i)
            out[i] = float(r @ r)
        return out

    def _criteria(self, path, df: np.ndarray) -> Criteria:
        from engine.tuning.criteria import path_criteria

        return path_criteria(self._path_rss(path), df, self.d.n_rows, self.d.n_cols)

    def _enet_df(self, path) -> np.ndarray:
        """Degrees of freedom along an elastic-net path: trace of the hat matrix on the active set."""
        if path.mix >= 1.0:
            return path.n_selected.astype(float)
        d = self.d
        Z = (d.X - d.means) / d.sds
        n = d.n_rows
        # the squared singular values of Z_A are the eigenvalues of Z_A'Z_A: one product of
        # all rows, then a small symmetric eigenproblem per penalty (an SVD of n x k each
        # took 4 s for 100 penalties at 20000 rows)
        G = Z.T @ Z
        df = np.zeros(len(path))
        for i in range(len(path)):
            act = np.flatnonzero(path.std_coefs[i])
            if act.size == 0:
                continue
            s2 = np.clip(np.linalg.eigvalsh(G[np.ix_(act, act)]), 0.0, None)
            df[i] = float(np.sum(s2 / (s2 + n * path.penalties[i] * (1 - path.mix))))
        return df

    def _penalized(
        self,
        method: str,
        mix: float,
        progress: Progress,
        penalty_factors=None,
        fold_factors=None,
        path=None,
        notes: list[str] | None = None,
    ) -> ModelResult:
        from engine.fitting.coordinate import elastic_net_path, path_penalties
        from engine.fitting.ridge import ridge_path
        from engine.tuning.crossval import cross_validate_path, fit_and_validate

        d, spec = self.d, self.spec
        validation = dict(
            penalty_factors=fold_factors if fold_factors is not None else penalty_factors,
            choose=spec.choose,
            workers=spec.workers,
            shared=self._cross_products,
            scheme=spec.scheme,  # named with the curve (window, validation sheet)
        )
        if path is not None:
            curve = cross_validate_path(
                d.X,
                d.y,
                self.parts,
                mix,
                path.penalties,
                progress=progress.part(0.15, 0.95, "cross-validation"),
                n_selected=path.n_selected,
                **validation,
            )
        else:
            progress.step(0.0, "path on all rows and cross-validation")
            if mix == 0.0:
                grid = self._ridge_grid()

                def fit_all(prog):
                    return ridge_path(d.X, d.y, penalties=grid, progress=prog)

            else:
                grid = path_penalties(
                    d.X, d.y, mix, spec.n_penalties, self._ratio(), penalty_factors,
                    shared=self._cross_products,
                )  # fmt: skip

                def fit_all(prog):
                    return elastic_net_path(
                        d.X,
                        d.y,
                        mix=mix,
                        penalties=grid,
                        penalty_factors=penalty_factors,
                        progress=prog,
                        shared=self._cross_products,
                    )

            # the fit on all rows runs beside the validation parts where they run on threads
            path, curve = fit_and_validate(
                fit_all, d.X, d.y, self.parts, mix, grid,
                progress=progress.part(0.0, 0.95), **validation,
            )  # fmt: skip
        curve.n_selected = path.n_selected.copy()
        idx = curve.chosen(spec.choose)
        if mix == 0.0:
            from engine.fitting.ridge import ridge_df

            df = ridge_df(self._singular_values(), path.penalties, d.n_rows)
        else:
            df = self._enet_df(path)
        notes = list(notes or []) + list(getattr(path, "notes", None) or [])
        if idx == len(path) - 1:
            notes.append(
                "the chosen penalty is the smallest on the grid; a wider grid (a smaller penalty ratio: --penalty-ratio) may fit better"
            )
        return self._model(
            method,
            path.coefs_at(idx),
            path.intercepts[idx],
            penalty=float(path.penalties[idx]),
            mix=mix,
            choice=spec.choose,
            cv_error=float(curve.mean_error[idx]),
            cv_error_se=float(curve.se[idx]),
            path=path,
            curve=curve,
            criteria=self._criteria(path, df),
            notes=notes,
        )

    # -- methods ---------------------------------------------------------------------------
    def fit(self, name: str, progress: Progress) -> ModelResult | None:
        return getattr(self, "_fit_" + name.replace("-", "_"))(progress)

    def _fit_ols(self, progress: Progress) -> ModelResult | None:
        from engine.fitting.ols import ALIASED_WORDS, fit_ols

        d = self.d
        if d.n_rows <= d.n_cols + 1:
            self.notes.append(
                f"least squares left out: it needs more rows than columns ({d.n_rows} rows, {d.n_cols} columns); "
                "the penalized methods handle this case"
            )
            return None
        fit = fit_ols(d.X, d.y)
        if fit.aliased:  # named here, where the columns have names
            shown = ", ".join(f"'{d.names[j]}'" for j in fit.aliased[:8])
            more = f" and {len(fit.aliased) - 8} more" if len(fit.aliased) > 8 else ""
            self.notes.append(
                f"least squares: {shown}{more} "
                f"{'is an exact combination' if len(fit.aliased) == 1 else 'are exact combinations'}"
                " of the other columns on the rows used, so left out of its fit (coefficient 0)"
            )
        for w in getattr(fit, "warnings", []):
            if not w.startswith(ALIASED_WORDS):
                self.notes.append(f"least squares: {w}")
        err, se = self._cv_refit(lambda Xt, yt: fit_ols(Xt, yt), progress)
        return self._model("ols", fit.coef, fit.intercept, cv_error=err, cv_error_se=se)

    def _cv_refit(self, fitter, progress: Progress) -> tuple[float, float]:
        """Held-out error of a procedure with no tuning (refitted on each training part)."""
        d = self.d
        errs = []
        for k, (tr, te) in enumerate(self.parts):
            progress.step(k / len(self.parts), f"validation part {k + 1} of {len(self.parts)}")
            f = fitter(d.X[tr], d.y[tr])
            pred = f.intercept + d.X[te] @ f.coef
            errs.append(float(np.mean((d.y[te] - pred) ** 2)))
        e = np.asarray(errs)
        return float(e.mean()), float(e.std(ddof=1) / np.sqrt(len(e))) if len(e) > 1 else float(
            "nan"
        )

    def _fit_ridge(self, progress: Progress) -> ModelResult:
        return self._penalized("ridge", 0.0, progress)

    def _fit_lasso(self, progress: Progress) -> ModelResult:
        if self._lasso is None:
            self._lasso = self._penalized("lasso", 1.0, progress)
        return self._lasso

    def _fit_elastic_net(self, progress: Progress) -> ModelResult:
        return self._penalized("elastic-net", self.spec.mix, progress)

    def _fit_adaptive_lasso(self, progress: Progress) -> ModelResult:
        from engine.fitting.adaptive import AdaptiveWeights, adaptive_lasso

        d, spec = self.d, self.spec
        al = adaptive_lasso(
            d.X,
            d.y,
            gamma=spec.adaptive_gamma,
            n_penalties=spec.n_penalties,
            ratio=self._ratio(),
            progress=progress.part(0.0, 0.15, "path on all rows"),
        )
        power = "" if spec.adaptive_gamma == 1 else f"^{spec.adaptive_gamma:g}"
        note = (
            f"each column's penalty weighted by 1/|b|{power}, b its coefficient in a first "
            f"{al.init_used} fit (recomputed inside each validation part)"
        )
        return self._penalized(
            "adaptive-lasso",
            1.0,
            progress,
            penalty_factors=al.weights,
            fold_factors=AdaptiveWeights(spec.adaptive_gamma),
            path=al.path,
            notes=[note],
        )

    def _fit_post_lasso(self, progress: Progress) -> ModelResult:
        from engine.fitting.coordinate import elastic_net_path
        from engine.fitting.post_selection import SELECTION_CAUTION, post_lasso

        d = self.d
        lasso = self._lasso
        if lasso is None:
            lasso = self._fit_lasso(progress.part(0.0, 0.6, "lasso for the selection"))
        assert lasso.path is not None and lasso.curve is not None
        idx = lasso.curve.chosen(self.spec.choose)
        sel = np.flatnonzero(lasso.path.std_coefs[idx])
        # rows in groups: errors within a group may move together, so the errors cluster
        fit = post_lasso(d.X, d.y, sel, "CR1" if d.groups is not None else "HC1", d.groups)
        # honest validation of the whole procedure: select with the lasso on each training part
        # (same penalty), refit least squares there, score the held-out rows
        grid = lasso.path.penalties[: idx + 1]
        errs = []
        sub = progress.part(0.6, 1.0, "validation")
        for k, (tr, te) in enumerate(self.parts):
            sub.step(k / len(self.parts), f"part {k + 1} of {len(self.parts)}")
            pth = elastic_net_path(d.X[tr], d.y[tr], mix=1.0, penalties=grid)
            part_fit = post_lasso(d.X[tr], d.y[tr], np.flatnonzero(pth.std_coefs[-1]))
            pred = part_fit.intercept + d.X[te] @ part_fit.coefs
            errs.append(float(np.mean((d.y[te] - pred) ** 2)))
        e = np.asarray(errs)
        se = float(e.std(ddof=1) / np.sqrt(len(e))) if len(e) > 1 else None
        result = self._model(
            "post-lasso",
            fit.coefs,
            fit.intercept,
            penalty=float(lasso.path.penalties[idx]),
            mix=1.0,
            choice=self.spec.choose,
            cv_error=float(e.mean()),
            cv_error_se=se,
            std_errors={d.names[j]: float(fit.std_errors[j]) for j in sel},
            notes=[
                SELECTION_CAUTION,
                f"robust standard errors ({_covariance_words(fit.cov_type, self.spec)})",
            ]
            + list(fit.notes),
        )
        return result

    def _fit_best_subset(self, progress: Progress) -> ModelResult:
        return self._sized("best-subset", progress)

    def _fit_forward_stepwise(self, progress: Progress) -> ModelResult:
        return self._sized("forward-stepwise", progress)

    def _sized(self, search: str, progress: Progress) -> ModelResult:
        from engine.fitting.post_selection import robust_ols
        from engine.tuning.size_crossval import (
            cross_validate_sizes,
            size_bic,
            size_rows,
            subsets_by_size,
        )

        d, spec = self.d, self.spec
        found = subsets_by_size(
            d.X,
            d.y,
            search,
            exact_limit=spec.max_exact_subset,
            progress=progress.part(0.0, 0.3, "search on all rows"),
        )
        diag: dict = {}
        curve = cross_validate_sizes(
            d.X,
            d.y,
            self.parts,
            search=search,
            max_size=len(found.subsets) - 1,
            choose=spec.choose,
            progress=progress.part(0.3, 1.0, "validation"),
            workers=spec.workers,
            exact_limit=spec.max_exact_subset,
            scheme=spec.scheme,
            diagnostics=diag,
        )
        k = int(curve.grid[curve.chosen(spec.choose)])
        k = min(k, len(found.subsets) - 1)
        cols = list(found.subsets[k])
        fit = robust_ols(d.X, d.y, cols)
        coef = np.zeros(d.n_cols)
        coef[cols] = fit.coefs
        tss = float(found.rss[0])
        sizes = np.array([len(sub) for sub in found.subsets])
        bic = size_bic(found.rss, sizes, d.n_rows)
        k_bic = int(sizes[int(np.argmin(bic))])
        if 2 * k_bic >= d.n_rows:  # near saturation the residual sum, and BIC, fall to nothing
            notes = [
                f"size {k} chosen by validation ({spec.choose}); BIC is no guide here: it "
                f"falls all the way to {k_bic} columns for {d.n_rows} rows, where the fit "
                "reproduces the rows (in-sample R squared near 1)"
            ]
        else:
            notes = [
                f"size {k} chosen by validation ({spec.choose}); BIC would choose size {k_bic}"
            ]
        if found.warning:
            notes.append(found.warning)
        if diag.get("approximate_parts"):
            count = int(diag["approximate_parts"])
            notes.append(
                f"{count} validation part{'s' if count > 1 else ''} used the approximate search "
                "(on its training rows some candidates were dependent on others, as a rare "
                "category level can be, or too many for the rows)"
            )
        if found.approximate:
            self.notes.append(f"{search}: {found.warning}")
        i = curve.chosen(spec.choose)
        return self._model(
            search,
            coef,
            fit.intercept,
            choice=spec.choose,
            cv_error=float(curve.mean_error[i]),
            cv_error_se=float(curve.se[i]),
            curve=curve,
            approximate=bool(found.approximate),
            by_size=size_rows(found.subsets, found.rss, tss, d.n_rows, d.names),
            notes=notes,
        )

    # -- beyond the methods ----------------------------------------------------------------
    def focal(self, progress: Progress):
        from engine.fitting.double_selection import double_selection

        d, spec = self.d, self.spec
        j = d.focal_index
        assert j is not None
        controls = [i for i in range(d.n_cols) if i != j]
        if not controls:
            raise InputProblem(
                f"double selection needs candidate controls besides the focal column '{spec.focal}'",
                Place(file=d.source, sheet=d.sheet, column=spec.focal),
            )
        ds = double_selection(
            d.y,
            d.X[:, j],
            d.X[:, controls],
            penalty=spec.focal_penalty,
            folds=spec.folds,
            seed=spec.seed,
            choose=spec.choose,
            progress=progress,
            workers=spec.workers,
            groups=d.groups,
            parts=self.parts,  # a cross-validated penalty uses the study's own folds
        )
        for note in ds.notes:
            self.notes.append(f"double selection: {note}")
        found = ds.to_focal(d.names[j], [d.names[i] for i in controls])
        found.covariance = _covariance_words(ds.covariance, spec)
        enc = d.encodings[j]
        step = {
            "flag": "for yes against no",
            "level": f"for '{enc.level}' against '{enc.reference}'",
        }.get(enc.kind)
        reading = _log_reading(d.response_log, enc.kind == "ln", spec.focal or "", d.response, step)
        if reading:
            found.notes.append(reading)
        if enc.kind == "level":  # a category of two labels as the focal column
            found.notes.append(
                f"'{d.names[j]}' is 1 for '{enc.level}' and 0 for '{enc.reference}': the "
                f"estimate is the difference in {d.response_label} between the two, with the "
                "chosen controls held as they are"
            )
        elif enc.kind == "flag":  # a yes/no column: say which answer counts as 1
            found.notes.append(
                f"'{d.names[j]}' is 1 for yes and 0 for no: the estimate is the difference in "
                f"{d.response_label} between yes and no rows, with the chosen controls held as "
                "they are"
            )
        pairs = [(a, b) for a, b in spec.interactions if spec.focal in (a, b)]
        if pairs and any(
            e.kind == "product" and d.names[j] in (e.factors or ()) for e in d.encodings
        ):
            through = [
                "its square" if a == b else f"its interaction with '{b if a == spec.focal else a}'"
                for a, b in pairs
            ]
            found.notes.append(
                f"'{spec.focal}' also enters through {' and '.join(through)}: the estimate is "
                "its effect where the partner columns are 0 (a category at its reference level) "
                "and, with a square, its slope where it is 0 itself; not an average effect"
            )
        return found

    def stability(self, progress: Progress):
        from engine.fitting.stability import stability_selection

        d, spec = self.d, self.spec
        st = stability_selection(
            d.X,
            d.y,
            runs=spec.stability_runs,
            seed=spec.seed,
            progress=progress,
            workers=spec.workers,
        )
        return st.to_result(d.names)
