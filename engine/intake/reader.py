"""Turn one sheet (or CSV file) into a Table: find the headings, skip blank rows, type columns.

The file is opened for reading only; nothing is ever written back to it.
"""

from __future__ import annotations

__all__ = ["list_sheets", "read_table"]

from collections import Counter
from collections.abc import Mapping
from itertools import chain
from pathlib import Path

import numpy as np

from engine.errors import InputProblem, Place
from engine.intake.cells import (
    cell_name,
    column_letter,
    counted,
    format_heading,
    is_error_text,
    numbered_name,
    parse_number_text,
    repeated_headings_warning,
    text_number_convention,
)
from engine.intake.classify import UNCACHED, classify_column, worth_a_warning
from engine.intake.delimited import read_delimited
from engine.intake.far_out import far_values, screened
from engine.intake.header import cell_key, detect_header_row, join_sub_heading, sub_heading_row
from engine.intake.package import PackageFacts, counts_from_1904, guard_parts, scan_sheet
from engine.intake.similarity import mark_near_duplicates
from engine.intake.table import Column, ColumnKind, SheetInfo, Table
from engine.intake.workbook import (
    check_path,
    is_text_table,
    open_workbook,
    read_grid,
    sheet_infos,
    sniff_format,
)
from engine.progress import Progress, silent

NAMED_CELLS = 5  # how many cells a warning names before it gives only a count


def _listed(items: list) -> str:
    """The first NAMED_CELLS items, then how many more: "5, 9, 12 and 4 more"."""
    head = ", ".join(map(str, items[:NAMED_CELLS]))
    return head + (f" and {len(items) - NAMED_CELLS} more" if len(items) > NAMED_CELLS else "")


def list_sheets(path: str | Path) -> list[SheetInfo]:
    """The sheets of a workbook in order, hidden ones flagged; a CSV file has one sheet."""
    path = Path(path)
    check_path(path)
    if is_text_table(path):
        return [SheetInfo(name=path.stem, index=0)]
    fmt = sniff_format(path)
    if fmt != "xls":
        guard_parts(path)
    book = open_workbook(path, fmt)
    try:
        return sheet_infos(book)
    finally:
        book.close()


def _choose_sheet(path: Path, infos: list[SheetInfo], sheet: str | None) -> str:
    place = Place(file=str(path))
    if not infos:
        raise InputProblem(f"file '{path}' has no worksheets", place)
    if sheet is None:
        visible = [s for s in infos if not s.hidden]
        return (visible or infos)[0].name
    names = [s.name for s in infos]
    if sheet in names:
        return sheet
    folded = [n for n in names if n.strip().casefold() == sheet.strip().casefold()]
    if len(folded) == 1:
        return folded[0]
    listed = ", ".join(f"'{n}'" + (" (hidden)" if s.hidden else "") for n, s in zip(names, infos))
    raise InputProblem(
        f"file '{path}' has no sheet named '{sheet}'; its sheets are: {listed}",
        Place(file=str(path), sheet=sheet),
    )


def read_table(
    path: str | Path,
    sheet: str | None = None,
    header_row: int | None = None,
    progress: Progress | None = None,
    fitted_ranges: Mapping[str, tuple[float, float]] | None = None,
) -> Table:
    """Read one sheet as typed columns with a report (see engine.intake.table).

    `sheet` None takes the first visible sheet; `header_row` (1-based sheet row) None detects
    the heading row. Raises InputProblem naming the file, sheet, row or cell when the input
    cannot be used. `fitted_ranges`: when new rows are read for a fitted model, each number
    column's (lowest, highest) value in the fitted rows, by column name: percentages are then
    read on the model's scale (see classify_column).
    """
    path = Path(path)
    progress = progress or silent()
    check_path(path)
    progress.step(0.0, "opening the file")
    if is_text_table(path):
        text = read_delimited(path)
        if sheet is not None and sheet.strip().casefold() != path.stem.casefold():
            raise InputProblem(
                f"file '{path}' is a CSV file with a single sheet, '{path.stem}'; "
                f"there is no sheet '{sheet}'",
                Place(file=str(path), sheet=sheet),
            )
        infos = [SheetInfo(name=path.stem, index=0)]
        rows: list[list] = text.rows
        name, fmt = path.stem, "csv"
        decimal, day_first = text.decimal, text.decimal == ","
        facts_source = None
        field_counts: list[int] | None = text.field_counts
    else:
        fmt = sniff_format(path)
        if fmt != "xls":
            guard_parts(path)
        book = open_workbook(path, fmt)
        try:
            infos = sheet_infos(book)
            name = _choose_sheet(path, infos, sheet)
            progress.step(0.05, f"reading sheet '{name}'")
            rows = read_grid(book, name, path)
            if sheet is None and header_row is None:
                # a cover page or notes first: the first sheet after it that holds a table
                return _first_table(path, fmt, book, infos, name, rows, progress, fitted_ranges)
        finally:
            book.close()
        decimal, day_first = ".", False
        facts_source = fmt
        field_counts = None
    progress.step(0.5, "typing the columns")
    table = _build_table(
        path,
        fmt,
        name,
        infos,
        rows,
        header_row,
        decimal,
        day_first,
        facts_source,
        progress,
        field_counts=field_counts,
        fitted_ranges=fitted_ranges,
    )
    if fmt == "csv":
        shown = {"\t": "tab", ",": "comma", ";": "semicolon", "|": "vertical bar"}
        table.reading = {
            "encoding": text.encoding,
            "delimiter": shown.get(text.delimiter, repr(text.delimiter)),
            "decimal mark": "comma" if text.decimal == "," else "point",
        }
    progress.step(1.0, "done")
    return table


