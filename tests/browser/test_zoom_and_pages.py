"""Zooming fetches finer data and offers the range as the window; a page recorded by hand
is explained from its own row; the start screen. Data: a slice of whyfired's invented demo
scenario (webapp.demo)."""

from __future__ import annotations

import re

import pytest

pytestmark = [pytest.mark.browser, pytest.mark.slow]

SERIES = "checkout.latency_p95{host=api-4}"


@pytest.fixture(scope="module")
def demo_csv(tmp_path_factory):
    from webapp.demo import build_demo, write_demo_csv

    path = tmp_path_factory.mktemp("demo-csv") / "latency-api-4.csv"
    return write_demo_csv(path, build_demo(seed=7), series_keys=[SERIES])


@pytest.fixture
def imported(live_server, page, demo_csv):
    page.goto(live_server.at("/imports"))
    page.set_input_files("#files", str(demo_csv))
    page.click("button:text('Import')")
    page.wait_for_selector("#import-results h2:has-text('imported as #')")
    return page


POINTS_IN_RANGE = """([a, b]) => {
    const el = document.querySelector('.panel-band .js-plotly-plot');
    const trace = el._fullData.find(t => t.name === 'value');
    const lo = new Date(a.replace(' ', 'T') + 'Z').getTime();
    const hi = new Date(b.replace(' ', 'T') + 'Z').getTime();
    return Array.from(trace.x).filter(x => x >= lo && x <= hi).length;
}"""


def test_zoom_fetches_finer_data_and_offers_the_range(live_server, imported, screenshot):
    tab = imported
    tab.goto(live_server.at("/explain?series=1&start=2026-11-16T00:00&end=2026-11-30T05:00"))
    tab.wait_for_selector(".panel-band .js-plotly-plot")
    zoom = ["2026-11-30 01:00", "2026-11-30 03:00"]
    coarse = tab.evaluate(POINTS_IN_RANGE, zoom)
    with tab.expect_response(lambda r: "/explain/figure/band" in r.url) as answer:
        tab.evaluate(
            """(range) => Plotly.relayout(document.querySelector('.panel-band .js-plotly-plot'),
                                          {'xaxis.range': range})""",
            zoom,
        )
    assert answer.value.status == 200
    tab.wait_for_function(f"() => ({POINTS_IN_RANGE})({zoom!r}) > {coarse}")
    fine = tab.evaluate(POINTS_IN_RANGE, zoom)
    assert fine >= 120, "every minute of the two zoomed hours is drawn"
    offer = tab.locator("button:text('Explain the range you zoomed to')")
    offer.wait_for(state="visible")
    screenshot(tab, "zoomed")
    offer.click()
    tab.wait_for_url("**start=2026-11-30T01:00*")  # the server writes the window in full
    assert tab.input_value("#start") == "2026-11-30 01:00"  # 24-hour, as typed
    assert tab.input_value("#end") == "2026-11-30 03:00"


def test_record_a_page_and_explain_it_from_home(live_server, imported, screenshot, unlabelled):
    tab = imported
    tab.goto(live_server.at("/pages"))
    assert unlabelled(tab) == []
    tab.fill("#fired_at", "2026-11-30T01:45")
    tab.fill("#resolved_at", "2026-11-30T02:50")
    tab.fill("#rule_text", "p95 latency above 600 ms for 5 min")
    tab.click("button:text('Record page')")
    tab.wait_for_selector("td:has-text('p95 latency above 600 ms for 5 min')")
    screenshot(tab, "pages")
    tab.goto(live_server.at("/"))
    screenshot(tab, "home")
    tab.click("a:text('Explain this page')")
    tab.wait_for_selector(".panel-band .js-plotly-plot")
    assert "page=1" in tab.url
    assert tab.input_value("#start") == "2026-11-30 00:40"  # 24-hour
    tab.context.grant_permissions(["clipboard-read", "clipboard-write"])
    tab.click("button:text('Copy the sentences')")
    tab.wait_for_selector("text=Copied, ready to paste into the review.")
    copied = tab.evaluate("() => navigator.clipboard.readText()")
    sentences = [li.strip() for li in tab.locator("#sentences li").all_inner_texts()]
    assert copied.splitlines() == sentences and len(sentences) >= 3
    annotations = tab.evaluate(
        "() => document.querySelector('.panel-band .js-plotly-plot').layout.annotations"
        ".map(a => a.text)"
    )
    assert annotations == ["page fired", "resolved"]
    screenshot(tab, "page-explained")


def test_excluded_period_changes_the_picture_in_place(live_server, imported, screenshot):
    tab = imported
    tab.goto(live_server.at("/explain?series=1&start=2026-11-29T22:00&end=2026-11-30T05:00"))
    tab.wait_for_selector(".panel-band .js-plotly-plot")
    tab.evaluate("() => { window.__sameDocument = true; }")
    tab.fill("#exclude_start", "2026-11-23T00:00")
    tab.fill("#exclude_end", "2026-11-24T00:00")
    tab.click("button:text('Leave out of the baseline')")
    box = tab.locator("#exclusions input[name=exclude]")
    box.wait_for()
    assert box.is_checked()
    assert tab.evaluate("() => window.__sameDocument === true"), "no full reload"
    assert "exclude=2026-11-23" in tab.url
    assert tab.input_value("#exclude_start") == "", "the add fields are cleared"
    excluded = tab.locator("dl.facts div", has_text="Left out of the history").locator("dd")
    assert re.match(r"[1-9]\d* d\b", excluded.inner_text()), "the whole day is left out"
    screenshot(tab, "excluded")
    box.uncheck()
    tab.wait_for_function("() => !location.search.includes('exclude=')")
    tab.wait_for_function(
        "() => [...document.querySelectorAll('dl.facts div')].some(d =>"
        " d.textContent.includes('Left out of the history')"
        " && d.querySelector('dd').textContent === '0 s')"
    )
