"""Import a demo CSV through the page, explain it, move the tolerance, save and reopen.

Drives Debian's chromium through Playwright against the app served on 127.0.0.1; the data
is a slice of whyfired's own invented demo scenario (webapp.demo)."""

from __future__ import annotations

import pytest

pytestmark = [pytest.mark.browser, pytest.mark.slow]

SERIES = "checkout.latency_p95{host=api-4}"
PAGE_FIRED = "2026-11-30T01:45"
WINDOW = ("2026-11-29T22:00", "2026-11-30T05:00")


@pytest.fixture(scope="module")
def demo_csv(tmp_path_factory):
    from webapp.demo import build_demo, write_demo_csv

    path = tmp_path_factory.mktemp("demo-csv") / "checkout-latency-api-4.csv"
    return write_demo_csv(path, build_demo(seed=7), series_keys=[SERIES])


def band_upper(tab) -> list[float]:
    """The upper edge of the expected band as plotted (trace 1 of the band figure)."""
    return tab.evaluate(
        """() => Array.from(document.querySelector('.panel-band .js-plotly-plot')._fullData[1].y)"""
    )


def import_through_page(tab, live_server, demo_csv, screenshot, unlabelled) -> None:
    tab.goto(live_server.at("/imports"))
    assert unlabelled(tab) == []
    tab.set_input_files("#files", str(demo_csv))
    tab.click("button:text('Import')")
    tab.wait_for_selector("#import-results h2:has-text('imported as #')")
    assert tab.locator("#import-results td.key", has_text=SERIES).count() == 1
    assert tab.locator("#import-list tbody tr").count() == 1
    screenshot(tab, "1-imported")


def test_import_explain_tolerance_save_reopen(live_server, page, screenshot, demo_csv, unlabelled):
    tab = page
    import_through_page(tab, live_server, demo_csv, screenshot, unlabelled)

    tab.goto(live_server.at("/series"))
    tab.wait_for_selector("svg.sparkline path")
    screenshot(tab, "2-series")
    tab.click(f"a[aria-label='Explain {SERIES}']")
    tab.wait_for_selector(".panel-band .js-plotly-plot")

    tab.fill("#start", WINDOW[0])
    tab.fill("#end", WINDOW[1])
    with tab.expect_response(lambda r: "/explain?" in r.url and "2026-11-29T22" in r.url):
        tab.click("button:text('Explain this window')")
    tab.wait_for_url("**start=2026-11-29T22*")
    tab.wait_for_load_state("networkidle")
    tab.wait_for_selector(".panel-band .js-plotly-plot")
    assert unlabelled(tab) == []
    screenshot(tab, "3-explain")
    before = band_upper(tab)

    tab.focus("#tolerance")
    with tab.expect_response(lambda r: "/explain?" in r.url and "tolerance=5" in r.url):
        for _ in range(4):  # 3 -> 5 in steps of 0.5, from the keyboard
            tab.keyboard.press("ArrowRight")
    tab.wait_for_function(
        "before => { const el = document.querySelector('.panel-band .js-plotly-plot');"
        " return el && el._fullData && Array.from(el._fullData[1].y).join() !== before.join(); }",
        arg=before,
    )
    after = band_upper(tab)
    assert max(after) > max(before), "a wider tolerance must raise the band's upper edge"
    assert "tolerance=5" in tab.url, "hx-push-url keeps the address in step"
    assert "exclude_start" not in tab.url, "empty fields stay out of the address"
    assert tab.locator("#tolerance-out").inner_text() == "5"
    screenshot(tab, "4-tolerance-5")

    tab.fill("#save-title", "Latency on api-4, night of 29 November")
    tab.click("button:text('Save explanation')")
    tab.wait_for_url("**/explanations/*")
    tab.wait_for_selector(".panel-band .js-plotly-plot")
    saved_upper = band_upper(tab)
    assert saved_upper == pytest.approx(after)
    screenshot(tab, "5-saved")

    tab.goto(live_server.at("/explanations"))
    tab.click("a:text('Latency on api-4, night of 29 November')")
    tab.wait_for_selector(".panel-band .js-plotly-plot")
    assert band_upper(tab) == pytest.approx(after), "reopened exactly as saved"
    assert tab.locator("h1").inner_text() == "Latency on api-4, night of 29 November"


def test_keyboard_reaches_the_explain_controls(
    live_server, page, screenshot, demo_csv, unlabelled, keyboard_reaches
):
    tab = page
    import_through_page(tab, live_server, demo_csv, screenshot, unlabelled)
    tab.goto(live_server.at("/explain?series=1"))
    tab.wait_for_selector(".panel-band .js-plotly-plot")
    tab.focus("body")
    assert keyboard_reaches(tab, "#tolerance"), "Tab must reach the tolerance slider"
    assert keyboard_reaches(tab, "#weeks"), "Tab must reach the history picker"
    tab.keyboard.press("ArrowUp")  # 6 weeks -> 5 weeks from the keyboard
    tab.wait_for_url("**weeks=5*")
    outline = tab.evaluate("() => getComputedStyle(document.activeElement).outlineStyle")
    assert outline == "solid", "the focused control shows a focus ring"
    screenshot(tab, "focus-ring", full_page=False)
