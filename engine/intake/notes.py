"""A column's note: words for the user, and the kind of finding they report.

Intake writes notes in plain words (shown by `tamis inspect`, the window's column list, the
warnings of a fit). Code that acts on a note (repeating it among the sheet's warnings, leaving
substituted values out of the far-out screen, saying which rows words in cells cost) asks for
its finding, never for its wording, so rewording a note cannot silently change what is done.
A note is still a str: everything that shows, joins or writes notes keeps working.
"""

from __future__ import annotations

__all__ = ["ColumnNote", "Finding", "finding_of", "UNREAD", "WORTH_A_WARNING"]

from enum import Enum


class Finding(Enum):
    """What a column's note reports (only the findings some code acts on)."""

    # numbers stored as text whose value depends on the decimal mark chosen for them
    DECIMAL_MARK_CHOSEN = "decimal mark chosen"
    # labels differing only in letter case read as one level
    CASE_VARIANTS = "case variants"
    # results reported against a limit ("<0.3", ">1000") read as half the limit / the limit
    LIMIT_SUBSTITUTES = "limit substitutes"
    # results reported as not detected without a limit, read as missing
    NOT_DETECTED = "not detected"
    # cells whose words are not values of the column's kind, read as missing
    UNREAD_CELLS = "unread cells"
    # percentages written with and without a sign, put on one scale
    PERCENT_SCALES = "percent scales"
    # numbers written with one unit ("12 kg"), read as numbers
    ONE_UNIT = "one unit"
    # numbers written with several units, left as text
    SEVERAL_UNITS = "several units"
    # plain numbers among dates read as date serial numbers
    SERIAL_DATES = "serial dates"
    # a column of mostly numbers with too few of them to be read as numbers
    TOO_FEW_NUMBERS = "too few numbers"
    # dates such as 02/01/2024 read as day/month or month/day by the sheet's habit, a guess
    DATE_ORDER_CHOSEN = "date order chosen"


# findings that change what a column's values mean: repeated among the sheet's warnings, so
# they are seen with a fit and not only when the sheet is inspected
WORTH_A_WARNING = frozenset(
    {
        Finding.DECIMAL_MARK_CHOSEN,
        Finding.CASE_VARIANTS,
        Finding.LIMIT_SUBSTITUTES,
        Finding.NOT_DETECTED,
        Finding.PERCENT_SCALES,
        Finding.ONE_UNIT,
        Finding.SEVERAL_UNITS,
        Finding.SERIAL_DATES,
        Finding.DATE_ORDER_CHOSEN,
    }
)


# findings about cells whose words are not values of their column: a study using the column
# leaves out their rows, or fills them (said before roles are chosen and with every fit)
UNREAD = frozenset({Finding.UNREAD_CELLS, Finding.NOT_DETECTED})


class ColumnNote(str):
    """A note's words, with the finding they report (None: a note no code acts on) and, for
    a finding about cells, how many cells it counts (the words name only the first few)."""

    finding: Finding | None
    cells: int | None

    def __new__(
        cls, words: str, finding: Finding | None = None, cells: int | None = None
    ) -> ColumnNote:
        note = super().__new__(cls, words)
        note.finding = finding
        note.cells = cells
        return note

    def __reduce__(self):  # a copied or pickled note keeps what it reports
        return (ColumnNote, (str(self), self.finding, self.cells))


def finding_of(note: str) -> Finding | None:
    """The finding a note reports; None for plain words (a note made elsewhere, e.g. a test)."""
    return getattr(note, "finding", None)
