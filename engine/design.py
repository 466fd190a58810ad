"""The design matrix: from an intake table and chosen roles to a float matrix, response and encodings.

``build_design(table, spec)`` applies the roles of a study specification: category columns are
one-hot encoded against their most frequent level ("C=level"), flags become 0/1, dates a trend in
days (and, if asked, month and weekday categories); rows with a missing response are dropped;
missing candidates are handled by the stated policy (drop the row, or fill with the median and
add a missing-indicator column); constant columns are dropped with a warning; exact duplicates
are reported. Every refusal names the sheet and column and says what to change.
"""

from __future__ import annotations

__all__ = [
    "Encoding",
    "Design",
    "build_design",
    "drop_reasons_text",
    "log_name",
    "without_orphan_products",
    "MAX_LEVELS",
]

import dataclasses
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np

from engine.errors import InputProblem, Place
from engine.intake.cells import cell_name
from engine.intake.classify import worth_a_warning
from engine.intake.notes import UNREAD, Finding, finding_of

if TYPE_CHECKING:
    from engine.intake.table import Column, Table
    from engine.study_spec import StudySpec

# a category with more levels than this is more likely an identifier than an explanatory column
MAX_LEVELS = 60


def date_part(days: np.ndarray, part: str) -> np.ndarray:
    """The month (1-12) or ISO weekday (1 Monday - 7 Sunday) of datetime64 values."""
    if part == "month":
        return (days.astype("datetime64[M]").astype(int) % 12) + 1
    return ((days.astype("datetime64[D]").astype(int) + 3) % 7) + 1  # 1970-01-01: a Thursday


def log_name(column: str) -> str:
    """The model's name for the natural log of a column."""
    return f"ln({column})"


@dataclass(frozen=True)
class Encoding:
    """How one model column is computed from one source column (also drives scoring formulas).

    kind:
      "number"   the cell value itself
      "flag"     1.0 for a yes/true/1 cell, 0.0 for no/false/0 (tokens in engine.intake.cells)
      "level"    1.0 when the cell's text equals ``level``, else 0.0 (one-hot against a reference)
      "trend"    days since ``origin`` (ISO date) for a date column
      "month"    1.0 when the date's month number equals int(level)
      "weekday"  1.0 when the date's ISO weekday (1=Monday) equals int(level)
      "missing"  1.0 when the source cell is missing, else 0.0 (missing policy "fill")
      "ln"       the natural log of the cell value, for a number column the study logs (a cell
                 at or below 0 has none: missing in new rows, refused in the data fitted)
      "product"  the product of two other model columns, ``factors`` (an interaction of two
                 source columns); ``source`` is the first factor's
    ``fill``: the value used for a missing source cell (median on the rows used) under policy
    "fill"; None under policy "drop".
    """

    name: str
    source: str
    letter: str
    kind: str
    level: str | None = None
    fill: float | None = None
    origin: str | None = None
    reference: str | None = None  # the reference level left out, for "level" encodings
    # "product": the names of the two model columns multiplied (an interaction)
    factors: tuple[str, str] | None = None


@dataclass
class Design:
    source: str
    sheet: str
    header_row: int
    response: str
    names: list[str]  # model columns, in order
    encodings: list[Encoding]  # one per model column, same order
    X: np.ndarray  # (n, p) float64
    y: np.ndarray  # (n,) float64
    row_numbers: np.ndarray  # (n,) 1-based sheet row of each row used
    means: np.ndarray  # (p,) column means on the rows used
    sds: np.ndarray  # (p,) population standard deviations (divisor n) on the rows used
    rows_dropped: int = 0
    drop_reasons: dict[str, int] = field(default_factory=dict)  # reason -> rows
    groups: np.ndarray | None = None  # (n,) group labels for grouped folds
    order: np.ndarray | None = None  # (n,) float time order for blocked folds
    focal_index: int | None = None  # index into names of the focal column
    dropped_columns: dict[str, str] = field(default_factory=dict)  # column -> why it was left out
    category_levels: dict[str, list[str]] = field(
        default_factory=dict
    )  # source -> all levels, reference first
    warnings: list[str] = field(default_factory=list)
    response_log: bool = False  # y holds the natural log of the response column

    @property
    def response_label(self) -> str:
        """The response as the models see it: "ln(name)" when it was logged."""
        return log_name(self.response) if self.response_log else self.response

    def rows(self, index: np.ndarray) -> Design:
        """The same design on some of its rows (means and deviations recomputed on them)."""
        X = np.ascontiguousarray(self.X[index])
        return dataclasses.replace(
            self,
            X=X,
            y=self.y[index],
            row_numbers=self.row_numbers[index],
            means=X.mean(axis=0),
            sds=X.std(axis=0),
            groups=None if self.groups is None else self.groups[index],
            order=None if self.order is None else self.order[index],
            warnings=list(self.warnings),
        )

    def columns(self, index: np.ndarray) -> Design:
        """The same design on some of its model columns (in order), the focal one kept."""
        index = np.asarray(index, dtype=int)
        names = [self.names[j] for j in index]
        focal = None if self.focal_index is None else self.names[self.focal_index]
        return dataclasses.replace(
            self,
            X=np.ascontiguousarray(self.X[:, index]),
            names=names,
            encodings=[self.encodings[j] for j in index],
            means=self.means[index],
            sds=self.sds[index],
            focal_index=None if focal is None else names.index(focal),
            dropped_columns=dict(self.dropped_columns),
        )

    @property
    def n_rows(self) -> int:
        return int(self.X.shape[0])

    @property
    def n_cols(self) -> int:
        return int(self.X.shape[1])

    @property
    def y_mean(self) -> float:
        return float(self.y.mean())


