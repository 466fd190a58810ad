"""The cautions that travel with every result, written once for every front.

The window shows them under their titles, the summary sheet in full, the terminal and the JSON
documents as one short line each (the title and the first sentence). A front may add a pointer
of its own (the sheet names where the fitted ranges are), never other wording.
"""

from __future__ import annotations

__all__ = ["Caution", "CAUTIONS", "short_lines"]

from typing import NamedTuple


class Caution(NamedTuple):
    title: str
    text: str
    # the words a one-line form starts with, so a reader scanning the lines finds the topic
    short: str


CAUTIONS: tuple[Caution, ...] = (
    Caution(
        "Chosen is not the same as causing",
        "A column is chosen because it helps predict the response in these rows. That does not "
        "show that changing it would change the response: it may stand in for something "
        "unmeasured, and among correlated columns the choice between them can be close to "
        "arbitrary.",
        "Selection is not causation: a kept column predicts the response on these rows; it is "
        "not shown to cause it.",
    ),
    Caution(
        "Standard errors after selection are too small",
        "Ordinary standard errors and p-values computed on the chosen columns ignore that the "
        "same data did the choosing, so they look more certain than they are. The focal effect "
        "uses double selection to guard against this for one column; for the others, treat the "
        "numbers as descriptive, or confirm them on new data.",
        "Standard errors and p-values computed after selecting columns do not account for the "
        "selection step (the focal effect's double selection does, for that one column).",
    ),
    Caution(
        "Predictions outside the data are guesses",
        "The fitted equations describe the range of values in these rows. Scoring rows with "
        "values far outside that range (or at a later time, under new conditions) extrapolates "
        "and can be badly wrong.",
        "Predictions outside the range of the rows used (extrapolation) are not supported by "
        "the data.",
    ),
    Caution(
        "Your own review comes first",
        "These results support a decision; they do not make it. Check them against what you "
        "know about the data and follow your organisation's own review practice before acting "
        "on them.",
        "Review the result with your own team's validation practice before acting on it.",
    ),
)


def short_lines() -> list[str]:
    """One line per caution, for the terminal and the JSON documents."""
    return [c.short for c in CAUTIONS]
