"""Column roles: what the user says each column is for, the checks that block a run, and the request.

Plain Python (no Qt) so the rules are tested without a window. The desktop holds no statistics:
these checks only catch choices the engine would refuse anyway, early and next to the column.
"""

from __future__ import annotations

__all__ = [
    "Role",
    "ROLE_HELP",
    "RoleProblem",
    "SETTING_FIELDS",
    "default_roles",
    "all_numeric_as_candidates",
    "check_roles",
    "build_spec",
    "roles_from_spec",
    "settings_from_spec",
]

from collections.abc import Mapping
from dataclasses import dataclass
from enum import StrEnum
from typing import Any

from engine.design import looks_like_row_number, mostly_missing
from engine.intake.table import Column, ColumnKind, Table
from engine.study_spec import StudySpec


class Role(StrEnum):
    """What a column is for in the study. The value is the word shown on screen."""

    IGNORE = "ignore"
    CANDIDATE = "candidate"
    RESPONSE = "response"
    FOCAL = "focal"
    GROUP = "group"
    TIME_ORDER = "time order"


ROLE_HELP: dict[Role, str] = {
    Role.IGNORE: "Left out of the study.",
    Role.CANDIDATE: "A column the methods may choose or leave out.",
    Role.RESPONSE: "The column to explain and predict (exactly one).",
    Role.FOCAL: "The column whose own effect you want, with controls chosen by double selection "
    "(at most one).",
    Role.GROUP: "Rows sharing a value here stay together in one validation part, and the standard "
    "errors of the focal effect and of least squares after the lasso allow for their errors moving "
    "together (at most one).",
    Role.TIME_ORDER: "Dates or sequence numbers; validation trains on the past and checks on "
    "the next block (at most one).",
}

_SINGLE = (Role.RESPONSE, Role.FOCAL, Role.GROUP, Role.TIME_ORDER)
# the roles whose column enters the model, so that its natural log can be taken
_LOGGABLE_ROLES = (Role.RESPONSE, Role.CANDIDATE, Role.FOCAL)
# the roles of columns among the model's candidates (an interaction joins two of them)
_IN_MODEL = (Role.CANDIDATE, Role.FOCAL)
_NUMERIC_KINDS = (ColumnKind.NUMBER, ColumnKind.FLAG)


@dataclass(frozen=True)
class RoleProblem:
    """A reason the run cannot start; ``column`` is None for a problem of the whole setup."""

    message: str
    column: str | None = None


def default_roles(table: Table) -> dict[str, Role]:
    """Numbers, flags, categories and dates start as candidates; identifiers, empties, columns
    blank in most rows and row numbers (the engine's rules for candidates not chosen by name)
    are ignored."""
    roles: dict[str, Role] = {}
    for c in table.columns:
        usable = c.kind in (*_NUMERIC_KINDS, ColumnKind.CATEGORY, ColumnKind.DATE)
        usable = usable and not c.constant and not mostly_missing(c.missing, table.n_rows)
        usable = usable and not looks_like_row_number(c)
        roles[c.name] = Role.CANDIDATE if usable else Role.IGNORE
    return roles


def all_numeric_as_candidates(table: Table, roles: Mapping[str, Role]) -> dict[str, Role]:
    """Every numeric column that has no other role becomes a candidate; the rest keep their role."""
    out = dict(roles)
    for c in table.columns:
        if (
            c.is_numeric
            and not c.constant
            and out.get(c.name, Role.IGNORE) in (Role.IGNORE, Role.CANDIDATE)
        ):
            out[c.name] = Role.CANDIDATE
    return out


def _column_problem(c: Column, role: Role) -> str | None:
    if role is Role.IGNORE:
        return None
    if c.kind is ColumnKind.EMPTY:
        return "This column has no values; set it to ignore."
    two_labels = c.kind is ColumnKind.CATEGORY and len(c.levels) == 2
    if role is Role.FOCAL and two_labels:
        pass  # a treatment against its comparison: the effect of the second label
    elif role in (Role.RESPONSE, Role.FOCAL) and c.kind not in _NUMERIC_KINDS:
        word = "response" if role is Role.RESPONSE else "focal column"
        return f"The {word} must hold numbers, but this column holds {c.kind.value} values."
    if role is Role.CANDIDATE and c.kind is ColumnKind.IDENTIFIER:
        return "Almost every row has its own value here, so it cannot be a candidate; set it to ignore or group."
    if role is Role.TIME_ORDER and c.kind not in (*_NUMERIC_KINDS, ColumnKind.DATE):
        return f"A time order needs dates or numbers, but this column holds {c.kind.value} values."
    if role in (Role.RESPONSE, Role.FOCAL) and c.constant:
        return "This column has the same value in every row, so there is nothing to explain."
    return None