def build_design(table: Table, spec: StudySpec) -> Design:
    """Apply the roles of ``spec`` to ``table`` and return the numeric design."""
    from engine.intake.table import ColumnKind

    def place(col: str | None = None) -> Place:
        return Place(file=str(table.source), sheet=table.sheet, column=col)

    where = f"sheet '{table.sheet}'"
    response = table.column(spec.response)
    if response.kind is ColumnKind.EMPTY:
        why = "; ".join(response.notes) or "every cell below the heading is empty"
        raise InputProblem(
            f"the response column '{response.name}' in {where} holds no values ({why}); "
            + (
                "open the file in a spreadsheet program and save it to store the formula "
                "results, or choose another response"
                if "formula" in why
                else "choose a column with numbers as the response"
            ),
            place(response.name),
        )
    if response.kind is ColumnKind.CATEGORY and len(response.levels) == 2:
        a, b = response.levels
        raise InputProblem(
            f"the response column '{response.name}' in {where} holds two labels ('{a}', "
            f"'{b}'), not numbers; to fit one of them as 1 and the other as 0 (a linear "
            "probability model), write the column as 1 and 0 or as yes and no",
            place(response.name),
        )
    if response.kind not in (ColumnKind.NUMBER, ColumnKind.FLAG):
        raise InputProblem(
            f"the response column '{response.name}' in {where} holds {response.kind.words}, "
            "not numbers; choose a numeric column as the response",
            place(response.name),
        )
    roles_taken = {spec.response}
    group_col = table.column(spec.group) if spec.group else None
    order_col = table.column(spec.time_order) if spec.time_order else None
    for c in (group_col, order_col):
        if c is not None:
            roles_taken.add(c.name)
    if order_col is not None and order_col.kind not in (
        ColumnKind.NUMBER,
        ColumnKind.DATE,
        ColumnKind.FLAG,
    ):
        raise InputProblem(
            f"the time-order column '{order_col.name}' in {where} holds {order_col.kind.words}; "
            "choose a date or numeric column",
            place(order_col.name),
        )
    for name in spec.exclude:
        table.column(name)  # unknown names are an error, not silently ignored

    warnings: list[str] = []
    named: list[tuple[str, str | None]] = [
        ("response", spec.response),
        ("focal column", spec.focal),
        *(("candidate", name) for name in spec.candidates or () if name != spec.focal),
    ]
    for role, given in named:
        twins = [c for c in table.columns if given and c.duplicate_of == given]
        if given and twins:  # two columns share the heading: say which one the role took
            first = table.column(given)
            others = ", ".join(f"{c.letter} (read as '{c.name}')" for c in twins)
            warnings.append(
                f"the {role} '{given}' is column {first.letter}; the same heading is also on "
                f"column {others}"
            )
    dropped_columns: dict[str, str] = {}
    if spec.focal and spec.focal == spec.response:
        raise InputProblem(
            f"the focal column '{spec.focal}' in {where} is the response; choose another "
            "focal column",
            place(spec.focal),
        )
    if spec.focal and spec.focal in spec.exclude:
        raise InputProblem(
            f"the focal column '{spec.focal}' in {where} is also excluded; keep it in or "
            "choose another focal column",
            place(spec.focal),
        )
    explicit = spec.candidates is not None
    if explicit:
        chosen = [table.column(n) for n in spec.candidates or ()]
        for c in chosen:  # a named candidate that holds another role: say why it is not one
            if c.name == spec.response:
                warnings.append(f"'{c.name}' is the response, so it is not among the candidates")
            elif c.name in roles_taken:
                role = "group" if group_col is not None and c is group_col else "time-order"
                warnings.append(
                    f"'{c.name}' is the {role} column, so it is left out of the candidates "
                    f"(its rows decide the folds); to use it as a candidate, give no {role} "
                    "column"
                )
    else:
        chosen = [c for c in table.columns if c.name not in roles_taken]
    if spec.focal and spec.focal not in [c.name for c in chosen]:
        chosen.append(table.column(spec.focal))
    chosen = [c for c in chosen if c.name not in spec.exclude and c.name not in roles_taken]
    if spec.focal:
        focal_col = table.column(spec.focal)
        two_labels = focal_col.kind == ColumnKind.CATEGORY and len(focal_col.levels) == 2
        if focal_col.kind not in (ColumnKind.NUMBER, ColumnKind.FLAG) and not two_labels:
            raise InputProblem(
                f"the focal column '{focal_col.name}' in {where} holds {focal_col.kind.words}; "
                "double selection needs a numeric focal column, or a category of two labels "
                "(a treatment against its comparison)",
                place(focal_col.name),
            )

    logged = set(spec.log_columns)
    in_study = {c.name for c in chosen} | {spec.response}
    for name in spec.log_columns:
        c = table.column(name)
        if c.name not in in_study:
            raise InputProblem(
                f"column '{c.name}' in {where} is to be taken as its natural log but is not in "
                "the study (neither the response nor a candidate); add it as a candidate or "
                "take it off the logged columns",
                place(c.name),
            )
        if c.kind is not ColumnKind.NUMBER:
            raise InputProblem(
                f"column '{c.name}' in {where} holds {c.kind.words}; only a number "
                "column can be taken as its natural log: take it off the logged columns",
                place(c.name),
            )

    usable: list[Column] = []
    for c in chosen:
        reason = None
        if c.kind == ColumnKind.EMPTY:
            reason = "it is empty"
        elif (why_text := _numbers_read_as_text(c)) and c.kind in (
            ColumnKind.IDENTIFIER,
            ColumnKind.CATEGORY,
        ):
            # mostly numbers, yet text: the reason to give is intake's, not "identifier"
            reason = why_text
        elif c.kind == ColumnKind.IDENTIFIER:
            reason = "it looks like an identifier (almost every value is different)"
        elif c.kind == ColumnKind.CATEGORY and len(c.levels) > MAX_LEVELS:
            reason = f"it has {len(c.levels)} categories (more than {MAX_LEVELS})"
        elif not explicit and c.name != spec.focal and looks_like_row_number(c):
            reason = (
                f"it looks like a row number (every value a different whole number, under the "
                f"heading '{c.name}'); name it as a candidate to use it"
            )
        if reason:
            dropped_columns[c.name] = reason
            warnings.append(f"column '{c.name}' left out: {reason}")
        else:
            usable.append(c)
    if not usable:
        raise InputProblem(
            f"no usable candidate column in {where}: "
            + (
                "; ".join(f"'{k}' {v}" for k, v in list(dropped_columns.items())[:5])
                or "only the response is there"
            )
            + "; mark numeric, category, date or yes/no columns as candidates",
            place(),
        )

    n_all = table.n_rows
    keep = np.ones(n_all, dtype=bool)
    drop_reasons: dict[str, int] = {}

    def drop(mask: np.ndarray, reason: str) -> None:
        newly = keep & mask
        k = int(newly.sum())
        if k:
            drop_reasons[reason] = drop_reasons.get(reason, 0) + k
            keep[newly] = False

    y_all = np.asarray(response.values, dtype=float)
    drop(~np.isfinite(y_all), f"response '{response.name}' missing")
    for note in response.notes:  # words in the response's cells cost their rows: say which
        if _unread_cells(note):
            warning = f"response '{response.name}': {note}; {_rows_left_out(note)}"
            if "'<" in note or "'>" in note:
                warning += (
                    ". Values beyond a detection limit left out bias the fit towards the "
                    "measured range; replace them by values chosen under your own review "
                    "practice if they should count"
                )
            warnings.append(warning)
    for c in (group_col, order_col):
        if c is not None:
            drop(
                c.missing_mask(),
                f"{'group' if c is group_col else 'time order'} '{c.name}' missing",
            )
    if spec.missing == "drop":
        # a candidate with one value besides its blanks says nothing once the rows with blanks
        # are dropped: leave it out first, so that it does not cost those rows for nothing
        informative = []
        for c in usable:
            value = _only_value_besides_blanks(c, keep)
            if value is None:
                informative.append(c)
                continue
            reason = (
                f"it holds one value ({value}) besides its blank cells; dropping the rows with "
                "blanks would leave it constant (--missing fill keeps what it says, whether a "
                "cell is blank, as a 0/1 indicator column)"
            )
            dropped_columns[c.name] = reason
            warnings.append(f"column '{c.name}' left out: {reason}")
        usable = informative
        if not explicit:
            usable = _without_mostly_missing(usable, keep, spec.focal, dropped_columns, warnings)
        for c in usable:
            drop(c.missing_mask(), f"missing in candidate '{c.name}'")
    for c in usable:  # words typed in a candidate's cells cost rows or get the fill: say which
        for note in c.notes:
            # (a note intake already repeats among the sheet's warnings is not said twice)
            if _unread_cells(note) and not worth_a_warning(note):
                then = "filled like blank cells" if spec.missing == "fill" else _rows_left_out(note)
                warnings.append(f"candidate '{c.name}': {note}; {then}")

    for c in [response, *usable] if logged else []:
        if c.name in logged:
            _refuse_non_positive(c, keep, table, spec.missing == "fill" and c is not response)

    n = int(keep.sum())
    if n < 3:
        if n_all < 3:
            raise InputProblem(
                f"{where} has only {n_all} data {'row' if n_all == 1 else 'rows'}; a study "
                "needs at least 3 (and more than the validation parts)",
                place(),
            )
        y_missing = int((~np.isfinite(y_all)).sum())
        if n_all - y_missing < 3:  # filling candidates cannot help: the response is never filled
            raise InputProblem(
                f"the response '{response.name}' in {where} has a value in only "
                f"{n_all - y_missing} of {n_all} rows; choose a response with more values",
                place(),
            )
        raise InputProblem(
            f"only {n} of {n_all} rows in {where} remain after removing missing values "
            f"({drop_reasons_text(drop_reasons)}); use --missing fill or choose other columns",
            place(),
        )

    names: list[str] = []
    encodings: list[Encoding] = []
    blocks: list[np.ndarray] = []
    category_levels: dict[str, list[str]] = {}

    def add(enc: Encoding, values: np.ndarray) -> None:
        names.append(enc.name)
        encodings.append(enc)
        blocks.append(values.astype(float))

    for c in usable:
        miss = c.missing_mask()[keep]
        fill_policy = spec.missing == "fill" and bool(miss.any())
        if c.kind in (ColumnKind.NUMBER, ColumnKind.FLAG):
            v = np.asarray(c.values, dtype=float)[keep]
            if c.name in logged:
                with np.errstate(invalid="ignore", divide="ignore"):
                    v = np.log(v)  # positive on every row used: checked above
            fill = None
            if fill_policy:
                fill = float(np.nanmedian(v)) if np.isfinite(v).any() else 0.0
                v = np.where(np.isfinite(v), v, fill)
            kind = "number" if c.kind == ColumnKind.NUMBER else "flag"
            if c.blank_means is not None:  # a check-mark column: a blank new cell means no
                fill = c.blank_means
            if c.name in logged:
                add(Encoding(log_name(c.name), c.name, c.letter, "ln", fill=fill), v)
            else:
                add(Encoding(c.name, c.name, c.letter, kind, fill=fill), v)
        elif c.kind == ColumnKind.CATEGORY:
            raw = np.asarray(c.values, dtype=object)[keep]
            labels = np.array(["" if x is None else str(x) for x in raw], dtype=object)
            present = [lv for lv in c.levels if np.any(labels == lv)]
            if fill_policy:
                present = present + [""] if "" not in present else present
            if len(present) < 2:
                dropped_columns[c.name] = "it has a single category on the rows used"
                warnings.append(f"column '{c.name}' left out: a single category on the rows used")
                continue
            ref = present[0]
            category_levels[c.name] = present
            for lv in present[1:]:
                label = lv if lv != "" else "(blank)"
                add(
                    Encoding(
                        f"{c.name}={label}", c.name, c.letter, "level", level=lv, reference=ref
                    ),
                    (labels == lv).astype(float),
                )
        elif c.kind == ColumnKind.DATE:
            d = np.asarray(c.values, dtype="datetime64[ns]")[keep]
            ok = ~np.isnat(d)
            if not ok.any():
                continue
            origin = d[ok].min().astype("datetime64[D]")
            days = (d.astype("datetime64[D]") - origin).astype(float)
            days[~ok] = np.nan
            fill = None
            if fill_policy:
                fill = float(np.nanmedian(days))
                days = np.where(ok, days, fill)
            add(
                Encoding(
                    f"{c.name}:trend", c.name, c.letter, "trend", fill=fill, origin=str(origin)
                ),
                days,
            )
            if spec.date_parts:
                monthly = np.full(d.shape, 0, dtype=int)
                monthly[ok] = date_part(d[ok], "month")
                weekday = np.full(d.shape, 0, dtype=int)
                weekday[ok] = date_part(d[ok], "weekday")
                for part, vals, kind in (
                    ("month", monthly, "month"),
                    ("weekday", weekday, "weekday"),
                ):
                    seen = sorted(set(vals[ok].tolist()))
                    for lv in seen[1:]:
                        add(
                            Encoding(
                                f"{c.name}:{part}={lv}",
                                c.name,
                                c.letter,
                                kind,
                                level=str(lv),
                                reference=str(seen[0]),
                            ),
                            (vals == lv).astype(float),
                        )
        if fill_policy and c.kind != ColumnKind.CATEGORY:  # a category's blanks are a level
            add(Encoding(f"{c.name}:missing", c.name, c.letter, "missing"), miss.astype(float))

    if spec.interactions:
        in_model = {e.source for e in encodings}
        for a, b in spec.interactions:
            for col in (a, b):
                c = table.column(col)
                if c.name not in in_study or c.name == response.name:
                    raise InputProblem(
                        f"column '{c.name}' in {where} is in an interaction but is not a "
                        "candidate of the study; make it a candidate or drop the interaction",
                        place(c.name),
                    )
            missing_from = [c for c in (a, b) if c not in in_model]
            if missing_from:
                why = dropped_columns.get(missing_from[0], "it has no usable values")
                warnings.append(
                    f"the interaction of '{a}' and '{b}' was left out: '{missing_from[0]}' is "
                    f"not in the model ({why})"
                )
                continue
            # the columns each source made (not products of an earlier interaction)
            main = [(e, blocks[j]) for j, e in enumerate(encodings) if e.kind != "product"]
            of_a = [(e, v) for e, v in main if e.source == a]
            of_b = [(e, v) for e, v in main if e.source == b]
            if a == b:  # the square of one number column: its curvature
                ea, va = _squarable(a, of_a, where, place)
                add(
                    Encoding(
                        f"{ea.name}²", ea.source, ea.letter, "product", factors=(ea.name, ea.name)
                    ),
                    va * va,
                )
                continue
            for ea, va in of_a:
                for eb, vb in of_b:
                    if "missing" in (ea.kind, eb.kind):
                        continue
                    add(
                        Encoding(
                            f"{ea.name} × {eb.name}", ea.source, ea.letter, "product",
                            factors=(ea.name, eb.name),
                        ),
                        va * vb,
                    )  # fmt: skip

    X = np.column_stack(blocks) if blocks else np.empty((n, 0))
    y = y_all[keep]
    response_log = response.name in logged
    if response_log:
        y = np.log(y)  # positive on every row used: checked above

    # constant columns carry nothing: drop them with a warning
    sds = X.std(axis=0) if X.size else np.empty(0)
    const = sds <= 1e-12 * np.maximum(1.0, np.abs(X).max(axis=0) if X.size else 1.0)
    if const.any():
        kept_names = {nm for nm, c in zip(names, const) if not c}
        for j in np.flatnonzero(const):
            why = "it is constant on the rows used"
            indicator = f"{encodings[j].source}:missing"
            if encodings[j].kind != "missing" and indicator in kept_names:
                # its one value filled its own blanks: what it says is whether a cell was blank
                why += f"; whether its cell was blank is kept as the column '{indicator}'"
            dropped_columns[names[j]] = why
            warnings.append(f"column '{names[j]}' left out: {why.removeprefix('it is ')}")
        keep_cols = ~const
        X = X[:, keep_cols]
        names = [nm for nm, k in zip(names, keep_cols) if k]
        encodings = [e for e, k in zip(encodings, keep_cols) if k]
    X, names, encodings = without_orphan_products(X, names, encodings, dropped_columns, warnings)
    if X.shape[1] == 0:
        raise InputProblem(
            f"no usable candidate column in {where}: every candidate is constant or empty on the "
            f"{n} rows used; choose other candidate columns",
            place(),
        )
    if float(np.std(y)) <= 1e-12 * max(1.0, float(np.abs(y).max())):
        raise InputProblem(
            f"the response '{response.name}' in {where} has the same value ({y[0]:g}) on every row used; "
            "there is nothing to explain: choose another response",
            place(response.name),
        )

    X = np.ascontiguousarray(X)
    means = X.mean(axis=0)
    sds = X.std(axis=0)
    duplicates = _duplicates(X, means, sds)

    groups = None
    if group_col is not None:
        groups = np.array(
            [str(v) for v in np.asarray(group_col.values, dtype=object)[keep]], dtype=object
        )
    order = None
    if order_col is not None:
        ov = order_col.values[keep]
        order = (
            ov.astype("datetime64[ns]").astype("int64").astype(float)
            if order_col.kind == ColumnKind.DATE
            else ov.astype(float)
        )

    if y.size and np.all((y == 0.0) | (y == 1.0)) and 0.0 < y.mean() < 1.0:
        warnings.append(_zero_one_response_note(response.name, y))
    logged_kept = [e.source for e in encodings if e.kind == "ln"]
    if response_log or logged_kept:
        warnings.append(_log_note(response.name, response_log, logged_kept))
    focal_name = log_name(spec.focal) if spec.focal and spec.focal in logged else spec.focal
    if spec.focal and focal_name not in names:
        # a category of two labels: its one indicator, the other label against the reference
        levels = [e.name for e in encodings if e.source == spec.focal and e.kind == "level"]
        if len(levels) == 1:
            focal_name = levels[0]
    focal_index = names.index(focal_name) if focal_name and focal_name in names else None
    if spec.focal and focal_index is None:
        raise InputProblem(
            f"the focal column '{spec.focal}' in {where} is constant on the rows used; choose another focal column",
            place(spec.focal),
        )
    # a control that moves exactly with the focal column would take an arbitrary share of its
    # effect: it carries nothing the focal column does not, so it is left out
    copies = sorted(
        {k if j == focal_index else j for j, k, _ in duplicates if focal_index in (j, k)}
    )
    warnings.extend(
        _duplicate_words(names, j, k, sign)
        for j, k, sign in duplicates
        if focal_index not in (j, k)
    )
    if copies and focal_index is not None and focal_name is not None:
        for idx in copies:
            why = (
                f"it moves exactly with the focal column '{focal_name}' on the rows used "
                "(the same once both are put on one scale), so no effect could be told apart "
                "from the focal one"
            )
            dropped_columns[names[idx]] = why
            warnings.append(f"column '{names[idx]}' left out: {why}")
        keep_cols = np.array([i not in copies for i in range(len(names))])
        X = np.ascontiguousarray(X[:, keep_cols])
        names = [nm for nm, k in zip(names, keep_cols) if k]
        encodings = [e for e, k in zip(encodings, keep_cols) if k]
        X, names, encodings = without_orphan_products(
            X, names, encodings, dropped_columns, warnings
        )
        means, sds = X.mean(axis=0), X.std(axis=0)
        focal_index = names.index(focal_name)
    return Design(
        source=str(table.source),
        sheet=table.sheet,
        header_row=table.header_row,
        response=response.name,
        names=names,
        encodings=encodings,
        X=X,
        y=y,
        row_numbers=np.asarray(table.row_numbers)[keep],
        means=means,
        sds=sds,
        rows_dropped=n_all - n,
        drop_reasons=drop_reasons,
        groups=groups,
        order=order,
        focal_index=focal_index,
        dropped_columns=dropped_columns,
        category_levels=category_levels,
        warnings=warnings,
        response_log=response_log,
    )


