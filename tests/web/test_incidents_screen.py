"""Incidents as records: merging, the list import with its line-by-line refusals, a page
marked as a real incident, a second review of the same trouble, and the migration that
carries reviews' windows and verdicts over. Data are synthetic (tests/web/test_rules_screen.py
fixtures and tests/conftest.py)."""

from __future__ import annotations

import html
import io
import re

import pandas as pd
import pytest
from sqlalchemy import text

from webapp.analysis import merge_incidents
from webapp.imports.incident_list import parse_incident_list
from webapp.store import db, pages
from webapp.store import rules as store_rules
from webapp.store.models import Incident, Page

T = pd.Timestamp("2026-11-30 10:00", tz="UTC")
WINDOW = (pd.Timestamp("2026-11-30 14:00", tz="UTC"), pd.Timestamp("2026-11-30 16:00", tz="UTC"))


@pytest.fixture
def rule(session, make_series):
    """p95 above 300 for 10 minutes on the synthetic series, which jumps through WINDOW."""
    series = make_series()
    row = store_rules.create_rule(
        session, name="p95 high", series_id=series.id, threshold=300.0, hold_seconds=600
    )
    session.commit()
    return row


def caught(page: str) -> tuple[int, int]:
    """The replay's "N incidents caught of M counted"."""
    found = re.search(r'<span class="count">(\d+)</span> incidents caught '
                      r'<span class="help small">of (\d+) counted', page)  # fmt: skip
    assert found, "no caught-of count on the page"
    return int(found.group(1)), int(found.group(2))


def test_overlapping_and_touching_incidents_merge_and_keep_their_members() -> None:
    hour = pd.Timedelta("1h")
    merged = merge_incidents(
        [
            {"id": 3, "start": T + 2 * hour, "end": T + 3 * hour, "title": "touching"},
            {"id": 1, "start": T, "end": T + 2 * hour, "title": "first"},
            {"id": 2, "start": T + hour, "end": T + 90 * pd.Timedelta("1min"), "title": "inside"},
            {"id": 4, "start": T + 5 * hour, "end": None, "title": "open"},
        ]
    )
    assert [(m["start"], m["end"], m["title"]) for m in merged] == [
        (T, T + 3 * hour, "first"),
        (T + 5 * hour, None, "open"),
    ]
    assert [r["id"] for r in merged[0]["members"]] == [1, 2, 3]


def test_an_incident_list_is_read_or_refused_line_by_line() -> None:
    good = (
        b"start,end,title,metric,labels\n"
        b"2026-11-24T14:12:00Z,2026-11-24T14:58:00Z,pool,checkout.latency_p95,host=api-4;zone=b\n"
        b"2026-11-25T01:00:00+01:00,,still open,,\n"
    )
    rows, problems = parse_incident_list(good, "list.csv", default_metric="queue.depth")
    assert problems == []
    assert rows[0]["labels"] == {"host": "api-4", "zone": "b"}
    assert rows[1]["start"] == pd.Timestamp("2026-11-25 00:00", tz="UTC")
    assert rows[1]["end"] is None and rows[1]["metric"] == "queue.depth"
    bad = (
        b"start,end,title,metric,labels\n"
        b"yesterday,2026-11-24T14:58:00Z,x,m,\n"
        b"2026-11-24T14:12:00Z,2026-11-24T14:00:00Z,x,m,\n"
        b"2026-11-24T14:12:00Z,,x,,host\n"
    )
    rows, problems = parse_incident_list(bad, "list.csv")
    assert rows == []
    assert [(p.line, p.column) for p in problems] == [
        (2, "start"), (3, "end"), (4, "metric"), (4, "labels")
    ]  # fmt: skip
    assert (
        str(problems[0])
        == "list.csv, line 2, column 'start': expected an ISO 8601 time, got 'yesterday'"
    )
    _, header = parse_incident_list(b"when,what\n1,2\n", "x.csv")
    assert "expected the header start,end,title,metric,labels" in str(header[0])


def upload(client, csrf: str, body: bytes, **extra: str):
    data = {"csrf_token": csrf, "file": (io.BytesIO(body), "incidents.csv"), **extra}
    return client.post("/incidents/import", data=data, content_type="multipart/form-data")


def test_an_imported_list_counts_on_the_rule_page_and_a_bad_one_imports_nothing(
    client, csrf, rule, session
) -> None:
    rule_id, series_id = rule.id, rule.series_id
    session.commit()
    assert caught(client.get(f"/rules/{rule_id}/replay").text) == (0, 0)
    bad = upload(client, csrf, b"start,end,title,metric,labels\nnot a time,,x,,\n",
                 next=f"/rules/{rule_id}")  # fmt: skip
    assert bad.status_code == 303 and bad.location.endswith(f"/rules/{rule_id}")
    shown = html.unescape(client.get(bad.location).text)
    assert "Nothing was imported" in shown and "line 2, column 'start'" in shown
    assert session.query(Incident).count() == 0
    session.commit()
    csv = (
        "start,end,title,metric,labels\n"
        f"{WINDOW[0].isoformat()},{WINDOW[1].isoformat()},the jump,,host=api-3\n"
        "2026-11-20T03:00:00Z,2026-11-20T04:00:00Z,quiet trouble,,host=api-3\n"
        "2026-11-20T03:00:00Z,2026-11-20T04:00:00Z,another host,,host=api-9\n"
    )
    ok = upload(client, csrf, csv.encode(), default_metric="checkout.latency_p95")
    assert ok.status_code == 303
    after = html.unescape(client.get(f"/rules/{rule_id}/replay?series_id={series_id}").text)
    assert caught(after) == (1, 2)  # api-9's incident is not this series' trouble
    listing = client.get("/incidents").text
    assert listing.count("imported list (incidents.csv)") == 3


