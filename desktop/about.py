"""The about box text: what Tamis is and the versions of the parts it runs on."""

from __future__ import annotations

__all__ = ["versions", "about_html"]

import platform
from html import escape
from importlib import metadata


def versions() -> dict[str, str]:
    import pyqtgraph
    import PySide6
    from PySide6.QtCore import qVersion

    from engine import __version__

    out = {
        "Tamis": __version__,
        "Python": platform.python_version(),
        "Qt": qVersion(),
        "PySide6": PySide6.__version__,
        "pyqtgraph": pyqtgraph.__version__,
    }
    for dist in (
        "numpy",
        "scipy",
        "pandas",
        "scikit-learn",
        "python-calamine",
        "openpyxl",
        "xlsxwriter",
    ):
        try:
            out[dist] = metadata.version(dist)
        except metadata.PackageNotFoundError:
            out[dist] = "not installed"
    return out


def about_html() -> str:
    rows = "".join(
        f"<tr><td>{escape(k)}</td><td>&nbsp;&nbsp;{escape(v)}</td></tr>"
        for k, v in versions().items()
    )
    return (
        "<h3>Tamis</h3>"
        "<p>Choose the columns that matter in a workbook, with shrinkage and subset methods, "
        "and write the findings back as sheets.</p>"
        f"<table>{rows}</table>"
        f"<p>Running on {escape(platform.system())} {escape(platform.release())}.</p>"
    )
