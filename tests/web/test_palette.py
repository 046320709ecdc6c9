"""Lines and band edges keep 3:1 contrast against the white paper (WCAG 2.1, 1.4.11)."""

from __future__ import annotations

import pytest

from webapp.web.charts import palette, peers, rules


def test_contrast_ratio_matches_the_wcag_end_points():
    # WCAG 2.1 defines the ratio from 1:1 (same colour) to 21:1 (black on white).
    assert palette.contrast_ratio("#000000") == pytest.approx(21.0)
    assert palette.contrast_ratio("#ffffff") == pytest.approx(1.0)
    # #767676 on white is the usual 4.5:1 example grey (from memory: 4.54:1).
    assert palette.contrast_ratio("#767676") == pytest.approx(4.54, abs=0.01)


def test_the_light_okabe_ito_hues_fall_short_so_lines_use_darker_ones():
    assert palette.contrast_ratio(palette.ORANGE) < 3
    assert palette.contrast_ratio(palette.SKY_BLUE) < 3
    assert palette.BAND_EDGE != palette.SKY_BLUE
    assert palette.OVERLAY_MEDIAN != palette.ORANGE


LINE_COLOURS = {
    "value": palette.VALUE,
    "expected": palette.EXPECTED,
    "band edge": palette.BAND_EDGE,
    "overlay median": palette.OVERLAY_MEDIAN,
    "past week": palette.PAST_WEEK,
    "out of band": palette.OUT_OF_BAND,
    "trend": palette.TREND,
    "residual": palette.RESIDUAL,
    **{f"seasonal {i}": c for i, c in enumerate(palette.SEASONAL)},
    **{f"peer {i}": c for i, c in enumerate(peers.OTHER_COLOURS)},
    **{f"sweep {i}": c for i, c in enumerate(rules.COLOURS)},
}


@pytest.mark.parametrize("role", sorted(LINE_COLOURS))
def test_every_line_colour_has_3_to_1_against_white(role):
    assert palette.contrast_ratio(LINE_COLOURS[role]) >= 3.0, role
