"""The Peers panel: a lazy fragment of the Explain screen that fails on its own."""

from __future__ import annotations

import io
import json
import re

import pandas as pd
import pytest

from webapp.services import explain as explain_service

PEER_URL = re.compile(r'hx-get="(/explain/peers\?[^"]+)"')


@pytest.fixture
def hosts(client, upload_files, make_csv) -> dict[str, int]:
    """api-3 jumps in the last three hours of the window; api-1 and api-2 stay calm."""
    files = [
        (make_csv(host="api-3", spike=80.0, seed=3), "api-3.csv"),
        (make_csv(host="api-1", spike=0.0, seed=11), "api-1.csv"),
        (make_csv(host="api-2", spike=0.0, seed=12), "api-2.csv"),
    ]
    response = upload_files(files)
    assert response.status_code == 200, response.get_data(as_text=True)
    from webapp.store import db
    from webapp.store import series as store_series

    with client.application.app_context():
        rows = store_series.list_series(db.get_session())
    return {row.labels["host"]: row.id for row in rows}


def peers_fragment(client, url_for_explain, series_id: int, **extra) -> str:
    page = client.get(url_for_explain(series_id, **extra)).get_data(as_text=True)
    match = PEER_URL.search(page)
    assert match, "the Explain page has no lazy Peers panel"
    url = match.group(1).replace("&amp;", "&")
    response = client.get(url, headers={"HX-Request": "true"})
    assert response.status_code == 200
    return response.get_data(as_text=True)


def figure(body: str) -> dict:
    payload = re.search(
        r'<script type="application/json" class="figure-data">(.*?)</script>', body, re.S
    )
    assert payload, "no figure in the Peers panel"
    return json.loads(payload.group(1))


def test_peers_panel_says_the_jump_was_local(client, hosts, url_for_explain):
    body = peers_fragment(client, url_for_explain, hosts["api-3"])
    assert 'class="panel panel-peers"' in body and "<html" not in body
    assert "none of the 2 other series that differ only in host left theirs" in body
    rows = re.findall(r'<tr class="([^"]*)">\s*<th scope="row" title="[^"]+">([^<]+)', body)
    assert [(name.strip(), cls.strip()) for cls, name in rows] == [
        ("api-3", "peer-target peer-left"),
        ("api-1", ""),
        ("api-2", ""),
    ]
    assert 'title="above the band">▲</span> 2026-11-30' in body
    fig = figure(body)
    widths = {t["name"]: t["line"]["width"] for t in fig["data"]}
    assert set(widths) == {"api-3 (explained)", "api-1", "api-2"}
    assert widths["api-3 (explained)"] > max(widths["api-1"], widths["api-2"])
    dashes = {t["line"]["dash"] for t in fig["data"]}
    assert len(dashes) == 3  # told apart without colour
    assert fig["data"][-1]["name"] == "api-3 (explained)"  # drawn on top


def test_calm_host_sees_its_peer_leave(client, hosts, url_for_explain):
    body = peers_fragment(client, url_for_explain, hosts["api-1"])
    assert "api-1 stayed inside its expected band, but 1 of the 2 other series" in body
    assert "(api-3)" in body


def test_series_without_peers_gets_no_panel(client, stored, url_for_explain):
    page = client.get(url_for_explain(stored)).get_data(as_text=True)
    assert "panel-band" in page and not PEER_URL.search(page)
    direct = client.get(url_for_explain(stored).replace("/explain?", "/explain/peers?"))
    assert direct.status_code == 200 and direct.get_data(as_text=True) == ""


def test_bad_parameters_are_a_clear_400(client, hosts, url_for_explain):
    url = url_for_explain(hosts["api-3"], tolerance="lots").replace("/explain?", "/explain/peers?")
    response = client.get(url)
    assert response.status_code == 400
    assert "band width" in response.get_data(as_text=True)