def _squarable(column: str, made: list, where: str, place) -> tuple[Encoding, np.ndarray]:
    """The one model column a square is taken of: a number (or its ln) or a date's trend."""
    main = [(e, v) for e, v in made if e.kind in ("number", "ln", "trend")]
    if not main:
        kinds = sorted({e.kind for e, _ in made})
        raise InputProblem(
            f"column '{column}' in {where} is paired with itself, which adds its square; that "
            f"needs a number column, and this one is made of {', '.join(kinds)} columns (the "
            "square of a 0/1 column is the column itself): pair it with another column",
            place(column),
        )
    return main[0]


def without_orphan_products(
    X: np.ndarray,
    names: list[str],
    encodings: list[Encoding],
    dropped_columns: dict[str, str],
    warnings: list[str],
) -> tuple[np.ndarray, list[str], list[Encoding]]:
    """Leave out product columns one of whose factors was left out (its formula needs both)."""
    present = set(names)
    orphan = [
        j
        for j, e in enumerate(encodings)
        if e.kind == "product" and not set(e.factors or ()) <= present
    ]
    if not orphan:
        return X, names, encodings
    for j in orphan:
        dropped_columns[names[j]] = "one of the two columns it multiplies was left out"
        warnings.append(
            f"column '{names[j]}' left out: one of the two columns it multiplies was left out"
        )
    keep = np.setdiff1d(np.arange(len(names)), orphan)
    return X[:, keep], [names[j] for j in keep], [encodings[j] for j in keep]


