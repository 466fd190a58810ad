"""Intake: a workbook or CSV file in, typed columns and a plain-words report out.

Public names
------------
``read_table(path, sheet=None, header_row=None, progress=None, fitted_ranges=None) -> Table``
    Read one sheet (first visible by default) of .xlsx/.xlsm/.xls/.ods or a .csv file:
    find the heading row (or take the 1-based ``header_row``), skip blank rows, type each
    column. Raises ``engine.errors.InputProblem`` naming the file/sheet/row/cell.
    ``fitted_ranges`` (new rows for a fitted model): each number column's fitted range, which
    sets the scale percentages are read on.
``list_sheets(path) -> list[SheetInfo]``
    The sheets in workbook order, hidden ones flagged.
``describe_table(table) -> dict``
    The facts of a Table as plain JSON-ready data (what ``tamis inspect`` prints).
``Table``, ``Column``, ``ColumnKind``, ``SheetInfo``
    What intake hands on (see engine.intake.table).
``FLAG_TRUE``, ``FLAG_FALSE``, ``ERROR_VALUES``
    Yes/no tokens and spreadsheet error values (engine.intake.cells), shared with the writer.

Modules
-------
``workbook``    open a workbook with python-calamine; file-kind sniffing and failure messages
``package``     what the sheet XML tells beyond cell values: error cells, formulas without results
``biff``        the same facts from the records of a binary .xls sheet
``delimited``   CSV: encoding, delimiter and decimal-mark sniffing
``header``      heading-row detection
``cells``       meaning of single cells: flag tokens, error values, numbers written as text
``text_dates``  dates written as text
``classify``    one column's kind and typed values
``similarity``  columns that repeat another column
``reader``      the flow that builds a Table
``frame``       a pandas DataFrame read as a sheet would be
``describe``    a Table as plain data
"""

from engine.intake.cells import ERROR_VALUES, FLAG_FALSE, FLAG_TRUE
from engine.intake.describe import describe_table
from engine.intake.frame import read_frame
from engine.intake.reader import list_sheets, read_table
from engine.intake.table import Column, ColumnKind, SheetInfo, Table

__all__ = [
    "read_table",
    "read_frame",
    "list_sheets",
    "describe_table",
    "Table",
    "Column",
    "ColumnKind",
    "SheetInfo",
    "FLAG_TRUE",
    "FLAG_FALSE",
    "ERROR_VALUES",
]