def test_a_failing_comparison_leaves_the_other_panels_standing(
    client, hosts, url_for_explain, monkeypatch
):
    def broken(*args, **kwargs):
        raise RuntimeError("disk on fire")

    monkeypatch.setattr(explain_service, "compare_with_peers", broken)
    page = client.get(url_for_explain(hosts["api-3"], tolerance=3.5))
    assert page.status_code == 200
    text = page.get_data(as_text=True)
    for panel in ("sentences", "band", "overlay", "components", "facts"):
        assert f"panel-{panel}" in text
    assert "figure-data" in text.split('class="panel panel-band"', 1)[1].split("</section>", 1)[0]
    body = peers_fragment(client, url_for_explain, hosts["api-3"], tolerance=3.5)
    assert "The peers could not be compared; see the server log" in body
    assert "disk on fire" not in body and "Traceback" not in body


def test_an_unusable_window_is_explained_in_the_panel(client, hosts):
    # The window lies before every point: no history, nothing to fit, a message per peer.
    url = f"/explain/peers?series={hosts['api-3']}&start=2026-10-01T00:00&end=2026-10-01T06:00"
    body = client.get(url, headers={"HX-Request": "true"}).get_data(as_text=True)
    assert 'class="panel panel-peers"' in body
    assert "api-3 could not be compared with its peers: the series has no values" in body
    assert "No peer could be explained over this window." in body
    assert body.count('<td colspan="4" class="muted">') == 3


@pytest.fixture
def fleet(client, upload_files, make_csv) -> dict[str, int]:
    """Twenty hosts; api-1 to api-5 jump together in the last three hours of the window."""
    files = [
        (make_csv(host=f"api-{n}", spike=80.0 if n <= 5 else 0.0, seed=100 + n), f"api-{n}.csv")
        for n in range(1, 21)
    ]
    response = upload_files(files)
    assert response.status_code == 200, response.get_data(as_text=True)
    from webapp.store import db
    from webapp.store import series as store_series

    with client.application.app_context():
        rows = store_series.list_series(db.get_session())
    return {row.labels["host"]: row.id for row in rows}


def test_a_fleet_shows_its_group_and_its_top_peers_not_every_host(client, fleet, url_for_explain):
    body = peers_fragment(client, url_for_explain, fleet["api-1"])
    assert "Peers that left together" in body
    group = re.search(r"<strong>Group 1</strong>: (\d+) series", body)
    assert group is not None and group.group(1) == "5"
    names = re.findall(r'<th scope="row" title="[^"]+">([^<]+)', body)
    assert len(names) == 13  # the explained series and the 12 that went furthest
    assert {n.strip() for n in names[:5]} == {f"api-{n}" for n in range(1, 6)}
    fig = figure(body)
    lines = [t["name"] for t in fig["data"] if t.get("name")]
    assert "median of the peers" in lines
    assert any(name.startswith("middle 80 % of the 19 peers") for name in lines)
    hosts = [name for name in lines if name.startswith("api-")]
    assert len(hosts) == 7  # the explained series and six peers, not twenty lines
    assert "The download has every peer" in body


def test_the_peer_comparison_downloads_with_every_peer(client, fleet, url_for_explain):
    url = url_for_explain(fleet["api-1"]).replace("/explain?", "/explain/peers/data.json?")
    body = json.loads(client.get(url).get_data(as_text=True))
    assert body["kind"] == "peers" and body["parameters"]["label"] == "host"
    assert len(body["rows"]) == 20
    assert sum(r["group"] is not None for r in body["rows"]) == 5
    text = client.get(url.replace("data.json", "data.csv")).get_data(as_text=True)
    table = pd.read_csv(io.StringIO(text), comment="#")
    assert sorted(table["name"]) == sorted(r["name"] for r in body["rows"])


def test_the_panel_reuses_the_explain_screens_fit_of_the_series(
    client, hosts, url_for_explain, monkeypatch
) -> None:
    import webapp.analysis._peers as peers_core

    page = client.get(url_for_explain(hosts["api-3"])).get_data(as_text=True)
    url = PEER_URL.search(page).group(1).replace("&amp;", "&")
    explain_service._explanations.items.clear()  # as if the panel came alone
    alone = client.get(url).get_data(as_text=True)  # fits api-3 itself

    explain_service._comparisons.items.clear()
    client.get(url_for_explain(hosts["api-3"]))  # the Explain screen fits it again

    def no_second_fit(*_args, **_kwargs):
        raise AssertionError("the panel fitted the series the Explain screen had fitted")

    monkeypatch.setattr(peers_core, "explain", no_second_fit)
    assert client.get(url).get_data(as_text=True) == alone  # the same panel