# what a sheet must hold to be taken for the data: a response and a candidate, a few rows
_TABLE_COLUMNS = 2
_TABLE_ROWS = 3


def _first_table(path, fmt, book, infos, name, rows, progress, fitted_ranges=None) -> Table:
    """The first visible sheet ``name`` (its cells ``rows``) read as a table; when it holds
    none (a cover page, notes), the first visible sheet after it that does, with a warning
    saying so. When no sheet does, the first one's table or its own problem."""
    problem: InputProblem | None = None
    first: Table | None = None
    try:
        first = _build_table(
            path, fmt, name, infos, rows, None, ".", False, fmt, progress,
            fitted_ranges=fitted_ranges,
        )  # fmt: skip
    except InputProblem as exc:
        problem = exc
    visible = [s.name for s in infos if not s.hidden]
    if first is not None and (_holds_table(first) or name not in visible[:1]):
        return _done(first, progress)  # a table, or every sheet hidden (the first one read)
    for other in visible[1:]:
        try:
            grid = read_grid(book, other, path)
            table = _build_table(
                path, fmt, other, infos, grid, None, ".", False, fmt, silent(),
                fitted_ranges=fitted_ranges,
            )  # fmt: skip
        except InputProblem:
            continue
        if _holds_table(table):
            table.warnings.insert(
                0,
                f"sheet '{other}' read: the first sheet, '{name}', holds no table (a cover "
                "page or notes); choose another sheet if this is not the one",
            )
            return _done(table, progress)
    if first is None:
        assert problem is not None
        raise problem
    return _done(first, progress)


def _holds_table(table: Table) -> bool:
    return len(table.columns) >= _TABLE_COLUMNS and table.n_rows >= _TABLE_ROWS


def _done(table: Table, progress: Progress) -> Table:
    progress.step(1.0, "done")
    return table


