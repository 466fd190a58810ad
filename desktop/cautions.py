"""The cautions every result view keeps within reach, in plain words."""

from __future__ import annotations

__all__ = ["CAUTIONS", "cautions_html"]

from html import escape

from desktop.messages import window_words

CAUTIONS: tuple[tuple[str, str], ...] = (
    (
        "Chosen is not the same as causing",
        "A column is chosen because it helps predict the response in these rows. That does not show "
        "that changing it would change the response: it may stand in for something unmeasured, and "
        "among correlated columns the choice between them can be close to arbitrary.",
    ),
    (
        "Standard errors after selection are too small",
        "Ordinary standard errors and p-values computed on the chosen columns ignore that the same "
        "data did the choosing, so they look more certain than they are. The focal effect uses double "
        "selection to guard against this for one column; for the others, treat the numbers as "
        "descriptive, or confirm them on new data.",
    ),
    (
        "Predictions outside the data are guesses",
        "The fitted equations describe the range of values in this sheet. Scoring rows with values "
        "far outside that range (or at a later time, under new conditions) extrapolates and can be "
        "badly wrong.",
    ),
    (
        "Your own review comes first",
        "These results support a decision; they do not make it. Check them against what you know "
        "about the data and follow your organisation's own review practice before acting on them.",
    ),
)


def cautions_html(extra_warnings: list[str] | None = None) -> str:
    parts = ["<h3>Read before use</h3>"]
    for title, text in CAUTIONS:
        parts.append(f"<p><b>{escape(title)}.</b> {escape(text)}</p>")
    if extra_warnings:
        parts.append("<h3>Notes from this run</h3><ul>")
        parts.extend(f"<li>{escape(window_words(w))}</li>" for w in extra_warnings)
        parts.append("</ul>")
    return "\n".join(parts)