def _log_note(response: str, response_log: bool, candidates: list[str]) -> str:
    """What taking logs means for reading the results, said once."""
    said = []
    if response_log:
        said.append(
            f"the models explain ln({response}): errors and R squared are on that scale, and "
            f"a prediction in {response}'s units is exp(prediction) times a smearing factor "
            "(Duan 1983), which assumes the spread of errors on the ln scale is the same for "
            "every prediction"
        )
    if candidates:
        shown = ", ".join(f"ln({c})" for c in candidates[:5])
        more = f" and {len(candidates) - 5} more" if len(candidates) > 5 else ""
        said.append(
            f"{shown}{more} enter as logs: their coefficients are per unit of ln, i.e. per "
            "change by a factor of e (2.718...)"
        )
    return "; ".join(said)


def _rows_left_out(note: str) -> str:
    """What became of the rows of the cells a note counts."""
    one = getattr(note, "cells", None) == 1
    return "its row was left out" if one else "their rows were left out"


def _unread_cells(note: str) -> bool:
    """Whether a column's note names cells whose words intake could not read as values."""
    return finding_of(note) in UNREAD


def _refuse_non_positive(c: Column, keep: np.ndarray, table: Table, filled: bool) -> None:
    """Refuse a logged column holding a value at or below 0 on a row used, naming the first
    such cell (the natural log exists only above 0)."""
    v = np.asarray(c.values, dtype=float)
    bad = np.flatnonzero(keep & np.isfinite(v) & (v <= 0))
    if not bad.size:
        return
    i = int(bad[0])
    row = int(table.row_numbers[i])
    more = f" and {bad.size - 1} more rows" if bad.size > 1 else ""
    at = cell_name(c.letter, row)  # "E13", or "row 13, column 5" in a text file
    raise InputProblem(
        f"column '{c.name}' in sheet '{table.sheet}' holds {v[i]:g} in "
        f"{at if c.letter.isdigit() else 'cell ' + at}"
        f"{more}; the natural log exists only above 0: take '{c.name}' off the logged columns "
        "(a column with genuine zeros stays in its own units), or correct those cells if they "
        "are mistakes"
        + (
            " (or leave them blank: they are filled like other missing cells)"
            if filled
            else " (or leave them blank, which drops their rows)"
        ),
        Place(file=str(table.source), sheet=table.sheet, column=c.name, row=row,
              cell=None if c.letter.isdigit() else at),
    )  # fmt: skip


