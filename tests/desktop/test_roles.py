"""Roles, the checks that block a run, and the request they build (no Qt involved)."""

from __future__ import annotations

from conftest import simulated_table

from desktop.roles import (
    Role,
    all_numeric_as_candidates,
    build_spec,
    check_roles,
    default_roles,
    roles_from_spec,
    settings_from_spec,
)
from engine.intake.table import ColumnKind
from engine.study_spec import StudySpec


def test_default_roles_follow_the_detected_kinds():
    t = simulated_table()
    roles = default_roles(t)
    for c in t.columns:
        if c.kind is ColumnKind.IDENTIFIER:
            assert roles[c.name] is Role.IGNORE
        else:
            assert roles[c.name] is Role.CANDIDATE


def test_a_column_blank_in_most_rows_starts_ignored_like_the_engine_default():
    # the engine leaves a default candidate blank in most rows out (engine.design
    # MOSTLY_MISSING_SHARE); the window's starting roles follow the same rule
    import dataclasses

    import numpy as np

    t = simulated_table()
    x3 = t.column("x3")
    sparse = x3.values.copy()
    sparse[: len(sparse) // 2 + 1] = np.nan
    half = x3.values.copy()
    half[: len(half) // 2] = np.nan
    t.columns[t.columns.index(x3)] = dataclasses.replace(x3, values=sparse, missing=41)
    x4 = t.column("x4")
    t.columns[t.columns.index(x4)] = dataclasses.replace(x4, values=half, missing=40)
    roles = default_roles(t)
    assert roles["x3"] is Role.IGNORE and roles["x4"] is Role.CANDIDATE


def test_no_response_blocks_the_run_with_a_general_message():
    t = simulated_table()
    problems = check_roles(t, default_roles(t))
    assert [p.column for p in problems] == [None]
    assert "response" in problems[0].message


def test_problems_sit_next_to_the_column_they_concern():
    t = simulated_table()
    roles = default_roles(t)
    roles["region"] = Role.RESPONSE  # a category cannot be the response
    roles["lot_id"] = Role.CANDIDATE  # an identifier cannot be a candidate
    by_col = {p.column: p.message for p in check_roles(t, roles)}
    assert "numbers" in by_col["region"]
    assert "own value" in by_col["lot_id"]


def test_two_responses_flag_both_columns():
    t = simulated_table()
    roles = default_roles(t)
    roles["x0"] = roles["x1"] = Role.RESPONSE
    cols = {p.column for p in check_roles(t, roles)}
    assert {"x0", "x1"} <= cols


def test_scheme_and_methods_requirements():
    t = simulated_table()
    roles = default_roles(t)
    roles["response_y"] = Role.RESPONSE
    assert check_roles(t, roles) == []
    msgs = " ".join(p.message for p in check_roles(t, roles, scheme="grouped", methods=()))
    assert "group" in msgs and "method" in msgs
    roles["region"] = Role.GROUP
    assert check_roles(t, roles, scheme="grouped") == []


def test_quick_action_keeps_other_roles():
    t = simulated_table()
    roles = {c.name: Role.IGNORE for c in t.columns}
    roles["response_y"] = Role.RESPONSE
    out = all_numeric_as_candidates(t, roles)
    assert out["response_y"] is Role.RESPONSE
    assert out["lot_id"] is Role.IGNORE and out["region"] is Role.IGNORE
    assert all(out[f"x{j}"] is Role.CANDIDATE for j in range(12))


def test_spec_round_trip_through_roles_is_the_identity():
    """Invariant: roles -> spec -> roles gives the same roles (what reopening a results book relies on)."""
    t = simulated_table()
    roles = default_roles(t)
    roles.update(
        {"response_y": Role.RESPONSE, "x0": Role.FOCAL, "region": Role.GROUP, "x5": Role.IGNORE}
    )
    settings = {"methods": ("lasso", "ridge"), "folds": 4, "scheme": "grouped", "seed": 11}
    spec = build_spec(t, roles, settings)
    assert spec.response == "response_y" and spec.focal == "x0" and spec.group == "region"
    assert "x0" in spec.candidates and "x5" not in spec.candidates  # focal is in the design
    assert spec.sheet == "Lots" and spec.header_row == 3
    back = roles_from_spec(t, StudySpec.from_dict(spec.to_dict()))
    assert back == roles
    assert settings_from_spec(spec)["methods"] == ["lasso", "ridge"]


def test_ln_ticks_reach_the_request_only_for_columns_in_the_model():
    t = simulated_table()
    roles = default_roles(t)
    roles.update({"response_y": Role.RESPONSE, "x0": Role.FOCAL, "x5": Role.IGNORE})
    spec = build_spec(t, roles, {"methods": ("lasso",)}, logged=("x0", "x1", "x5"))
    assert spec.log_columns == ("x0", "x1")  # x5 is ignored: its tick is not sent


def test_an_ln_tick_on_a_column_with_values_at_or_below_zero_blocks_the_run():
    t = simulated_table()
    roles = default_roles(t)
    roles["response_y"] = Role.RESPONSE
    x1 = next(c for c in t.columns if c.name == "x1")
    assert x1.minimum is not None and x1.minimum <= 0  # simulated normal values
    problems = check_roles(t, roles, logged=("x1",))
    assert [p.column for p in problems] == ["x1"]
    assert "no natural log" in problems[0].message
    roles["x1"] = Role.IGNORE  # out of the model: the tick does not matter
    assert check_roles(t, roles, logged=("x1",)) == []


def test_interactions_reach_the_request_only_between_columns_in_the_model():
    t = simulated_table()
    roles = default_roles(t)
    roles.update({"response_y": Role.RESPONSE, "x0": Role.FOCAL, "x5": Role.IGNORE})
    pairs = (("x0", "region"), ("x1", "x5"), ("x2", "response_y"))
    spec = build_spec(t, roles, {"methods": ("lasso",)}, interactions=pairs)
    assert spec.interactions == (("x0", "region"),)
