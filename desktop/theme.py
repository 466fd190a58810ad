"""Tamis's own look: a palette, line colours for charts and a small style sheet.

Colours are chosen for contrast on a light background and to stay apart for people with the
common red-green colour-vision deficiencies (ink-blue, ochre, teal, plum ... never red against green).
"""

from __future__ import annotations

__all__ = [
    "INK",
    "PAPER",
    "ACCENT",
    "ACCENT_SOFT",
    "PROBLEM",
    "PROBLEM_SOFT",
    "MUTED",
    "SERIES",
    "series_colour",
    "apply_theme",
    "TONE_COLOURS",
]

from PySide6.QtGui import QColor, QFont, QPalette
from PySide6.QtWidgets import QApplication

INK = "#1f2a36"  # text
PAPER = "#f7f5f0"  # window background, a warm off-white
PANEL = "#ffffff"
ACCENT = "#1d6f8a"  # deep teal-blue for actions and the path cursor
ACCENT_SOFT = "#d7e9ef"
PROBLEM = "#a33c12"  # burnt orange for problems
PROBLEM_SOFT = "#f8e3d6"
MUTED = "#7a8591"
STOPPED_SOFT = "#ece8dc"

TONE_COLOURS = {
    "info": (ACCENT_SOFT, INK),
    "problem": (PROBLEM_SOFT, PROBLEM),
    "stopped": (STOPPED_SOFT, INK),
    "fault": (PROBLEM_SOFT, PROBLEM),
}

# line colours for coefficient paths, repeated with dashes when there are more lines
SERIES = (
    "#1d6f8a",
    "#d08c1b",
    "#6a4c93",
    "#2f9c95",
    "#b8526b",
    "#4d6b2f",
    "#8a5a2b",
    "#3b5bab",
    "#c06a2b",
    "#5f7f8f",
    "#9c3f8e",
    "#7a8f2a",
)


def series_colour(i: int) -> str:
    return SERIES[i % len(SERIES)]


_STYLE = f"""
QMainWindow, QWidget#page {{ background: {PAPER}; }}
QLabel#headline {{ font-size: 13pt; font-weight: 600; color: {INK}; }}
QLabel#caption {{ color: {MUTED}; }}
QFrame#strip {{ border-radius: 4px; padding: 2px; }}
QToolBar {{ spacing: 6px; padding: 3px; border-bottom: 1px solid #d9d4c7; background: #efebe2; }}
QToolButton {{ padding: 4px 8px; border-radius: 4px; }}
QToolButton:hover {{ background: {ACCENT_SOFT}; }}
QTabBar::tab {{ padding: 6px 14px; }}
QTabBar::tab:selected {{ color: {ACCENT}; font-weight: 600; }}
QTabBar QToolButton {{ padding: 0px; min-width: 18px; border: 1px solid #b8b2a4;
    border-radius: 2px; background: {PAPER}; }}
QGroupBox {{ font-weight: 600; margin-top: 10px; }}
QGroupBox::title {{ subcontrol-origin: margin; left: 6px; padding: 0 4px; }}
QPushButton#primary {{ background: {ACCENT}; color: white; border-radius: 4px; padding: 5px 14px;
    font-weight: 600; }}
QPushButton#primary:disabled {{ background: #a9bcc4; }}
"""


def apply_theme(app: QApplication) -> None:
    """Palette, a readable default font size and the style sheet; safe to call twice."""
    app.setStyle("Fusion")
    pal = QPalette()
    pal.setColor(QPalette.ColorRole.Window, QColor(PAPER))
    pal.setColor(QPalette.ColorRole.WindowText, QColor(INK))
    pal.setColor(QPalette.ColorRole.Base, QColor(PANEL))
    pal.setColor(QPalette.ColorRole.AlternateBase, QColor("#f3f1ec"))
    pal.setColor(QPalette.ColorRole.Text, QColor(INK))
    pal.setColor(QPalette.ColorRole.Button, QColor("#ece8df"))
    pal.setColor(QPalette.ColorRole.ButtonText, QColor(INK))
    pal.setColor(QPalette.ColorRole.Highlight, QColor(ACCENT))
    pal.setColor(QPalette.ColorRole.HighlightedText, QColor("#ffffff"))
    pal.setColor(QPalette.ColorRole.ToolTipBase, QColor("#fffdf5"))
    pal.setColor(QPalette.ColorRole.ToolTipText, QColor(INK))
    pal.setColor(QPalette.ColorRole.PlaceholderText, QColor(MUTED))
    app.setPalette(pal)
    font = app.font()
    if font.pointSizeF() < 9.5:
        font.setPointSizeF(9.5)
    font.setStyleHint(QFont.StyleHint.SansSerif)
    app.setFont(font)
    app.setStyleSheet(_STYLE)