def _zero_one_response_note(name: str, y: np.ndarray) -> str:
    """What fitting a yes/no (1/0) response by least squares gives, said once."""
    return (
        f"response '{name}' holds only 1 and 0 (yes {y.mean():.1%} of the rows used): every "
        "method fits it as a number (a linear probability model), so a prediction is a score "
        "that ranks rows and can fall below 0 or above 1, not a probability to report as it is"
    )


# a column nobody asked for by name that is blank in more than this share of the rows would
# cost those rows when rows with a blank are dropped: it is left out instead
MOSTLY_MISSING_SHARE = 0.5
# headings of a column that counts or labels the rows rather than measuring anything
_ROW_NUMBER_HEADINGS = frozenset("id no no. nr # n row rows index idx obs record line item".split())


def looks_like_row_number(c: Column) -> bool:
    """A number column headed like a row label ("id", "No.", "row") whose values are all
    different whole numbers: a default candidate it is not (the window's starting roles use
    the same rule); named as a candidate it is used."""
    from engine.intake.table import ColumnKind

    words = c.name.casefold().replace("_", " ").replace("-", " ").split()
    if c.kind != ColumnKind.NUMBER or not words:
        return False
    if " ".join(words) not in _ROW_NUMBER_HEADINGS and words[-1] not in ("id", "no", "nr", "#"):
        return False
    v = np.asarray(c.values, dtype=float)
    v = v[np.isfinite(v)]
    return v.size > 2 and bool(np.all(v == np.round(v))) and np.unique(v).size == v.size


