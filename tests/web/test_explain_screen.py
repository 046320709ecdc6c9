"""The Explain screen: live controls, bad parameters, zoom data, saved explanations."""

from __future__ import annotations

import json
import re

import numpy as np


def figure_data(body: str, panel: str) -> dict:
    """The JSON of the figure in one panel of an Explain page."""
    section = body.split(f'class="panel panel-{panel}"', 1)[1].split("</section>", 1)[0]
    payload = re.search(
        r'<script type="application/json" class="figure-data">(.*?)</script>', section, re.S
    )
    assert payload, f"no figure in the {panel} panel"
    return json.loads(payload.group(1))


def trace(fig: dict, name: str) -> dict:
    return next(t for t in fig["data"] if t.get("name") == name)


def decode(values) -> np.ndarray:
    if isinstance(values, dict):
        import base64

        return np.frombuffer(base64.b64decode(values["bdata"]), dtype=values["dtype"])
    return np.asarray(values, dtype=float)


def band_edges(body: str) -> list[np.ndarray]:
    """Lower and upper edge of the expected band as drawn on an Explain page."""
    fig = figure_data(body, "band")
    return [decode(t["y"]) for t in fig["data"] if t.get("name") == "expected band"]


def test_chooser_lists_series_and_pages(client, stored):
    body = client.get("/explain").get_data(as_text=True)
    assert "checkout.latency_p95{host=api-3}" in body
    assert "Start from a recorded page" in body


def test_explain_page_shows_every_panel_top_to_bottom(client, stored, url_for_explain):
    response = client.get(url_for_explain(stored))
    assert response.status_code == 200
    body = response.get_data(as_text=True)
    order = [
        body.index(f"panel-{p}") for p in ("sentences", "band", "overlay", "components", "facts")
    ]
    assert order == sorted(order)
    band = figure_data(body, "band")
    names = {t.get("name") for t in band["data"]}
    assert {"expected band", "expected", "value", "above the band"} <= names
    assert band["layout"]["xaxis"]["title"]["text"] == "time (UTC)"
    assert "Save explanation" in body


def test_tolerance_moves_the_band(client, stored, url_for_explain):
    narrow = figure_data(
        client.get(url_for_explain(stored, tolerance=2)).get_data(as_text=True), "band"
    )
    wide = figure_data(
        client.get(url_for_explain(stored, tolerance=6)).get_data(as_text=True), "band"
    )
    upper_narrow = decode(trace(narrow, "expected band")["y"]) if False else None
    edges_narrow = [decode(t["y"]) for t in narrow["data"] if t.get("name") == "expected band"]
    edges_wide = [decode(t["y"]) for t in wide["data"] if t.get("name") == "expected band"]
    assert upper_narrow is None
    assert np.nanmax(edges_wide[1]) > np.nanmax(edges_narrow[1])


def test_htmx_request_gets_the_results_fragment(client, stored, url_for_explain):
    body = client.get(
        url_for_explain(stored, tolerance=4), headers={"HX-Request": "true"}
    ).get_data(as_text=True)
    assert "<html" not in body and "panel-band" in body
    assert 'id="exclusions" hx-swap-oob="true"' in body


def test_unknown_series_is_a_404(client, url_for_explain):
    response = client.get(url_for_explain(4242))
    assert response.status_code == 404
    assert "There is no series #4242" in response.get_data(as_text=True)


def test_bad_tolerance_is_a_400(client, stored, url_for_explain):
    for bad in ("abc", "-1", "100", "nan"):
        response = client.get(url_for_explain(stored, tolerance=bad))
        assert response.status_code == 400
        assert "band width" in response.get_data(as_text=True)


def test_bad_window_is_a_400(client, stored):
    response = client.get(f"/explain?series={stored}&start=2026-11-30T10:00&end=2026-11-30T09:00")
    assert response.status_code == 400
    assert "The window must start before it ends" in response.get_data(as_text=True)
    response = client.get(f"/explain?series={stored}&start=yesterday&end=2026-11-30T09:00")
    assert response.status_code == 400
    assert "is not a time" in response.get_data(as_text=True)


