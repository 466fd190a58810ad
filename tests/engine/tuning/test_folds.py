"""Validation parts: coverage, groups, time order, reproducibility, clear refusals."""

import numpy as np
import pytest

from engine.errors import InputProblem
from engine.tuning.folds import make_folds


def _held_out_counts(n, parts):
    counts = np.zeros(n, int)
    for train, test in parts:
        counts[test] += 1
        assert np.intersect1d(train, test).size == 0
    return counts


@pytest.mark.parametrize("n,folds", [(10, 10), (101, 10), (57, 5)])
def test_kfold_holds_out_every_row_exactly_once(n, folds):
    parts = make_folds(n, "kfold", folds=folds, seed=3)
    assert len(parts) == folds
    assert np.all(_held_out_counts(n, parts) == 1)
    for train, test in parts:
        assert train.size + test.size == n
    sizes = [t.size for _, t in parts]
    assert max(sizes) - min(sizes) <= 1


def test_same_seed_same_folds_other_seed_other_folds():
    a = make_folds(50, "kfold", 5, seed=7)
    b = make_folds(50, "kfold", 5, seed=7)
    c = make_folds(50, "kfold", 5, seed=8)
    assert all(np.array_equal(x[1], y[1]) for x, y in zip(a, b))
    assert not all(np.array_equal(x[1], y[1]) for x, y in zip(a, c))


def test_repeated_gives_independent_complete_splits():
    parts = make_folds(40, "repeated", folds=4, seed=1, repeats=3)
    assert len(parts) == 12
    for r in range(3):
        assert np.all(_held_out_counts(40, parts[4 * r : 4 * r + 4]) == 1)
    assert not np.array_equal(parts[0][1], parts[4][1])


def test_grouped_never_splits_a_group_and_covers_all_rows():
    rng = np.random.default_rng(0)
    groups = rng.integers(0, 23, size=200)
    parts = make_folds(200, "grouped", folds=5, seed=2, groups=groups)
    assert np.all(_held_out_counts(200, parts) == 1)
    for train, test in parts:
        assert np.intersect1d(groups[train], groups[test]).size == 0


def test_grouped_refuses_fewer_groups_than_folds():
    with pytest.raises(InputProblem, match="the group column has only 3 groups but 5 folds"):
        make_folds(30, "grouped", folds=5, groups=np.arange(30) % 3)
    # one group: no number of folds can work, so none is suggested
    with pytest.raises(InputProblem, match="holds one group only \\('north'\\)") as caught:
        make_folds(30, "grouped", folds=5, groups=np.array(["north"] * 30))
    assert "at most" not in str(caught.value)


def test_too_few_rows_for_the_folds():
    with pytest.raises(InputProblem, match="4 rows but 10 folds: use at most 4 folds"):
        make_folds(4, "kfold", folds=10)


def test_time_parts_train_only_on_the_past():
    rng = np.random.default_rng(1)
    order = rng.permutation(60).astype(float)  # a date column, rows not in time order
    parts = make_folds(60, "time", folds=6, order=order)
    assert len(parts) == 5  # folds - 1 validation parts
    for k, (train, test) in enumerate(parts):
        assert order[train].max() < order[test].min()
        assert train.size == 10 * (k + 1) and test.size == 10


@pytest.mark.parametrize("periods,per_period,folds", [(156, 6, 10), (12, 5, 10), (10, 1, 10)])
def test_rows_of_one_period_stay_in_one_time_block(periods, per_period, folds):
    # common practice (forward chaining): several rows share a time (six shops in one week);
    # a block boundary inside a week would train on rows of the week it validates on
    rng = np.random.default_rng(periods)
    order = np.repeat(np.arange(periods), per_period).astype(float)
    rng.shuffle(order)
    parts = make_folds(order.size, "time", folds=folds, order=order)
    assert len(parts) == folds - 1
    for train, test in parts:
        assert order[train].max() < order[test].min()  # strictly earlier: no shared week
    held = np.concatenate([test for _, test in parts])
    assert np.unique(held).size == held.size  # each row validated at most once
    # blocks stay near equal: at most one period away from an even cut
    sizes = [test.size for _, test in parts]
    assert max(sizes) - min(sizes) <= 2 * per_period
    with pytest.raises(InputProblem, match="9 distinct values, too few for 10 blocks"):
        make_folds(36, "time", folds=10, order=np.repeat(np.arange(9.0), 4))


def test_leave_one_out():
    parts = make_folds(7, "loo")
    assert len(parts) == 7
    assert np.all(_held_out_counts(7, parts) == 1)
