"""The Alert rules screen: rule forms, the replay page, the what-if sweep and the verdict.

The data is synthetic: three weeks of five-minute samples at 100 with three weekly bursts
lasting 30 minutes, to 300, 300 and 500; one review records the second burst as an incident.
"""

from __future__ import annotations

import html
import io
import json
import re
from dataclasses import dataclass

import numpy as np
import pandas as pd
import pytest
from sqlalchemy import insert

from webapp.store import attachments as store_attachments
from webapp.store import db, pages, reviews
from webapp.store import incidents as store_incidents
from webapp.store import rules as store_rules
from webapp.store.models import Point, Review, Series
from webapp.store.stats import refresh

START = pd.Timestamp("2026-11-02", tz="UTC")
BURSTS = [START + pd.Timedelta(days=d, hours=10) for d in (3, 10, 17)]
HEIGHTS = [300.0, 300.0, 500.0]  # the third backlog is the worst


def with_bursts(index: pd.DatetimeIndex, values: np.ndarray) -> np.ndarray:
    for burst, height in zip(BURSTS, HEIGHTS, strict=True):
        values[(index >= burst) & (index < burst + pd.Timedelta("30min"))] = height
    return values


@pytest.fixture
def watched(session) -> Series:
    series = Series(key="queue.depth{host=q-1}", metric="queue.depth", labels={"host": "q-1"})
    session.add(series)
    session.flush()
    index = pd.date_range(START, START + pd.Timedelta(weeks=3), freq="5min", inclusive="left")
    values = with_bursts(index, np.full(len(index), 100.0))
    rows = [
        {"series_id": series.id, "ts": int(ts.value // 1_000_000), "value": float(v)}
        for ts, v in zip(index, values, strict=True)
    ]
    session.execute(insert(Point), rows)
    refresh(session, [series])
    session.commit()
    return series


@pytest.fixture
def incident_review(session, watched, make_explanation) -> Review:
    review = reviews.create_review(
        session,
        {
            "title": "Queue backlog",
            "incident_start": BURSTS[1],
            "incident_end": BURSTS[1] + pd.Timedelta("1h"),
        },
    )
    store_attachments.attach_explanation(session, review, make_explanation(watched).id)
    session.commit()
    return review


@pytest.fixture
def rule(session, watched):
    row = store_rules.create_rule(
        session,
        name="Queue deep",
        series_id=watched.id,
        kind="threshold",
        direction="above",
        threshold=200.0,
        hold_seconds=600,
    )
    session.commit()
    return row


def rule_form(series_id: int, /, **overrides: str) -> dict[str, str]:
    form = {
        "name": "Queue deep",
        "target": "series",
        "series_id": str(series_id),
        "kind": "threshold",
        "direction": "above",
        "threshold": "200",
        "tolerance": "",
        "hold": "10min",
        "check_every": "",
        "description": "",
    }
    return form | overrides


def count(text: str, label: str) -> str:
    found = re.search(rf'<span class="count">([^<]+)</span> {label}', text)
    assert found, f"no count for {label}"
    return found.group(1)


def test_list_shows_the_rule_in_words(client, rule) -> None:
    text = client.get("/rules").text
    assert "Queue deep" in text and "above 200 for 10min" in text


def test_create_a_rule(client, csrf, watched, session) -> None:
    response = client.post("/rules/new", data={"csrf_token": csrf, **rule_form(watched.id)})
    assert response.status_code == 302
    created = store_rules.list_rules(session)[0]
    assert (created.threshold, created.hold_seconds) == (200.0, 600)
    assert response.location.endswith(f"/rules/{created.id}")


@pytest.mark.parametrize(
    ("overrides", "message"),
    [
        ({"name": ""}, "Give the rule a name"),
        ({"threshold": "lots"}, "Give the threshold as a number"),
        ({"hold": "soon"}, "is not a duration"),
        ({"hold": "-5min"}, "cannot be negative"),
        ({"check_every": "0s"}, "above zero"),
        ({"series_id": "999"}, "Pick one of the stored series"),
        ({"kind": "band", "tolerance": "0"}, "above 0"),
        ({"kind": "threshold", "direction": "both"}, "fires above or below"),
        ({"target": "metric", "metric": ""}, "Name the metric"),
        ({"target": "metric", "metric": "queue.depth", "label_filter": "host"}, "name=value"),
    ],
)
def test_bad_rule_input_is_explained_and_kept(client, csrf, watched, overrides, message) -> None:
    form = rule_form(watched.id, description="typed notes to keep", **overrides)
    response = client.post("/rules/new", data={"csrf_token": csrf, **form})
    assert response.status_code == 422
    text = html.unescape(response.text)
    assert message in text
    assert "typed notes to keep" in text


def test_unknown_rule_is_a_readable_404(client) -> None:
    response = client.get("/rules/42")
    assert response.status_code == 404 and "There is no alert rule #42" in response.text


def test_rule_page_loads_its_replay_through_htmx(client, rule, watched) -> None:
    page = client.get(f"/rules/{rule.id}").text
    url = f"/rules/{rule.id}/replay?series_id={watched.id}"
    assert f'hx-get="{url}"' in page and 'hx-trigger="load"' in page
    assert '<span class="count">' not in page  # nothing replayed yet
    fragment = client.get(url, headers={"HX-Request": "true"}).text
    assert "<html" not in fragment and count(fragment, "firings") == "3"


def test_replay_counts_firings_and_incidents(client, rule, incident_review) -> None:
    text = html.unescape(client.get(f"/rules/{rule.id}/replay").text)
    assert count(text, "firings") == "3"
    assert count(text, "inside incidents") == "1"
    assert count(text, "outside incidents") == "2"
    assert count(text, "incidents caught") == "1"
    assert count(text, "incidents missed") == "0"
    # the burst starts at 10:00 and the rule waits 10 minutes (hold)
    assert "caught, first firing 2026-11-12 10:10" in text
    assert count(text, "median duration") == "20 min"


def test_replay_page_has_the_sweep_and_the_warning(client, rule, incident_review) -> None:
    text = html.unescape(client.get(f"/rules/{rule.id}/replay").text)
    assert 'id="sweep-figure"' in text and 'id="replay-figure"' in text
    assert "pages per week" in text and "incidents caught" in text
    assert "Retiring an alert can hide a real failure" in text
    assert "the service owner and the team's own paging policy decide" in text
    assert "<strong>The tool drafts; the owner decides.</strong>" in text


def test_a_rule_without_data_says_so(client, csrf, session) -> None:
    row = store_rules.create_rule(session, name="Nothing", metric="absent.metric", threshold=1.0)
    session.commit()
    response = client.get(f"/rules/{row.id}")
    assert response.status_code == 200
    assert "No stored series matches this rule yet" in response.text


def test_metric_rule_matches_series_by_labels(client, session, watched) -> None:
    row = store_rules.create_rule(
        session,
        name="By label",
        metric="queue.depth",
        label_filter={"host": "q-1"},
        threshold=200.0,
    )
    session.commit()
    text = client.get(f"/rules/{row.id}/replay").text
    assert count(text, "firings") == "3"


def test_carry_the_draft_into_a_review(client, csrf, rule, incident_review, session) -> None:
    data = {
        "csrf_token": csrf,
        "review_id": str(incident_review.id),
        "verdict": "tune",
        "verdict_parameters": "threshold: 250\nhold_seconds: 900",
        "verdict_rationale": "Fewer pages, same catch.",
    }
    response = client.post(f"/rules/{rule.id}/verdict", data=data)
    assert response.status_code == 302
    session.rollback()
    session.expire_all()
    (stored,) = session.get(Review, incident_review.id).verdicts
    assert (stored.decision, stored.alert_rule_id, stored.rule_name) == ("tune", rule.id, rule.name)
    assert stored.parameters == {"threshold": 250.0, "hold_seconds": 900.0}
    # carried again, the rule's verdict in that review is updated, not doubled
    session.commit()
    again = client.post(f"/rules/{rule.id}/verdict", data={**data, "verdict": "keep"})
    assert again.status_code == 302
    session.rollback()
    session.expire_all()
    assert [v.decision for v in session.get(Review, incident_review.id).verdicts] == ["keep"]


def test_the_draft_carries_its_evidence_numbers(client, rule, incident_review) -> None:
    text = html.unescape(client.get(f"/rules/{rule.id}/replay").text)
    evidence = re.search(r'name="verdict_evidence"[^>]*>([^<]*)</textarea>', text).group(1)
    assert "firings: 3" in evidence and "incidents caught: 1" in evidence
    assert "incidents counted: 1" in evidence


def test_carrying_a_bad_verdict_keeps_the_rationale(client, csrf, rule, incident_review) -> None:
    data = {
        "csrf_token": csrf,
        "review_id": str(incident_review.id),
        "verdict": "tune",
        "verdict_parameters": "no colon here",
        "verdict_rationale": "My own careful words.",
    }
    response = client.post(f"/rules/{rule.id}/verdict", data=data)
    assert response.status_code == 422
    assert "should read name: value" in response.text
    assert "My own careful words." in response.text


def test_edit_and_delete(client, csrf, rule, watched, session) -> None:
    form = rule_form(watched.id, threshold="250")
    assert (
        client.post(f"/rules/{rule.id}/edit", data={"csrf_token": csrf, **form}).status_code == 302
    )
    session.rollback()
    session.expire_all()
    assert store_rules.get_rule(session, rule.id).threshold == 250.0
    session.commit()  # end the read: the app's next write needs the lock
    rule_id = rule.id
    assert client.post(f"/rules/{rule_id}/delete", data={"csrf_token": csrf}).status_code == 302
    session.rollback()
    session.expire_all()
    assert store_rules.get_rule(session, rule_id) is None


def test_a_sweep_of_the_readers_own_settings(client, rule, incident_review) -> None:
    url = f"/rules/{rule.id}/replay?thresholds=150,250&holds=0,5min"
    text = html.unescape(client.get(url, headers={"HX-Request": "true"}).text)
    rows = re.findall(r'<td class="num">([\d.]+)</td><td>([^<]+)</td>', text)
    # the current rule (200 for 10 min) always joins the grid: 3 thresholds x 3 holds
    assert len(rows) == 9
    assert {t for t, _ in rows} == {"150", "200", "250"}
    assert 'value="150,250"' in text


@pytest.mark.parametrize(
    ("query", "message"),
    [
        ("thresholds=lots&holds=0", "'lots' is not a number"),
        ("thresholds=100&holds=soon", "is not a duration"),
        ("thresholds=&holds=5min", "at least one threshold"),
    ],
)
def test_a_bad_sweep_grid_is_explained_and_kept(client, rule, query, message) -> None:
    response = client.get(f"/rules/{rule.id}/replay?{query}")
    assert response.status_code == 200  # the replay itself still shows, with the default sweep
    text = html.unescape(response.text)
    assert message in text
    assert count(text, "firings") == "3"


def test_rule_page_states_the_rule_before_its_replay_arrives(client, rule) -> None:
    assert "above 200 for 10min" in client.get(f"/rules/{rule.id}").text


def _counts(page: str) -> dict[str, str]:
    return {
        label.strip(): count
        for count, label in re.findall(r'<span class="count">([^<]+)</span>\s*([a-z ]+)', page)
    }


def _demo_rule(demo_app, word: str):
    from webapp.store import db

    with demo_app.app_context():
        return next(r for r in store_rules.list_rules(db.get_session()) if word in r.metric)


def test_demo_queue_rule_is_judged_against_its_own_incidents(demo_app, demo_client):
    """The demo's Monday-batch queue rule watches a series no incident was recorded on: the
    latency incidents do not count against it, so its draft is not driven by other series'
    trouble. Added by hand from the list, one of them does count (and is missed)."""
    rule = _demo_rule(demo_app, "queue")
    own = demo_client.get(f"/rules/{rule.id}/replay").get_data(as_text=True)
    assert _counts(own)["incidents missed"] == "0" and _counts(own)["incidents caught"] == "0"
    assert _counts(own)["outside incidents"] == "6"
    assert "Verdict draft: keep" in own and "Verdict draft: retire" not in own
    assert "No incident is recorded on this series or its metric and labels" in own
    other = re.search(r'<option value="(\d+)">[^<]*checkout.latency_p95', own).group(1)
    added = demo_client.get(f"/rules/{rule.id}/replay?add={other}").get_data(as_text=True)
    assert _counts(added)["incidents missed"] == "1"
    assert "1 added, 0 dropped" in added


def test_demo_latency_rule_counts_exactly_the_latency_incidents(demo_app, demo_client):
    """Both demo incidents touched api-4's latency: the review of each, and the payment
    provider's imported list (on every host's latency, merged with last night's review)."""
    rule = _demo_rule(demo_app, "latency")
    text = html.unescape(demo_client.get(f"/rules/{rule.id}/replay").get_data(as_text=True))
    assert _counts(text)["incidents caught"] == "2" and "of 2 counted" in text
    table = text.split('id="counted-incidents"')[1].split("</table>")[0]
    assert table.count("<tr>") == 3  # header and two incidents
    assert "api-4 slow and failing checkouts" in table
    assert "merged from 2 records" in table and "payment-provider-incidents.csv" in table
    assert "payment.queue_depth" not in table
    assert "Verdict draft: keep" in text


def test_a_second_review_of_the_same_demo_incident_does_not_change_the_count(
    demo_app, demo_client
) -> None:
    rule = _demo_rule(demo_app, "latency")
    before = _counts(demo_client.get(f"/rules/{rule.id}/replay").get_data(as_text=True))
    with demo_app.app_context():
        session = db.get_session()
        page = next(p for p in pages.list_pages(session) if p.alert_rule_id == rule.id)
        reviews.create_review(
            session,
            {"title": "api-4 again, from the payments team", "page_id": str(page.id),
             "incident_start": page.fired_at, "incident_end": page.resolved_at},
        )  # fmt: skip
        session.commit()
    after = demo_client.get(f"/rules/{rule.id}/replay").get_data(as_text=True)
    assert _counts(after)["incidents caught"] == before["incidents caught"] == "2"
    assert _counts(after)["incidents missed"] == before["incidents missed"] == "0"
    assert re.search(r"merged from (2|3) records", after)


@pytest.fixture
def band_rule(session, watched):
    """Outside the expected band at band width 3σ for 10 minutes: the band needs two weeks of
    history, so only the third week (and its burst) is replayed."""
    row = store_rules.create_rule(
        session,
        name="Queue off its usual",
        series_id=watched.id,
        kind="band",
        direction="both",
        tolerance=3.0,
        hold_seconds=600,
    )
    session.commit()
    return row


def sweep_rows(text: str) -> list[tuple[str, str]]:
    return re.findall(r'<td class="num">([\d.]+)</td><td>([^<]+)</td>', text)


def current_setting(text: str) -> list[str]:
    """The cells of the sweep table's row for the rule's own setting."""
    row = re.search(r'class="current-setting">(.*?)</tr>', text, re.S)
    assert row, "no row marks the current setting"
    return re.findall(r"<td[^>]*>([^<]*)</td>", row.group(1))


def test_a_band_rule_page_has_the_sweep_of_tolerances(client, band_rule) -> None:
    text = html.unescape(client.get(f"/rules/{band_rule.id}/replay").text)
    assert count(text, "firings") == "1"
    assert 'id="sweep-figure"' in text and "band width (σ) %{customdata[0]:.4g}" in text
    assert "edit its tolerance and replay again" not in text
    assert "along it the band width (σ) changes" in text
    assert '<th scope="col" class="num">Band width (σ)</th>' in text
    assert 'for="sweep-tolerances">Band widths (σ)' in text and 'name="tolerances"' in text
    rows = sweep_rows(text)
    # the default grid: tolerances 2 to 8 by holds 0 to 30 min (10 min among them)
    assert {t for t, _ in rows} == {"2", "2.5", "3", "3.5", "4", "5", "6", "8"}
    assert len(rows) == 8 * 7
    assert current_setting(text)[:3] == ["3", "10 min", "1"]


def test_a_band_rule_sweeps_the_readers_tolerances(client, band_rule) -> None:
    url = f"/rules/{band_rule.id}/replay?tolerances=2.5,4&holds=0,5min"
    text = html.unescape(client.get(url, headers={"HX-Request": "true"}).text)
    rows = sweep_rows(text)
    # the current rule (3 for 10 min) always joins the grid: 3 tolerances x 3 holds
    assert len(rows) == 9
    assert {t for t, _ in rows} == {"2.5", "3", "4"}
    assert 'value="2.5,4"' in text


@pytest.mark.parametrize(
    ("query", "message"),
    [
        ("tolerances=lots&holds=0", "'lots' is not a number; list tolerances like 2, 3, 4."),
        ("tolerances=0,2&holds=0", "'0' is not above 0; a band width counts robust standard"),
        ("tolerances=-1&holds=0", "'-1' is not above 0"),
        ("tolerances=&holds=5min", "List at least one tolerance, e.g. 2, 3, 4."),
        ("tolerances=2&holds=soon", "is not a duration"),
    ],
)
def test_bad_tolerances_are_explained_and_kept(client, band_rule, query, message) -> None:
    response = client.get(f"/rules/{band_rule.id}/replay?{query}")
    assert response.status_code == 200  # the replay itself still shows, with the default sweep
    text = html.unescape(response.text)
    assert message in text
    assert count(text, "firings") == "1"
    assert len(sweep_rows(text)) == 8 * 7
    assert "Traceback" not in text


def test_a_band_rule_leaves_excluded_periods_out_of_its_band(
    client, session, band_rule, incident_review
) -> None:
    """The review of the second burst is excluded from baselines (the default): the band
    learns no weekly burst and expects 100 through the third. Left in, the second burst
    teaches the band the weekly burst, to 300 at that hour and no ramp around it; the third,
    to 500, is outside either way, for the same time; the report and the sweep agree."""
    url = f"/rules/{band_rule.id}/replay"
    for exclude, expected in ((True, 100.0), (False, 300.0)):
        incident_review.exclude_from_baselines = exclude
        session.commit()
        text = html.unescape(client.get(url).text)
        upper = band_edges(text)[1]
        assert upper.y[upper.during(BURSTS[2])].max() == pytest.approx(expected)
        assert count(text, "firings") == "1"
        assert count(text, "median duration") == "20 min"
        assert current_setting(text)[4] == "20 min"  # time firing


@pytest.fixture
def noisy(session) -> Series:
    """The same three weeks with unit noise on the level of 100 (seeded)."""
    series = Series(key="queue.depth{host=q-2}", metric="queue.depth", labels={"host": "q-2"})
    session.add(series)
    session.flush()
    index = pd.date_range(START, START + pd.Timedelta(weeks=3), freq="5min", inclusive="left")
    values = with_bursts(index, 100.0 + np.random.default_rng(1).normal(0, 2, len(index)))
    rows = [
        {"series_id": series.id, "ts": int(ts.value // 1_000_000), "value": float(v)}
        for ts, v in zip(index, values, strict=True)
    ]
    session.execute(insert(Point), rows)
    refresh(session, [series])
    session.commit()
    return series


def test_a_noisy_band_rule_is_drafted_to_a_quieter_tolerance(client, session, noisy) -> None:
    store_incidents.add_incident(
        session, BURSTS[2], BURSTS[2] + pd.Timedelta("1h"), "Queue backlog, week three",
        source="list", series_id=noisy.id,
    )  # fmt: skip
    reviews.create_review(session, {"title": "Queue backlog, week three"})  # to carry it into
    rule = store_rules.create_rule(
        session,
        name="Queue jittery",
        series_id=noisy.id,
        kind="band",
        direction="both",
        tolerance=2.0,
        hold_seconds=0,
    )
    session.commit()
    text = html.unescape(client.get(f"/rules/{rule.id}/replay").text)
    assert int(count(text, "firings")) > 10 and count(text, "incidents caught") == "1"
    assert "Verdict draft: tune" in text
    drafted = re.search(r"tolerance: ([\d.]+)", text)
    assert drafted and float(drafted.group(1)) > 2.0
    assert f"With band width {float(drafted.group(1)):g}σ and a hold of" in text
    assert "drafted setting" in text  # the drafted point is marked on the sweep figure


def replay_traces(text: str) -> list[dict]:
    """The data of the replay figure as the page embeds it (the JSON beside its ``<div>``)."""
    import json

    after = text.split('id="replay-figure"', 1)[1].split('class="figure-data">', 1)[1]
    figure, _ = json.JSONDecoder().raw_decode(after)
    return figure["data"]


def trace_values(trace: dict, axis: str) -> np.ndarray:
    values = trace[axis]
    if isinstance(values, dict):  # plotly's typed-array encoding
        import base64

        return np.frombuffer(base64.b64decode(values["bdata"]), dtype=values["dtype"])
    return np.asarray(values, dtype=float)


@dataclass(frozen=True)
class Edge:
    x: np.ndarray  # ms since the epoch
    y: np.ndarray

    def during(self, burst: pd.Timestamp) -> np.ndarray:
        start = burst.value // 1_000_000
        return (self.x >= start) & (self.x < start + 1_800_000)


def band_edges(text: str, width: str = "3") -> tuple[Edge, Edge]:
    """The lower and upper edge of the band drawn on the replay figure."""
    name = f"expected band, band width {width}σ"
    lower, upper = (t for t in replay_traces(text) if t.get("name") == name)
    return tuple(Edge(trace_values(t, "x"), trace_values(t, "y")) for t in (lower, upper))


def test_a_band_rule_replay_draws_the_band_it_fired_on(client, band_rule, monkeypatch) -> None:
    """The band drawn is the one the replay was evaluated against (expected - 3 x the lower
    side's scale to expected + 3 x the upper side's, of the daily fits), fitted once per
    page, starting on the first day with two weeks of history before it; the third burst
    pokes out of it, which is the one firing."""
    from webapp.analysis import _replay

    fits = []
    fit = _replay.band_centre

    def counted(times, *args, **kwargs):
        expected, below, above = fit(times, *args, **kwargs)
        fits.append((times, expected, below, above))
        return expected, below, above

    monkeypatch.setattr(_replay, "band_centre", counted)
    text = client.get(f"/rules/{band_rule.id}/replay").text
    assert len(fits) == 1, "the figure must reuse the replay's band, not fit it again"
    band = [t for t in replay_traces(text) if t.get("name") == "expected band, band width 3σ"]
    assert len(band) == 2, "a lower and an upper edge"
    assert band[1]["fill"] == "tonexty" and band[1]["fillcolor"].startswith("rgba(86,180,233")
    x = trace_values(band[0], "x")
    np.testing.assert_array_equal(x, trace_values(band[1], "x"))
    times, expected, below, above = fits[0]
    at = np.searchsorted(times.asi8 // 1_000_000, x.astype(np.int64))
    np.testing.assert_allclose(trace_values(band[0], "y"), expected[at] - 3 * below[at])
    np.testing.assert_allclose(trace_values(band[1], "y"), expected[at] + 3 * above[at])
    assert pd.Timestamp(x.min(), unit="ms", tz="UTC") == START + pd.Timedelta(weeks=2)
    upper = band_edges(text)[1]
    assert np.all(upper.y[upper.during(BURSTS[2])] < HEIGHTS[2])


def test_the_replay_band_is_downsampled_keeping_its_extremes() -> None:
    """A week of one-minute band reduced to about 400 points still reaches its highest and
    lowest edge (a synthetic grid: level 50, one hour of a wide band)."""
    from webapp.analysis import BandGrid
    from webapp.web.charts.rules import replay_figure

    times = pd.date_range(START, periods=7 * 1440, freq="1min")
    scale = np.ones(len(times))
    scale[5000:5060] = 10.0
    grid = BandGrid(times, np.full(len(times), 50.0), np.full(len(times), 50.0), scale,
                    pd.Timedelta("1min"))  # fmt: skip
    series = pd.Series(grid.values, index=times, name="value")
    fig = replay_figure(series, pd.DataFrame({"start": []}), [], None, None, n_out=400,
                        band=(grid, 2.0))  # fmt: skip
    lower, upper = (t for t in fig.data if t.name == "expected band, band width 2σ")
    assert len(lower.y) <= 400 and len(lower.x) == len(upper.x)
    assert max(upper.y) == 70.0 and min(lower.y) == 30.0
    assert min(upper.y) == 52.0 and max(lower.y) == 48.0


def test_a_band_rule_replay_band_follows_its_tolerance(client, session, band_rule) -> None:
    wide = html.unescape(client.get(f"/rules/{band_rule.id}/replay").text)
    band_rule.tolerance = 6.0
    session.commit()
    wider = html.unescape(client.get(f"/rules/{band_rule.id}/replay").text)
    names = {t.get("name") for t in replay_traces(wider)}
    assert "expected band, band width 6σ" in names and "expected band, band width 3σ" not in names
    half = [
        (trace_values(up, "y") - trace_values(low, "y")) / 2
        for low, up in (
            [t for t in replay_traces(page) if str(t.get("name")).startswith("expected band")]
            for page in (wide, wider)
        )
    ]
    # the sides are calibrated quantiles: a higher tolerance is a wider band, not a
    # proportionally wider one
    assert (half[1] >= half[0]).all() and (half[1] > half[0]).any()


def test_a_threshold_rule_replay_has_no_band(client, rule) -> None:
    traces = replay_traces(client.get(f"/rules/{rule.id}/replay").text)
    assert traces, "the replay figure is there"
    assert not [t for t in traces if str(t.get("name")).startswith("expected band")]


def test_a_rule_saved_from_an_older_version_is_refused_with_both_texts(
    client, csrf, rule, watched, session
) -> None:
    page = client.get(f"/rules/{rule.id}/edit").text
    assert 'name="version" value="1"' in page
    mine = rule_form(watched.id, threshold="300", description="raised for the batch", version="1")
    theirs = rule_form(watched.id, threshold="250", description="their words", version="1")
    first = client.post(f"/rules/{rule.id}/edit", data={"csrf_token": csrf, **theirs})
    assert first.status_code == 302
    refused = client.post(f"/rules/{rule.id}/edit", data={"csrf_token": csrf, **mine})
    assert refused.status_code == 409
    text = html.unescape(refused.text)
    assert "Someone else saved this alert rule" in text and "their words" in text
    assert 'value="raised for the batch"' in text or "raised for the batch</textarea>" in text
    assert 'name="version" value="2"' in text  # saving again replaces theirs, by choice
    session.rollback()
    session.expire_all()
    assert store_rules.get_rule(session, rule.id).threshold == 250.0


def test_the_replay_downloads_as_csv_and_json(client, rule, watched) -> None:
    fragment = client.get(f"/rules/{rule.id}/replay").text
    assert f"/rules/{rule.id}/replay/data.csv?" in fragment
    body = json.loads(client.get(f"/rules/{rule.id}/replay/data.json").text)
    assert body["kind"] == "replay"
    assert body["parameters"]["rule"] == "Queue deep"
    assert body["parameters"]["series"] == watched.key
    assert len(body["rows"]) == 3  # the three bursts
    text = client.get(f"/rules/{rule.id}/replay/data.csv").text
    assert text.startswith('# kind: "replay"')
    table = pd.read_csv(io.StringIO(text), comment="#")
    assert len(table) == 3
    assert client.get(f"/rules/{rule.id}/replay/data.pdf").status_code == 404
