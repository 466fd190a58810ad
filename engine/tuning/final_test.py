"""Rows held back as a final test: never used to fit or to choose, only to measure.

Cross-validation chooses the penalty (or size) with the held-out errors it reports, so the
chosen model's cross-validated error is a little optimistic; rows set aside before anything is
fitted give an error no choice has seen (common practice: a train / test split). With a time
order the test rows are the latest (rows of one time stay on one side), with a group column
whole groups are held back, otherwise a seeded random share.
"""

from __future__ import annotations

__all__ = ["HeldBack", "hold_back_test_rows", "MIN_TEST_ROWS"]

from dataclasses import dataclass, field

import numpy as np

from engine.design import Design, without_orphan_products
from engine.errors import InputProblem, Place
from engine.study_spec import StudySpec

MIN_TEST_ROWS = 5  # fewer rows measure nothing worth reporting


@dataclass
class HeldBack:
    """The test rows of a study, in the design's model columns."""

    X: np.ndarray
    y: np.ndarray
    row_numbers: np.ndarray  # 1-based sheet rows
    notes: list[str] = field(default_factory=list)

    def measure(self, models, names: list[str]) -> None:
        """Set each model's test error (mean squared) and test R squared (1 - SSE / SST on the
        test rows' own mean, as sklearn.metrics.r2_score)."""
        sst = float(np.sum((self.y - self.y.mean()) ** 2))
        for m in models:
            coef = np.array([m.coefficients.get(n, 0.0) for n in names])
            resid = self.y - (m.intercept + self.X @ coef)
            sse = float(resid @ resid)
            m.test_error = sse / self.y.size
            m.test_r2 = 1.0 - sse / sst if sst > 0 else None


def _test_index(design: Design, spec: StudySpec, n_test: int) -> np.ndarray:
    """The held-back rows: about ``n_test`` of them, never more than half the rows. Rows of
    one time (or one group) stay together, so the count is the nearest whole number of times
    (groups) to ``n_test``; empty when even one time (group) holds more than half."""
    n = design.n_rows
    rng = np.random.default_rng([spec.seed, 20261205])  # a stream of its own, apart from folds
    if design.order is not None:
        order = design.order
        times, counts = np.unique(order, return_counts=True)
        taken = np.cumsum(counts[::-1])  # rows held back with the latest 1, 2, ... times
        allowed = np.flatnonzero(taken <= n // 2)
        if not allowed.size:
            return np.zeros(0, dtype=int)
        # the nearest to the share; of two as near, the larger (at least the share asked)
        k = int(min(allowed, key=lambda i: (abs(int(taken[i]) - n_test), -int(taken[i]))))
        return np.flatnonzero(order >= times[::-1][k])
    if design.groups is not None:
        labels = np.unique(design.groups)
        chosen: list[np.ndarray] = []
        count = 0
        for g in rng.permutation(labels):
            rows = np.flatnonzero(design.groups == g)
            if count + rows.size > n // 2:
                continue  # a group that would make the test more than half the rows
            if abs(count + rows.size - n_test) > abs(count - n_test):
                continue  # farther from the share with it: another group may fit better
            chosen.append(rows)
            count += rows.size
            if count >= n_test:
                break
        return np.sort(np.concatenate(chosen)) if chosen else np.zeros(0, dtype=int)
    return np.sort(rng.permutation(n)[:n_test])


def hold_back_test_rows(design: Design, spec: StudySpec) -> tuple[Design, HeldBack]:
    """The design of the rows left for fitting, and the held-back test rows."""
    n = design.n_rows
    place = Place(file=design.source, sheet=design.sheet)
    n_test = int(round(spec.test_share * n))
    if n_test < MIN_TEST_ROWS:
        raise InputProblem(
            f"holding back {spec.test_share:.0%} of the {n} rows used in sheet "
            f"'{design.sheet}' leaves {n_test} rows for the final test, fewer than "
            f"{MIN_TEST_ROWS}; hold back a larger share or none",
            place,
        )
    test = _test_index(design, spec, n_test)
    if test.size < MIN_TEST_ROWS:
        whole = "time" if design.order is not None else "group"
        if test.size == 0:  # every way of holding back whole ones takes more than half
            advice = f"each {whole} that could be held back holds more than half the rows; hold back none"
        else:
            advice = "hold back a larger share or none"
        raise InputProblem(
            f"a final test of whole {whole}s near {spec.test_share:.0%} of the {n} rows used "
            f"in sheet '{design.sheet}' would hold {test.size} rows (a {whole} keeps its rows "
            f"together and the test may take at most half of them), fewer than "
            f"{MIN_TEST_ROWS}: {advice}",
            place,
        )
    keep = np.setdiff1d(np.arange(n), test)
    if keep.size < max(spec.folds if spec.scheme != "loo" else 3, 3):
        raise InputProblem(
            f"holding back {test.size} of the {n} rows used in sheet '{design.sheet}' for the "
            f"final test leaves {keep.size} rows to fit on, too few for {spec.folds} folds; "
            "hold back a smaller share",
            place,
        )
    train = design.rows(keep)
    X_test = design.X[test]
    # a column constant on the rows left carries nothing there (a rare flag whose ones all
    # fell in the test rows): left out of both
    notes: list[str] = []
    scale = np.maximum(1.0, np.abs(train.X).max(axis=0)) if train.X.size else 1.0
    flat = np.flatnonzero(train.sds <= 1e-12 * scale)
    if flat.size:
        names = [train.names[j] for j in flat]
        if design.focal_index is not None and design.focal_index in flat:
            raise InputProblem(
                f"the focal column '{design.names[design.focal_index]}' is constant on the rows "
                "left after holding back the final test; hold back a smaller share or none",
                place,
            )
        cols = np.setdiff1d(np.arange(train.n_cols), flat)
        train = train.columns(cols)
        for nm in names:
            train.dropped_columns[nm] = "it is constant on the rows left for fitting"
        X_test = X_test[:, cols]
        _, left, _ = without_orphan_products(
            train.X, train.names, train.encodings, train.dropped_columns, notes
        )
        if len(left) < train.n_cols:
            at = [train.names.index(nm) for nm in left]
            train = train.columns(np.array(at))
            X_test = X_test[:, at]
        notes.append(
            "left out, constant on the rows left for fitting after holding back the final "
            "test: " + ", ".join(f"'{nm}'" for nm in names)
        )
    how = (
        "the latest in time order"
        if design.order is not None
        else "whole groups"
        if design.groups is not None
        else f"chosen at random with seed {spec.seed}"
    )
    notes.append(
        f"{test.size} of the {n} rows ({test.size / n:.0%}, {how}) were held back as a final "
        "test: no fit or choice saw them; each model's test error and test R squared are "
        "measured on them"
    )
    return train, HeldBack(X_test, design.y[test], design.row_numbers[test], notes)
