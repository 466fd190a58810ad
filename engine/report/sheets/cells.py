"""Shared cell formats and safe cell writers for the result sheets.

Every text that may have come from the user's workbook goes through ``text`` (xlsxwriter's
``write_string``), so a heading such as "=cmd|' /C calc'!A0" stays inert text.
"""

from __future__ import annotations

__all__ = [
    "Formats",
    "text",
    "number",
    "col_name",
    "cell_ref",
    "range_ref",
    "heading_row",
    "decimals_for",
]

import math

from xlsxwriter.utility import xl_col_to_name, xl_rowcol_to_cell


class Formats:
    """The few formats the sheets use, created once per workbook."""

    def __init__(self, book) -> None:
        add = book.add_format
        self.title = add({"bold": True, "font_size": 14})
        # headings wrap within their column (the row is made tall enough: heading_row)
        self.heading = add({"bold": True, "bottom": 1, "text_wrap": True, "valign": "bottom"})
        self.label = add({"bold": True})
        self.note = add({"italic": True, "font_color": "#595959", "text_wrap": False})
        self.wrap = add({"text_wrap": True, "valign": "top"})
        self.number = add({"num_format": "General"})
        # a zero coefficient: shown as a centred dot, grey italic (shape and colour, not colour alone)
        self.zero = add(
            {"num_format": '0;-0;"·"', "italic": True, "font_color": "#7F7F7F", "align": "center"}
        )
        self.kept = add({"num_format": "General", "bold": True})
        self.share = add({"num_format": "0.00"})
        self.date = add({"num_format": "yyyy-mm-dd"})
        self.paste = add({"bg_color": "#FFF2CC", "border": 1, "border_color": "#BFBFBF"})
        self.paste_date = add(
            {
                "bg_color": "#FFF2CC",
                "border": 1,
                "border_color": "#BFBFBF",
                "num_format": "yyyy-mm-dd",
            }
        )
        self.prediction = add({"bold": True, "num_format": "General", "left": 2})
        # the look of each kind of number shown to a chosen precision (shown_to)
        self._looks: dict[str, dict] = {
            "number": {},
            "prediction": {"bold": True, "left": 2},
            "coefficient": {},
        }
        self._shown: dict[tuple[str, int], object] = {}
        self.param = add({"num_format": "General", "font_color": "#404040"})
        self.days = add({"num_format": "0"})  # a whole count of days, never shown as a date
        self.param_label = add({"italic": True, "font_color": "#404040"})
        self._add = add

    def digits(self, x: float):
        """A format showing ``x`` to about six significant digits (the cell keeps every digit):
        results read as 1506.66 rather than 1506.6626601456. Whole numbers, and magnitudes
        that need an exponent, keep the General format."""
        a = abs(x)
        if x == round(x) or a < 1e-4 or a >= 1e10:
            return self.number
        return self.shown_to(a)

    def shown_to(self, size: float, look: str = "number"):
        """A format for numbers of about ``size``, with the decimals that show six significant
        digits of it (a column of predictions then reads alike, 1506.66 beside 98.20, where the
        General format would show as many digits as the column is wide). ``look``: "number"
        or "prediction" (bold, with a rule on its left) or "coefficient" (a zero shown as 0).
        Sizes needing an exponent keep General."""
        a = abs(size)
        if not math.isfinite(a) or a < 1e-4 or a >= 1e10:
            return self.prediction if look == "prediction" else self.number
        decimals = decimals_for(a, 6)
        key = (look, decimals)
        if key not in self._shown:
            fmt = "0." + "0" * decimals if decimals else "0"
            if look == "coefficient":  # a zero reads as 0, not a row of zeros
                fmt = f"{fmt};-{fmt};0"
            self._shown[key] = self._add({**self._looks[look], "num_format": fmt})
        return self._shown[key]


def decimals_for(size: float, digits: int) -> int:
    """Decimals that show ``digits`` significant digits of a number of about ``size`` (at
    most 9; none for large numbers): 1506.66 -> 2 for six digits."""
    return min(9, max(0, digits - 1 - math.floor(math.log10(abs(size)))))


def text(ws, row: int, col: int, value: object, fmt=None) -> None:
    """Write any value as text (never interpreted as a formula, number or link)."""
    ws.write_string(row, col, "" if value is None else str(value), fmt)


def number(ws, row: int, col: int, value: float | int | None, fmt=None) -> None:
    """Write a finite number; leave the cell empty for None, NaN or infinity. ``fmt`` may be
    the Formats themselves: the number then shows about six significant digits."""
    if value is None:
        return
    x = float(value)
    if math.isfinite(x):
        ws.write_number(row, col, x, fmt.digits(x) if isinstance(fmt, Formats) else fmt)


def col_name(col: int) -> str:
    return xl_col_to_name(col)


def cell_ref(row: int, col: int, row_abs: bool = False, col_abs: bool = False) -> str:
    return xl_rowcol_to_cell(row, col, row_abs, col_abs)


def range_ref(sheet: str, r0: int, c0: int, r1: int, c1: int) -> str:
    """An absolute range on a named sheet, quoted: 'TM Path'!$B$5:$B$104."""
    a = xl_rowcol_to_cell(r0, c0, True, True)
    b = xl_rowcol_to_cell(r1, c1, True, True)
    return f"'{sheet}'!{a}:{b}"


def heading_row(ws, row: int, headings: list[str], width: float) -> None:
    """Make a row of wrapped headings tall enough for the longest one, before it is written.

    A row with a height of its own is shown at that height by every spreadsheet program; one
    left to the default would cut a wrapped heading to its first line in some of them. About
    ``width`` characters fit on a line of the narrowest column the headings sit in.
    """
    longest = max((len(h) for h in headings), default=0)
    # whole words wrap, so a line holds a little less than the width: a fifth kept spare
    lines = min(4, max(1, -(-(longest * 6) // (5 * max(int(width) - 1, 4)))))
    if lines > 1:
        ws.set_row(row, 15 * lines)
