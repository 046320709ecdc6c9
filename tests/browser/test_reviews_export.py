"""Reviews in a real browser: the exported HTML opens from disk with the network blocked and
draws every figure; the editor autosaves and never loses typed text."""

from __future__ import annotations

import re

import pytest

from webapp.store import db
from webapp.store import reviews as store_reviews
from webapp.store.models import Review
from webapp.web.export import export_review

pytestmark = pytest.mark.browser


def _block_network(tab) -> list[str]:
    """Abort every request that is not for a local file; return the list of those tried."""
    tried: list[str] = []

    def handle(route) -> None:
        url = route.request.url
        if url.startswith("file:"):
            route.continue_()
        else:
            tried.append(url)
            route.abort()

    tab.route("**/*", handle)
    return tried


@pytest.mark.slow  # builds the demo database once per run
def test_exported_html_draws_every_figure_offline(page, demo_db_copy, tmp_path, screenshot):
    engine = db.make_engine(demo_db_copy)
    try:
        with db.session_scope(engine) as session:
            review = session.query(Review).filter(Review.attachments.any()).first()
            assert review is not None, "the demo should hold a review with evidence"
            [out] = export_review(session, review.id, "html", tmp_path / "review.html")
    finally:
        engine.dispose()
    expected = len(re.findall(r'class="plotly-graph-div"', out.read_text(encoding="utf-8")))
    assert expected >= 2

    tried = _block_network(page)
    page.goto(out.as_uri())
    page.wait_for_function(
        "n => document.querySelectorAll('.js-plotly-plot svg.main-svg').length >= n",
        arg=expected,
    )
    drawn = page.evaluate(
        """() => [...document.querySelectorAll('.js-plotly-plot')]
                 .filter(div => div.querySelector('svg.main-svg .scatterlayer path'))
                 .length"""
    )
    assert drawn == expected
    assert tried == []  # nothing was fetched: the file carries plotly.js itself
    screenshot(page, "exported-html")


@pytest.fixture
def draft(session) -> Review:
    review = store_reviews.create_review(
        session,
        {
            "title": "Checkout latency over the lunch peak",
            "incident_start": "2026-11-30 14:00",
            "incident_end": "2026-11-30 16:00",
        },
    )
    session.commit()
    return review


def test_editor_autosaves_and_keeps_typed_text(page, live_server, draft, session, screenshot):
    page.goto(live_server.at(f"/reviews/{draft.id}/edit"))
    page.locator("#f-summary").press_sequentially("Typed in the browser, saved by itself.")
    page.wait_for_function(
        "() => document.querySelector('#autosave-status').textContent.includes('Draft saved')"
    )
    session.rollback()
    session.expire_all()
    assert session.get(Review, draft.id).summary == "Typed in the browser, saved by itself."
    session.commit()  # end the read: the app's next write needs the lock

    page.fill("#f-lessons", "A lesson typed just before a mistake.")
    page.fill("#f-title", "")
    page.click("button[type=submit]")
    page.wait_for_selector("#err-title .notice-error")
    assert "A review needs a title." in page.inner_text("#err-title")
    assert page.input_value("#f-lessons") == "A lesson typed just before a mistake."
    assert page.input_value("#f-summary") == "Typed in the browser, saved by itself."
    screenshot(page, "validation-keeps-text")


def test_review_page_controls_are_labelled(page, live_server, draft, unlabelled) -> None:
    page.goto(live_server.at(f"/reviews/{draft.id}"))
    assert "Retiring an alert can hide a real failure" in page.inner_text("#verdict")
    assert unlabelled(page) == []
