"""The Okabe-Ito colours (Okabe & Ito, "Color Universal Design", 2008), given roles.

Every figure and the stylesheet take their colours from here, so a reader who cannot tell
red from green still tells the value from the band, and out-of-band stretches are marked
by shape (triangles) as well as colour.

Lines and band edges need 3:1 contrast against the white paper (WCAG 2.1, 1.4.11 non-text
contrast). Okabe-Ito orange (2.3:1) and sky blue (2.3:1) fall short, so lines use darker
variants of the same hues (``ORANGE_LINE`` 3.5:1, ``SKY_BLUE_LINE`` 3.5:1: lightness
scaled by 0.8 and 0.75 in HLS, hue and saturation kept), as does the past-weeks grey;
``contrast_ratio`` checks them. The light originals stay for filled areas.
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
ORANGE_LINE = "#B87F00"
SKY_BLUE_LINE = "#1C91D4"

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
BAND_EDGE = SKY_BLUE_LINE
BAND_FILL = SKY_BLUE
OUT_OF_BAND = VERMILLION
WINDOW = YELLOW
TREND = BLUISH_GREEN
RESIDUAL = REDDISH_PURPLE
OVERLAY_MEDIAN = ORANGE_LINE
OVERLAY_SPREAD = ORANGE
# (edge line, fill) of a filled band.
BAND = (BAND_EDGE, BAND_FILL)
OVERLAY_BAND = (OVERLAY_MEDIAN, OVERLAY_SPREAD)

# The neutral greys and whites of every figure's frame.
PAPER = "#ffffff"
GRID = "#ece8dd"
AXIS = "#8e8877"
PAST_WEEK = "#8f8a7e"
MARKER_EDGE = "#5a2600"
LEGEND_BACKGROUND = "rgba(255,255,255,0.8)"
SEASONAL: tuple[str, ...] = (ORANGE_LINE, SKY_BLUE_LINE, BLUISH_GREEN, REDDISH_PURPLE)
# Lines drawn beside a thick black one, each with its own dash as well.
LINES: tuple[str, ...] = (
    ORANGE_LINE,
    SKY_BLUE_LINE,
    BLUISH_GREEN,
    BLUE,
    VERMILLION,
    REDDISH_PURPLE,
)


def rgba(hex_colour: str, alpha: float) -> str:
    """``#RRGGBB`` as a CSS ``rgba()`` string with the given opacity."""
    h = hex_colour.lstrip("#")
    r, g, b = (int(h[i : i + 2], 16) for i in (0, 2, 4))
    return f"rgba({r},{g},{b},{alpha:g})"


def contrast_ratio(first: str, second: str = PAPER) -> float:
    """WCAG 2.1 contrast ratio of two ``#RRGGBB`` colours, from 1 to 21."""

    def luminance(hex_colour: str) -> float:
        h = hex_colour.lstrip("#")
        channels = [int(h[i : i + 2], 16) / 255 for i in (0, 2, 4)]
        r, g, b = (c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in channels)
        return 0.2126 * r + 0.7152 * g + 0.0722 * b

    light, dark = sorted((luminance(first), luminance(second)), reverse=True)
    return (light + 0.05) / (dark + 0.05)


def seasonal_colour(index: int) -> str:
    return SEASONAL[index % len(SEASONAL)]
