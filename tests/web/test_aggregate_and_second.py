"""A fleet aggregate explained like any series, and a second series over the band."""

from __future__ import annotations

import io
import json
import re
from urllib.parse import urlencode

import pandas as pd
import pytest


@pytest.fixture
def hosts(client, upload_files, make_csv) -> dict[str, int]:
    files = [
        (make_csv(host="api-3", spike=80.0, seed=3), "api-3.csv"),
        (make_csv(host="api-1", spike=0.0, seed=11), "api-1.csv"),
        (make_csv(host="api-2", spike=0.0, seed=12), "api-2.csv"),
    ]
    assert upload_files(files).status_code == 200
    from webapp.store import db
    from webapp.store import series as store_series

    with client.application.app_context():
        rows = store_series.list_series(db.get_session())
    return {row.labels["host"]: row.id for row in rows}


def figure_data(html: str, index: int = 0) -> dict:
    payloads = re.findall(
        r'<script type="application/json" class="figure-data">(.*?)</script>', html, re.S
    )
    return json.loads(payloads[index])


def aggregate_url(window, how: str = "max", path: str = "/explain/aggregate") -> str:
    args = {
        "metric": "checkout.latency_p95",
        "how": how,
        "start": window[0].isoformat(),
        "end": window[1].isoformat(),
    }
    return f"{path}?{urlencode(args)}"


def test_the_chooser_offers_the_aggregate(client, hosts):
    html = client.get("/explain").get_data(as_text=True)
    assert 'action="/explain/aggregate"' in html
    assert '<option value="checkout.latency_p95"' in html


def test_the_max_over_hosts_is_explained_like_a_series(client, hosts, window):
    response = client.get(aggregate_url(window))
    assert response.status_code == 200
    html = response.get_data(as_text=True)
    assert "max of checkout.latency_p95 over host (3 series)" in html
    # api-3's jump lifts the max over the hosts out of its band: the sentences say so.
    assert "(3 series) was outside the expected band for 3 h" in html
    band = figure_data(html)
    assert any(t.get("name") == "expected band" for t in band["data"])


def test_the_aggregate_downloads(client, hosts, window):
    body = json.loads(client.get(aggregate_url(window, "p50", "/explain/aggregate/data.json")).text)
    assert body["kind"] == "explanation"
    assert body["parameters"]["aggregate"] == "p50"
    text = client.get(aggregate_url(window, "p50", "/explain/aggregate/data.csv")).text
    assert len(pd.read_csv(io.StringIO(text), comment="#")) == len(body["rows"])


def test_a_bad_aggregate_is_refused_with_a_message(client, hosts, window):
    response = client.get(aggregate_url(window, how="p99"))
    assert response.status_code == 400
    assert "must be one of sum, mean, p50, p95, max" in response.get_data(as_text=True)
    single = aggregate_url(window).replace("checkout.latency_p95", "checkout.errors")
    assert "needs two stored series" in client.get(single).get_data(as_text=True)


def test_a_second_series_is_drawn_on_its_own_axis(client, hosts, url_for_explain):
    html = client.get(url_for_explain(hosts["api-3"], second=hosts["api-1"])).get_data(as_text=True)
    band = figure_data(html)
    second = [t for t in band["data"] if t.get("yaxis") == "y2"]
    assert len(second) == 1 and second[0]["name"] == "checkout.latency_p95{host=api-1} (right axis)"
    assert band["layout"]["yaxis2"]["overlaying"] == "y"
    plain = figure_data(client.get(url_for_explain(hosts["api-3"])).get_data(as_text=True))
    assert "yaxis2" not in plain["layout"]
    missing = client.get(url_for_explain(hosts["api-3"], second=999)).get_data(as_text=True)
    assert "There is no series #999 to lay over the band." in missing
