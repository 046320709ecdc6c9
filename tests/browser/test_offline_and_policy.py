"""Nothing loads from elsewhere: the exported review asks for nothing at all with the
network blocked, even when its Markdown names remote images; and the app's screens work
under its Content-Security-Policy (no inline script, no eval) with no violation reported."""

from __future__ import annotations

import pytest

from webapp.store import db
from webapp.store.models import Review
from webapp.web.export import export_review

pytestmark = pytest.mark.browser

BEACONS = (
    "Graph from the vendor: ![beacon](http://198.51.100.7/pixel.png)\n\n"
    '![second](https://198.51.100.7/track.gif "title") and <img src=http://198.51.100.7/raw.png>'
)
VIOLATIONS = """
window.__violations = [];
document.addEventListener('securitypolicyviolation',
  e => window.__violations.push(e.violatedDirective + ' ' + e.blockedURI));
"""


@pytest.mark.slow  # builds the demo database once per run
def test_exported_html_makes_no_request_even_with_remote_images(page, demo_db_copy, tmp_path):
    engine = db.make_engine(demo_db_copy)
    try:
        with db.session_scope(engine) as session:
            review = session.query(Review).filter(Review.attachments.any()).first()
            review.summary = BEACONS
            review.lessons = BEACONS
        with db.session_scope(engine, write=False) as session:
            [out] = export_review(session, review.id, "html", tmp_path / "review.html")
    finally:
        engine.dispose()
    text = out.read_text(encoding="utf-8")
    assert "<img" not in text and "image: beacon" in text

    requested: list[str] = []
    page.on("request", lambda request: requested.append(request.url))
    page.route(
        "**/*",
        lambda route: route.continue_() if route.request.url == out.as_uri() else route.abort(),
    )
    page.goto(out.as_uri())
    page.wait_for_function("() => document.querySelectorAll('svg.main-svg').length >= 1")
    page.wait_for_timeout(500)
    assert [url for url in requested if url != out.as_uri()] == []


@pytest.mark.slow
@pytest.mark.parametrize(
    ("path", "figures"), [("/explain?series=1", 2), ("/rules/1", 2), ("/reviews/1", 1)]
)
def test_screens_draw_their_figures_under_the_policy(page, demo_live_server, path, figures):
    page.add_init_script(VIOLATIONS)
    response = page.goto(demo_live_server.at(path))
    assert "script-src 'self'" in response.headers["content-security-policy"]
    page.wait_for_function(
        "n => document.querySelectorAll('.js-plotly-plot svg.main-svg').length >= n",
        arg=figures,
        timeout=60_000,
    )
    page.wait_for_timeout(1000)  # let htmx panels and figures settle
    assert page.evaluate("() => window.__violations") == []
