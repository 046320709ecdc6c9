"""The Okabe-Ito colours (Okabe & Ito, "Color Universal Design", 2008), given roles.

Every figure and the stylesheet take their colours from here, so a reader who cannot tell
red from green still tells the value from the band, and out-of-band stretches are marked
by shape (triangles) as well as colour.
"""

from __future__ import annotations

BLACK = "#000000"
ORANGE = "#E69F00"
SKY_BLUE = "#56B4E9"
BLUISH_GREEN = "#009E73"
YELLOW = "#F0E442"
BLUE = "#0072B2"
VERMILLION = "#D55E00"
REDDISH_PURPLE = "#CC79A7"

OKABE_ITO: tuple[str, ...] = (
    BLACK,
    ORANGE,
    SKY_BLUE,
    BLUISH_GREEN,
    YELLOW,
    BLUE,
    VERMILLION,
    REDDISH_PURPLE,
)

VALUE = "#1B1B1B"
EXPECTED = BLUE
BAND_EDGE = SKY_BLUE
OUT_OF_BAND = VERMILLION
WINDOW = YELLOW
TREND = BLUISH_GREEN
RESIDUAL = REDDISH_PURPLE
OVERLAY_MEDIAN = BLUE

# The neutral greys and whites of every figure's frame.
PAPER = "#ffffff"
GRID = "#ece8dd"
AXIS = "#8e8877"
PAST_WEEK = "#9a958a"
MARKER_EDGE = "#5a2600"
LEGEND_BACKGROUND = "rgba(255,255,255,0.8)"
SEASONAL: tuple[str, ...] = (ORANGE, SKY_BLUE, BLUISH_GREEN, REDDISH_PURPLE)


def rgba(hex_colour: str, alpha: float) -> str:
    """``#RRGGBB`` as a CSS ``rgba()`` string with the given opacity."""
    h = hex_colour.lstrip("#")
    r, g, b = (int(h[i : i + 2], 16) for i in (0, 2, 4))
    return f"rgba({r},{g},{b},{alpha:g})"


def seasonal_colour(index: int) -> str:
    return SEASONAL[index % len(SEASONAL)]