def _build_table(
    path: Path,
    fmt: str,
    sheet: str,
    infos: list[SheetInfo],
    rows: list[list],
    header_row: int | None,
    decimal: str,
    day_first: bool,
    facts_source: str | None,
    progress: Progress,
    field_counts: list[int] | None = None,
    fitted_ranges: Mapping[str, tuple[float, float]] | None = None,
) -> Table:
    place = Place(file=str(path), sheet=sheet)
    where = place.describe()
    width = max((len(r) for r in rows), default=0)
    if width == 0 or not any(not (isinstance(v, str) and not v.strip()) for r in rows for v in r):
        raise InputProblem(
            f"{where}: the sheet is empty; choose the sheet that holds the data", place
        )
    if any(len(r) != width for r in rows):
        rows = [list(r) + [""] * (width - len(r)) for r in rows]

    if header_row is None:
        h = detect_header_row(rows)
        assert h is not None  # the sheet is not empty
    else:
        if header_row < 1 or header_row > len(rows):
            raise InputProblem(
                f"{where}: header row {header_row} is outside the sheet, whose last row with "
                f"anything in it is {len(rows)}",
                Place(file=str(path), sheet=sheet, row=header_row),
            )
        h = header_row - 1
        if all(isinstance(v, str) and not v.strip() for v in rows[h]):
            raise InputProblem(
                f"{where}: row {header_row} is empty, so it cannot hold the headings; "
                "give the row number where the column headings are",
                Place(file=str(path), sheet=sheet, row=header_row),
            )

    headings = [format_heading(v) for v in rows[h]]
    warnings: list[str] = []
    if h > 0:
        headings = _with_group_labels(
            headings, [format_heading(v) for v in rows[h - 1]], h, warnings
        )
    # d: the index of the row just above the data (the headings, or the sub-headings under
    # them); data row i is sheet row i + d + 2
    d = h
    written = list(headings)  # the heading row's own text, before any sub-heading joins it
    if sub_heading_row(rows, h):
        d = h + 1
        subs = [format_heading(v) for v in rows[d]]
        joined = [join_sub_heading(x, u) for x, u in zip(headings, subs)]
        shown = ", ".join(f"'{u}'" for u in subs if u)
        example = next(x for x, u in zip(joined, subs) if u)
        warnings.append(
            f"row {d + 1} under the headings holds sub-headings or units ({shown}); they are "
            f"added to the column names (e.g. '{example}') and the row is not read as data"
        )
        headings = joined
    data_rows = rows[d + 1 :]
    if field_counts is not None:
        _ragged_warning(rows, field_counts, h, warnings)
    block: np.ndarray | None = None
    empty: np.ndarray | None = None
    facts: PackageFacts | None = None
    numeric_cols: np.ndarray | None = None
    if (
        fmt != "csv"
        and data_rows
        and set(map(type, chain.from_iterable(data_rows))) <= {float, int}
    ):
        # Every cell below the headings is a number: nothing missing, no blank row, and the
        # whole block converts in one call.
        numeric_cols = np.ascontiguousarray(np.array(data_rows, dtype=np.float64).T)
        row_numbers = np.arange(d + 2, d + 2 + len(data_rows), dtype=np.int64)
        blank_skipped = 0
        keep_cols = list(range(width))
    else:
        block = np.empty((len(data_rows), width), dtype=object)
        for i, r in enumerate(data_rows):
            block[i, :] = r
        empty = np.asarray(block == "", dtype=bool)
        if empty.shape != block.shape:  # numpy answers a scalar when it cannot compare elementwise
            empty = np.zeros(block.shape, dtype=bool)
        if facts_source in ("xlsx", "xlsm", "ods", "xls") and empty.any():
            facts = scan_sheet(path, facts_source, sheet)
            _apply_facts(facts, block, empty, d, sheet, warnings)

        row_has: np.ndarray = ~np.asarray(empty.all(axis=1))
        if not row_has.any():
            raise InputProblem(
                f"{where}: the headings are in row {h + 1} but there are no data rows below them",
                Place(file=str(path), sheet=sheet, row=d + 1),
            )
        keep_rows = np.flatnonzero(row_has)
        keep_rows = _without_stray_cells(block, empty, keep_rows, d, fmt, warnings)
        blank_skipped = int(keep_rows[-1] + 1 - keep_rows.size)
        totals = _totals_rows(block, empty, keep_rows)
        if totals:
            keep_rows = keep_rows[: -len(totals)]
            for i, (j, label, kind) in totals:
                row = i + d + 2
                cell = f"column {j + 1}" if fmt == "csv" else f"cell {column_letter(j)}{row}"
                shown = label if len(label) <= 60 else label[:57] + "..."
                warnings.append(
                    f"row {row} left out: it looks like a {kind} row ('{shown}' in {cell}), "
                    "not data"
                )
        keep_rows = _without_repeated_headings(
            block, empty, keep_rows, rows[h + 1 : d + 1] + [rows[h]], d, warnings
        )
        block = block[keep_rows]
        empty = empty[keep_rows]
        if fmt != "csv":  # a text file's mark was decided for the whole file when it was read
            decimal = _sheet_decimal_mark(block, decimal)
        row_numbers = (keep_rows + d + 2).astype(np.int64)
        col_has: np.ndarray = ~np.asarray(empty.all(axis=0))
        keep_cols = [j for j in range(width) if headings[j] or col_has[j]]
        if fmt != "csv":
            _side_by_side_warning(keep_cols, sheet, warnings)

    if facts_source in ("xlsx", "xlsm", "ods", "xls"):
        if facts is None:  # no full scan was needed: look for hidden rows and columns only
            facts = scan_sheet(path, facts_source, sheet, hidden_only=True)
        _hidden_warning(facts, d, len(data_rows), width, sheet, warnings)
        if facts.unread:
            warnings.append(facts.unread)

    columns: list[Column] = []
    # a plain number among dates is read as its day only where serial numbers count from 1900
    serial_dates = fmt != "csv" and not counts_from_1904(path, facts_source or "")
    seen: dict[str, str] = {}  # casefolded name -> first column's name
    taken: set[str] = set()
    unnamed: list[str] = []
    renamed: list[str] = []  # a heading used again: the later column's letter and new name
    for k, j in enumerate(keep_cols):
        letter = str(j + 1) if fmt == "csv" else column_letter(j)
        heading = headings[j]
        base = heading or (f"column {letter}")
        if not heading:
            unnamed.append(letter)
        dup_of = seen.get(base.casefold())
        name = numbered_name(base, taken)
        if dup_of is None:
            seen[base.casefold()] = base
        taken.add(name.casefold())
        if numeric_cols is not None:
            cells = numeric_cols[j]
        else:
            assert block is not None and empty is not None
            cells = np.where(empty[:, j], "", block[:, j])

        col = classify_column(
            cells,
            name=name,
            heading=written[j],
            letter=letter,
            row_numbers=row_numbers,
            decimal=decimal,
            day_first=day_first,
            from_text_file=fmt == "csv",
            serial_dates=serial_dates,
            fitted_range=(fitted_ranges or {}).get(name),
        )
        if col.kind is ColumnKind.NUMBER and screened(col.notes):
            far = far_values(col.values)
            if len(far):
                named = ", ".join(
                    f"{cell_name(letter, int(row_numbers[i]))} ({col.values[i]:.6g})"
                    for i in far[:3]
                )
                col.notes.append(
                    f"{len(far)} value{'s' if len(far) > 1 else ''} far outside the rest of the "
                    f"column (beyond Tukey's outer fences: {named}{' ...' if len(far) > 3 else ''});"
                    " a slipped decimal point or another unit looks like this"
                )
        for note in col.notes:  # a value that depends on the decimal mark is worth a look
            if worth_a_warning(note):
                warnings.append(f"column '{name}' ({letter}): {note}")
        if dup_of is not None:
            col.duplicate_of = dup_of
            col.notes.insert(
                0, f"heading '{base}' is also used by an earlier column; renamed '{name}'"
            )
            renamed.append(f"{'column ' if fmt == 'csv' else ''}{letter} '{name}'")
        columns.append(col)
        if k % 8 == 7:
            progress.step(
                0.5 + 0.4 * (k + 1) / len(keep_cols), f"typed {k + 1} of {len(keep_cols)} columns"
            )

    if renamed:
        warnings.append(repeated_headings_warning(renamed, NAMED_CELLS))
    if unnamed:
        shown = ", ".join(unnamed[:NAMED_CELLS]) + (" ..." if len(unnamed) > NAMED_CELLS else "")
        warnings.append(
            f"{len(unnamed)} column{'s' if len(unnamed) > 1 else ''} with values but no heading in "
            f"row {h + 1} ({shown}) {'are' if len(unnamed) > 1 else 'is'} named after {'their' if len(unnamed) > 1 else 'its'} position"
        )
    progress.step(0.92, "looking for repeated columns")
    mark_near_duplicates(columns)
    return Table(
        source=path,
        sheet=sheet,
        sheets=infos,
        header_row=h + 1,
        columns=columns,
        row_numbers=row_numbers,
        blank_rows_skipped=blank_skipped,
        warnings=warnings,
        file_format=fmt,
    )


