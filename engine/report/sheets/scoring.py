"""The scoring sheet: paste new rows under the source headings, read the prediction beside them.

Layout (rows top to bottom, written in order for xlsxwriter's constant_memory mode):

- a short explanation, the model used (one model: the study's smallest cross-validated error,
  named in a cell), the centre and the intercept;
- a parameter block above the encoded columns: one column per model column the prediction uses,
  with its source, encoding, level, fill value, date origin, mean, standard deviation,
  standardized and original-unit coefficient, then the known levels of each category column;
- the header row: the source column headings (the paste block), "Prediction", the low and high
  ends of its 95% range (when the model has a cross-validated error; the half-width is a cell
  at the top), "Check", and the model column names of the encoded block;
- the first rows of the study's data as examples, then empty rows ready for pasting.

Every formula uses only functions every spreadsheet program has (IF, ISNUMBER, ISLOGICAL,
ISBLANK, ISERROR, ISTEXT, EXACT, LOWER, TRIM, LEN, OR, AND, INT, MONTH, WEEKDAY, COUNTA,
SUMPRODUCT, NA, and LN and EXP where the study took logs), and
reads means, standard deviations, coefficients and the centre from cells rather than baking them
in. Cached values are real numbers (Python mirror of each formula), so every reader shows them.
"""

from __future__ import annotations

__all__ = ["write", "ScoringLayout", "example_rows"]

import math
from dataclasses import dataclass

import numpy as np

from engine.intake.cells import MISSING_WORDS
from engine.report.scoring_model import (
    DAYS_1900_TO_1904,
    RANGE_HIGH,
    RANGE_LOW,
    ScoringModel,
    date_serial,
    flag_tokens,
    scoring_reason,
    source_kind,
)
from engine.report.sheets.cells import Formats, cell_ref, col_name, heading_row, number, text

N_EXAMPLES = 5
_PARAM_ROWS = (
    "model column",
    "source column",
    "encoding",
    "level",
    "fill for a missing cell",
    "date origin",
    "mean",
    "standard deviation",
    "lowest value fitted",
    "highest value fitted",
    "standardized coefficient",
    "coefficient (original units)",
)


@dataclass
class ScoringLayout:
    """Where things are on the sheet (0-based), for tests and readers."""

    header_row: int
    first_data_row: int
    n_rows: int
    n_examples: int
    prediction_col: int
    low_col: int | None  # the range's low end; the high end beside it (None: no range)
    check_col: int
    first_encoded_col: int
    sources: list[str]
    centre_cell: str


def example_rows(
    result, model: ScoringModel, k: int = N_EXAMPLES
) -> list[dict[str, float | str | None]]:
    """Raw cell values of the first ``k`` rows used, rebuilt from the design matrix.

    Numbers are the values themselves; a category is the level whose indicator is 1 (the
    reference level when none is); a flag is 1 or 0; a date is its serial number; a cell the
    design filled (its missing indicator is 1) is blank.
    """
    d = result.design
    idx = {n: j for j, n in enumerate(d.names)}
    rows: list[dict[str, float | str | None]] = []
    for i in range(min(k, d.n_rows)):
        row: dict[str, float | str | None] = {}
        for source in model.sources:
            encs = [e for e in d.encodings if e.source == source]
            miss = [e for e in encs if e.kind == "missing"]
            if miss and d.X[i, idx[miss[0].name]] == 1.0:
                row[source] = None
                continue
            kind = source_kind(list(d.encodings), source)
            value: float | str | None = None
            if kind == "category":
                levels = d.category_levels.get(source, [])
                value = levels[0] if levels else None
                for e in encs:
                    if e.kind == "level" and d.X[i, idx[e.name]] == 1.0:
                        value = e.level
                value = None if value == "" else value
            elif kind == "date":
                trend = [e for e in encs if e.kind == "trend"]
                if trend:
                    value = date_serial(trend[0].origin or "1899-12-30") + float(
                        d.X[i, idx[trend[0].name]]
                    )
            else:
                main = [e for e in encs if e.kind in ("number", "flag", "ln")]
                if main:
                    value = float(d.X[i, idx[main[0].name]])
                    if main[0].kind == "ln":
                        value = float(np.exp(value))
            row[source] = value
        rows.append(row)
    return rows


