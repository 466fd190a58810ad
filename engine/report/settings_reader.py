"""Read back the settings sheet of a results workbook: the specification and the scoring model.

Readers are named after the layout version they read (``read_settings_v1``); the dispatcher
refuses layouts newer than this Tamis knows, naming the file and the version.
"""

from __future__ import annotations

__all__ = [
    "read_settings",
    "read_settings_v1",
    "read_settings_v2",
    "load_scoring_model",
    "load_settings",
    "SettingsRecord",
]

import json
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, cast

from engine.design import Encoding
from engine.errors import InputProblem, Place
from engine.report.names import SETTINGS
from engine.report.scoring_model import ScoringModel
from engine.report.sheets.settings import LAYOUT_VERSION, TITLE
from engine.study_spec import StudySpec


@dataclass
class SettingsRecord:
    """Everything the settings sheet holds, parsed."""

    spec: StudySpec
    about: dict[str, object]
    design: dict[str, object]
    encodings: list[Encoding]
    means: dict[str, float]
    sds: dict[str, float]
    levels: dict[str, list[str]]
    models: dict[str, dict[str, object]]
    coefficients: dict[str, dict[str, float]] = field(
        default_factory=dict
    )  # method -> name -> value
    ranges: dict[str, tuple[float, float]] = field(default_factory=dict)  # name -> (low, high)

    def scoring_model(self, method: str | None = None, place: Place | None = None) -> ScoringModel:
        chosen = method or str(self.about.get("scoring model") or next(iter(self.models)))
        if chosen not in self.models:
            raise InputProblem(
                f"the results workbook holds no model '{chosen}'; it holds: "
                + ", ".join(self.models),
                place,
            )
        m = self.models[chosen]
        cv_error = m.get("cv_error")
        smearing = None
        if self.design.get("response scale") == "ln":
            factor = m.get("smearing")
            smearing = factor if isinstance(factor, float) and factor > 0 else None
            if smearing is None:
                raise InputProblem(
                    f"model '{chosen}' explains the ln of the response but its smearing factor "
                    "is missing from the settings sheet; write the results again with `tamis fit`",
                    place,
                )
        return ScoringModel.from_parts(
            chosen,
            str(self.design.get("response", "")),
            # a cell Tamis wrote as a number; float() still refuses anything else
            float(cast("float | str", m["intercept"])),
            self.encodings,
            self.coefficients[chosen],
            self.means,
            self.sds,
            self.levels,
            cv_error if isinstance(cv_error, float) else None,
            self.ranges,
            smearing,
        )


def _rows(path: Path) -> list[tuple]:
    import openpyxl

    place = Place(file=str(path), sheet=SETTINGS)
    if not path.exists():
        raise InputProblem(f"results workbook '{path}' does not exist", Place(file=str(path)))
    if path.suffix.lower() not in (".xlsx", ".xlsm"):
        raise InputProblem(
            f"'{path}' is not a results workbook: Tamis writes its results as .xlsx; give the "
            "workbook `tamis fit ... --out` (or --in-place) wrote",
            Place(file=str(path)),
        )
    try:
        wb = openpyxl.load_workbook(path, read_only=True, data_only=True)
    except Exception as exc:  # not a workbook, damaged, encrypted
        raise InputProblem(
            f"cannot open '{path}' as a workbook (it is damaged, protected by a password or "
            "not a workbook); give a results workbook written by Tamis",
            Place(file=str(path)),
        ) from exc
    try:
        if SETTINGS not in wb.sheetnames:
            raise InputProblem(
                f"'{path}' has no sheet '{SETTINGS}': it is not a Tamis results "
                "workbook (run `tamis fit ... --out` first)",
                place,
            )
        return [tuple(r) for r in wb[SETTINGS].iter_rows(values_only=True)]
    finally:
        wb.close()


def _record(path: str | Path) -> SettingsRecord:
    path = Path(path)
    rows = _rows(path)
    place = Place(file=str(path), sheet=SETTINGS)
    if not rows or rows[0][0] != TITLE or not isinstance(rows[0][1], (int, float)):
        raise InputProblem(
            f"sheet '{SETTINGS}' of '{path}' does not start with '{TITLE}' and a "
            "layout version; it was changed or not written by Tamis",
            place,
        )
    version = int(rows[0][1])
    if version > LAYOUT_VERSION:
        raise InputProblem(
            f"the settings in '{path}' use layout version {version}, newer than this "
            f"Tamis reads ({LAYOUT_VERSION}); update Tamis",
            place,
        )
    if version == 1:
        return read_settings_v1(rows, place)
    return read_settings_v2(rows, place)