# words that label a totals row at the foot of a table (common spreadsheet practice, in the
# languages Tamis's users write headings in)
_TOTAL_WORDS = frozenset(
    """total totals subtotal sum summe gesamt gesamtsumme zwischensumme totaal somme suma
    totale totalt yhteensä razem celkem""".split()
)
# whole labels of a summary row under the data (an average, a spread...): a label, not a word
# in a name ("Max Weber" stays data)
_SUMMARY_LABELS = frozenset(
    """average averages mean avg median min max minimum maximum count std stdev sd
    durchschnitt mittelwert moyenne promedio media gemiddelde keskiarvo średnia průměr medel
    gennemsnit gjennomsnitt""".split()
) | {"std dev", "std. dev", "standard deviation", "std deviation"}
# at most this many trailing rows are looked at (a subtotal, a grand total, an average...)
_TOTALS_AT_FOOT = 6


def _is_total_label(value: object) -> bool:
    if not isinstance(value, str):
        return False
    label = value.strip().casefold().rstrip(":.").strip()
    words = label.split()
    return bool(words) and (
        words[-1] in _TOTAL_WORDS
        or words[0] in _TOTAL_WORDS
        or label == "grand total"
        or " ".join(words) in _SUMMARY_LABELS
    )


def _is_text(value: object) -> bool:
    """A cell holding words, not a number (numbers stored as text count as numbers, as do
    error codes and formulas written out as text)."""
    if not isinstance(value, str) or is_error_text(value) or value.lstrip().startswith("="):
        return False
    return parse_number_text(value) is None and parse_number_text(value, ",") is None


