"""Screens fit the window: the Series list at 1024 and 800 px wide, the Explain controls
in a 900 px-high window."""

from __future__ import annotations

import pytest

pytestmark = pytest.mark.browser


def series_layout(tab) -> dict:
    return tab.evaluate(
        """() => {
            const key = document.querySelector('#series-rows td.key');
            const button = document.querySelector('#series-rows a.button');
            const link = key.querySelector('a');
            const lines = Math.round(link.getBoundingClientRect().height /
                                     parseFloat(getComputedStyle(link).lineHeight));
            return {
                keyWidth: key.getBoundingClientRect().width,
                keyChars: link.textContent.length, keyLines: lines,
                buttonRight: button.getBoundingClientRect().right,
                viewport: document.documentElement.clientWidth,
                pageWidth: document.documentElement.scrollWidth,
            };
        }"""
    )


@pytest.mark.parametrize("width", [1024, 800])
def test_the_series_list_fits_the_window(demo_live_server, chromium, width, screenshot):
    context = chromium.new_context(viewport={"width": width, "height": 900})
    tab = context.new_page()
    try:
        tab.goto(demo_live_server.at("/series"))
        layout = series_layout(tab)
        screenshot(tab, f"series-{width}")
        assert layout["pageWidth"] <= layout["viewport"], layout
        assert layout["buttonRight"] <= layout["viewport"], layout
        # A name keeps at least 20 characters to a line, so it is not cut every few.
        assert layout["keyChars"] / layout["keyLines"] >= min(20, layout["keyChars"]), layout
    finally:
        context.close()


def test_the_explain_controls_scroll_inside_a_900_px_window(demo_live_server, page):
    page.set_viewport_size({"width": 1360, "height": 900})
    page.goto(demo_live_server.at("/pages/1/explain"))
    page.wait_for_selector("#results .js-plotly-plot")
    box = page.evaluate(
        """() => { const c = document.getElementById('controls');
                   const r = c.getBoundingClientRect();
                   return {height: r.height, scroll: c.scrollHeight,
                           overflow: getComputedStyle(c).overflowY}; }"""
    )
    assert box["height"] <= 900, box
    if box["scroll"] > box["height"]:
        assert box["overflow"] in ("auto", "scroll"), box
