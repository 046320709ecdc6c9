"""The what-if sweep of a rule's replay, swept again in a real browser: the redrawn figures,
their toolbars and legends stay inside their panels and every control stays clickable."""

from __future__ import annotations

import pytest

pytestmark = [pytest.mark.browser, pytest.mark.slow]  # builds the demo database once per run


@pytest.fixture
def app(demo_app):
    """Serve the demo copy: the live server takes the ``app`` fixture."""
    return demo_app


FIGURES = "#replay .js-plotly-plot"


def _box(page, selector: str) -> dict:
    box = page.locator(selector).bounding_box()
    assert box is not None, f"{selector} is not shown"
    return box


def _inside(inner: dict, outer: dict, slack: float = 1.0) -> bool:
    return (
        inner["x"] >= outer["x"] - slack
        and inner["y"] >= outer["y"] - slack
        and inner["x"] + inner["width"] <= outer["x"] + outer["width"] + slack
        and inner["y"] + inner["height"] <= outer["y"] + outer["height"] + slack
    )


def _check_panel(page) -> None:
    panel = _box(page, "#whatif")
    figure = _box(page, "#whatif [data-figure=sweep]")
    assert _inside(figure, panel), (figure, panel)
    for part in ("#whatif .modebar-container", "#whatif .legend"):
        for i in range(page.locator(part).count()):
            box = page.locator(part).nth(i).bounding_box()
            assert box is not None and _inside(box, figure), (part, box, figure)
    table = _box(page, "#whatif details")
    assert table["y"] >= figure["y"] + figure["height"] - 1, (table, figure)


def test_sweep_again_redraws_inside_the_panel(page, live_server, screenshot) -> None:
    page.goto(live_server.at("/rules"))
    page.click("table a >> nth=0")
    page.wait_for_function(f"() => document.querySelectorAll('{FIGURES} svg.main-svg').length >= 2")
    _check_panel(page)
    page.fill("#sweep-holds", "0, 10min")
    page.click("#whatif button[type=submit]")
    page.wait_for_function(
        "() => document.querySelector('#sweep-holds') &&"
        " document.querySelector('#sweep-holds').value === '0, 10min'"
        f" && document.querySelectorAll('{FIGURES} svg.main-svg').length >= 2"
    )
    page.wait_for_timeout(300)
    screenshot(page, "sweep-again")
    _check_panel(page)
    assert page.evaluate(
        "() => Array.from(document.querySelectorAll('#replay [data-figure]'))"
        ".every(el => el.querySelectorAll('.plot-container').length === 1)"
    )
    # every control answers a click, timely
    page.click("#whatif summary", timeout=3000)
    page.fill("#sweep-holds", "0, 5min", timeout=3000)
    page.click("#whatif button[type=submit]", timeout=3000)
    page.wait_for_function(
        "() => document.querySelector('#sweep-holds').value === '0, 5min'"
        f" && document.querySelectorAll('{FIGURES} svg.main-svg').length >= 2"
    )
    _check_panel(page)
    page.select_option("#incident-scope", "series", timeout=3000)
    page.click("#verdict button[type=submit]", timeout=3000)
    page.wait_for_selector(".flash")
