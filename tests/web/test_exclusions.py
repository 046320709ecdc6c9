"""The Exclusions panel's stored list: removing a stored excluded period, and a review's
incident window shown as the review's, not removable here. Data: the synthetic latency of
tests/web/conftest.py (invented)."""

from __future__ import annotations

import re

import pandas as pd
import pytest

DAY = (pd.Timestamp("2026-11-23", tz="UTC"), pd.Timestamp("2026-11-24", tz="UTC"))
INCIDENT = (pd.Timestamp("2026-11-25 10:00", tz="UTC"), pd.Timestamp("2026-11-25 14:00", tz="UTC"))


def in_store(client, work):
    from webapp.store import db

    with client.application.app_context():
        session = db.get_session()
        result = work(session)
        session.commit()
        return result


def keep(client, series_id: int, start: pd.Timestamp, end: pd.Timestamp, every: bool = False):
    """An excluded_periods row for the series (or for every series); returns its id."""
    from webapp.store import excluded

    owner = None if every else series_id
    return in_store(
        client,
        lambda s: excluded.add_excluded(s, owner, start, end, "a bad day", every_series=every).id,
    )


def stored_rows(client, series_id: int) -> list[int]:
    from webapp.store import excluded

    return in_store(client, lambda s: [r.id for r in excluded.list_excluded(s, series_id)])


@pytest.fixture
def review_window(client, stored) -> int:
    """A review of a page on the series whose incident is left out of baselines."""
    from webapp.store import pages, reviews

    def record(session):
        page = pages.create_page(session, stored, INCIDENT[0], INCIDENT[1], "above 200 for 5min")
        review = reviews.create_review(
            session,
            {
                "title": "Checkout slow",
                "incident_start": INCIDENT[0],
                "incident_end": INCIDENT[1],
                "page_id": str(page.id),
            },
        )
        return review.id

    return in_store(client, record)


def form(series_id: int, window, token: str | None, **extra: str) -> dict[str, str]:
    data = {"series": series_id, "start": window[0].isoformat(), "end": window[1].isoformat()}
    if token is not None:
        data["csrf_token"] = token
    return data | extra


def band_figure(body: str) -> str:
    """The band panel's figure JSON, as served."""
    section = body.split('class="panel panel-band"', 1)[1].split("</section>", 1)[0]
    return re.search(r'class="figure-data">(.*?)</script>', section, re.S).group(1)


def excluded_minutes(body: str) -> int:
    """The Facts panel's "Left out of the history" (``1 d 2 h``, ``45 min``) in minutes."""
    found = re.search(r"<dt>Left out of the history</dt><dd>([^<]+)</dd>", body)
    assert found, "no time left out among the facts"
    sizes = {"d": 1440, "h": 60, "min": 1, "s": 0}
    return sum(int(n) * sizes[u] for n, u in re.findall(r"(\d+) (d|h|min|s)\b", found.group(1)))


def stored_list(body: str) -> str:
    return body.split('class="small stored-exclusions"', 1)[1].split("</ul>", 1)[0]


def test_panel_offers_a_remove_button_per_stored_period(client, stored, url_for_explain):
    row_id = keep(client, stored, *DAY)
    body = client.get(url_for_explain(stored)).get_data(as_text=True)
    listing = stored_list(body)
    assert "2026-11-23 00:00 to 2026-11-24 00:00: a bad day" in listing
    assert f'formaction="/explain/exclusions/{row_id}/remove" formmethod="post"' in listing
    assert f'hx-post="/explain/exclusions/{row_id}/remove"' in listing
    assert 'name="csrf_token"' in listing  # the token goes with the removal only
    assert "Removing a stored period lets that span teach the band again" in body


