"""The model a results workbook scores with: encodings, centring, coefficients and predictions.

One object serves three routes that must agree:

- the scoring sheet's formulas (``sheets.scoring`` writes them from this object, and
  ``cell_value`` mirrors each formula in Python to store real cached values);
- ``ScoringModel.predict(table)``: new rows read by intake, encoded the way the design was;
- the fitted values of the study (the same linear predictor on the design matrix).

Prediction (original units): yhat = intercept + sum_j b_j x_j. When the study fitted the
natural log of the response, that sum estimates ln(y) and the prediction in the response's units
is exp(sum) times the model's smearing factor (Duan 1983, J. Amer. Statist. Assoc. 78(383)),
the mean of exp(residual) on the rows fitted. The sheet writes the same
number in centred and standardized form, centre + sum_j beta_j (x_j - mean_j) / sd_j with
beta_j = b_j sd_j and centre = intercept + sum_j b_j mean_j, so means and standard deviations
are visible cells (penalty convention of Friedman, Hastie & Tibshirani 2010).

Range of a prediction: the prediction plus and minus 1.96 times the model's cross-validated root
mean squared error (the usual normal 95% prediction interval, yhat +- 1.96 sigma, common
practice, with sigma estimated on held-out rows so that it includes the model's own estimation
error). It assumes errors of about the same size and shape everywhere; for a logged response
the ends are exp of the ln-scale ends (a range that is wider above than below).
"""

from __future__ import annotations

__all__ = [
    "ScoringModel",
    "scoring_reason",
    "source_kind",
    "date_serial",
    "EXCEL_EPOCH",
    "DAYS_1900_TO_1904",
    "RANGE_LEVEL",
    "RANGE_Z",
    "RANGE_LOW",
    "RANGE_HIGH",
    "range_words",
    "flag_tokens",
]

import datetime as _dt
import difflib
import math
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from engine.design import Encoding, date_part
from engine.errors import InputProblem, Place
from engine.intake.cells import MISSING_WORDS
from engine.intake.classify import points_scale

# Day 0 of the 1900 date system as Excel and LibreOffice count it for dates after 1900-03-01.
EXCEL_EPOCH = _dt.date(1899, 12, 30)
# A workbook in the 1904 date system (ECMA-376 Part 1, workbookPr date1904) counts from
# 1904-01-01: its serial numbers are this many days smaller than the 1900 system's.
DAYS_1900_TO_1904 = (_dt.date(1904, 1, 1) - EXCEL_EPOCH).days
# the range given with each prediction: its coverage, and the standard normal's quantile for it
# (scipy.stats.norm.ppf(0.975); a constant so scoring needs no scipy)
RANGE_LEVEL = 0.95
RANGE_Z = 1.959963984540054
RANGE_LOW = "Low end (95% range)"
RANGE_HIGH = "High end (95% range)"


def range_words(model: ScoringModel) -> str:
    """How the range beside each prediction is made, in words for the sheets."""
    h = model.range_halfwidth or math.nan
    ln = " on the ln scale, the ends taken back by EXP" if model.response_log else ""
    return (
        f"95% range: the prediction plus and minus {h:.6g}{ln} ({RANGE_Z:.2f} x the model's "
        f"cross-validated root mean squared error, {h / RANGE_Z:.6g}); it assumes errors of "
        "about the same size everywhere and says nothing reliable for rows outside the fitted "
        "range."
    )


def date_serial(iso: str) -> float:
    """Spreadsheet serial number of an ISO date (days since 1899-12-30)."""
    return float((_dt.date.fromisoformat(iso[:10]) - EXCEL_EPOCH).days)


def flag_tokens() -> tuple[tuple[str, ...], tuple[str, ...]]:
    """The words read as yes and as no (intake's), for the sheet's formulas and their mirror."""
    from engine.intake.cells import CHECK_MARKS, FLAG_FALSE, FLAG_TRUE

    return tuple(FLAG_TRUE) + tuple(CHECK_MARKS), tuple(FLAG_FALSE)


