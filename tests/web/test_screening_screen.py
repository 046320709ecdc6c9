"""The Screening screen on the demo: onsets in order, the caution, links and data out."""

from __future__ import annotations

import io
import json
import re

import pandas as pd
import pytest

from webapp.demo import PAYMENT_SLOWDOWN, QUEUE_BACKLOG, TZ

WINDOW = {
    "start": (PAYMENT_SLOWDOWN[0] - pd.Timedelta(hours=1)).isoformat(),
    "end": (PAYMENT_SLOWDOWN[1] + pd.Timedelta(hours=1)).isoformat(),
    "tz": TZ,
    "weeks": "3",
}


@pytest.fixture
def screened(demo_client):
    """The night of the slowdown screened over the queues and the latency of three hosts."""
    args = {**WINDOW, "filter": "host=api-"}
    return demo_client, args


def test_the_screen_orders_the_onsets_and_says_it_is_a_lead(screened):
    client, args = screened
    response = client.get("/screening", query_string=args)
    assert response.status_code == 200
    html = response.get_data(as_text=True)
    assert "An earlier onset is a lead, not proof of cause" in html
    when = (QUEUE_BACKLOG[0] + pd.Timedelta(minutes=2)).tz_convert(TZ)
    # The first onset sentence names the queues, which backed up before checkout slowed.
    first = re.search(r"<li>(\d+ series left their bands at [^<]*)</li>", html)
    assert first is not None and "payment.queue_depth" in first.group(1)
    assert f"{when:%H}:" in first.group(1)
    # The timeline and the small multiples are drawn from JSON beside empty divs.
    assert html.count('class="figure-data"') >= 2
    # Each small multiple links to the Explain screen of its own series.
    links = re.findall(r'<figcaption><a href="(/explain\?series=\d+[^"]*)">([^<]+)</a>', html)
    assert links and all("start=" in href for href, _ in links)
    assert "checkout.requests{host=api-1}" in html  # screened, stayed in
    assert "<td>nan</td>" not in html  # a series that stayed in has no side


def test_the_filter_narrows_what_is_screened(demo_client):
    response = demo_client.get("/screening", query_string={**WINDOW, "filter": "payment"})
    html = response.get_data(as_text=True)
    assert "of the 6 series screened" in html
    assert "checkout.latency_p95" not in html


def test_a_filter_that_matches_nothing_says_so(demo_client):
    response = demo_client.get("/screening", query_string={**WINDOW, "filter": "no-such-metric"})
    assert response.status_code == 200
    assert "There are no stored series whose key holds" in response.get_data(as_text=True)


def test_a_bad_window_is_refused_with_a_message(demo_client):
    response = demo_client.get(
        "/screening", query_string={**WINDOW, "start": WINDOW["end"], "end": WINDOW["start"]}
    )
    assert response.status_code == 400
    assert "must start before it ends" in response.get_data(as_text=True)


def test_without_a_window_only_the_form_is_shown(demo_client):
    html = demo_client.get("/screening").get_data(as_text=True)
    assert 'name="filter"' in html and "Every series screened" not in html


def test_the_screening_downloads_as_csv_and_json(demo_client):
    args = {**WINDOW, "filter": "payment"}
    as_json = demo_client.get("/screening/data.json", query_string=args)
    assert as_json.status_code == 200
    assert "attachment" in as_json.headers["Content-Disposition"]
    body = json.loads(as_json.get_data(as_text=True))
    assert body["kind"] == "screening"
    assert body["parameters"]["filter"] == "payment"
    assert len(body["rows"]) == 6
    as_csv = demo_client.get("/screening/data.csv", query_string=args)
    assert as_csv.mimetype == "text/csv"
    table = pd.read_csv(io.StringIO(as_csv.get_data(as_text=True)), comment="#")
    assert list(table["key"]) == [row["key"] for row in body["rows"]]
    assert demo_client.get("/screening/data.xml", query_string=args).status_code == 404


def test_a_page_opens_the_screen_on_its_own_window(demo_client):
    html = demo_client.get("/screening", query_string={"page": "1", "filter": "payment"})
    assert html.status_code == 200
    assert "Every series screened" in html.get_data(as_text=True)