def mostly_missing(missing: int, rows: int) -> bool:
    """Whether a column blank in ``missing`` of ``rows`` rows is too sparse to be a default candidate."""
    return rows > 0 and missing > MOSTLY_MISSING_SHARE * rows


def _without_mostly_missing(
    usable: list[Column],
    keep: np.ndarray,
    focal: str | None,
    dropped_columns: dict[str, str],
    warnings: list[str],
) -> list[Column]:
    """Default candidates without those blank in most of the rows still in use (said in a warning)."""
    n = int(keep.sum())
    kept = []
    for c in usable:
        k = int(c.missing_mask()[keep].sum())
        if c.name == focal or not mostly_missing(k, n):
            kept.append(c)
            continue
        reason = (
            f"it is blank in {k} of the {n} rows, which would all be dropped; choose it as a "
            "candidate by name to use it, best with missing values filled instead of rows dropped"
        )
        dropped_columns[c.name] = reason
        warnings.append(f"column '{c.name}' left out: {reason}")
    return kept


def _numbers_read_as_text(c: Column) -> str | None:
    """Intake's note on a column of mostly numbers that it had to read as text, with the fix."""
    for note in c.notes:
        if finding_of(note) is Finding.TOO_FEW_NUMBERS:
            return note + "; write every cell as a plain number to use it"
        if finding_of(note) is Finding.SEVERAL_UNITS:
            return note
    return None


