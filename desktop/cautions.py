"""The cautions every result view keeps within reach, in plain words."""

from __future__ import annotations

__all__ = ["CAUTIONS", "cautions_html"]

from html import escape

from desktop.messages import window_words
from engine.cautions import CAUTIONS as ENGINE_CAUTIONS

# the wording lives in the engine (every front shows the same cautions)
CAUTIONS = tuple((c.title, c.text) for c in ENGINE_CAUTIONS)


def cautions_html(extra_warnings: list[str] | None = None) -> str:
    parts = ["<h3>Read before use</h3>"]
    for title, text in CAUTIONS:
        parts.append(f"<p><b>{escape(title)}.</b> {escape(text)}</p>")
    if extra_warnings:
        parts.append("<h3>Notes from this run</h3><ul>")
        parts.extend(f"<li>{escape(window_words(w))}</li>" for w in extra_warnings)
        parts.append("</ul>")
    return "\n".join(parts)