def test_a_page_marked_real_counts_and_unmarking_removes_it(client, csrf, rule, session) -> None:
    page = pages.create_page(session, rule.series_id, WINDOW[0], WINDOW[1], "p95 above 300")
    rule_id, page_id = rule.id, page.id
    session.commit()
    assert caught(client.get(f"/rules/{rule_id}/replay").text) == (0, 0)
    assert "Mark real: page" in client.get("/pages").text
    marked = client.post(f"/pages/{page_id}/real", data={"csrf_token": csrf, "real": "1"})
    assert marked.status_code == 303
    text = html.unescape(client.get(f"/rules/{rule_id}/replay").text)
    assert caught(text) == (1, 1) and f"page marked real #{page_id}" in text
    session.expire_all()
    assert session.get(Page, page_id).real_incident
    session.commit()
    client.post(f"/pages/{page_id}/real", data={"csrf_token": csrf, "real": "0"})
    assert caught(client.get(f"/rules/{rule_id}/replay").text) == (0, 0)


def test_the_migration_carries_windows_and_verdicts_over(tmp_path) -> None:
    eng = db.make_engine(f"sqlite:///{tmp_path / 'old.sqlite'}")
    try:
        db.upgrade(eng, "0003_compact_store")
        with eng.begin() as conn:
            conn.execute(text(
                "INSERT INTO series (id, key, metric, labels, point_count, created_at)"
                " VALUES (1, 'm{h=a}', 'm', '{\"h\": \"a\"}', 0, '2026-12-01 00:00:00')"
            ))  # fmt: skip
            conn.execute(text(
                "INSERT INTO alert_rules (id, name, series_id, label_filter, kind, direction,"
                " threshold, hold_seconds, description, created_at) VALUES (1, 'm high', 1,"
                " '{}', 'threshold', 'above', 5, 60, '', '2026-12-01')"
            ))  # fmt: skip
            conn.execute(text(
                "INSERT INTO pages (id, series_id, fired_at, rule_text, note, created_at)"
                " VALUES (1, 1, '2026-11-30 14:05:00', 'm above 5', '', '2026-12-01')"
            ))  # fmt: skip
            conn.execute(text(
                "INSERT INTO reviews (id, title, status, incident_start, incident_end, severity,"
                " summary, impact, trigger, root_cause, detection, resolution, lessons, page_id,"
                " alert_rule_id, verdict, verdict_parameters, verdict_rationale,"
                " exclude_from_baselines, created_at, updated_at) VALUES (1, 'slow', 'draft',"
                " '2026-11-30 14:00:00', '2026-11-30 16:00:00', '', '', '', '', '', '', '', '',"
                " 1, 1, 'tune', '{\"threshold\": 7.0}', 'fewer pages', 1, '2026-12-01',"
                " '2026-12-01')"
            ))  # fmt: skip
            conn.execute(text(
                "INSERT INTO action_items (id, review_id, text, owner, state, position)"
                " VALUES (1, 1, 'warm the cache', '', 'open', 0)"
            ))  # fmt: skip
        db.upgrade(eng, "0005_incidents")
        with eng.connect() as conn:  # nothing tied to the review or the page was lost
            assert conn.execute(text("SELECT review_id FROM action_items")).all() == [(1,)]
            assert conn.execute(text("SELECT page_id FROM reviews")).all() == [(1,)]
        with db.session_scope(eng) as s:
            (incident,) = s.query(Incident).all()
            assert (incident.series_id, incident.review_id, incident.source) == (1, 1, "review")
            assert pd.Timestamp(incident.start) == pd.Timestamp("2026-11-30 14:00", tz="UTC")
            verdict = s.execute(text("SELECT rule_name, decision, parameters, rationale"
                                     " FROM review_verdicts")).one()  # fmt: skip
            assert tuple(verdict) == ("m high", "tune", '{"threshold": 7.0}', "fewer pages")
        db.downgrade(eng, "0003_compact_store")
        with eng.connect() as conn:
            back = conn.execute(text("SELECT verdict, verdict_rationale FROM reviews")).one()
        assert tuple(back) == ("tune", "fewer pages")
    finally:
        eng.dispose()


@pytest.mark.parametrize("real", ["1", "0"])
def test_marking_an_unknown_page_is_a_readable_404(client, csrf, real) -> None:
    response = client.post("/pages/99/real", data={"csrf_token": csrf, "real": real})
    assert response.status_code == 404 and "There is no page #99" in response.text