def test_bad_history_and_time_zone_are_400s(client, stored, url_for_explain):
    response = client.get(url_for_explain(stored, weeks=9))
    assert response.status_code == 400 and "from 1 to 8" in response.get_data(as_text=True)
    response = client.get(url_for_explain(stored, tz="Atlantis/Capital"))
    assert response.status_code == 400 and "Unknown time zone" in response.get_data(as_text=True)


def test_seasonal_time_zone_moves_the_axes(client, stored, url_for_explain):
    body = client.get(url_for_explain(stored, tz="Asia/Tokyo")).get_data(as_text=True)
    band = figure_data(body, "band")
    assert band["layout"]["xaxis"]["title"]["text"] == "time (Asia/Tokyo)"
    assert 'value="2026-12-01 03:00"' in body  # window end 18:00 UTC is 03:00 next day in Tokyo


def test_excluded_period_is_listed_and_kept_in_the_address(client, stored, url_for_explain):
    body = client.get(
        url_for_explain(stored, exclude_start="2026-11-20T00:00", exclude_end="2026-11-21T00:00")
    ).get_data(as_text=True)
    assert 'name="exclude" value="2026-11-20T00:00:00+00:00/2026-11-21T00:00:00+00:00"' in body
    bad = client.get(url_for_explain(stored, exclude="2026-11-21T00:00/2026-11-20T00:00"))
    assert bad.status_code == 400 and "must start before it ends" in bad.get_data(as_text=True)


def test_zoom_returns_finer_data_for_the_range(client, stored, url_for_explain):
    base = url_for_explain(stored).replace("/explain?", "/explain/figure/band?")
    response = client.get(base + "&from=2026-11-30 15:00&to=2026-11-30 16:00")
    assert response.status_code == 200
    fig = response.get_json()
    x = decode(trace(fig, "value")["x"])
    assert len(x) >= 12  # every 5-minute point of the hour is there
    bad = client.get(base + "&from=later&to=sooner")
    assert bad.status_code == 400
    assert client.get(base.replace("/band?", "/pie?")).status_code == 404


def test_one_failing_panel_leaves_the_others(client, stored, url_for_explain, monkeypatch):
    from webapp.web.charts import explain as figures

    def broken(*args, **kwargs):
        raise RuntimeError("overlay exploded")

    monkeypatch.setattr(figures, "overlay_figure", broken)
    response = client.get(url_for_explain(stored, tolerance=3.5))
    assert response.status_code == 200
    body = response.get_data(as_text=True)
    assert "This figure could not be drawn" in body
    assert figure_data(body, "band")["data"] and figure_data(body, "components")["data"]


def test_save_then_reopen_exactly_as_saved_after_the_data_is_gone(
    client, csrf, stored, url_for_explain, window
):
    live = client.get(url_for_explain(stored, tolerance=4)).get_data(as_text=True)
    form = {
        "csrf_token": csrf,
        "series": stored,
        "start": window[0].isoformat(),
        "end": window[1].isoformat(),
        "tolerance": "4",
        "title": "Night of the <jump>",
    }
    response = client.post("/explain/save", data=form)
    assert response.status_code == 303
    saved_url = response.headers["Location"]
    first = client.get(saved_url).get_data(as_text=True)
    assert "Night of the &lt;jump&gt;" in first
    assert client.post("/imports/1/delete", data={"csrf_token": csrf}).status_code == 303
    again = client.get(saved_url).get_data(as_text=True)
    for panel in ("band", "components"):
        assert figure_data(again, panel)["data"] == figure_data(first, panel)["data"]
    live_upper = [
        decode(t["y"])
        for t in figure_data(live, "band")["data"]
        if t.get("name") == "expected band"
    ]
    saved_upper = [
        decode(t["y"])
        for t in figure_data(again, "band")["data"]
        if t.get("name") == "expected band"
    ]
    np.testing.assert_allclose(saved_upper[1], live_upper[1])
    listing = client.get("/explanations").get_data(as_text=True)
    assert "Night of the &lt;jump&gt;" in listing


