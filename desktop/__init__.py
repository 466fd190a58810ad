"""Tamis desktop: a PySide6 + pyqtgraph window over the engine. It holds no statistics.

The map, one concept per module:

- ``desktop.app``            ``main(argv)``: the entry point of ``tamis desktop [BOOK]``
- ``desktop.main_window``    the window: source strip, column ledger, pages, message strip
- ``desktop.column_ledger``  columns listed with kind, missing count, checks; roles set in place
- ``desktop.roles``          roles, the checks that block a run, and the StudySpec they build (no Qt)
- ``desktop.settings_panel`` run settings rendered from ``engine.methods.METHODS``
- ``desktop.result_view``    Findings: path with live cursor, validation, comparison, sizes,
                             stability, focal effect, cautions
- ``desktop.charts``         the pyqtgraph charts and their PNG/SVG export
- ``desktop.worker``         one QThread + worker object per background task
- ``desktop.messages``       the one place a failure becomes words (no Qt)
- ``desktop.engine_calls``   the engine functions the window calls (injectable)
- ``desktop.settings_store`` recent files and per-workbook memory in an injected folder
- ``desktop.table_models``   item models for the sheet preview and the ledger
- ``desktop.theme``          palette, line colours and style sheet
- ``desktop.cautions``, ``desktop.about``  texts for the result view and the about box

Only the bare ``engine`` package (no numpy, no Qt) is imported here, so ``tamis --help`` stays
instant.
"""

# the engine before anything loads numpy: its BLAS thread setting applies only then
import engine  # noqa: F401, E402

__all__ = ["main"]


def main(argv=None) -> int:
    """Open the Tamis window (see ``desktop.app.main``)."""
    from desktop.app import main as _main

    return _main(argv)
