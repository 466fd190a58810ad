"""The study specification: a frozen request that says everything a run needs.

Both fronts build one (the CLI from its arguments, the desktop from its form); the settings
sheet of a results workbook stores one, so an analysis can be re-run from the workbook alone.
"""

from __future__ import annotations

__all__ = [
    "SPEC_SCHEMA_VERSION",
    "StudySpec",
    "SCHEMES",
    "CHOICE_RULES",
    "MISSING_POLICIES",
    "MAX_TEST_SHARE",
]

import dataclasses
import numbers
import os
from dataclasses import dataclass
from typing import Any

from engine.errors import InputProblem
from engine.methods import DEFAULT_METHODS, parse_methods

# 2: log_columns, test_share and interactions. A specification using any is version 2, so
# that a Tamis that does not know them refuses it instead of re-running another analysis;
# one using neither stays version 1, readable by every Tamis
SPEC_SCHEMA_VERSION = 2

# validation schemes: shuffled K-fold, repeated K-fold, grouped K-fold (rows of one group stay
# together), time-ordered blocks (train on the past, validate on the next block), leave-one-out
SCHEMES = ("kfold", "repeated", "grouped", "time", "loo")
CHOICE_RULES = ("min", "one-se")
# drop rows with a missing candidate, or fill with the median and add a missing-indicator column
MISSING_POLICIES = ("drop", "fill")
FOCAL_PENALTIES = ("plugin", "cv")
# at most this share of the rows may be held back for the final test
MAX_TEST_SHARE = 0.5


@dataclass(frozen=True)
class StudySpec:
    """What to fit: the file and sheet, the roles of its columns, the methods and how to validate.

    Only ``source`` (a path: str or pathlib.Path) and ``response`` (a column's name or its
    heading as the sheet writes it) are required; everything else has the command line's
    defaults (``tamis fit --help`` describes each option under the same name). Column lists
    take a tuple or list of names, or one name as a string; ``interactions`` takes pairs.
    ``run_study(spec)`` (engine.study) fits it. Every check here raises ``InputProblem`` with
    a message saying what to change.
    """

    source: str  # path of the workbook or CSV file
    response: str
    sheet: str | None = None  # None: the first visible sheet
    header_row: int | None = None  # 1-based; None: detected
    candidates: tuple[str, ...] | None = None  # None: every usable column but the response
    exclude: tuple[str, ...] = ()
    # columns (the response among them, if wanted) that enter the model as their natural log
    log_columns: tuple[str, ...] = ()
    # pairs of candidate columns whose products enter the model as well (interactions); a
    # number column paired with itself adds its square
    interactions: tuple[tuple[str, str], ...] = ()
    focal: str | None = None  # column whose effect double selection estimates
    focal_penalty: str = "plugin"
    group: str | None = None  # column whose rows stay in one fold
    time_order: str | None = None  # column giving the time order for blocked folds
    methods: tuple[str, ...] = DEFAULT_METHODS
    mix: float = 0.5  # elastic-net blend: 1 lasso, 0 ridge
    folds: int = 10
    scheme: str = "kfold"
    repeats: int = 1  # for scheme "repeated"
    choose: str = "min"
    seed: int = 0
    n_penalties: int = 100
    penalty_ratio: float | None = None  # smallest/largest penalty; None: 1e-4 if n > p else 1e-2
    missing: str = "drop"
    date_parts: bool = False  # add month and weekday categories for date columns
    stability_runs: int = 0  # half-samples for stability of selection; 0 skips it
    adaptive_gamma: float = 1.0
    max_exact_subset: int = (
        40  # above this many candidates best subset switches to a labelled approximate search
    )
    workers: int | None = None  # parallel workers; None: the machine's cores
    # the method the scoring sheet uses; None: the smallest cross-validated error
    scoring_method: str | None = None
    # share of the rows held back as a final test: never used to fit or to choose, only to
    # measure each model's error on rows it has not seen (the latest rows with a time order)
    test_share: float = 0.0

    def __post_init__(self) -> None:
        _normalize_arguments(self)
        object.__setattr__(self, "methods", parse_methods(self.methods))
        if self.scheme not in SCHEMES:
            raise InputProblem(
                f"unknown validation scheme '{self.scheme}'; choose from {', '.join(SCHEMES)}"
            )
        if self.choose not in CHOICE_RULES:
            raise InputProblem(f"unknown choice rule '{self.choose}'; choose 'min' or 'one-se'")
        if self.missing not in MISSING_POLICIES:
            raise InputProblem(
                f"unknown missing-value policy '{self.missing}'; choose 'drop' or 'fill'"
            )
        if self.focal_penalty not in FOCAL_PENALTIES:
            raise InputProblem("the focal penalty must be 'plugin' or 'cv'")
        if self.scheme != "loo" and self.folds < 2:
            raise InputProblem(f"--folds must be at least 2 (got {self.folds})")
        if not 0.0 <= self.mix <= 1.0:
            raise InputProblem(f"the elastic-net mix must lie between 0 and 1 (got {self.mix})")
        if self.n_penalties < 2:
            raise InputProblem("at least 2 penalty values are needed on a path")
        if self.seed < 0:
            raise InputProblem(f"the seed must be 0 or more (got {self.seed})")
        if self.workers is not None and self.workers < 1:
            raise InputProblem(f"workers must be at least 1 (got {self.workers})")
        if self.repeats < 1:
            raise InputProblem(f"repeats must be at least 1 (got {self.repeats})")
        if self.penalty_ratio is not None and not 0.0 < self.penalty_ratio < 1.0:
            raise InputProblem(
                f"the penalty ratio (smallest over largest penalty) must lie between 0 and 1 "
                f"(got {self.penalty_ratio})"
            )
        if self.max_exact_subset < 1:
            raise InputProblem(
                f"the exact best-subset limit must be at least 1 (got {self.max_exact_subset})"
            )
        if self.scheme == "grouped" and not self.group:
            raise InputProblem("grouped folds need a group column (--group COLUMN)")
        if self.scheme == "time" and not self.time_order:
            raise InputProblem("time-ordered folds need a time-order column (--time-order COLUMN)")
        if not 0.0 <= self.test_share <= MAX_TEST_SHARE:
            raise InputProblem(
                f"the share of rows held back for the final test must lie between 0 and "
                f"{MAX_TEST_SHARE:g} (got {self.test_share:g})"
            )
        if self.scoring_method is not None and self.scoring_method not in self.methods:
            raise InputProblem(
                f"the scoring method '{self.scoring_method}' is not among the methods run "
                f"({', '.join(self.methods)}); add it to the methods or choose one of them"
            )
        if self.candidates is not None:
            object.__setattr__(self, "candidates", tuple(self.candidates))
        object.__setattr__(self, "exclude", tuple(self.exclude))
        object.__setattr__(self, "log_columns", tuple(dict.fromkeys(self.log_columns)))
        pairs = []
        for pair in self.interactions:
            if len(pair) != 2:  # a column with itself is its square (curvature)
                raise InputProblem(
                    f"an interaction takes two columns (got {', '.join(map(str, pair))})"
                )
            if tuple(pair) not in pairs and (pair[1], pair[0]) not in pairs:
                pairs.append((str(pair[0]), str(pair[1])))
        object.__setattr__(self, "interactions", tuple(pairs))

    @property
    def schema_version(self) -> int:
        """The oldest schema version that holds this specification."""
        return 2 if self.log_columns or self.test_share or self.interactions else 1

    def replace(self, **changes: Any) -> StudySpec:
        return dataclasses.replace(self, **changes)

    def to_dict(self) -> dict[str, Any]:
        d = dataclasses.asdict(self)
        for k, v in d.items():
            if isinstance(v, tuple):
                d[k] = [list(x) if isinstance(x, tuple) else x for x in v]
        d["schema_version"] = self.schema_version
        return d

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> StudySpec:
        """Read a specification written by this or an older schema version."""
        d = dict(d)
        version = int(d.pop("schema_version", SPEC_SCHEMA_VERSION))
        if version > SPEC_SCHEMA_VERSION:
            raise InputProblem(
                f"these settings were written by a newer Tamis (settings version {version}); "
                "update Tamis to re-run them"
            )
        names = {f.name for f in dataclasses.fields(cls)}
        kwargs = {k: v for k, v in d.items() if k in names}
        for k in ("candidates", "exclude", "methods", "log_columns"):
            if isinstance(kwargs.get(k), list):
                kwargs[k] = tuple(kwargs[k])
        if isinstance(kwargs.get("interactions"), list):
            kwargs["interactions"] = tuple(tuple(p) for p in kwargs["interactions"])
        return cls(**kwargs)