def test_save_needs_the_csrf_token(client, stored, window):
    response = client.post(
        "/explain/save",
        data={"series": stored, "start": window[0].isoformat(), "end": window[1].isoformat()},
    )
    assert response.status_code == 400


def test_unknown_saved_explanation_is_a_404(client):
    response = client.get("/explanations/77")
    assert response.status_code == 404
    assert "There is no saved explanation #77" in response.get_data(as_text=True)


def test_delete_saved_explanation(client, csrf, stored, window):
    form = {
        "csrf_token": csrf,
        "series": stored,
        "start": window[0].isoformat(),
        "end": window[1].isoformat(),
    }
    saved = client.post("/explain/save", data=form).headers["Location"]
    number = saved.rsplit("/", 1)[1]
    response = client.post(f"/explanations/{number}/delete", data={"csrf_token": csrf})
    assert response.status_code == 303
    assert client.get(saved).status_code == 404


def test_keep_exclusion_stores_it_for_every_baseline(client, csrf, stored, window):
    span = "2026-11-20T00:00:00+00:00/2026-11-21T00:00:00+00:00"
    form = {
        "csrf_token": csrf,
        "series": stored,
        "start": window[0].isoformat(),
        "end": window[1].isoformat(),
        "exclude": span,
        "keep": span,
    }
    response = client.post("/explain/exclusions", data=form)
    assert response.status_code == 303
    assert "exclude=" not in response.headers["Location"]
    body = client.get(response.headers["Location"]).get_data(as_text=True)
    assert "Stored for this series" in body and "2026-11-20 00:00" in body


def test_saved_explanation_links_back_to_a_live_explain_with_its_parameters(
    client, csrf, stored, window
):
    form = {
        "csrf_token": csrf,
        "series": stored,
        "start": window[0].isoformat(),
        "end": window[1].isoformat(),
        "tolerance": "4.5",
        "weeks": "2",
        "exclude": "2026-11-20T00:00:00+00:00/2026-11-21T00:00:00+00:00",
    }
    saved = client.get(client.post("/explain/save", data=form).headers["Location"])
    body = saved.get_data(as_text=True)
    link = re.search(r'href="(/explain\?[^"]+)"[^>]*>Explain again', body).group(1)
    from html import unescape
    from urllib.parse import parse_qs, urlparse

    args = parse_qs(urlparse(unescape(link)).query)
    assert args["tolerance"] == ["4.5"] and args["weeks"] == ["2"]
    assert args["exclude"] == ["2026-11-20T00:00:00+00:00/2026-11-21T00:00:00+00:00"]
    assert client.get(unescape(link)).status_code == 200


def test_window_without_data_says_where_the_data_is(client, stored):
    response = client.get(f"/explain?series={stored}&start=2025-01-01T00:00&end=2025-01-02T00:00")
    assert response.status_code == 200
    body = response.get_data(as_text=True)
    assert "has no data from 2024-11-20 00:00 to 2025-01-02 00:00 UTC" in body
    assert "Its data runs from 2026-11-09 18:00" in body
    assert body.count("Nothing to draw") == 3  # the figures point at the reason, once each


def test_saved_explanation_zooms_from_its_stored_frame(client, csrf, stored, window):
    form = {
        "csrf_token": csrf,
        "series": stored,
        "start": window[0].isoformat(),
        "end": window[1].isoformat(),
    }
    saved = client.post("/explain/save", data=form).headers["Location"]
    assert client.post("/imports/1/delete", data={"csrf_token": csrf}).status_code == 303
    response = client.get(saved + "/figure/band?from=2026-11-30 15:00&to=2026-11-30 16:00")
    assert response.status_code == 200
    assert len(decode(trace(response.get_json(), "value")["x"])) >= 12


def test_band_panel_states_the_coverage_the_band_held(client, stored, url_for_explain):
    body = client.get(url_for_explain(stored)).get_data(as_text=True)
    panel = body.split('class="panel panel-band"', 1)[1].split("</section>", 1)[0]
    assert re.search(r"this band held\s+\d+\.\d% of samples; it is built to hold 99\.7%", panel)
