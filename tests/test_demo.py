"""The demo scenario: deterministic, the shape its docstring promises, and its rules behave
as the story says when replayed (invented data, checked against its own design)."""

from __future__ import annotations

import re

import numpy as np
import pandas as pd
import pytest

from webapp import demo as demo_module
from webapp.analysis import replay_report, rule_from_fields
from webapp.demo import build_demo, demo_csv_frame, write_demo_csv
from webapp.imports import parse_file
from webapp.store.models import AlertRule, Review

HOSTS = [f"api-{i}" for i in range(1, 7)]


@pytest.fixture(scope="module")
def demo():
    return build_demo(seed=7)


def rule_named(demo, words: str) -> dict:
    (rule,) = [r for r in demo.rules if words in r["name"]]
    return rule


def report_for(demo, rule: dict):
    return replay_report(demo.series(rule["series_key"]), rule_from_fields(rule), demo.incidents)


def test_same_seed_same_demo_other_seed_other_data(demo):
    again = build_demo(seed=7)
    assert again.parsed.sha256 == demo.parsed.sha256
    pd.testing.assert_frame_equal(again.parsed.table, demo.parsed.table)
    assert again.pages == demo.pages
    other = build_demo(seed=8)
    assert other.parsed.sha256 != demo.parsed.sha256
    assert not np.array_equal(other.parsed.table["value"], demo.parsed.table["value"])


def test_series_keys_units_and_span(demo):
    expected = {"checkout.error_ratio"} | {
        f"{metric}{{host={host}}}"
        for metric in ("checkout.requests", "checkout.latency_p95", "payment.queue_depth")
        for host in HOSTS
    }
    assert set(demo.parsed.series) == expected
    units = {meta.metric: meta.unit for meta in demo.parsed.series.values()}
    assert units == {
        "checkout.requests": "req/s",
        "checkout.latency_p95": "ms",
        "checkout.error_ratio": "ratio",
        "payment.queue_depth": "jobs",
    }
    table = demo.parsed.table
    assert table["ts_utc"].dtype == np.int64 and table["value"].dtype == np.float64
    assert np.isfinite(table["value"]).all()
    first, last = pd.to_datetime(
        [table["ts_utc"].min(), table["ts_utc"].max()], unit="ms", utc=True
    )
    assert (first, last) == (demo_module.START, demo_module.END - pd.Timedelta(minutes=1))
    assert pd.Timedelta(weeks=6) == demo_module.END - demo_module.START
    assert demo.parsed.format == "demo" and demo.parsed.file_name.startswith("demo: ")
    assert not table.duplicated(["series_key", "ts_utc"]).any()


def test_the_collector_outages_are_gaps(demo):
    step = pd.Timedelta(minutes=1)
    outage = demo_module.OUTAGE_ALL
    for key in demo.series_keys:
        series = demo.series(key)
        assert not ((series.index >= outage[0]) & (series.index < outage[1])).any()
    api2 = demo.series("checkout.requests{host=api-2}")
    api3 = demo.series("checkout.requests{host=api-3}")
    inside = demo_module.OUTAGE_API2
    assert not ((api2.index >= inside[0]) & (api2.index < inside[1])).any()
    assert ((api3.index >= inside[0]) & (api3.index < inside[1])).sum() == (
        inside[1] - inside[0]
    ) / step
    warnings = [str(p) for p in demo.parsed.problems]
    assert all(p.severity == "warning" for p in demo.parsed.problems)
    assert any("2026-11-11 09:20 to 10:05 UTC" in w and "any series" in w for w in warnings)
    assert any("2026-10-29 03:10 to 03:25 UTC" in w and "api-2" in w for w in warnings)
    missing = demo.parsed.rows_read - len(demo.parsed.table)
    assert demo.parsed.gap_count == missing == 19 * 45 + 3 * 15


def test_traffic_follows_the_city_clock(demo):
    requests = demo.series("checkout.requests{host=api-1}")
    local = requests.index.tz_convert(demo.tz)
    weekday = local.day_of_week < 5
    rush = requests[weekday & (local.hour == 8)].mean()
    night = requests[weekday & (local.hour == 3)].mean()
    weekend_rush = requests[(local.day_of_week >= 5) & (local.hour == 8)].mean()
    assert rush > 5 * night
    assert weekend_rush < 0.7 * rush
    first_week = requests[: 7 * 1440].mean()
    last_week = requests[-7 * 1440 :].mean()
    assert 1.005 < last_week / first_week < 1.06  # slow growth


def test_the_good_rule_catches_both_incidents_and_nothing_else(demo):
    report = report_for(demo, rule_named(demo, "latency"))
    assert report.caught == [0, 1]
    assert (report.n_firings, report.outside) == (2, 0)
    assert all(pd.Timedelta(0) < i["delay"] <= pd.Timedelta(minutes=10) for i in report.incidents)