def _only_value_besides_blanks(c: Column, rows: np.ndarray) -> str | None:
    """The single value a column holds on ``rows`` besides blank cells, as text; None when it
    has no blank there or more than one value."""
    from engine.intake.table import ColumnKind

    miss = c.missing_mask()[rows]
    if not miss.any() or miss.all():
        return None
    present = np.asarray(c.values)[rows][~miss]
    if c.kind in (ColumnKind.NUMBER, ColumnKind.FLAG):
        distinct = np.unique(present.astype(float))
        return f"{distinct[0]:g}" if distinct.size == 1 else None
    texts = {str(x) for x in present}
    return f"'{texts.pop()}'" if len(texts) == 1 else None


def drop_reasons_text(reasons: dict[str, int], limit: int = 3) -> str:
    """Why rows were left out, the largest reasons first: "missing in candidate 'x': 53 rows;
    ... and 12 more reasons (40 rows)", and with several reasons that each row counts once
    ("none" when no row was)."""
    ranked = sorted(reasons.items(), key=lambda kv: -kv[1])
    shown = [f"{why}: {_rows(count)}" for why, count in ranked[:limit]]
    rest = ranked[limit:]
    if rest:
        shown.append(f"and {len(rest)} more reasons ({_rows(sum(c for _, c in rest))})")
    if len(ranked) > 1:  # the counts add up to the rows left out, not to the missing cells
        shown.append("each row counted once, under the first column it lacks")
    return "; ".join(shown) or "none"