# a Check longer than this is split into a helper cell per source column (the standard sets
# no length, but Excel takes at most 8,192 characters, [MS-OI29500] 2.1.1085; a helper
# stays far below that)
_CHECK_IN_ONE_CELL = 2000
_MISSING_WORDS = ",".join(f'"{w}"' for w in sorted(MISSING_WORDS))
# characters of a row's Check shown at most (all its messages fit many times over)
_CHECK_SHOWN = 32_000


def _miss_expr(enc, fill_ref: str, src: str) -> str:
    """A cell that is not a usable value: the stored fill when it counts as missing (blank,
    an error value, a typed placeholder such as "n/a", as intake reads it), else no
    prediction: text such as "12.5 kg" is not guessed at, the check column names it."""
    if enc.fill is None:
        return "NA()"
    return f"IF({_missing_cell_test(src)},{fill_ref},NA())"


def _missing_cell_test(src: str, labels: bool = False) -> str:
    """Formula text, true for a cell intake reads as missing: blank, an error value, spaces,
    a placeholder word. Compared with = against the words, not MATCH: MATCH takes "?" and "*"
    as wildcards in some spreadsheet programs. ``labels``: a category's cell, where intake
    keeps every word as a label ("none" is a promotion level, not a missing value)."""
    if labels:
        return f"OR(ISBLANK({src}),ISERROR({src}),IF(ISTEXT({src}),LEN(TRIM({src}))=0,FALSE))"
    return (
        f"OR(ISBLANK({src}),ISERROR({src}),IF(ISTEXT({src}),OR(LEN(TRIM({src}))=0,"
        f"OR(LOWER(TRIM({src}))={{{_MISSING_WORDS}}})),FALSE))"
    )


def _formula(model: ScoringModel, j: int, src: str, cells: dict[str, str]) -> str:
    """The encoded-value formula of model column j for the source cell reference ``src``."""
    enc = model.encodings[j]
    kind = source_kind(model.encodings, enc.source)
    level, fill, origin = cells["level"], cells["fill"], cells["origin"]
    miss = _miss_expr(enc, fill, src)
    yes, no = flag_tokens()
    low = f"LOWER(TRIM({src}))"
    yes_test = "OR(" + ",".join(f'{low}="{t}"' for t in yes) + ")"
    no_test = "OR(" + ",".join(f'{low}="{t}"' for t in no) + ")"
    if enc.kind == "number":
        return f"IF(ISNUMBER({src}),{src},{miss})"
    if enc.kind == "ln":  # a number at or below 0 has no log: no prediction (the check says why)
        return f"IF(ISNUMBER({src}),IF({src}>0,LN({src}),NA()),{miss})"
    if enc.kind == "flag":
        # a number other than 0 or 1 is no yes/no value (2 is not "yes"): as `tamis score`
        return (
            f"IF(ISNUMBER({src}),IF({src}=1,1,IF({src}=0,0,{miss})),IF(ISLOGICAL({src}),"
            f"IF({src},1,0),IF(ISERROR({src}),{miss},IF({yes_test},1,IF({no_test},0,{miss})))))"
        )
    if enc.kind == "level":
        blank_known = "" in model.category_levels.get(enc.source, [])
        blank = f"IF(LEN({level})=0,1,0)" if blank_known else "NA()"
        # TRIM: spaces around a label, or doubled inside it, count as intake counts them;
        # LOWER: letter case does not count either (intake reads "east" as "East")
        return (
            f"IF(OR(ISBLANK({src}),ISERROR({src})),{blank},"
            f"IF(EXACT(LOWER(TRIM({src})),LOWER({level})),1,0))"
        )
    if enc.kind == "trend":
        return f"IF(ISNUMBER({src}),INT({src})-{origin},{miss})"
    if enc.kind == "month":
        return f"IF(ISNUMBER({src}),IF(MONTH({src})={level},1,0),0)"
    if enc.kind == "weekday":
        return f"IF(ISNUMBER({src}),IF(WEEKDAY({src},2)={level},1,0),0)"
    if enc.kind == "missing":
        if kind == "category":
            return f"IF(OR(ISBLANK({src}),ISERROR({src})),1,0)"
        if kind == "flag":
            return (
                f"IF(ISNUMBER({src}),0,IF(ISLOGICAL({src}),0,IF(ISERROR({src}),1,"
                f"IF(OR({yes_test},{no_test}),0,1))))"
            )
        return f"IF(ISNUMBER({src}),0,1)"
    raise ValueError(enc.kind)