# cells looked at to choose a sheet's decimal mark (numbers written as text)
_MARK_SAMPLE_CELLS = 200_000


def _sheet_decimal_mark(block: np.ndarray, default: str) -> str:
    """The decimal mark most texts of the sheet need ("0,325", "1.234,5": comma), used for
    a column whose own texts read either way ("1,234"); ``default`` when none tells."""
    rows = max(1, _MARK_SAMPLE_CELLS // max(1, block.shape[1]))
    texts = {v for v in block[:rows].ravel().tolist() if type(v) is str and v}
    return text_number_convention(list(texts), default=default)


def _totals_rows(
    block: np.ndarray, empty: np.ndarray, keep_rows: np.ndarray
) -> list[tuple[int, tuple[int, str, str]]]:
    """The trailing non-blank rows that label themselves as totals or summaries ("Total",
    "Summe", "Average", ...), or hold one note alone: [(row index in the sheet part below
    the headings, (column, label, "totals or summary" / "note")), ...], topmost first.

    A row counts when one of its text cells is such a label, no row above uses that label in
    the same column (a category that happens to be called "Total" stays data), its other
    cells hold numbers or nothing (no other text, as data rows with categories have), and
    only such rows follow it. Summed into the data, a totals row would be one huge outlier.
    """
    found: list[tuple[int, tuple[int, str, str]]] = []
    body = keep_rows
    for back in range(1, min(_TOTALS_AT_FOOT, body.size - 3) + 1):  # leave 3 rows of data
        i = int(body[-back])
        label = None
        filled = np.flatnonzero(~empty[i])
        if block.shape[1] >= 3 and filled.size == 1 and _is_note(block[i, filled[0]]):
            # one sentence alone under a table of three or more columns: a note, not data
            j = int(filled[0])
            above = block[body[:-back], j]
            text = str(block[i, j]).strip()
            if not any(isinstance(a, str) and a.strip() == text for a in above):
                found.insert(0, (i, (j, text, "note")))
                continue
        for j in range(block.shape[1]):
            v = block[i, j]
            if empty[i, j] or not _is_total_label(v):
                continue
            above = block[body[:-back], j]
            if not any(
                isinstance(a, str) and a.strip().casefold() == v.strip().casefold() for a in above
            ):
                label = (j, v.strip(), "totals or summary")
                break
        if label is None or any(
            k != label[0] and not empty[i, k] and _is_text(block[i, k])
            for k in range(block.shape[1])
        ):
            break
        found.insert(0, (i, label))
    return found


def _is_note(value: object) -> bool:
    """Text of several words (a remark, a source line, "Exported rows: 30")."""
    return isinstance(value, str) and _is_text(value) and len(value.split()) >= 2


def _with_group_labels(
    headings: list[str], above: list[str], h: int, warnings: list[str]
) -> list[str]:
    """Headings under a row of group labels (two heading rows): a heading that repeats
    ("mean", "sd" under each of several measures) takes the label written above it, carried
    right over the blank cells of a label merged or centred across its columns ("Temperature"
    over "mean" and "sd": "Temperature mean"); a blank heading takes the label right above it
    (a name merged down over both rows)."""
    if sum(1 for a in above if a) < 2:  # a title line above the table, not group labels
        return headings
    seen = Counter(x.casefold() for x in headings if x)
    carried, label = [], ""
    for j in range(len(headings)):
        label = (above[j] if j < len(above) else "") or label
        carried.append(label)
    out = []
    for j, x in enumerate(headings):
        if x and seen[x.casefold()] > 1 and carried[j]:
            out.append(f"{carried[j]} {x}")
        elif not x and j < len(above) and above[j]:
            out.append(above[j])
        else:
            out.append(x)
    if out == headings or len({x.casefold() for x in out if x}) < len([x for x in out if x]):
        return headings  # nothing gained, or the labels would make new repeats
    changed = next(x for x, y in zip(out, headings) if x != y)
    warnings.append(
        f"headings of row {h + 1} are completed with the labels of row {h} above them "
        f"(e.g. '{changed}')"
    )
    return out


def _without_repeated_headings(
    block: np.ndarray, empty: np.ndarray, keep_rows: np.ndarray, heading_rows: list[list],
    d: int, warnings: list[str],
) -> np.ndarray:  # fmt: skip
    """``keep_rows`` less rows that repeat the headings (or the sub-headings under them), as
    a report printed page by page repeats them: each filled cell equals the heading of its
    column, and at least two of them (half of the headings when there are more)."""
    if not keep_rows.size:
        return keep_rows
    repeated = np.zeros(keep_rows.size, dtype=bool)
    for heading_row in heading_rows:
        texts = [cell_key(v) for v in heading_row]
        named = [j for j, t in enumerate(texts) if t and j < block.shape[1]]
        if len(named) < 2:
            continue
        # a quick look at one column first: only rows holding its heading as written (copies
        # are exact) can repeat them all
        j0 = named[0]
        same_cell = block[keep_rows, j0] == heading_row[j0]
        if not isinstance(same_cell, np.ndarray):  # numpy could not compare elementwise
            continue
        maybe = np.flatnonzero(same_cell.astype(bool))
        for t in maybe.tolist():
            i = int(keep_rows[t])
            filled = np.flatnonzero(~empty[i])
            same = sum(
                1 for j in filled.tolist() if j < len(texts) and cell_key(block[i, j]) == texts[j]
            )
            if same == filled.size and same >= max(2, len(named) // 2):
                repeated[t] = True
    if not repeated.any():
        return keep_rows
    listed = [int(i) + d + 2 for i in keep_rows[repeated]]
    warnings.append(
        f"{counted(len(listed), 'row')} left out ({_listed(listed)}): "
        f"{'they repeat' if len(listed) > 1 else 'it repeats'} the headings, as a report "
        "printed page by page does"
    )
    return keep_rows[~repeated]


# a last row this far below the one before it, holding a single cell, is a stray cell
_STRAY_GAP_ROWS = 5


def _without_stray_cells(
    block: np.ndarray, empty: np.ndarray, keep_rows: np.ndarray, h: int, fmt: str,
    warnings: list[str],
) -> np.ndarray:  # fmt: skip
    """``keep_rows`` less trailing rows that hold one cell far below the table (a value
    typed out of the way, or left over): read as data it would add a row of blanks."""
    while keep_rows.size > 3 and keep_rows[-1] - keep_rows[-2] > _STRAY_GAP_ROWS:
        i = int(keep_rows[-1])
        filled = np.flatnonzero(~empty[i])
        if filled.size != 1:
            break
        j, row = int(filled[0]), i + h + 2
        cell = f"column {j + 1}" if fmt == "csv" else f"cell {column_letter(j)}{row}"
        warnings.append(
            f"row {row} left out: its only value ({cell}) lies {int(keep_rows[-1] - keep_rows[-2]) - 1} "
            "blank rows below the table"
        )
        keep_rows = keep_rows[:-1]
    return keep_rows


def _side_by_side_warning(keep_cols: list[int], sheet: str, warnings: list[str]) -> None:
    """A wholly empty column between columns in use: perhaps two tables side by side."""
    gaps = [b for a, b in zip(keep_cols, keep_cols[1:]) if b - a > 1]
    if gaps:
        first = column_letter(keep_cols[keep_cols.index(gaps[0]) - 1] + 1)
        warnings.append(
            f"sheet '{sheet}' has an empty column ({first}) between columns in use; they are "
            "read as one table. If they are two tables side by side, choose the columns of "
            "one (the others as ignored) or move the other table to its own sheet"
        )


def _used_length(row: list) -> int:
    """Fields up to the last one that holds anything."""
    n = len(row)
    while n and isinstance(row[n - 1], str) and not row[n - 1].strip():
        n -= 1
    return n


def _ragged_warning(rows: list[list], field_counts: list[int], h: int, warnings: list[str]) -> None:
    """Rows of a text file with more or fewer fields than the heading row, named.

    Against the headings in use: a line that writes its empty last fields (an optional comment
    left blank, "a;b;") is not short, and only a value beyond the headings makes a line long.
    """
    width = _used_length(rows[h])
    longer = [i + 1 for i, r in enumerate(rows) if i > h and _used_length(r) > width]
    shorter = [i + 1 for i, k in enumerate(field_counts) if i > h and 0 < k < width]
    for named, fewer_more, then in (
        (longer, "more", "the extra values are read into columns without a heading"),
        (shorter, "fewer", "the missing ones at the end read as empty"),
    ):
        if named:
            warnings.append(
                f"row{'s' if len(named) > 1 else ''} {_listed(named)} "
                f"{'have' if len(named) > 1 else 'has'} {fewer_more} fields than the "
                f"{width} of the heading row; {then}"
            )


def _sheet_ref(sheet: str) -> str:
    """A sheet's name as a cell reference writes it: quoted, quotes doubled, when it holds
    anything but letters, digits and underscores ('Lab ''QC'' data'!D4, Data!D4)."""
    if sheet.replace("_", "").isalnum():
        return sheet
    return "'" + sheet.replace("'", "''") + "'"


def _hidden_warning(
    facts: PackageFacts, h: int, n_rows: int, n_cols: int, sheet: str, warnings: list[str]
) -> None:
    """Hidden rows in the data and hidden columns are read like the others: say so."""
    rows = [r + 1 for r in facts.hidden_rows if 0 <= r - h - 1 < n_rows]
    cols = [column_letter(c) for c in facts.hidden_cols if c < n_cols]
    if rows or cols:  # hidden is not deleted: say that they count, the user may not know
        parts = []
        if rows:
            parts.append(f"{len(rows)} hidden row{'s' if len(rows) > 1 else ''} ({_listed(rows)})")
        if cols:
            parts.append(
                f"{len(cols)} hidden column{'s' if len(cols) > 1 else ''} ({_listed(cols)})"
            )
        warnings.append(
            f"sheet '{sheet}' has {' and '.join(parts)}; they are read like the others (leave "
            "hidden columns out as candidates, and delete hidden rows that are not data)"
        )


def _apply_facts(
    facts: PackageFacts,
    block: np.ndarray,
    empty: np.ndarray,
    h: int,
    sheet: str,
    warnings: list[str],
) -> None:
    """Put error values and formulas without results back where the cell reader left blanks,
    and the value of a range merged down a column into each of its rows."""
    n_rows, n_cols = block.shape
    filled = []
    for r0, c0, r1, c1 in sorted(facts.merged, key=lambda m: (m[1], m[0])):
        i0, i1 = r0 - h - 1, r1 - h - 1
        # down one column, inside the data: a label typed once for several rows ("North"
        # merged over ten rows) means that label in each
        if c0 != c1 or i0 < 0 or i1 >= n_rows or c0 >= n_cols or empty[i0, c0]:
            continue
        for i in range(i0 + 1, i1 + 1):
            if empty[i, c0]:
                block[i, c0] = block[i0, c0]
                empty[i, c0] = False
        filled.append(f"{column_letter(c0)}{r0 + 1}:{column_letter(c1)}{r1 + 1}")
    if filled:
        warnings.append(
            f"{len(filled)} merged range{'s' if len(filled) > 1 else ''} down a column in sheet "
            f"'{sheet}' ({_listed(filled)}) read with the first cell's value in every row of "
            "the range"
        )
    for (r, c), code in facts.errors.items():
        i = r - h - 1
        if 0 <= i < n_rows and 0 <= c < n_cols and empty[i, c]:
            block[i, c] = code
            empty[i, c] = False
    for r, c in facts.uncached:
        i = r - h - 1
        if 0 <= i < n_rows and 0 <= c < n_cols and empty[i, c]:
            block[i, c] = UNCACHED
            empty[i, c] = False
    if facts.uncached:
        cells = sorted(facts.uncached)
        named = _listed(
            [f"{_sheet_ref(sheet)}!{cell_name(column_letter(c), r + 1)}" for r, c in cells]
        )
        warnings.append(
            f"{len(cells)} formula cell{'s' if len(cells) > 1 else ''} in sheet '{sheet}' "
            f"{'have' if len(cells) > 1 else 'has'} no stored result ({named}); the file was "
            "saved by a program that does not calculate formulas, so these cells read as missing. "
            "Open the file in a spreadsheet program and save it to store the results"
        )
