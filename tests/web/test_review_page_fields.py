"""The review page's many small forms: unique ids, labels that point at their own control,
action items that show their whole text, the page's times offered for the timeline."""

from __future__ import annotations

import re
from collections import Counter

from webapp.store import action_items, pages, reviews
from webapp.store import timeline as store_timeline


def ids_of(page: str) -> Counter:
    return Counter(re.findall(r'\bid="([^"]+)"', page))


def test_two_action_items_have_their_own_ids_and_labels(client, session) -> None:
    review = reviews.create_review(session, {"title": "Two actions"})
    for text in ("Warm the cache before every deploy of the checkout service", "Page less"):
        action_items.add_action_item(session, review, {"text": text, "owner": "Dana"})
    session.commit()
    page = client.get(f"/reviews/{review.id}").text
    repeated = {name: n for name, n in ids_of(page).items() if n > 1}
    assert repeated == {}
    ids = [item.id for item in review.action_items]
    for item_id in ids:
        # Each label's "for" and each control's error slot belong to that item only.
        assert f'<label for="a{item_id}-state">' in page
        assert f'id="a{item_id}-state" name="state" aria-describedby="err-a{item_id}-state"' in page
        assert f'id="err-a{item_id}-state"' in page
    # The action's text sits in a textarea that wraps, not a narrow one-line input.
    assert ">Warm the cache before every deploy of the checkout service</textarea>" in page
    # The review's own edit form keeps the ids its autosave replaces.
    edit = client.get(f"/reviews/{review.id}/edit").text
    assert 'id="err-title"' in edit and 'id="f-title"' in edit


def test_the_pages_times_are_offered_for_the_timeline(client, session) -> None:
    page_row = pages.create_page(
        session, None, "2026-11-30 14:02", "2026-11-30 15:47", "p95 > 800 ms"
    )
    review = reviews.create_review(session, {"title": "From a page", "page_id": str(page_row.id)})
    session.commit()
    text = client.get(f"/reviews/{review.id}").text
    assert 'list="page-times"' in text
    assert '<option value="2026-11-30 14:02" label="the page fired">' in text
    assert '<option value="2026-11-30 15:47" label="the page resolved">' in text
    # The offered value is what the form accepts back.
    assert 'pattern="\\d{4}-\\d{2}-\\d{2}[ T]\\d{2}:\\d{2}(:\\d{2})?"' in text


def test_a_review_without_a_page_offers_no_times(client, session) -> None:
    review = reviews.create_review(session, {"title": "No page"})
    session.commit()
    assert 'list="page-times"' not in client.get(f"/reviews/{review.id}").text


def test_a_timeline_entry_from_a_fact_names_its_explanation_once(
    client, session, make_explanation
) -> None:
    review = reviews.create_review(session, {"title": "Facts"})
    exp = make_explanation()
    store_timeline.timeline_entry_from_fact(session, review, exp, "first_outside")
    session.commit()
    text = client.get(f"/reviews/{review.id}").text
    assert text.count(f"explanation #{exp.id}") == text.count(f"from explanation #{exp.id}</span>")
    assert f"from explanation #{exp.id}</span>" in text