def source_kind(encodings: list[Encoding], source: str) -> str:
    """What a source column holds, judged from its encodings: category, flag, date or number."""
    kinds = {e.kind for e in encodings if e.source == source}
    if "level" in kinds:
        return "category"
    if "flag" in kinds:
        return "flag"
    if kinds & {"trend", "month", "weekday"}:
        return "date"
    return "number"


def scoring_reason(result) -> str:
    """Why the scoring sheet uses its method, in words for the sheet."""
    named = getattr(result.spec, "scoring_method", None)
    if named and result.scoring_method() == named:
        return "chosen in the study's settings"
    if _has_cv(result):
        reason = "the smallest cross-validated error among the methods of this study"
    else:
        reason = "the first method of this study"
    if named:  # the named method gave no model (least squares with more columns than rows)
        reason += f" ('{named}', named in the settings, gave no model)"
    return reason


def _has_cv(result) -> bool:
    return any(m.cv_error is not None and math.isfinite(m.cv_error) for m in result.models)


@dataclass
class ScoringModel:
    """A fitted linear predictor over the model columns whose coefficient is not zero."""

    method: str
    response: str
    intercept: float
    encodings: list[Encoding]  # only the columns the prediction uses
    coefficients: np.ndarray  # (k,) original units
    means: np.ndarray  # (k,)
    sds: np.ndarray  # (k,)
    category_levels: dict[str, list[str]] = field(default_factory=dict)
    cv_error: float | None = None
    # (k,) smallest and largest value of each model column on the rows used; NaN unknown
    lows: np.ndarray | None = None
    highs: np.ndarray | None = None
    # the linear predictor estimates ln(response): predictions are exp(.) * smearing
    response_log: bool = False
    smearing: float = 1.0
    # (date column, "month" or "weekday") -> the values the fitted rows had, from every
    # encoding of the design (a month whose coefficient is 0 was still seen)
    date_parts_seen: dict[tuple[str, str], set[int]] = field(default_factory=dict)

    @classmethod
    def from_parts(
        cls,
        method: str,
        response: str,
        intercept: float,
        encodings: list[Encoding],
        coefficients: dict[str, float],
        means: dict[str, float],
        sds: dict[str, float],
        category_levels: dict[str, list[str]],
        cv_error: float | None = None,
        ranges: dict[str, tuple[float, float]] | None = None,
        smearing: float | None = None,
    ) -> ScoringModel:
        """smearing: the model's factor when it explains ln of the response; None when the
        response is modelled in its own units."""
        chosen = {e.name for e in encodings if float(coefficients.get(e.name, 0.0)) != 0.0}
        # a kept product needs both its factors on the sheet, kept or not (coefficient 0)
        for e in encodings:
            if e.kind == "product" and e.name in chosen:
                chosen.update(e.factors or ())
        used = [e for e in encodings if e.name in chosen]
        ranges = ranges or {}
        nan = (math.nan, math.nan)
        return cls(
            method=method,
            response=response,
            intercept=float(intercept),
            encodings=used,
            coefficients=np.array([float(coefficients.get(e.name, 0.0)) for e in used]),
            means=np.array([float(means[e.name]) for e in used]),
            sds=np.array([float(sds[e.name]) for e in used]),
            category_levels={
                s: list(v) for s, v in category_levels.items() if any(e.source == s for e in used)
            },
            cv_error=cv_error,
            lows=np.array([ranges.get(e.name, nan)[0] for e in used], dtype=float),
            highs=np.array([ranges.get(e.name, nan)[1] for e in used], dtype=float),
            response_log=smearing is not None,
            smearing=1.0 if smearing is None else float(smearing),
            date_parts_seen=_date_parts_seen(encodings, {e.source for e in used}),
        )

    @classmethod
    def from_result(cls, result, method: str | None = None) -> ScoringModel:
        d = result.design
        m = result.model(method or result.scoring_method())
        return cls.from_parts(
            m.method,
            d.response,
            m.intercept,
            list(d.encodings),
            m.coefficients,
            dict(zip(d.names, d.means)),
            dict(zip(d.names, d.sds)),
            d.category_levels,
            m.cv_error,
            {
                name: (float(np.min(d.X[:, j])), float(np.max(d.X[:, j])))
                for j, name in enumerate(d.names)
            }
            if d.n_rows
            else None,
            m.smearing if d.response_log else None,
        )

    # -- the centred and standardized form written in the sheet
    @property
    def std_coefficients(self) -> np.ndarray:
        return self.coefficients * self.sds

    @property
    def centre(self) -> float:
        return float(self.intercept + np.dot(self.coefficients, self.means))

    @property
    def typical_size(self) -> float:
        """How large a prediction typically is, in the response's units: the prediction at the
        columns' means, or the cross-validated error where that is larger (a response centred
        near 0). For a logged response, whose predictions span factors, the low end of the
        95% range at the centre, so small predictions keep their digits too. It sets how many
        decimals predictions are shown with."""
        if self.response_log:
            h = self.range_halfwidth or 0.0
            return math.exp(self.centre - h) if math.isfinite(self.centre) else 0.0
        centre = self.centre
        size = abs(centre) if math.isfinite(centre) else 0.0
        if self.cv_error is not None and math.isfinite(self.cv_error):
            size = max(size, math.sqrt(max(self.cv_error, 0.0)))
        return size

    def fitted_ranges(self) -> dict[str, tuple[float, float]]:
        """(lowest, highest) value in the rows fitted of each number column the prediction
        reads, in the sheet's units (a logged column's range taken back from ln), by source
        column: intake reads new rows' percentages on that scale."""
        out: dict[str, tuple[float, float]] = {}
        if self.lows is None or self.highs is None:
            return out
        for j, enc in enumerate(self.encodings):
            lo, hi = float(self.lows[j]), float(self.highs[j])
            if enc.kind not in ("number", "ln") or not (math.isfinite(lo) and math.isfinite(hi)):
                continue
            out.setdefault(
                enc.source, (math.exp(lo), math.exp(hi)) if enc.kind == "ln" else (lo, hi)
            )
        return out

    @property
    def sources(self) -> list[str]:
        """Source columns the prediction needs, in order of first use."""
        out: list[str] = []
        for e in self.encodings:
            if e.source not in out:
                out.append(e.source)
        return out

    def factor_indices(self, enc: Encoding) -> tuple[int, int]:
        """Positions among this model's columns of the two columns a product multiplies."""
        names = [e.name for e in self.encodings]
        a, b = enc.factors or ("", "")
        return names.index(a), names.index(b)

    def to_response_units(self, linear: np.ndarray) -> np.ndarray:
        """Predictions in the response's own units from the linear predictor."""
        linear = np.asarray(linear, dtype=float)
        if not self.response_log:
            return linear
        with np.errstate(over="ignore"):
            return np.exp(linear) * self.smearing

    @property
    def prediction_label(self) -> str:
        """What the prediction column holds, for headings."""
        if self.response_log:
            return f"Prediction of {self.response} (from its ln, smearing applied)"
        return f"Prediction of {self.response}"

    # -- predictions on rows read by intake
    def predict(self, table) -> np.ndarray:
        """Predictions for every data row of an intake ``Table`` or a pandas DataFrame (NaN
        where a value is missing)."""
        return self.predict_with_notes(table)[0]

    def predict_with_notes(self, table) -> tuple[np.ndarray, list[str]]:
        """Predictions plus one note per row that could not be scored ("" when it could)."""
        linear, notes = self._linear_with_notes(table)
        return self.to_response_units(linear), notes

    def predict_with_range(self, table) -> tuple[np.ndarray, np.ndarray, np.ndarray, list[str]]:
        """Predictions, the low and high ends of their range (NaN where the model has no
        cross-validated error) and one note per row that could not be scored."""
        linear, notes = self._linear_with_notes(table)
        low, high = self.prediction_range(linear)
        return self.to_response_units(linear), low, high, notes

    # -- the range of a prediction
    @property
    def range_halfwidth(self) -> float | None:
        """z * the cross-validated root mean squared error, on the model's scale (the ln scale
        for a logged response); None without a usable cross-validated error."""
        if self.cv_error is None or not (math.isfinite(self.cv_error) and self.cv_error > 0):
            return None
        return RANGE_Z * math.sqrt(self.cv_error)

    def prediction_range(self, linear: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(low, high) in the response's units for linear predictions (NaN without a range).

        The linear prediction plus and minus the half-width; for a logged response the ends are
        taken back by exp alone (they are quantiles, which exp carries over; the smearing factor
        corrects the mean, not quantiles)."""
        linear = np.asarray(linear, dtype=float)
        h = self.range_halfwidth
        if h is None:
            nan = np.full(linear.shape, np.nan)
            return nan, nan.copy()
        low, high = linear - h, linear + h
        if self.response_log:
            with np.errstate(over="ignore"):
                return np.exp(low), np.exp(high)
        return low, high

    def _linear_with_notes(self, table) -> tuple[np.ndarray, list[str]]:
        """The linear predictor (ln scale for a logged response) and the notes of each row."""
        table = as_table(table)
        self.check_columns(table)
        n = table.n_rows
        X = np.empty((n, len(self.encodings)))
        missing_in: list[list[str]] = [[] for _ in range(n)]
        unread_cells: dict[tuple[int, str], str] = {}  # (row, source) -> "F4 'warm'"
        not_positive: dict[int, list[str]] = {}
        for j, enc in enumerate(self.encodings):
            if enc.kind == "product":  # its factors come before it (design order)
                ia, ib = self.factor_indices(enc)
                X[:, j] = X[:, ia] * X[:, ib]
                continue
            col = self._find_column(table, enc.source)
            X[:, j] = self._encode(enc, col, table)
            if enc.kind == "ln":
                raw = self._encode(Encoding("", enc.source, "", "number"), col, table)
                for i in np.flatnonzero(np.isfinite(raw) & (raw <= 0)):
                    if enc.source not in not_positive.setdefault(int(i), []):
                        not_positive[int(i)].append(enc.source)
            for i in np.flatnonzero(~np.isfinite(X[:, j])):
                if enc.source not in missing_in[i] and enc.source not in not_positive.get(
                    int(i), []
                ):
                    missing_in[i].append(enc.source)
                    cell = _text_cell(col, int(i), table)
                    if cell:
                        unread_cells[(int(i), enc.source)] = cell
        linear = (
            self.intercept + X @ self.coefficients
            if len(self.encodings)
            else np.full(n, self.intercept)
        )
        unseen: dict[int, list[str]] = {}
        for source in self.sources:
            known = self.category_levels.get(source)
            if known is None or source_kind(self.encodings, source) != "category":
                continue
            for row, lab in enumerate(_labels(self._find_column(table, source), known)):
                if lab not in known and lab != "":
                    unseen.setdefault(row, []).append(
                        f"level '{lab}' of '{source}' not seen in fitting"
                    )
        notes = []
        for row, m in enumerate(missing_in):
            said = unseen.get(row, [])
            rest = [s for s in m if not any(f"of '{s}'" in u for u in said)]
            parts = said + [
                f"'{s}' is not above 0, so it has no ln" for s in not_positive.get(row, [])
            ]
            cells_named = [
                f"'{s}'" + (f" ({unread_cells[(row, s)]})" if (row, s) in unread_cells else "")
                for s in rest
            ]
            parts += ["no usable value in " + ", ".join(cells_named)] if rest else []
            notes.append("; ".join(parts))
        return np.asarray(linear, dtype=float), notes

    def fill_cautions(self, table) -> list[str]:
        """Per row, the columns whose empty or unreadable cell took the stored fill (the median
        of the rows fitted, under the study's missing-value policy "fill"); "" when none."""
        out: list[list[str]] = [[] for _ in range(table.n_rows)]
        said: set[str] = set()
        for enc in self.encodings:
            if enc.fill is None or enc.kind in ("product", "missing") or enc.source in said:
                continue
            said.add(enc.source)
            col = self._find_column(table, enc.source)
            raw = self._encode(replace(enc, fill=None), col, table)
            for i in np.flatnonzero(~np.isfinite(raw)):
                out[i].append(f"'{enc.source}' had no usable value, {enc.fill:.6g} was put in")
        return ["filled: " + "; ".join(o) if o else "" for o in out]

    def range_cautions(self, table) -> list[str]:
        """Per row, the model columns whose value lies outside the range of the rows the model
        was fitted on ("" when none): the prediction there is an extrapolation."""
        table = as_table(table)
        n = table.n_rows
        out: list[list[str]] = [[] for _ in range(n)]
        for j, enc in enumerate(self.encodings):
            if self.lows is None or self.highs is None:  # an older workbook: no ranges kept
                break
            lo, hi = float(self.lows[j]), float(self.highs[j])
            if enc.kind not in ("number", "trend", "ln") or not (
                math.isfinite(lo) and math.isfinite(hi)
            ):
                continue
            v = self._encode(enc, self._find_column(table, enc.source), table)
            slack = 1e-9 * max(1.0, abs(lo), abs(hi))

            def shown(x: float, enc: Encoding = enc) -> str:
                if enc.kind == "trend" and enc.origin:  # days since the origin date
                    day = _dt.date.fromisoformat(str(enc.origin)[:10])
                    return (day + _dt.timedelta(days=round(x))).isoformat()
                if enc.kind == "ln":  # the bounds are logs: say them in the column's units
                    return f"{math.exp(x):.6g}"
                return f"{x:.6g}"

            for i in np.flatnonzero(np.isfinite(v) & ((v < lo - slack) | (v > hi + slack))):
                out[i].append(
                    f"'{enc.source}' {shown(v[i])} outside the fitted {shown(lo)} to {shown(hi)}"
                )
        for source, part, seen in self.seen_date_parts():
            days = _as_days(self._find_column(table, source))
            ok = np.isfinite(days)
            got = date_part(np.where(ok, days, 0).astype("int64").astype("datetime64[D]"), part)
            for i in np.flatnonzero(ok & ~np.isin(got, list(seen))):
                out[i].append(
                    f"'{source}' in {part} {int(got[i])}, which no fitted row was in (read as "
                    f"{part} {min(seen)}, the reference)"
                )
        return ["extrapolation: " + "; ".join(o) if o else "" for o in out]

    def seen_date_parts(self) -> list[tuple[str, str, set[int]]]:
        """(date column, "month" or "weekday", the values the fitted rows had) for every date
        split into parts the model uses, leaving out parts every value of which was seen: a
        new row in another month has no coefficient of its own."""
        return [
            (source, part, values)
            for (source, part), values in self.date_parts_seen.items()
            if len(values) < (12 if part == "month" else 7)
        ]

    def _find_column(self, table, source: str):
        found = self._column_or_none(table, source)
        if found is not None:
            return found
        names = [c.name for c in table.columns]
        close = difflib.get_close_matches(source, names, n=3, cutoff=0.6)
        hint = f"; close matches: {', '.join(repr(c) for c in close)}" if close else ""
        raise InputProblem(
            f"the model needs column '{source}', which is not in sheet '{table.sheet}' "
            f"(header row {table.header_row}){hint}; rename the heading to '{source}' or add the column",
            Place(file=str(table.source), sheet=table.sheet, column=source),
        )

    def column_in(self, table, source: str):
        """The new rows' column the model reads for ``source`` (None when there is none)."""
        return self._column_or_none(as_table(table), source)

    def _column_or_none(self, table, source: str):
        """The new rows' column for ``source``: by name, by heading, or, for a name that
        carries its unit from a units row ("temp (°C)"), by the name without it ("temp")."""
        for c in table.columns:
            if c.name == source:
                return c
        wanted = {source.strip().lower()}
        if source.endswith(")") and " (" in source:
            wanted.add(source[: source.rindex(" (")].strip().lower())
        for key in (source.strip().lower(), *sorted(wanted - {source.strip().lower()})):
            hits = [c for c in table.columns if key in (c.heading.strip().lower(), c.name.lower())]
            if len(hits) == 1:
                return hits[0]
        return None

    def check_columns(self, table) -> None:
        """Refuse new rows that lack columns the model uses, naming every one of them."""
        table = as_table(table)
        missing = [s for s in self.sources if self._column_or_none(table, s) is None]
        if len(missing) > 1:
            raise InputProblem(
                f"the model needs {len(missing)} columns that are not in sheet '{table.sheet}' "
                f"(header row {table.header_row}): "
                + ", ".join(f"'{s}'" for s in missing)
                + "; rename the headings to those names or add the columns",
                Place(file=str(table.source), sheet=table.sheet, column=missing[0]),
            )
        if missing:
            self._find_column(table, missing[0])  # one column: with close matches named

    def _encode(self, enc: Encoding, col, table) -> np.ndarray:
        from engine.intake.table import ColumnKind

        kind = col.kind
        values = col.values
        miss = np.nan if enc.fill is None else float(enc.fill)
        if enc.kind == "ln":  # a value at or below 0 has no log: no prediction for that row
            v = self._encode(Encoding(enc.name, enc.source, enc.letter, "number"), col, table)
            with np.errstate(invalid="ignore", divide="ignore"):
                logged = np.log(np.where(v > 0, v, np.nan))
            return np.where(np.isfinite(v), logged, miss)
        if enc.kind in ("number", "flag"):
            if kind in (ColumnKind.NUMBER, ColumnKind.FLAG):
                v = np.asarray(values, dtype=float).copy()
            elif enc.kind == "flag" and kind in (ColumnKind.CATEGORY, ColumnKind.IDENTIFIER):
                yes, no = flag_tokens()
                v = np.array(
                    [1.0 if _low(x) in yes else 0.0 if _low(x) in no else np.nan for x in values]
                )
            elif kind == ColumnKind.EMPTY:  # nothing typed: every cell takes the fill, if any
                v = np.full(len(values), np.nan)
            elif enc.kind == "number" and kind in (ColumnKind.CATEGORY, ColumnKind.IDENTIFIER):
                # a few new rows with a stray word ("warm") are typed as text by intake: read
                # each cell that spells a number, the others have no usable value (named in the
                # row's note); a column without any number is the wrong column
                fitted = self.fitted_ranges().get(enc.source)
                v = _numbers_in_text(values, fitted is not None and points_scale(fitted))
                if not np.isfinite(v).any():
                    raise self._wrong_kind(enc, col, table, "numbers")
            else:
                raise self._wrong_kind(enc, col, table, "numbers")
            out = np.where(np.isfinite(v), v, miss)
            if enc.kind == "flag":  # 0 and 1 only: 2 is no yes/no value, nor a gap to fill
                out[np.isfinite(v) & (v != 0) & (v != 1)] = np.nan
            return out
        if enc.kind == "level":
            known = self.category_levels.get(enc.source)
            labels = _labels(col, known)
            unseen = np.zeros(len(labels), dtype=bool)
            if known is not None:  # no coefficient for such a level: that row gets none
                unseen = np.array([lab not in known and lab != "" for lab in labels], dtype=bool)
            blank_known = known is not None and "" in known
            out = np.array([float(lab == (enc.level or "")) for lab in labels])
            if not blank_known:
                out[np.array([lab == "" for lab in labels], dtype=bool)] = np.nan
            out[unseen] = np.nan
            return out
        if enc.kind in ("trend", "month", "weekday"):
            days = _as_days(col)
            if enc.kind == "trend":
                origin = np.datetime64(enc.origin[:10], "D").astype("int64") if enc.origin else 0
                v = days - float(origin)
                return np.where(np.isfinite(v), v, miss)
            ok = np.isfinite(days)
            part = date_part(
                np.where(ok, days, 0).astype("int64").astype("datetime64[D]"), enc.kind
            )
            return np.where(ok, (part == int(enc.level or 0)).astype(float), 0.0)
        if enc.kind == "missing":
            return col.missing_mask().astype(float)
        raise ValueError(f"unknown encoding kind {enc.kind!r}")

    def _wrong_kind(self, enc: Encoding, col, table, expected: str) -> InputProblem:
        return InputProblem(
            f"column '{enc.source}' in sheet '{table.sheet}' holds {col.kind.words}; "
            f"the model expects {expected} there",
            Place(file=str(table.source), sheet=table.sheet, column=enc.source),
        )

    # -- Python mirror of each sheet formula, for cached values of the example rows
    def cell_value(self, enc: Encoding, raw: object) -> float:
        """The value the scoring sheet's formula gives for the raw cell ``raw``.

        ``raw`` is what a cell holds: None (blank), a float (numbers and date serials), a bool
        or a str. NaN stands for the formula's #N/A. (A product column multiplies two encoded
        cells: see ``row_values``.)
        """
        if enc.kind == "product":
            raise ValueError("a product column's value comes from its factors (row_values)")
        kind = source_kind(self.encodings, enc.source)
        # the fill stands in for a cell read as missing (blank, error, placeholder); other
        # text gets no prediction, as on the sheet (_miss_expr there)
        miss = math.nan if enc.fill is None or not _blankish(raw) else float(enc.fill)
        # the number the cell holds (bools are ints to Python but flags to the sheet), else None
        num = raw if isinstance(raw, (int, float)) and not isinstance(raw, bool) else None
        is_num = num is not None
        if enc.kind == "number":
            return float(num) if num is not None else miss
        if enc.kind == "ln":
            if num is None:
                return miss
            return math.log(num) if num > 0 else math.nan
        if enc.kind == "flag":
            if is_num:
                return 1.0 if raw != 0 else 0.0
            if isinstance(raw, bool):
                return 1.0 if raw else 0.0
            yes, no = flag_tokens()
            t = "" if raw is None else str(raw).strip().lower()
            return 1.0 if t in yes else 0.0 if t in no else miss
        if enc.kind == "level":
            levels = self.category_levels.get(enc.source, [])
            if raw is None or raw == "":
                return (1.0 if (enc.level or "") == "" else 0.0) if "" in levels else math.nan
            # as the sheet's LOWER(TRIM()): outer spaces off, inner runs of spaces as one,
            # letter case ignored (intake reads "East" and "east" as one level)
            trimmed = " ".join(part for part in _plain(raw).split(" ") if part)
            return 1.0 if trimmed.lower() == (enc.level or "").lower() else 0.0
        if enc.kind == "trend":
            if num is None:
                return miss
            return math.floor(num) - date_serial(enc.origin or "1899-12-30")
        if enc.kind in ("month", "weekday"):
            if num is None:
                return 0.0
            day = EXCEL_EPOCH + _dt.timedelta(days=math.floor(num))
            part = day.month if enc.kind == "month" else day.isoweekday()
            return 1.0 if part == int(enc.level or 0) else 0.0
        if enc.kind == "missing":
            if kind == "category":
                return 1.0 if raw is None or raw == "" else 0.0
            if kind == "flag":
                return (
                    1.0
                    if math.isnan(self.cell_value(Encoding("", enc.source, "", "flag"), raw))
                    else 0.0
                )
            return 0.0 if is_num else 1.0
        raise ValueError(enc.kind)

    def row_values(self, raw: Mapping[str, object]) -> list[float]:
        """Every encoded cell of one pasted row (``raw``: source -> cell), as the sheet
        computes them; a product is its factors' product."""
        out: list[float] = []
        for enc in self.encodings:
            if enc.kind == "product":
                ia, ib = self.factor_indices(enc)
                out.append(out[ia] * out[ib])
            else:
                out.append(self.cell_value(enc, raw.get(enc.source)))
        return out

    def sheet_prediction(self, encoded: list[float]) -> float:
        """The prediction formula of the sheet, evaluated in the same centred form."""
        x = np.asarray(encoded, dtype=float)
        linear = self.centre + np.sum(self.std_coefficients * ((x - self.means) / self.sds))
        return float(self.to_response_units(np.array([linear]))[0])


_ENGINE_DIR = str(Path(__file__).resolve().parents[1])


def _outside_engine_level() -> int:
    """The stacklevel, counted from a warn() in as_table, of the first caller outside the
    engine package (warnings' skip_file_prefixes needs a newer Python)."""
    import sys
    from types import FrameType

    frame: FrameType | None = sys._getframe(1)  # as_table's own frame is level 1
    level = 1
    while frame is not None and frame.f_code.co_filename.startswith(_ENGINE_DIR):
        frame, level = frame.f_back, level + 1
    return level


def as_table(rows):
    """New rows as an intake Table: a Table as it is, a pandas DataFrame read like a sheet
    (what reading it found, a repeated column label say, raised as a TamisWarning: a Python
    user has no other place to see it)."""
    import warnings

    from engine.errors import TamisWarning
    from engine.intake.frame import read_frame
    from engine.intake.table import Table

    if isinstance(rows, Table):
        return rows
    table = read_frame(rows, "new rows")
    level = _outside_engine_level()
    for said in table.warnings:  # pointed at the user's own line, not at the engine's
        warnings.warn(f"new rows: {said}", TamisWarning, stacklevel=level)
    return table


def _numbers_in_text(values, points: bool = False) -> np.ndarray:
    """The number each text cell spells, read as intake reads one cell of a number column (NaN
    for the others): with a decimal point, or a comma where only a comma makes a number of it
    ("0,2"); a result against a limit as the fit reads one ("<0.05" as half the limit); a
    percentage as a share, or in points when the model was fitted on points (``points``). A
    few new rows are too few to tell a column's habits, so each cell is read on its own."""
    from engine.intake.cells import parse_number_text
    from engine.intake.classify import limit_value

    out = np.full(len(values), np.nan)
    for i, v in enumerate(values):
        if isinstance(v, str) and v.strip():
            s = v.strip()
            for read in (parse_number_text, limit_value):
                x = read(s, ".")
                x = read(s, ",") if x is None else x
                if x is not None:
                    out[i] = round(x * 100.0, 10) if points and s.endswith("%") else x
                    break
    return out


def _text_cell(col, i: int, table) -> str:
    """The cell of a row as a message names it ("F4 'warm'"), when it holds text; else ""."""
    from engine.intake.cells import cell_name

    v = col.values[i] if i < len(col.values) else None
    if not isinstance(v, str) or not v.strip():
        return ""
    shown = v if len(v) <= 30 else v[:27] + "..."
    return f"{cell_name(col.letter, int(table.row_numbers[i]))} '{shown}'"


def _date_parts_seen(
    encodings: list[Encoding], sources: set[str]
) -> dict[tuple[str, str], set[int]]:
    """The months and weekdays of the fitted rows, from a design's encodings (each level and
    the reference), for the date columns in ``sources``."""
    seen: dict[tuple[str, str], set[int]] = {}
    for enc in encodings:
        if enc.kind in ("month", "weekday") and enc.source in sources:
            values = seen.setdefault((enc.source, enc.kind), set())
            values.add(int(enc.level or 0))
            if enc.reference:
                values.add(int(enc.reference))
    return seen


def _blankish(raw: object) -> bool:
    """What the sheet's formulas take as a missing cell: blank (None; an error cell reaches
    Python as None too), spaces, or a placeholder such as "n/a" (intake reads these as
    missing). Typed text such as "#N/A" is text to a spreadsheet, not an error value."""
    if raw is None:
        return True
    if not isinstance(raw, str):
        return False
    t = raw.strip(" ")  # as the sheet's TRIM, which takes off spaces only
    return not t or t.lower() in MISSING_WORDS


def _low(x: object) -> str:
    return "" if x is None else str(x).strip().lower()


def _plain(x: object) -> str:
    if isinstance(x, float) and x.is_integer():
        return str(int(x))
    return str(x)


def _labels(col, known: list[str] | None = None) -> list[str]:
    """The column's labels as text ("" for a blank), each spelled as the known level it
    matches apart from letter case, when it matches no known level exactly (intake reads
    levels that differ only in case as one, and the scoring sheet compares them so)."""
    by_case: dict[str, str] = {}
    for level in reversed(known or []):  # the first of two such levels (older results) wins
        by_case[level.lower()] = level
    exact = set(known or [])
    out = []
    for x in col.values:
        if x is None or (isinstance(x, float) and not math.isfinite(x)):
            out.append("")
        else:
            lab = _plain(x)
            out.append(lab if lab in exact else by_case.get(lab.lower(), lab))
    return out


def _as_days(col) -> np.ndarray:
    """Whole days since 1970-01-01 (float, NaN missing) from a date or serial-number column."""
    from engine.intake.table import ColumnKind

    v = col.values
    if col.kind == ColumnKind.DATE or np.asarray(v).dtype.kind == "M":
        d = np.asarray(v, dtype="datetime64[ns]")
        out = d.astype("datetime64[D]").astype("int64").astype(float)
        out[np.isnat(d)] = np.nan
        return out
    serial = np.asarray(v, dtype=float)
    offset = (EXCEL_EPOCH - _dt.date(1970, 1, 1)).days
    return np.floor(serial) + offset
