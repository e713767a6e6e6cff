"""Colours and type of the figures, shared by the dashboard (its key beside the panels) and the figure builders.

The form colours are the Okabe–Ito palette (Okabe & Ito 2008, "Color Universal Design"), chosen
because it stays distinguishable under the common colour-vision deficiencies; line dashes repeat
the distinction for grey-scale prints.
"""

from __future__ import annotations

INK = "#1f2a30"            # text and observations
MUTED = "#6b7780"          # secondary text, excluded points
GRID = "#e3e7ea"
PAPER = "#ffffff"
CAPACITY = "#D55E00"       # the K line (vermilion)
HIGHLIGHT = "#000000"
REFERENCE = "#8a949b"      # zero and 1:1 lines
FORM_COLOURS = ("#0072B2", "#E69F00", "#009E73", "#CC79A7", "#56B4E9", "#7a5c00")
FORM_DASHES = ("solid", "dash", "dot", "dashdot", "longdash", "longdashdot")
FONT = "Source Sans 3, Segoe UI, Helvetica Neue, Arial, sans-serif"


def form_style(i: int) -> tuple[str, str]:
    """Colour and dash of the i-th fitted form."""
    return FORM_COLOURS[i % len(FORM_COLOURS)], FORM_DASHES[(i // len(FORM_COLOURS) + i) % len(FORM_DASHES)]
