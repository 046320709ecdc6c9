"""Nothing leaves the machine when a reader presses every button of every figure's toolbar:
on every screen that draws figures and in the exported HTML, with every request that is
not to the local server (or the exported file) refused and counted."""

from __future__ import annotations

import pytest

from webapp.store import db
from webapp.web.export import export_review

pytestmark = [pytest.mark.browser, pytest.mark.slow]

SCREENS = ("/explain?series=1", "/explanations/1", "/rules/1", "/reviews/1", "/pages/1/explain")
DRAWN = "n => document.querySelectorAll('.js-plotly-plot .modebar-btn').length >= n"


def block_outside(tab, allowed) -> list[str]:
    """Refuse every request ``allowed(url)`` does not accept, and pop-ups; return the list
    the refused addresses are added to."""
    outside: list[str] = []

    def route(r) -> None:
        if allowed(r.request.url):
            r.continue_()
        else:
            outside.append(r.request.url)
            r.abort()

    tab.route("**/*", route)
    tab.context.on("page", lambda popup: outside.append(f"pop-up {popup.url}"))
    return outside


def press_every_button(tab) -> list[str]:
    """Press each toolbar button of each figure, as a reader would (hover, then click);
    return their titles."""
    pressed = []
    plots = tab.locator(".js-plotly-plot")
    for i in range(plots.count()):
        plot = plots.nth(i)
        plot.scroll_into_view_if_needed()
        buttons = plot.locator(".modebar-btn")
        for j in range(buttons.count()):
            plot.hover()
            button = buttons.nth(j)
            pressed.append(button.get_attribute("data-title") or "")
            button.click(force=True)
            tab.wait_for_timeout(150)
    return pressed


def assert_local_toolbars(tab, outside: list[str]) -> None:
    pressed = press_every_button(tab)
    tab.wait_for_timeout(800)  # anything a button started has had time to ask
    assert pressed, "no toolbar buttons were found"
    assert not [t for t in pressed if "share" in t.lower() or "cloud" in t.lower()], pressed
    assert {"Zoom in", "Zoom out", "Reset axes"} & set(pressed)
    assert outside == []


@pytest.mark.parametrize("path", SCREENS)
def test_every_toolbar_button_on_every_screen_stays_local(page, demo_live_server, path):
    outside = block_outside(page, lambda url: url.startswith(demo_live_server.url + "/"))
    page.goto(demo_live_server.at(path))
    page.wait_for_function(DRAWN, arg=1, timeout=60_000)
    assert_local_toolbars(page, outside)


def test_every_toolbar_button_in_the_exported_html_stays_local(page, demo_db_copy, tmp_path):
    engine = db.make_engine(demo_db_copy)
    try:
        with db.session_scope(engine, write=False) as session:
            [out] = export_review(session, 1, "html", tmp_path / "review.html")
    finally:
        engine.dispose()
    outside = block_outside(page, lambda url: url == out.as_uri())
    page.goto(out.as_uri())
    page.wait_for_function(DRAWN, arg=2, timeout=60_000)
    assert_local_toolbars(page, outside)
