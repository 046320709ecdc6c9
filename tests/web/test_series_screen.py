"""The Series screen: search, sparkline, coverage, open to explain."""

from __future__ import annotations


def test_series_list_shows_sparkline_and_coverage(client, stored):
    body = client.get("/series").get_data(as_text=True)
    assert "checkout.latency_p95{host=api-3}" in body
    assert '<svg class="sparkline"' in body and '<path d="M' in body
    assert "100%" in body


def test_search_by_label_and_metric(client, stored, upload_files, make_csv):
    upload_files([(make_csv(weeks=1, host="db-9"), "db.csv")])
    body = client.get("/series?q=host%3Ddb-9").get_data(as_text=True)
    assert "{host=db-9}" in body and "{host=api-3}" not in body
    nothing = client.get("/series?q=nomatch").get_data(as_text=True)
    assert "No series match" in nothing


def test_a_long_list_shows_its_first_rows_and_says_how_many_there_are(
    client, stored, upload_files, make_csv, monkeypatch
):
    from webapp.web.views import series as series_view

    monkeypatch.setattr(series_view, "MAX_ROWS", 1)
    upload_files([(make_csv(weeks=1, host="db-9"), "db.csv")])
    body = client.get("/series").get_data(as_text=True)
    assert body.count('<svg class="sparkline"') == 1
    assert "The first 1 of 2 series by name; search to narrow the list." in body
    narrowed = client.get("/series?q=db-9").get_data(as_text=True)
    assert "{host=db-9}" in narrowed and "The first" not in narrowed


def test_htmx_search_returns_only_rows(client, stored):
    body = client.get("/series?q=latency", headers={"HX-Request": "true"}).get_data(as_text=True)
    assert body.lstrip().startswith("<tr>") and "<html" not in body


def test_open_series_goes_to_explain(client, stored):
    response = client.get(f"/series/{stored}")
    assert response.status_code == 302
    assert response.headers["Location"].startswith(f"/explain?series={stored}")


def test_unknown_series_is_a_404(client):
    response = client.get("/series/999")
    assert response.status_code == 404
    assert "There is no series #999" in response.get_data(as_text=True)


def test_sparkline_path_lifts_the_pen_at_gaps():
    from webapp.web.charts.sparkline import sparkline_path

    path = sparkline_path([1.0, 2.0, None, 3.0, 4.0])
    assert path.count("M") == 2 and path.count("L") == 2
    assert sparkline_path([None, None]) == ""