def _fast_formulas(ws) -> None:
    """Skip xlsxwriter's per-formula scan for newer functions (about 30 regular expressions per
    cell): our formulas use none of them, and the scan dominates the time of this sheet."""
    if hasattr(ws, "_prepare_formula"):
        ws._prepare_formula = lambda formula, expand_future_functions=False: formula.lstrip("=")


def write(
    book,
    ws,
    result,
    model: ScoringModel,
    fm: Formats,
    *,
    n_blank: int | None = None,
    date1904: bool = False,
) -> ScoringLayout:
    """date1904: the sheet goes into a workbook of the 1904 date system, so the date serial
    numbers written (origins, example dates) count from there; the formulas need no change."""
    # examples and the model's own arithmetic stay in 1900 serials; only written cells shift
    serial_shift = DAYS_1900_TO_1904 if date1904 else 0
    encs = model.encodings
    sources = model.sources
    m, k = len(sources), len(encs)
    halfwidth = model.range_halfwidth
    pred_col = m
    # the prediction's range beside it, when the model has a cross-validated error
    low_col, high_col = (m + 1, m + 2) if halfwidth is not None else (None, None)
    check_col = m + 3 if halfwidth is not None else m + 1
    label_col = check_col + 1
    enc0 = check_col + 2
    cat_sources = [s for s in sources if source_kind(encs, s) == "category"]
    examples = example_rows(result, model)
    if n_blank is None:
        n_blank = int(max(20, min(200, 20_000 // (k + m + 2))))

    _fast_formulas(ws)
    # a column as wide as its heading (within reason); the first is widened further below to
    # fit the labels of the top block (centre, intercept, half-width)
    for s_i, s in enumerate(sources or [""]):
        ws.set_column(s_i, s_i, min(30, max(14, len(s) + 2)))
    ws.set_column(pred_col, pred_col, 16)
    if low_col is not None and high_col is not None:
        ws.set_column(low_col, high_col, 14)
    ws.set_column(check_col, check_col, 22)
    ws.set_column(label_col, label_col, 26)
    if k:
        ws.set_column(enc0, enc0 + k - 1, 14)

    top = [
        ("Scoring", None),
        (
            "Type or paste new rows under the headings of the shaded block, one row per case: only "
            "the columns the model uses, in this block's order (from a sheet with other columns, "
            f"paste column by column). Formulas are ready in the {n_blank} rows below the examples; "
            "for more rows, copy the last row down.",
            None,
        ),
        (
            "Only the columns the model uses are needed. Means, standard deviations and coefficients "
            "are read from the cells above the encoded columns, so the formulas stay short and auditable. "
            "A row with no prediction (#N/A) has the reason in its Check cell: text where a number, "
            "date or yes/no belongs (type the value itself), a level the model never saw, an empty "
            "cell with no stored fill. The Check cell also names empty cells that took the stored "
            "fill and values outside the range the model was fitted on.",
            None,
        ),
        ("Model used", model.method),
        (
            "Why this model",
            scoring_reason(result),
        ),
        (
            "Centre: the ln-scale prediction at the column means"
            if model.response_log
            else "Centre: the prediction at the column means",
            model.centre,
        ),
        (
            "Intercept: on the ln scale, with the columns in their own units"
            if model.response_log
            else "Intercept: in original units",
            model.intercept,
        ),
        (
            (
                f"Smearing factor: the model explains ln({model.response}); the prediction in "
                f"{model.response}'s units is EXP(centre + sum) times this factor (Duan 1983)",
                model.smearing,
            )
            if model.response_log
            else (f"Response predicted: {model.response}", None)
        ),
    ]
    if halfwidth is not None:
        top.append(
            (
                "Half-width of the 95% range: the prediction +- this, 1.96 x the "
                "cross-validated root mean squared error"
                + (" (ln scale; the ends are EXP of ln-scale ends)" if model.response_log else ""),
                halfwidth,
            )
        )
    labels = [
        label.split(": ", 1)[0]
        for label, value in top
        if value is not None and not isinstance(value, str)
    ]
    first_width = max([len(sources[0]) + 2 if sources else 0, 14, *(len(x) + 1 for x in labels)])
    ws.set_column(0, 0, min(first_width, 60))
    row = 0
    param_top = 8
    n_param = len(_PARAM_ROWS) + len(cat_sources)
    last_param_row = param_top + n_param - 1
    header = last_param_row + 2
    first = header + 1
    centre_cell = cell_ref(5, 1, True, True)
    smearing_cell = cell_ref(7, 1, True, True)
    halfwidth_cell = cell_ref(8, 1, True, True)
    # fixed references to parameter rows (absolute row, relative column)
    prow = {name: param_top + i for i, name in enumerate(_PARAM_ROWS)}
    level_rows = {s: param_top + len(_PARAM_ROWS) + i for i, s in enumerate(cat_sources)}

    while row < header:
        if row < len(top):
            label, value = top[row]
            why = ""
            if value is not None and not isinstance(value, str) and ": " in label:
                # a short label beside the number, what it means to the right of it
                label, why = label.split(": ", 1)
            text(
                ws,
                row,
                0,
                label,
                fm.title if row == 0 else fm.label if value is not None else fm.note,
            )
            if isinstance(value, str):
                text(ws, row, 1, value, fm.kept)
            elif value is not None:  # shown to six significant digits; formulas read them all
                number(ws, row, 1, value, fm)
            if why:
                text(ws, row, 2, why[:1].upper() + why[1:], fm.note)
        if param_top <= row <= last_param_row:
            i = row - param_top
            if i < len(_PARAM_ROWS):
                name = _PARAM_ROWS[i]
                text(ws, row, label_col, name, fm.param_label)
                for j, enc in enumerate(encs):
                    c = enc0 + j
                    if name == "model column":
                        text(ws, row, c, enc.name, fm.label)
                    elif name == "source column":
                        shown = enc.source
                        if enc.kind == "product":  # the sources of the two columns multiplied
                            ia, ib = model.factor_indices(enc)
                            shown = f"{encs[ia].source} × {encs[ib].source}"
                        text(ws, row, c, shown, fm.param)
                    elif name == "encoding":
                        text(ws, row, c, enc.kind, fm.param)
                    elif name == "level" and enc.level is not None:
                        if enc.kind in ("month", "weekday"):
                            number(ws, row, c, float(enc.level), fm.param)
                        elif enc.level != "":
                            text(ws, row, c, enc.level, fm.param)
                    elif name == "fill for a missing cell" and enc.fill is not None:
                        number(ws, row, c, enc.fill, fm.param)
                    elif name == "date origin" and enc.kind == "trend" and enc.origin:
                        number(ws, row, c, date_serial(enc.origin) - serial_shift, fm.date)
                    elif name == "mean":
                        number(ws, row, c, model.means[j], fm.param)
                    elif name == "standard deviation":
                        number(ws, row, c, model.sds[j], fm.param)
                    elif name in ("lowest value fitted", "highest value fitted"):
                        bound = model.lows if name.startswith("lowest") else model.highs
                        if bound is not None and math.isfinite(float(bound[j])):
                            fmt = fm.days if enc.kind == "trend" else fm.param
                            number(ws, row, c, float(bound[j]), fmt)
                    elif name == "standardized coefficient":
                        number(ws, row, c, model.std_coefficients[j], fm.param)
                    elif name == "coefficient (original units)":
                        number(ws, row, c, model.coefficients[j], fm.param)
            else:
                s = cat_sources[i - len(_PARAM_ROWS)]
                text(ws, row, label_col, f"known levels of '{s}'", fm.param_label)
                for t, lv in enumerate(model.category_levels.get(s, [])):
                    if lv != "":
                        text(ws, row, enc0 + t, lv, fm.param)
        row += 1

    def ref(name: str, j: int) -> str:
        return cell_ref(prow[name], enc0 + j, True, False)

    mean_rng = (
        f"{cell_ref(prow['mean'], enc0, True, True)}:{cell_ref(prow['mean'], enc0 + k - 1, True, True)}"
        if k
        else ""
    )
    sd_rng = (
        f"{cell_ref(prow['standard deviation'], enc0, True, True)}:{cell_ref(prow['standard deviation'], enc0 + k - 1, True, True)}"
        if k
        else ""
    )
    beta_rng = (
        f"{cell_ref(prow['standardized coefficient'], enc0, True, True)}:{cell_ref(prow['standardized coefficient'], enc0 + k - 1, True, True)}"
        if k
        else ""
    )
    n_rows = len(examples) + n_blank
    # a number or date column's cell holding text counts as missing in the formulas (the fill,
    # or no prediction): the check column says so rather than leaving it silent
    typed_sources = [
        (s_i, kind)
        for s_i, s in enumerate(sources)
        if (kind := source_kind(encs, s)) in ("number", "date")
    ]
    logged_sources = sorted({sources.index(e.source) for e in encs if e.kind == "ln"})
    flag_sources = [s_i for s_i, s in enumerate(sources) if source_kind(encs, s) == "flag"]
    yes_words, no_words = flag_tokens()
    # columns whose empty cell takes the fill stored with the model
    filled_sources = sorted(
        {
            sources.index(e.source)
            for e in encs
            if e.kind in ("number", "ln", "flag", "trend") and e.fill is not None
        }
    )
    # columns whose empty cell the formulas cannot fill (no stored fill; for a category, the
    # blank is not one of its levels): the row gets no prediction
    blank_means_none = sorted(
        {
            sources.index(e.source)
            for e in encs
            if e.kind in ("number", "ln", "flag", "level", "trend")
            and e.fill is None
            and not (e.kind == "level" and "" in model.category_levels.get(e.source, []))
        }
    )

    def empty_test(r: int) -> str:
        """Formula text, true when row r's paste block is empty (no prediction, no check)."""
        if not m:  # a model with no column: a constant
            return "FALSE"
        return f"COUNTA({cell_ref(r, 0, False, True)}:{cell_ref(r, m - 1, False, True)})=0"

    def check_parts(r: int) -> dict[int, list[str]]:
        """Row r's check: why a row has no prediction (an unseen level, a cell the formulas
        cannot read, no value where nothing is stored to fill it) and what to look at in one
        that has (a filled cell, a month or value outside what the model was fitted on); a
        list of message formulas per source column."""
        empty = empty_test(r)
        by_source: dict[int, list[str]] = {}

        def say(s_i: int, formula: str) -> None:
            by_source.setdefault(s_i, []).append(formula)

        for s in cat_sources:
            s_i = sources.index(s)
            cell = cell_ref(r, s_i, False, True)
            lr = level_rows[s]
            n_lv = max(len(model.category_levels.get(s, [])), 1)
            lv_rng = f"{cell_ref(lr, enc0, True, True)}:{cell_ref(lr, enc0 + n_lv - 1, True, True)}"
            say(
                s_i,
                f'IF(OR(ISBLANK({cell}),ISERROR({cell})),"",IF(SUMPRODUCT(--EXACT(LOWER(TRIM({cell})),LOWER({lv_rng})))=0,'
                f'"; unseen level in {col_name(s_i)}",""))',
            )
        for s_i in blank_means_none:  # no value and no stored fill: no prediction, say why
            cell = cell_ref(r, s_i, False, True)
            missing = _missing_cell_test(cell, labels=sources[s_i] in cat_sources)
            say(
                s_i,
                f'IF(AND(NOT({empty}),{missing}),"; no value in {col_name(s_i)}","")',
            )
        for s_i, kind in typed_sources:  # text typed where a number or date belongs
            cell = cell_ref(r, s_i, False, True)
            say(
                s_i,
                f'IF(OR(ISNUMBER({cell}),{_missing_cell_test(cell)}),"",'
                f'"; not a {kind} in {col_name(s_i)} (type it as a {kind})")',
            )
        for s_i in flag_sources:  # a word the yes/no formulas do not know
            cell = cell_ref(r, s_i, False, True)
            say(
                s_i,
                f'IF(ISNUMBER({cell}),IF(OR({cell}=0,{cell}=1),"","; not yes/no in '
                f'{col_name(s_i)} (0 or 1)"),'
                f'IF(OR(ISLOGICAL({cell}),{_missing_cell_test(cell)}),"",'
                f'IF(OR(LOWER(TRIM({cell}))={{{flag_words}}}),"",'
                f'"; not yes/no in {col_name(s_i)}")))',
            )
        for s_i in filled_sources:  # an empty cell took the stored fill: say so
            cell = cell_ref(r, s_i, False, True)
            say(
                s_i,
                f"IF(AND(NOT({empty}),{_missing_cell_test(cell)}),"
                f'"; {col_name(s_i)} empty: the stored fill used","")',
            )
        for source, part, seen in model.seen_date_parts():  # a month no fitted row was in
            s_i = sources.index(source)
            cell = cell_ref(r, s_i, False, True)
            fn = f"MONTH({cell})" if part == "month" else f"WEEKDAY({cell},2)"
            known = ",".join(str(v) for v in sorted(seen))
            say(
                s_i,
                f'IF(ISNUMBER({cell}),IF(OR({fn}={{{known}}}),"",'
                f'"; {part} not seen in fitting in {col_name(s_i)}"),"")',
            )
        for s_i in logged_sources:  # a number with no log
            cell = cell_ref(r, s_i, False, True)
            say(
                s_i,
                f'IF(ISNUMBER({cell}),IF({cell}<=0,"; not above 0 (no ln) in {col_name(s_i)}",""),"")',
            )
        for j, enc in enumerate(encs):
            lows, highs = model.lows, model.highs
            if enc.kind not in ("number", "trend", "ln") or lows is None or highs is None:
                continue
            if not (math.isfinite(float(lows[j])) and math.isfinite(float(highs[j]))):
                continue
            e_cell = cell_ref(r, enc0 + j)
            lo, hi = ref("lowest value fitted", j), ref("highest value fitted", j)
            s_i = sources.index(enc.source)
            say(
                s_i,
                f"IF(ISNUMBER({e_cell}),IF(OR({e_cell}<{lo},{e_cell}>{hi}),"
                f'"; outside the fitted range in {col_name(s_i)}",""),"")',
            )
        return by_source

    flag_words = ",".join(f'"{t}"' for t in (*yes_words, *no_words))
    first_parts = check_parts(first)
    # a check too long for one cell (spreadsheet programs cap a formula at 8,192 characters)
    # is split: one helper cell per source column to the right, the Check cell joins them
    check_helpers = (
        len("&".join(f for parts in first_parts.values() for f in parts)) > _CHECK_IN_ONE_CELL
    )
    check0 = enc0 + k + 1
    # header row
    heading_row(
        ws,
        header,
        [
            *sources,
            model.prediction_label,
            RANGE_LOW,
            "Check",
            *(f"{e.name} (model)" for e in encs),
        ],
        14,
    )
    for s_i, s in enumerate(sources):
        text(ws, header, s_i, s, fm.heading)
    text(ws, header, pred_col, model.prediction_label, fm.heading)
    if low_col is not None and high_col is not None:
        text(ws, header, low_col, RANGE_LOW, fm.heading)
        text(ws, header, high_col, RANGE_HIGH, fm.heading)
    text(ws, header, check_col, "Check", fm.heading)
    text(ws, header, label_col, "(encoded values below)", fm.note)
    for j, enc in enumerate(encs):
        text(ws, header, enc0 + j, f"{enc.name} (model)", fm.heading)

    if check_helpers:
        for s_i in sorted(first_parts):
            text(ws, header, check0 + s_i, f"check: {sources[s_i]}", fm.param_label)
    # predictions and their range's ends read alike, to six significant digits of a typical one
    shown_prediction = fm.shown_to(model.typical_size, "prediction")
    shown_end = fm.shown_to(model.typical_size)
    for t in range(n_rows):
        r = first + t
        ex = examples[t] if t < len(examples) else None
        empty = empty_test(r)
        encoded: list[float] = []
        for s_i, s in enumerate(sources):
            is_date = source_kind(encs, s) == "date"
            fmt = fm.paste_date if is_date else fm.paste
            v = None if ex is None else ex.get(s)
            if v is None:
                ws.write_blank(r, s_i, None, fmt)
            elif isinstance(v, str):
                text(ws, r, s_i, v, fmt)
            else:
                number(ws, r, s_i, float(v) - (serial_shift if is_date else 0), fmt)
        values = model.row_values(ex) if ex is not None else []
        for j, enc in enumerate(encs):
            if enc.kind == "product":  # the two encoded cells it multiplies, on this row
                ia, ib = model.factor_indices(enc)
                f = f"{cell_ref(r, enc0 + ia)}*{cell_ref(r, enc0 + ib)}"
            else:
                f = _formula(
                    model,
                    j,
                    cell_ref(r, sources.index(enc.source), False, True),
                    {
                        "level": ref("level", j),
                        "fill": ref("fill for a missing cell", j),
                        "origin": ref("date origin", j),
                    },
                )
            if ex is not None:
                val = values[j]
                encoded.append(val)
                cached: object = "#N/A" if math.isnan(val) else val
            else:
                cached = ""
            ws.write_formula(
                r,
                enc0 + j,
                f'=IF({empty},"",{f})',
                fm.days if enc.kind == "trend" else fm.number,
                cached,
            )
        if k:
            body = f"{centre_cell}+SUMPRODUCT({beta_rng},({cell_ref(r, enc0)}:{cell_ref(r, enc0 + k - 1)}-{mean_rng})/{sd_rng})"
        else:
            body = centre_cell
        if model.response_log:
            body = f"EXP({body})*{smearing_cell}"
        if ex is not None:
            pv = model.sheet_prediction(encoded)
            pcached: object = "#N/A" if not np.isfinite(pv) else pv
        else:
            pcached = ""
        check_cell = cell_ref(r, check_col)
        if cat_sources:  # a level the model never saw has no coefficient: no prediction
            body = f'IF({check_cell}<>"",IF(ISERROR(SEARCH("unseen",{check_cell})),{body},NA()),{body})'
        ws.write_formula(r, pred_col, f'=IF({empty},"",{body})', shown_prediction, pcached)
        if low_col is not None and high_col is not None and halfwidth is not None:
            p_cell = cell_ref(r, pred_col)
            # back to the linear prediction, then its ends (the ln scale's through EXP)
            linear = f"LN({p_cell}/{smearing_cell})" if model.response_log else p_cell
            pv_linear = (
                math.log(pcached / model.smearing)
                if isinstance(pcached, float) and model.response_log and pcached > 0
                else pcached
            )
            for c, sign in ((low_col, -1), (high_col, 1)):
                end = f"{linear}{'-' if sign < 0 else '+'}{halfwidth_cell}"
                if model.response_log:
                    end = f"EXP({end})"
                ecached: object = ""
                if isinstance(pv_linear, float):
                    ev = pv_linear + sign * halfwidth
                    ecached = math.exp(ev) if model.response_log else ev
                ws.write_formula(r, c, f'=IF(ISNUMBER({p_cell}),{end},"")', shown_end, ecached)
        by_source = check_parts(r)
        # each message starts with "; ": MID from the third character drops the first one
        whole = "&".join(f for s_i in sorted(by_source) for f in by_source[s_i])
        if whole and not check_helpers:
            ws.write_formula(r, check_col, f"=MID({whole},3,{_CHECK_SHOWN})", None, "")
        elif whole:
            for s_i, parts in sorted(by_source.items()):
                ws.write_formula(r, check0 + s_i, "=" + "&".join(parts), fm.param, "")
            joined = "&".join(cell_ref(r, check0 + s_i) for s_i in sorted(by_source))
            ws.write_formula(r, check_col, f"=MID({joined},3,{_CHECK_SHOWN})", None, "")
    ws.freeze_panes(first, 0)
    return ScoringLayout(
        header_row=header,
        first_data_row=first,
        n_rows=n_rows,
        n_examples=len(examples),
        prediction_col=pred_col,
        low_col=low_col,
        check_col=check_col,
        first_encoded_col=enc0,
        sources=sources,
        centre_cell=centre_cell,
    )
