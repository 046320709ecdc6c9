"""axe-core, run in chromium on every screen of the demo store: 0 violations.

axe-core (Deque Systems, MPL-2.0) is vendored for the tests only under
tests/browser/vendor/ (``npm pack axe-core``, version in the file's header, licence beside
it); the app never serves it. A new screen joins the check by adding its URL to SCREENS.
"""

from __future__ import annotations

from pathlib import Path

import pytest

pytestmark = pytest.mark.browser

AXE = Path(__file__).resolve().parent / "vendor" / "axe.min.js"

# (name, path, a selector that is on the screen once it has finished drawing)
SCREENS: list[tuple[str, str, str]] = [
    ("home", "/", "main"),
    ("imports", "/imports", "main"),
    ("series", "/series", "main"),
    ("one series", "/series/1", "main"),
    ("explain", "/pages/1/explain", "#results .js-plotly-plot"),
    ("screening", "/screening?page=1", "#h-ranked"),
    ("incidents", "/incidents", "#incident-table"),
    ("saved explanations", "/explanations", "main"),
    ("one saved explanation", "/explanations/1", ".js-plotly-plot"),
    ("pages", "/pages", "main"),
    ("rules list", "/rules", "main"),
    ("rule form", "/rules/new", "main form"),
    ("rule replay", "/rules/1", "#replay .js-plotly-plot"),
    ("rule kinds", "/rules/1/kinds", "#kinds"),
    ("reviews list", "/reviews", "main"),
    ("new review", "/reviews/new", "main form"),
    ("one review", "/reviews/1", ".js-plotly-plot"),
    ("review edit", "/reviews/1/edit", "main form"),
]


def axe_violations(tab) -> list[dict]:
    """Inject axe-core into ``tab`` and return its violations on the whole document."""
    # Evaluated through the browser's debugging protocol, which the page's CSP does not govern.
    tab.evaluate("() => {" + AXE.read_text(encoding="utf-8") + "\n}")
    return tab.evaluate(
        """async () => {
            const result = await axe.run(document, {resultTypes: ['violations']});
            return result.violations.map(v => ({
                id: v.id, impact: v.impact, help: v.help,
                nodes: v.nodes.slice(0, 5).map(n => n.target.join(' ') + ' :: ' +
                                                     n.failureSummary.slice(0, 200))}));
        }"""
    )


@pytest.mark.parametrize(("name", "path", "ready"), SCREENS, ids=[s[0] for s in SCREENS])
def test_every_screen_has_no_axe_violations(demo_live_server, page, name, path, ready):
    page.goto(demo_live_server.at(path))
    page.wait_for_selector(ready)
    page.wait_for_load_state("networkidle")
    violations = axe_violations(page)
    assert violations == [], f"{name} ({path}): {violations}"


def test_the_injected_checker_finds_a_planted_violation(demo_live_server, page):
    """The check can fail: an image without a text alternative is reported."""
    page.goto(demo_live_server.at("/"))
    page.evaluate(
        "() => { const i = document.createElement('img'); i.src = '/static/favicon.svg';"
        " document.querySelector('main').append(i); }"
    )
    assert "image-alt" in {v["id"] for v in axe_violations(page)}


def presses_to_reach(tab, selector: str, limit: int = 120) -> int:
    """Tab presses from the top of the page until ``selector`` has the focus; a focused
    skip link on the way is followed with Enter (counted as a press)."""
    presses = 0
    followed: set[str] = set()
    while presses < limit:
        tab.keyboard.press("Tab")
        presses += 1
        state = tab.evaluate(
            """sel => { const el = document.activeElement;
                        if (!el) return null;
                        if (el.matches(sel)) return 'there';
                        if (el.matches('a[data-skip-charts]')) return el.getAttribute('href');
                        return null; }""",
            selector,
        )
        if state == "there":
            return presses
        if state and state not in followed:
            followed.add(state)
            tab.keyboard.press("Enter")
            presses += 1
    return presses


def test_save_explanation_is_a_few_key_presses_away(demo_live_server, page):
    page.goto(demo_live_server.at("/pages/1/explain"))
    page.wait_for_selector("#results .js-plotly-plot .modebar-btn")
    page.wait_for_load_state("networkidle")
    presses = presses_to_reach(page, "#h-save ~ form button[type=submit]")
    print(f"key presses to Save explanation: {presses}")
    # 68 before the skip link and text time fields; 28 with the second-series and screening
    # controls that sit before the results
    assert presses <= 30