def read_settings_v2(rows: list[tuple], place: Place | None = None) -> SettingsRecord:
    """Parse the rows of a layout-version-2 settings sheet: version 1 plus the response's
    scale in [design] and a smearing column in [models] (studies that took logs)."""
    record = _parse(rows, place)
    if record.design.get("response scale") not in ("ln", "original"):
        raise InputProblem(
            "the settings sheet does not say whether the response was modelled as its ln; it "
            "was changed by hand or damaged: write the results again with `tamis fit`",
            place,
        )
    return record


def read_settings_v1(rows: list[tuple], place: Place | None = None) -> SettingsRecord:
    """Parse the rows of a layout-version-1 settings sheet (no logs: the response in its units)."""
    record = _parse(rows, place)
    record.design.pop("response scale", None)
    return record


def _parse(rows: list[tuple], place: Place | None) -> SettingsRecord:
    sections: dict[str, list[tuple]] = {}
    current = None
    for r in rows[1:]:
        first = r[0] if r else None
        if isinstance(first, str) and first.startswith("[") and first.endswith("]"):
            current = first[1:-1]
            sections[current] = []
        elif current is not None and first is not None:
            sections[current].append(r)

    def joined(r: tuple) -> Any:  # whatever JSON the cells spell
        parts = [c for c in r[1:] if c is not None]
        return json.loads("".join(str(c) for c in parts)) if parts else None

    try:
        about = {r[0]: joined(r) for r in sections.get("about", [])}
        study = {r[0]: joined(r) for r in sections.get("study", [])}
        design = {r[0]: joined(r) for r in sections.get("design", [])}
        enc_rows = sections.get("encodings", [])[1:]
        encodings, means, sds, ranges = [], {}, {}, {}
        for r in enc_rows:
            r = tuple(r) + (None,) * 13
            e = Encoding(
                name=str(r[0]),
                source=str(r[1]),
                letter=str(r[2] or ""),
                kind=str(r[3]),
                level=json.loads(r[4]) if r[4] else None,
                fill=float(r[5]) if r[5] is not None else None,
                origin=json.loads(r[6]) if r[6] else None,
                reference=json.loads(r[7]) if r[7] else None,
                factors=tuple(json.loads(r[12])) if r[12] else None,
            )
            encodings.append(e)
            means[e.name] = float(r[8])
            sds[e.name] = float(r[9])
            if r[10] is not None and r[11] is not None:  # workbooks before ranges have none
                ranges[e.name] = (float(r[10]), float(r[11]))
        levels = {str(r[0]): list(joined(r) or []) for r in sections.get("levels", [])}
        model_rows = sections.get("models", [])
        heads = [str(h) for h in model_rows[0]] if model_rows else []
        models: dict[str, dict[str, object]] = {}
        for r in model_rows[1:]:
            d = {h: (float(v) if isinstance(v, (int, float)) else v) for h, v in zip(heads, r) if h}
            models[str(r[0])] = d
        coef_rows = sections.get("coefficients", [])
        methods = [str(h) for h in coef_rows[0][1:] if h is not None] if coef_rows else []
        coefficients: dict[str, dict[str, float]] = {m: {} for m in methods}
        for r in coef_rows[1:]:
            for t, m in enumerate(methods):
                coefficients[m][str(r[0])] = float(r[1 + t] or 0.0)
        spec = StudySpec.from_dict(study)
    except InputProblem:
        raise
    except (ValueError, TypeError, KeyError, IndexError) as exc:
        raise InputProblem(
            f"the settings sheet could not be read ({exc}); it was changed by hand or "
            "damaged: write the results again with `tamis fit`",
            place,
        ) from exc
    return SettingsRecord(
        spec, about, design, encodings, means, sds, levels, models, coefficients, ranges
    )


def load_settings(results_book: str | Path) -> SettingsRecord:
    """Everything a results workbook's settings sheet holds (specification, design, models)."""
    return _record(results_book)


def read_settings(results_book: str | Path) -> StudySpec:
    """The study specification stored in a results workbook's settings sheet."""
    return _record(results_book).spec


def load_scoring_model(results_book: str | Path, method: str | None = None) -> ScoringModel:
    """The model stored in a results workbook (default: the one its scoring sheet uses)."""
    return _record(results_book).scoring_model(
        method, Place(file=str(results_book), sheet=SETTINGS)
    )
