"""Burn-rate rules on the Alert rules screen (the form with the workbook's windows, the
replay, budget spent, burn rates and the factor x window-pair sweep) and the panel of rule
kinds side by side.

The data is synthetic: three weeks of five-minute samples of a queue's depth (100, with
three 30-minute bursts to 300) and of the same service's error ratio (0.05% of events,
5% during the bursts); one review records the second burst as an incident. The workbook's
windows are those of Beyer et al., "The Site Reliability Workbook" (2018), ch. 5.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from sqlalchemy import insert

from webapp.store import incidents as store_incidents
from webapp.store import reviews
from webapp.store import rules as store_rules
from webapp.store.models import AlertRule, Point, Series
from webapp.store.stats import refresh

START = pd.Timestamp("2026-11-02", tz="UTC")
BURSTS = [START + pd.Timedelta(days=d, hours=10) for d in (3, 10, 17)]
INDEX = pd.date_range(START, START + pd.Timedelta(weeks=3), freq="5min", inclusive="left")
IN_BURST = np.zeros(len(INDEX), bool)
for _burst in BURSTS:
    IN_BURST |= (_burst <= INDEX) & (_burst + pd.Timedelta("30min") > INDEX)


def _series(session, key: str, values: np.ndarray) -> Series:
    metric = key.split("{")[0]
    series = Series(key=key, metric=metric, labels={})
    session.add(series)
    session.flush()
    rows = [
        {"series_id": series.id, "ts": int(ts.value // 1_000_000), "value": float(v)}
        for ts, v in zip(INDEX, values, strict=True)
    ]
    session.execute(insert(Point), rows)
    refresh(session, [series])
    return series


@pytest.fixture
def stored_rules(session):
    depth = _series(session, "queue.depth", np.where(IN_BURST, 300.0, 100.0))
    ratio = _series(session, "queue.error_ratio", np.where(IN_BURST, 0.05, 0.0005))
    reviews.create_review(
        session,
        {
            "title": "Queue backlog",
            "incident_start": BURSTS[1],
            "incident_end": BURSTS[1] + pd.Timedelta("1h"),
        },
    )
    for watched in (depth, ratio):  # the backlog, as an imported list records it per series
        store_incidents.add_incident(
            session,
            BURSTS[1],
            BURSTS[1] + pd.Timedelta("1h"),
            "Queue backlog",
            source="list",
            series_id=watched.id,
            list_name="backlog.csv",
        )
    threshold = store_rules.create_rule(
        session, name="Queue deep", series_id=depth.id, threshold=200.0, hold_seconds=600
    )
    session.commit()
    return {"depth": depth.id, "ratio": ratio.id, "threshold": threshold.id}


def burn_form(series_id: int, **overrides: str) -> dict[str, str]:
    form = {
        "name": "Queue errors burn the budget",
        "target": "series",
        "series_id": str(series_id),
        "kind": "burn_rate",
        "direction": "above",
        "hold": "0",
        "objective": "99.9",
        "period": "30d",
        "severity": "page",
        "good_series_id": "",
        "burn_windows": "14.4x over 1h/5min page\n6x over 6h/30min page\n1x over 3d/6h ticket",
    }
    return form | overrides


def test_a_new_rule_form_offers_the_workbook_windows(client) -> None:
    page = client.get("/rules/new").get_data(as_text=True)
    for line in ("14.4x over 1h/5min page", "6x over 6h/30min page", "1x over 3d/6h ticket"):
        assert line in page
    assert 'value="99.9"' in page and 'value="30d"' in page


def test_a_burn_rate_rule_is_saved_from_the_form(client, csrf, stored_rules, session) -> None:
    form = burn_form(stored_rules["ratio"])
    response = client.post("/rules/new", data={"csrf_token": csrf, **form})
    assert response.status_code == 302
    saved = session.query(AlertRule).filter_by(kind="burn_rate").one()
    assert saved.objective == pytest.approx(0.999) and saved.period_seconds == 30 * 86400
    assert saved.burn_windows[0] == {
        "long_seconds": 3600, "short_seconds": 300, "factor": 14.4, "severity": "page"
    }  # fmt: skip
    edit = client.get(f"/rules/{saved.id}/edit").get_data(as_text=True)
    assert "6x over 6h/30min page" in edit


@pytest.mark.parametrize(
    ("overrides", "message"),
    [
        ({"burn_windows": "14.4x over 1h/5min page\nfast please"}, "Line 2, &#39;fast please&#39;"),
        ({"burn_windows": "2x over 5min/1h page"}, "short window is longer"),
        ({"objective": "100"}, "percentage below 100"),
        ({"severity": "ticket", "burn_windows": "6x over 6h/30min page"}, "marked ticket"),
    ],
)
def test_bad_burn_rate_input_is_explained_and_kept(client, csrf, stored_rules, overrides, message):
    form = burn_form(stored_rules["ratio"], **overrides)
    response = client.post("/rules/new", data={"csrf_token": csrf, **form})
    text = response.get_data(as_text=True)
    assert response.status_code == 422
    assert message in text
    assert "The rule was not saved" in text


@pytest.fixture
def burn_rule(stored_rules, session) -> AlertRule:
    rule = store_rules.create_rule(
        session,
        name="Queue errors burn the budget",
        series_id=stored_rules["ratio"],
        kind="burn_rate",
        objective=0.999,
        period_seconds=30 * 86400,
        severity="page",
    )
    session.commit()
    return rule


def test_a_burn_rate_replay_shows_raises_budget_rates_and_sweep(client, burn_rule) -> None:
    page = client.get(f"/rules/{burn_rule.id}/replay").get_data(as_text=True)
    # 5% errors for 30 minutes: 50x the budget, so the 1h window burns 25x > 14.4x
    assert '<span class="count">3</span> raises' in page
    assert '<span class="count">1</span> incidents caught' in page
    for figure in ("burn-replay-figure", "burn-budget-figure", "burn-rates-figure"):
        assert f'id="{figure}"' in page
    assert "14.4x over 1h/5min; 6x over 6h/30min" in page
    assert "6h/30min" in page and 'aria-current="true"' in page  # the sweep's own row


def test_a_burn_rate_sweep_of_the_readers_own_grid(client, burn_rule) -> None:
    url = f"/rules/{burn_rule.id}/replay?factors=2,40&pairs=30min/5min"
    page = client.get(url).get_data(as_text=True)
    assert "The sweep as a table (2 settings)" not in page  # the rule's own are added
    assert "<td>30min/5min</td>" in page and ">40</td>" in page
    bad = client.get(f"/rules/{burn_rule.id}/replay?factors=2&pairs=5min-1h").get_data(as_text=True)
    assert "is not a window pair" in bad


def test_a_rule_on_a_series_that_is_no_ratio_says_so(client, stored_rules, session) -> None:
    rule = store_rules.create_rule(
        session, name="not a ratio", series_id=stored_rules["depth"], kind="burn_rate"
    )
    session.commit()
    page = client.get(f"/rules/{rule.id}/replay").get_data(as_text=True)
    assert "This rule cannot be replayed: an error ratio must be between 0 and 1" in page


def test_the_replay_loads_the_kinds_panel_and_it_compares_four_kinds(client, stored_rules) -> None:
    rule_id = stored_rules["threshold"]
    replay = client.get(f"/rules/{rule_id}/replay").get_data(as_text=True)
    assert f"/rules/{rule_id}/kinds?" in replay
    kinds_url = f"/rules/{rule_id}/kinds?series_id={stored_rules['depth']}"
    panel = client.get(kinds_url, headers={"HX-Request": "true"}).get_data(as_text=True)
    assert "<html" not in panel  # the fragment the rule's page swaps in
    page = client.get(kinds_url).get_data(as_text=True)  # the link for readers without JS
    assert "<html" in page and "<title>Rule kinds" in page and 'id="kinds"' in page
    kinds = [k for k in ("threshold", "band", "burn-rate") if f"{k} <span" in panel]
    assert kinds == ["threshold", "band", "burn-rate"]
    assert panel.count("<tr") == 5  # the header and four kinds
    assert "as it is" in panel and "best of its sweep" in panel
    assert "caught" in panel.split('class="kinds-sentence"')[1]


def test_without_an_error_ratio_the_kinds_panel_says_why(client, stored_rules, session) -> None:
    session.query(AlertRule).filter(AlertRule.kind == "burn_rate").delete()
    other = _series(session, "disk.used", np.where(IN_BURST, 90.0, 40.0))
    rule = store_rules.create_rule(session, name="disk full", series_id=other.id, threshold=80.0)
    session.commit()
    panel = client.get(f"/rules/{rule.id}/kinds").get_data(as_text=True)
    assert "the disk service has no stored error ratio" in panel
    assert "burn-rate <span" not in panel


def test_the_kinds_panel_keeps_its_band_fit_and_a_failed_write_does_not_fail_it(
    client, stored_rules, monkeypatch
) -> None:
    from sqlalchemy.exc import OperationalError

    from webapp.services import band_fits as fit_service
    from webapp.store import db

    def refused(*_args, **_kwargs):
        raise OperationalError("INSERT INTO band_fits", {}, Exception("disk full"))

    url = f"/rules/{stored_rules['threshold']}/kinds?series_id={stored_rules['depth']}"
    fit_service._fits.items.clear()
    with monkeypatch.context() as patch:
        patch.setattr(db, "brief_write", refused)
        failed_write = client.get(url)
    assert failed_write.status_code == 200 and "band <span" in failed_write.get_data(as_text=True)

    fit_service._fits.items.clear()  # a restart: nothing kept, so it is fitted and kept now
    assert "band <span" in client.get(url).get_data(as_text=True)

    def no_fitting(*_args, **_kwargs):
        raise AssertionError("the kept fit should have been read")

    fit_service._fits.items.clear()  # another restart: the kept fit is read, not fitted
    monkeypatch.setattr(fit_service, "band_grid", no_fitting)
    kept = client.get(url).get_data(as_text=True)
    assert kept == failed_write.get_data(as_text=True)  # the same panel, row for row