def check_roles(
    table: Table,
    roles: Mapping[str, Role],
    scheme: str = "kfold",
    methods: tuple[str, ...] = ("lasso",),
    logged: tuple[str, ...] = (),
) -> list[RoleProblem]:
    """Every reason the run cannot start yet; empty when it can."""
    problems: list[RoleProblem] = []
    for c in table.columns:  # the engine names the first such cell; here the column suffices
        in_study = roles.get(c.name, Role.IGNORE) in _LOGGABLE_ROLES
        low = c.minimum if isinstance(c.minimum, (int, float)) else None
        if c.name in logged and in_study and low is not None and low <= 0:
            problems.append(
                RoleProblem(
                    f"This column holds values at or below 0 (lowest {low:g}), which have no "
                    "natural log; untick Log or correct those cells.",
                    c.name,
                )
            )
    by_role: dict[Role, list[str]] = {r: [] for r in Role}
    for c in table.columns:
        role = roles.get(c.name, Role.IGNORE)
        by_role[role].append(c.name)
        msg = _column_problem(c, role)
        if msg:
            problems.append(RoleProblem(msg, c.name))
    for role in _SINGLE:
        names = by_role[role]
        if len(names) > 1:
            for n in names:
                problems.append(RoleProblem(f"Only one column can have the role {role.value}.", n))
    if not by_role[Role.RESPONSE]:
        problems.append(RoleProblem("Choose the response: set one column's role to 'response'."))
    if not by_role[Role.CANDIDATE] and not by_role[Role.FOCAL]:
        problems.append(RoleProblem("Choose at least one candidate column."))
    if scheme == "grouped" and not by_role[Role.GROUP]:
        problems.append(
            RoleProblem("Folds that keep groups together need one column with the role 'group'.")
        )
    if scheme == "time" and not by_role[Role.TIME_ORDER]:
        problems.append(
            RoleProblem("Time-ordered folds need one column with the role 'time order'.")
        )
    # a role that the chosen validation would not use is refused, not silently dropped
    for role, needs, words in (
        (Role.TIME_ORDER, "time", "Time-ordered blocks"),
        (Role.GROUP, "grouped", "Folds that keep groups together"),
    ):
        for name in by_role[role] if scheme != needs else ():
            problems.append(
                RoleProblem(
                    f"The role '{role.value}' is used by the validation '{words}' only: choose "
                    "it under Run settings, or set this column to ignore.",
                    name,
                )
            )
    if not methods:
        problems.append(RoleProblem("Tick at least one method under Run settings."))
    return problems


def build_spec(
    table: Table,
    roles: Mapping[str, Role],
    settings: Mapping[str, Any],
    header_row: int | None = None,
    logged: tuple[str, ...] = (),
    interactions: tuple[tuple[str, str], ...] = (),
) -> StudySpec:
    """The frozen request for ``engine.study.run_study``. Call only when ``check_roles`` is empty.

    ``settings`` holds StudySpec field names (methods, folds, scheme, choose, seed, missing ...).
    The focal column is also passed as a candidate: double selection needs it in the design.
    ``logged``: columns ticked for their natural log; a tick on a column outside the model
    (ignored, group, time order) is kept on screen but not sent; so is an interaction
    (``interactions``) with such a column.
    """

    def one(role: Role) -> str | None:
        names = [c.name for c in table.columns if roles.get(c.name) is role]
        return names[0] if names else None

    focal = one(Role.FOCAL)
    candidates = [c.name for c in table.columns if roles.get(c.name) is Role.CANDIDATE]
    if focal is not None and focal not in candidates:
        candidates.append(focal)
    return StudySpec(
        source=str(table.source),
        response=one(Role.RESPONSE) or "",
        sheet=table.sheet if table.file_format != "csv" else None,
        header_row=header_row if header_row is not None else table.header_row,
        candidates=tuple(candidates),
        focal=focal,
        group=one(Role.GROUP),
        time_order=one(Role.TIME_ORDER),
        log_columns=tuple(n for n in logged if roles.get(n) in _LOGGABLE_ROLES),
        interactions=tuple(
            (a, b)
            for a, b in interactions
            if roles.get(a) in _IN_MODEL and roles.get(b) in _IN_MODEL
        ),
        **dict(settings),
    )


def roles_from_spec(table: Table, spec: StudySpec) -> dict[str, Role]:
    """The roles a saved request implies, so a results workbook shows its analysis again."""
    roles = {c.name: Role.IGNORE for c in table.columns}
    if spec.candidates is None:
        roles.update(default_roles(table))
    else:
        for n in spec.candidates:
            if n in roles:
                roles[n] = Role.CANDIDATE
    for n in spec.exclude:
        if n in roles:
            roles[n] = Role.IGNORE
    for name, role in (
        (spec.group, Role.GROUP),
        (spec.time_order, Role.TIME_ORDER),
        (spec.focal, Role.FOCAL),
        (spec.response, Role.RESPONSE),
    ):
        if name and name in roles:
            roles[name] = role
    return roles


SETTING_FIELDS = (
    "methods",
    "mix",
    "folds",
    "scheme",
    "repeats",
    "choose",
    "seed",
    "n_penalties",
    "missing",
    "date_parts",
    "stability_runs",
    "focal_penalty",
    "scoring_method",
    "test_share",
)


def settings_from_spec(spec: StudySpec) -> dict[str, Any]:
    """The run settings part of a saved request, in the form the settings panel takes."""
    d = spec.to_dict()
    return {k: d[k] for k in SETTING_FIELDS}