def test_remove_deletes_the_row_and_the_band_learns_the_span_again(
    client, csrf, stored, window, url_for_explain
):
    before = client.get(url_for_explain(stored, tolerance=3)).get_data(as_text=True)
    row_id = keep(client, stored, *DAY)
    kept = client.get(url_for_explain(stored, tolerance=3)).get_data(as_text=True)
    assert excluded_minutes(kept) >= 24 * 60 > excluded_minutes(before)
    assert band_figure(kept) != band_figure(before), "the stored day must matter to the band"

    response = client.post(
        f"/explain/exclusions/{row_id}/remove", data=form(stored, window, csrf, tolerance="3")
    )
    assert response.status_code == 303
    assert "tolerance=3" in response.headers["Location"], "the view's parameters are kept"
    assert stored_rows(client, stored) == []
    after = client.get(response.headers["Location"]).get_data(as_text=True)
    assert excluded_minutes(after) == excluded_minutes(before)
    assert band_figure(after) == band_figure(before), "the day teaches the band again"


def test_remove_through_htmx_answers_the_results_in_place(client, csrf, stored, window):
    row_id = keep(client, stored, *DAY)
    response = client.post(
        f"/explain/exclusions/{row_id}/remove",
        data=form(stored, window, None),
        headers={"HX-Request": "true", "X-CSRF-Token": csrf},
    )
    assert response.status_code == 200
    body = response.get_data(as_text=True)
    assert "<html" not in body and "panel-band" in body
    assert 'id="exclusions" hx-swap-oob="true"' in body
    assert "stored-exclusions" not in body, "the removed period is gone from the panel"
    assert response.headers["HX-Push-Url"].startswith(f"/explain?series={stored}")


def test_removing_an_unknown_period_is_a_404(client, csrf, stored, window):
    response = client.post("/explain/exclusions/999/remove", data=form(stored, window, csrf))
    assert response.status_code == 404
    assert "There is no stored excluded period #999" in response.get_data(as_text=True)


def test_removing_another_series_period_is_a_404(
    client, csrf, stored, window, make_csv, upload_files
):
    from webapp.store import series as store_series

    assert upload_files([(make_csv(host="api-9"), "other.csv")]).status_code == 200
    key = "checkout.latency_p95{host=api-9}"
    other = in_store(client, lambda s: store_series.find_series(s, key).id)
    row_id = keep(client, other, *DAY)
    response = client.post(f"/explain/exclusions/{row_id}/remove", data=form(stored, window, csrf))
    assert response.status_code == 404
    assert stored_rows(client, other) == [row_id], "nothing of the other series is touched"


def test_removing_needs_the_csrf_token(client, csrf, stored, window):
    row_id = keep(client, stored, *DAY)
    response = client.post(f"/explain/exclusions/{row_id}/remove", data=form(stored, window, None))
    assert response.status_code == 400
    assert "security token is missing" in response.get_data(as_text=True)
    assert stored_rows(client, stored) == [row_id]


def test_a_period_of_every_series_says_so(client, csrf, stored, url_for_explain):
    row_id = keep(client, stored, *DAY, every=True)
    listing = stored_list(client.get(url_for_explain(stored)).get_data(as_text=True))
    assert "(every series, those imported later too)" in listing
    assert re.search(
        rf'/explain/exclusions/{row_id}/remove"[^>]*aria-label="[^"]*every series', listing
    )


def test_a_review_window_links_to_its_review_without_a_remove_button(
    client, stored, review_window, url_for_explain
):
    body = client.get(url_for_explain(stored)).get_data(as_text=True)
    listing = stored_list(body)
    assert "2026-11-25 10:00 to 2026-11-25 14:00" in listing
    assert f'from <a href="/reviews/{review_window}">review #{review_window}</a>' in listing
    assert "/remove" not in listing and "<button" not in listing
    assert "switch it off in the review" in body
    assert "Removing a stored period" not in body, "nothing here can be removed"


def test_review_window_and_stored_row_side_by_side(client, stored, review_window, url_for_explain):
    row_id = keep(client, stored, *DAY)
    items = re.findall(r"<li.*?</li>", stored_list(client.get(url_for_explain(stored)).text), re.S)
    assert len(items) == 2
    first, second = items  # by start: the stored day (23 Nov), then the incident (25 Nov)
    assert f"/explain/exclusions/{row_id}/remove" in first and "review #" not in first
    assert f"review #{review_window}" in second and "<button" not in second
