"""A saved explanation keeps its peer comparison and its screening: they reopen as saved
after the data changed, and appear in the review and in both exports."""

from __future__ import annotations

import io
import json

import pandas as pd
import pytest

from webapp.services.review_export import review_context
from webapp.store import attachments as store_attachments
from webapp.store import db, reviews
from webapp.web.export import _environment, export_review


@pytest.fixture
def hosts(client, upload_files, make_csv) -> dict[str, int]:
    """api-3 jumps in the last three hours of the window; api-1 and api-2 stay calm."""
    files = [
        (make_csv(host="api-3", spike=80.0, seed=3), "api-3.csv"),
        (make_csv(host="api-1", spike=0.0, seed=11), "api-1.csv"),
        (make_csv(host="api-2", spike=0.0, seed=12), "api-2.csv"),
    ]
    assert upload_files(files).status_code == 200
    from webapp.store import series as store_series

    with client.application.app_context():
        rows = store_series.list_series(db.get_session())
    return {row.labels["host"]: row.id for row in rows}


@pytest.fixture
def saved(client, csrf, hosts, window) -> str:
    form = {
        "csrf_token": csrf,
        "series": hosts["api-3"],
        "start": window[0].isoformat(),
        "end": window[1].isoformat(),
        "with_screening": "on",
        "title": "api-3 jumps",
    }
    response = client.post("/explain/save", data=form)
    assert response.status_code == 303
    return response.headers["Location"]


def test_saving_keeps_the_peers_and_the_screening(client, saved):
    number = int(saved.rsplit("/", 1)[1])
    with client.application.app_context():
        from webapp.store import explanations

        row = explanations.get_explanation(db.get_session(), number)
        assert row.peers["kind"] == "peers"
        assert row.peers["parameters"]["label"] == "host"
        assert {r["name"] for r in row.peers["rows"]} == {"api-1", "api-2", "api-3"}
        assert row.screening["kind"] == "screening"
        assert row.screening["engine_version"] and row.screening["screen_version"]
        onsets = [r["key"] for r in row.screening["rows"] if r["onset"]]
        assert onsets == ["checkout.latency_p95{host=api-3}"]
        assert any("lead, not proof of cause" in s for s in row.screening["summary"])


def test_they_reopen_as_saved_after_the_data_changed(client, csrf, saved, make_csv, upload_files):
    first = client.get(saved).get_data(as_text=True)
    assert "Peers, as saved" in first and "the screening, as saved" in first
    # The data changes: every import undone, and api-1 imported again with its own jump.
    for number in (1, 2, 3):
        response = client.post(f"/imports/{number}/delete", data={"csrf_token": csrf})
        assert response.status_code == 303
    jumped = make_csv(host="api-1", spike=90.0, seed=11)
    assert upload_files([(jumped, "new.csv")]).status_code == 200
    again = client.get(saved).get_data(as_text=True)
    start = first.index("Peers, as saved")
    assert again[again.index("Peers, as saved") :] == first[start:]


def test_the_saved_explanation_downloads_with_them(client, saved):
    body = json.loads(client.get(saved + "/data.json").get_data(as_text=True))
    assert body["parameters"]["peers"]["kind"] == "peers"
    assert body["parameters"]["screening"]["kind"] == "screening"
    assert "value" in body["rows"][0] and "expected" in body["rows"][0]
    text = client.get(saved + "/data.csv").get_data(as_text=True)
    table = pd.read_csv(io.StringIO(text), comment="#")
    assert len(table) == len(body["rows"])
    assert client.get(saved + "/data.txt").status_code == 404


def review_with(client, saved) -> int:
    number = int(saved.rsplit("/", 1)[1])
    with client.application.app_context():
        session = db.get_session()
        review = reviews.create_review(
            session,
            {
                "title": "Checkout jump",
                "incident_start": "2026-11-30T15:00",
                "incident_end": "2026-11-30T18:00",
            },
        )
        store_attachments.attach_explanation(session, review, number, caption="api-3")
        session.commit()
        return review.id


def test_the_review_and_its_exports_show_them(client, saved, tmp_path):
    review_id = review_with(client, saved)
    page = client.get(f"/reviews/{review_id}").get_data(as_text=True)
    assert "Peers, as saved" in page and "the screening, as saved" in page
    assert "/screening?start=" in page  # screen every series over the incident
    with client.application.app_context():
        session = db.get_session()
        (html_file,) = export_review(session, review_id, "html", tmp_path / "review.html")
        markdown = (
            _environment()
            .get_template("export/review.md")
            .render(**review_context(session, review_id))
        )
    html = html_file.read_text()
    assert "Peers, as saved" in html and "the screening, as saved" in html
    assert "**Peers, as saved:**" in markdown
    assert "| checkout.latency_p95{host=api-3} | 2026-11-30 " in markdown
    assert "lead, not proof of cause" in markdown


def test_the_live_explanation_downloads(client, hosts, url_for_explain, window):
    url = url_for_explain(hosts["api-3"]).replace("/explain?", "/explain/data.json?")
    body = json.loads(client.get(url).get_data(as_text=True))
    assert body["kind"] == "explanation"
    assert body["parameters"]["tolerance"] == 3.0
    csv_url = url.replace("data.json", "data.csv")
    table = pd.read_csv(io.StringIO(client.get(csv_url).get_data(as_text=True)), comment="#")
    assert len(table) == len(body["rows"])
    page = client.get(url_for_explain(hosts["api-3"])).get_data(as_text=True)
    assert "/explain/data.csv?" in page and "/screening?" in page
