"""Two chromium tabs editing one review: the second save gets the conflict panel with both
texts, autosave stops instead of writing over the newer version, and the first text stays
stored until the reader chooses to save theirs in its place."""

from __future__ import annotations

import pytest

from webapp.store import db, reviews
from webapp.store.models import Review

pytestmark = pytest.mark.browser

FORM = {"title": "Search timeouts at noon", "summary": "Timeouts rose at noon."}


def stored_summary(app, review_id: int) -> str:
    with db.session_scope(db.get_engine(app), write=False) as session:
        return session.get(Review, review_id).summary


def test_two_tabs_the_second_save_is_refused_with_both_texts(live_server, page, screenshot):
    with db.session_scope(db.get_engine(live_server.app)) as session:
        review_id = reviews.create_review(session, FORM).id
    edit = live_server.at(f"/reviews/{review_id}/edit")
    tab_a, tab_b = page, page.context.new_page()
    tab_a.goto(edit)
    tab_b.goto(edit)

    tab_a.fill("#f-summary", "A: the index rebuild starved the search nodes.")
    tab_a.click("button[type=submit]:has-text('Save')")
    tab_a.wait_for_url(f"**/reviews/{review_id}")

    tab_b.fill("#f-summary", "B: a slow query from the new report.")
    with tab_b.expect_navigation():
        tab_b.click("#review-form .autosave-bar button[type=submit]")
    panel = tab_b.locator("#edit-conflict")
    assert panel.is_visible()
    assert tab_b.input_value("#theirs-summary") == "A: the index rebuild starved the search nodes."
    assert tab_b.input_value("#yours-summary") == "B: a slow query from the new report."
    assert tab_b.input_value("#f-summary") == "B: a slow query from the new report."
    screenshot(tab_b, "conflict")
    assert stored_summary(live_server.app, review_id).startswith("A: the index rebuild")

    # Typing on while the panel is shown sends no autosave: nothing overwrites theirs.
    autosaves: list[str] = []
    tab_b.on("request", lambda r: autosaves.append(r.url) if "/autosave" in r.url else None)
    tab_b.fill("#f-lessons", "Check new reports against production data.")
    tab_b.press("#f-lessons", "End")
    tab_b.wait_for_timeout(3_000)
    assert autosaves == []
    assert stored_summary(live_server.app, review_id).startswith("A: the index rebuild")

    with tab_b.expect_navigation():
        tab_b.click("button[name=overwrite_version]")
    assert stored_summary(live_server.app, review_id) == "B: a slow query from the new report."


def test_autosave_against_a_newer_version_stops_and_shows_both(live_server, page):
    with db.session_scope(db.get_engine(live_server.app)) as session:
        review_id = reviews.create_review(session, FORM).id
    edit = live_server.at(f"/reviews/{review_id}/edit")
    tab_a, tab_b = page, page.context.new_page()
    tab_a.goto(edit)
    tab_b.goto(edit)
    tab_a.fill("#f-impact", "A: searches failed for 20 minutes.")
    tab_a.press("#f-impact", "End")
    tab_a.wait_for_selector("#autosave-status:has-text('Draft saved')")

    tab_b.fill("#f-impact", "B: one customer in ten saw errors.")
    tab_b.press("#f-impact", "End")
    tab_b.wait_for_selector("#edit-conflict")
    assert "Autosave is paused" in tab_b.inner_text("#edit-conflict")
    assert "Not saved at all" in tab_b.inner_text("#autosave-status")
    assert tab_b.input_value("#theirs-impact") == "A: searches failed for 20 minutes."
    assert tab_b.input_value("#yours-impact") == "B: one customer in ten saw errors."
    with db.session_scope(db.get_engine(live_server.app), write=False) as session:
        assert session.get(Review, review_id).impact == "A: searches failed for 20 minutes."
