"""The what-if sweep of a rule's replay, swept again in a real browser: the redrawn figures,
their toolbars and legends stay inside their panels and every control stays clickable; a
burn-rate rule sweeps its factors and window pairs again, and the panel of rule kinds
arrives after the replay."""

from __future__ import annotations

import pytest

pytestmark = [pytest.mark.browser, pytest.mark.slow]  # builds the demo database once per run


@pytest.fixture
def app(demo_app):
    """Serve the demo copy: the live server takes the ``app`` fixture."""
    return demo_app


FIGURES = "#replay .js-plotly-plot"
CLICK = 10_000  # ms: a control that does not answer a click within this is broken


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


def _sweep_again(page, fields: dict[str, str], figures: int) -> None:
    """Fill the what-if form, press "Sweep again" and wait for the new replay drawn."""
    page.evaluate("() => { document.querySelector('#whatif form').dataset.old = '1'; }")
    for selector, value in fields.items():
        page.fill(selector, value, timeout=CLICK)
    page.click("#whatif button[type=submit]", timeout=CLICK)
    page.wait_for_function(
        "() => !document.querySelector('#whatif form').dataset.old"
        f" && document.querySelectorAll('{FIGURES} svg.main-svg').length >= {figures}"
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
    page.click("table a:has-text('Checkout p95 latency')")
    page.wait_for_function(f"() => document.querySelectorAll('{FIGURES} svg.main-svg').length >= 2")
    _check_panel(page)
    _sweep_again(page, {"#sweep-holds": "0, 10min"}, 2)
    screenshot(page, "sweep-again")
    _check_panel(page)
    assert page.input_value("#sweep-holds") == "0, 10min"
    assert page.evaluate(
        "() => Array.from(document.querySelectorAll('#replay [data-figure]'))"
        ".every(el => el.querySelectorAll('.plot-container').length === 1)"
    )
    page.click("#whatif summary", timeout=CLICK)  # every control answers a click
    _sweep_again(page, {"#sweep-holds": "0, 5min"}, 2)
    _check_panel(page)
    page.click("#verdict button[type=submit]", timeout=CLICK)
    page.wait_for_selector(".flash")


def test_a_burn_rate_rule_sweeps_again_and_compares_the_kinds(page, live_server) -> None:
    page.goto(live_server.at("/rules"))
    page.click("table a:has-text('Checkout error budget')")
    page.wait_for_function(f"() => document.querySelectorAll('{FIGURES} svg.main-svg').length >= 4")
    page.wait_for_selector("#kinds table", timeout=120_000)
    rows = page.locator("#kinds tbody tr")
    assert rows.count() == 4
    assert "as it is" in rows.nth(0).inner_text()
    assert "caught" in page.inner_text("#kinds .kinds-sentence")
    _sweep_again(page, {"#sweep-factors": "6, 14.4", "#sweep-pairs": "1h/5min, 6h/30min"}, 4)
    assert "(4 settings)" in page.inner_text("#whatif summary")
    _check_panel(page)
    page.wait_for_selector("#kinds table", timeout=120_000)