def _names(value: Any, what: str) -> tuple[str, ...]:
    """A tuple of column names from a tuple, a list, or one name given as a string."""
    if isinstance(value, str):
        return (value,)
    try:
        names: tuple[Any, ...] = tuple(value)
    except TypeError:
        raise InputProblem(f"{what} must be column names (got {value!r})") from None
    for name in names:
        if not isinstance(name, str):
            raise InputProblem(f"{what} must be column names (got {name!r} among them)")
    return names


def _normalize_arguments(spec: StudySpec) -> None:
    """Accept what a Python user naturally passes (a Path, a list, one name as a string) and
    refuse the rest with a message, before anything is read."""
    set_ = object.__setattr__
    if not isinstance(spec.source, str):
        try:
            set_(spec, "source", os.fspath(spec.source))  # type: ignore[arg-type]
        except TypeError:
            raise InputProblem(
                f"the source must be the path of a workbook or text file (got "
                f"{type(spec.source).__name__}); save a table first, e.g. DataFrame.to_csv"
            ) from None
    for field_name, what in (
        ("candidates", "the candidates"),
        ("exclude", "the excluded columns"),
        ("log_columns", "the logged columns"),
    ):
        value = getattr(spec, field_name)
        if value is not None:
            set_(spec, field_name, _names(value, what))
    pairs = spec.interactions
    if len(pairs) == 2 and all(isinstance(x, str) for x in pairs):
        pairs = (pairs,)  # type: ignore[assignment]  # one pair given bare
    checked = []
    for pair in pairs:
        names = _names(pair, "each interaction")
        if len(names) != 2:
            raise InputProblem(
                f"each interaction is a pair of column names (got {pair!r}); "
                "e.g. interactions=[('price', 'region')]"
            )
        checked.append((names[0], names[1]))
    set_(spec, "interactions", tuple(checked))
    for field_name in ("seed", "folds", "repeats", "n_penalties", "stability_runs"):
        value = getattr(spec, field_name)
        if isinstance(value, bool) or not isinstance(value, numbers.Integral):
            raise InputProblem(f"{field_name} must be a whole number (got {value!r})")
        set_(spec, field_name, int(value))