def _rows(count: int) -> str:
    return f"{count} row" if count == 1 else f"{count} rows"


def _duplicates(X: np.ndarray, means: np.ndarray, sds: np.ndarray) -> list[tuple[int, int, int]]:
    """Pairs (j, k, sign) of model columns that move exactly together (sign 1: column j is a
    scaled copy of the earlier column k) or exactly against each other (sign -1)."""
    if X.shape[1] < 2:
        return []
    Z = (X - means) / sds
    # hash each standardized column (rounded) so exact duplicates meet in one bucket
    out: list[tuple[int, int, int]] = []
    seen: dict[bytes, int] = {}
    for j in range(Z.shape[1]):
        col = np.round(Z[:, j], 9) + 0.0  # + 0.0 folds -0.0 into 0.0
        for sign, key in ((1, col.tobytes()), (-1, (0.0 - col).tobytes())):
            if key in seen:
                out.append((j, seen[key], sign))
                break
        else:
            seen[col.tobytes()] = j
    return out


def _duplicate_words(names: list[str], j: int, k: int, sign: int) -> str:
    rel = "an exact copy" if sign == 1 else "an exact mirror (negative multiple)"
    return (
        f"column '{names[j]}' is {rel} of '{names[k]}' on the rows used, once both are put on "
        "one scale; their effects cannot be told apart"
    )