def test_the_noisy_rule_fires_every_monday_morning_and_catches_nothing(demo):
    report = report_for(demo, rule_named(demo, "queue"))
    starts = report.firings["start"].dt.tz_convert(demo.tz)
    assert (starts.dt.day_of_week == 0).all()
    assert (starts.dt.hour.between(8, 9)).all()
    mondays = pd.date_range(demo_module.START, demo_module.END, freq="D", tz="UTC")
    mondays = [d for d in mondays.tz_convert(demo.tz) if d.day_of_week == 0]
    # every Monday whose 08:05 local batch lies inside the data fires exactly once
    with_batch = [d for d in mondays if d.normalize() + pd.Timedelta("8h5min") < demo_module.END]
    assert len(report.firings) == len(with_batch) == 6
    assert report.caught == [] and report.inside == 0


def test_pages_are_the_rules_firings(demo):
    paging = [rule for rule in demo.rules if rule["kind"] != "burn_rate"]
    (proposed,) = [rule for rule in demo.rules if rule["kind"] == "burn_rate"]
    assert not [p for p in demo.pages if p["rule_name"] == proposed["name"]]
    by_rule = {rule["name"]: report_for(demo, rule) for rule in paging}
    for name, report in by_rule.items():
        pages = [p for p in demo.pages if p["rule_name"] == name]
        assert [p["fired_at"] for p in pages] == list(report.firings["start"])
        assert [p["resolved_at"] for p in pages] == list(report.firings["end"])
        assert all(p["rule_text"].startswith(p["series_key"] + " above ") for p in pages)


def test_last_night_page_is_last_night(demo):
    slowdown = demo.incidents[0]
    assert demo_module.END - slowdown["start"] < pd.Timedelta(hours=6)
    local_hour = pd.Timestamp(slowdown["start"]).tz_convert(demo.tz).hour
    assert 0 <= local_hour < 5
    last_page = max(demo.pages, key=lambda p: p["fired_at"])
    assert slowdown["start"] < last_page["fired_at"] < slowdown["end"]


def test_the_payment_slowdown_hits_every_host_and_the_fault_only_api4(demo):
    slow = demo_module.PAYMENT_SLOWDOWN
    fault = demo_module.API4_FAULT
    for host in HOSTS:
        latency = demo.series(f"checkout.latency_p95{{host={host}}}")
        assert (
            latency[slow[0] + pd.Timedelta("10min") : slow[1] - pd.Timedelta("10min")].min() > 800
        )
        in_fault = latency[fault[0] + pd.Timedelta("10min") : fault[1] - pd.Timedelta("10min")]
        assert (in_fault.min() > 800) == (host == "api-4")


def test_rule_incident_and_excluded_fields_fit_the_store(demo):
    columns = set(AlertRule.__table__.columns.keys())
    for rule in demo.rules:
        assert set(rule) - {"series_key"} <= columns
        assert rule["series_key"] in demo.parsed.series
    review_columns = set(Review.__table__.columns.keys())
    for incident in demo.incidents:
        fields = set(incident) - {"start", "end", "series_keys"}
        assert fields <= review_columns
        assert set(incident["series_keys"]) <= set(demo.parsed.series)
        assert incident["status"] in {"draft", "final"}
    (excluded,) = demo.excluded
    assert excluded["series_key"] is None
    assert demo_module.START < excluded["start"] < excluded["end"] < demo_module.END


def test_csv_slice_is_long_iso_z_and_imports_back(demo, tmp_path):
    keys = ["checkout.error_ratio", "checkout.latency_p95{host=api-4}"]
    start, end = "2026-11-29 00:00", pd.Timestamp("2026-11-30 06:00", tz="UTC")
    path = write_demo_csv(tmp_path / "slice.csv", demo, series_keys=keys, start=start, end=end)
    frame = pd.read_csv(path, keep_default_na=False)
    assert list(frame.columns) == ["timestamp", "metric", "host", "value"]
    assert (
        frame["timestamp"]
        .map(lambda t: bool(re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ", t)))
        .all()
    )
    assert set(frame["host"]) == {"", "api-4"}
    assert len(frame) == 2 * 30 * 60
    parsed = parse_file(path)
    for key in keys:
        got = parsed.table[parsed.table["series_key"] == key]
        want = demo.series(key)[pd.Timestamp(start, tz="UTC") : end - pd.Timedelta("1min")]
        np.testing.assert_allclose(got["value"].to_numpy(), want.to_numpy())
    assert not list(tmp_path.glob(".*tmp"))


def test_csv_refuses_unknown_series(demo, tmp_path):
    with pytest.raises(ValueError, match="no demo series 'nope'"):
        demo_csv_frame(demo, series_keys=["nope"])
    with pytest.raises(KeyError, match="no demo series"):
        demo.series("nope")
