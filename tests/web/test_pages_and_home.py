"""Pages recorded by hand and explained from their own row; the start screen."""

from __future__ import annotations

from urllib.parse import parse_qs, urlparse


def record(client, csrf, series_id, **fields):
    data = {"csrf_token": csrf, "series": series_id, "tz": "UTC", "rule_text": "p95 above 180 ms"}
    data.update(fields)
    return client.post("/pages", data=data)


def test_record_a_page_and_explain_it(client, csrf, stored):
    response = record(
        client, csrf, stored, fired_at="2026-11-30T15:10", resolved_at="2026-11-30T16:10"
    )
    assert response.status_code == 303
    listing = client.get("/pages").get_data(as_text=True)
    assert "p95 above 180 ms" in listing and "Explain this page" in listing
    go = client.get("/pages/1/explain")
    assert go.status_code == 302
    args = parse_qs(urlparse(go.headers["Location"]).query)
    assert args["series"] == [str(stored)] and args["page"] == ["1"]
    assert args["start"] == ["2026-11-30T14:10:00+00:00"]  # an hour's margin before it fired
    assert args["end"] == ["2026-11-30T17:10:00+00:00"]
    page = client.get(go.headers["Location"]).get_data(as_text=True)
    assert "page fired" in page and "resolved" in page


def test_page_in_another_time_zone(client, csrf, stored):
    record(client, csrf, stored, fired_at="2026-11-30T16:10", tz="Europe/Berlin")
    go = client.get("/pages/1/explain")
    start = parse_qs(urlparse(go.headers["Location"]).query)["start"][0]
    # 16:10 in Berlin is 15:10 UTC; a page never resolved is looked at for 2 h, with as
    # much margin before it.
    assert start == "2026-11-30T13:10:00+00:00"


def test_page_that_resolves_before_it_fired_is_a_400(client, csrf, stored):
    response = record(
        client, csrf, stored, fired_at="2026-11-30T15:10", resolved_at="2026-11-30T14:00"
    )
    assert response.status_code == 400
    assert "cannot resolve before it fired" in response.get_data(as_text=True)


def test_page_without_a_time_or_series_is_a_400(client, csrf, stored):
    response = record(client, csrf, stored, fired_at="")
    assert response.status_code == 400
    assert "time the page fired is missing" in response.get_data(as_text=True)
    response = record(client, csrf, 999, fired_at="2026-11-30T15:10")
    assert response.status_code == 400
    assert "Choose the series" in response.get_data(as_text=True)


def test_unknown_page_is_a_404(client):
    response = client.get("/pages/5/explain")
    assert response.status_code == 404
    assert "There is no page #5" in response.get_data(as_text=True)


def test_delete_page(client, csrf, stored):
    record(client, csrf, stored, fired_at="2026-11-30T15:10")
    assert client.post("/pages/1/delete", data={"csrf_token": csrf}).status_code == 303
    assert "No pages recorded yet" in client.get("/pages").get_data(as_text=True)


def test_home_counts_and_latest_page(client, csrf, stored):
    empty = client.get("/").get_data(as_text=True)
    assert "Why did that page fire?" in empty
    record(client, csrf, stored, fired_at="2026-11-30T15:10")
    body = client.get("/").get_data(as_text=True)
    assert "Latest page" in body and 'href="/pages/1/explain"' in body
    assert '<span class="count">1</span>series' in body


def test_navigation_names_every_screen(client):
    body = client.get("/").get_data(as_text=True)
    for label in ("Imports", "Series", "Explain", "Pages", "Alert rules", "Reviews"):
        assert f">{label}</a>" in body
