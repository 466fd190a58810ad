"""The catalogue of fitting methods: declared once, rendered by the CLI, desktop and settings sheet."""

from __future__ import annotations

__all__ = ["MethodInfo", "METHODS", "DEFAULT_METHODS", "method_info", "parse_methods"]

from dataclasses import dataclass

from engine.errors import InputProblem


@dataclass(frozen=True)
class MethodInfo:
    name: str  # the command-line and JSON name
    title: str  # a short label for screens and sheets
    family: str  # "least squares", "shrinkage", "subset", "after selection"
    help: str  # one plain sentence for tooltips and --help
    has_penalty_path: bool = False
    has_sizes: bool = False


METHODS: tuple[MethodInfo, ...] = (
    MethodInfo(
        "ols",
        "Least squares",
        "least squares",
        "Ordinary least squares on every candidate; only possible when rows outnumber columns.",
    ),
    MethodInfo(
        "ridge",
        "Ridge",
        "shrinkage",
        "Shrinks all coefficients towards zero by a squared penalty; keeps every column.",
        has_penalty_path=True,
    ),
    MethodInfo(
        "lasso",
        "Lasso",
        "shrinkage",
        "Shrinks coefficients by an absolute-value penalty and sets many exactly to zero.",
        has_penalty_path=True,
    ),
    MethodInfo(
        "elastic-net",
        "Elastic net",
        "shrinkage",
        "A blend of lasso and ridge penalties; keeps groups of correlated columns together.",
        has_penalty_path=True,
    ),
    MethodInfo(
        "adaptive-lasso",
        "Adaptive lasso",
        "shrinkage",
        "Lasso with weights from a first ridge or least-squares fit, so strong columns are penalized less (Zou 2006).",
        has_penalty_path=True,
    ),
    MethodInfo(
        "post-lasso",
        "Least squares after lasso",
        "after selection",
        "Refits least squares on the columns the lasso kept, removing the shrinkage bias (Belloni & Chernozhukov 2013).",
    ),
    MethodInfo(
        "best-subset",
        "Best subset",
        "subset",
        "For each size, the set of columns with the smallest residual sum of squares, found exactly by branch and bound.",
        has_sizes=True,
    ),
    MethodInfo(
        "forward-stepwise",
        "Forward stepwise",
        "subset",
        "Adds one column at a time, always the one that lowers the residual sum of squares most.",
        has_sizes=True,
    ),
)

DEFAULT_METHODS: tuple[str, ...] = (
    "lasso",
    "ridge",
    "elastic-net",
    "post-lasso",
    "forward-stepwise",
)


def method_info(name: str) -> MethodInfo:
    for m in METHODS:
        if m.name == name:
            return m
    known = ", ".join(m.name for m in METHODS)
    raise InputProblem(f"unknown method '{name}'; choose from: {known}")


def parse_methods(text: str | list[str] | tuple[str, ...]) -> tuple[str, ...]:
    """'lasso,ridge' or a list of names -> validated, de-duplicated tuple in the given order."""
    parts = text.split(",") if isinstance(text, str) else list(text)
    names: list[str] = []
    for p in parts:
        p = p.strip().lower()
        if not p:
            continue
        method_info(p)
        if p not in names:
            names.append(p)
    if not names:
        raise InputProblem("no method given; for example --methods lasso,ridge")
    return tuple(names)
