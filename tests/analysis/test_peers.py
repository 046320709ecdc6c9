"""compare_peers on synthetic hosts with a known truth: one host's excursion vs. all shifted."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from webapp.analysis import compare_peers, explain
from webapp.analysis._outside import first_sustained

END = pd.Timestamp("2026-11-30 18:00", tz="UTC")
WINDOW = (END - pd.Timedelta(hours=8), END)
EVENT = END - pd.Timedelta(hours=4)  # 14:00 UTC
HOSTS = [f"api-{i}" for i in range(1, 7)]


def key(host: str) -> str:
    return f"checkout.latency_p95{{host={host}}}"


def hosts(
    shifts: dict[str, tuple[pd.Timedelta, pd.Timedelta, float]],
    names: list[str] = HOSTS,
    seed: int = 7,
) -> dict[str, pd.Series]:
    """Invented 2-minute latency, two weeks and the window: a daily cycle plus noise
    (sd 2); `shifts` adds `size` on [start, end) to a host's values."""
    rng = np.random.default_rng(seed)
    index = pd.date_range(END - pd.Timedelta(weeks=2, hours=8), END, freq="2min")
    hours = (index - index[0]).total_seconds().to_numpy() / 3600
    out = {}
    for n, host in enumerate(names):
        value = 100 + 5 * n + 20 * np.sin(2 * np.pi * hours / 24) + rng.normal(0, 2, len(index))
        if host in shifts:
            start, end, size = shifts[host]
            value[(index >= start) & (index < end)] += size
        out[key(host)] = pd.Series(value, index=index)
    return out


def run(peers: dict[str, pd.Series], target: str = "api-4", **kw):
    return compare_peers(
        key(target),
        peers,
        window=WINDOW,
        history="2W",
        tolerance=3.0,
        names={key(h): h for h in HOSTS} | kw.pop("names", {}),
        label="host",
        **kw,
    )


def test_one_host_alone_is_local():
    peers = hosts({"api-4": (EVENT, EVENT + pd.Timedelta(minutes=46), 40.0)})
    result = run(peers)
    target, others = result.results[0], result.others
    assert target.key == key("api-4") and target.is_target
    assert [r.name for r in others] == ["api-1", "api-2", "api-3", "api-5", "api-6"]
    assert target.first_outside == EVENT
    assert 44 <= target.minutes_outside <= 50
    assert target.peak_deviation_sd > 10
    assert not any(r.left_band for r in others)
    assert all(abs(r.peak_deviation_sd) < 6 for r in others)
    assert result.facts["others_left"] == 0 and result.facts["target_left"]
    assert result.facts["first_outside_spread_minutes"] is None
    assert len(result.summary) == 2
    assert result.summary[0].startswith("api-4 was outside its expected band for")
    assert "none of the 5 other series that differ only in host left theirs" in result.summary[0]
    assert result.summary[1].startswith("api-4 stood out from its peers for ")
    assert target.stood_out_from == EVENT


def test_all_hosts_shifted_together_is_shared():
    lags = {h: pd.Timedelta(minutes=2 * i) for i, h in enumerate(HOSTS)}  # 0 .. 10 min apart
    peers = hosts(
        {h: (EVENT + lag, EVENT + pd.Timedelta(hours=1), 60.0) for h, lag in lags.items()}
    )
    result = run(peers)
    assert all(r.left_band for r in result.results)
    assert {r.name: r.first_outside for r in result.results} == {
        h: EVENT + lag for h, lag in lags.items()
    }
    assert result.facts["first_outside_spread_minutes"] == 10.0
    assert result.summary[0].startswith("All 6 series that differ only in host left")
    assert "The 6 first exits came within 10 min of each other" in result.summary[1]
    assert "shared" in result.summary[1]


def test_exits_at_the_same_minute_say_so():
    shift = (EVENT, EVENT + pd.Timedelta(hours=1), 60.0)
    result = run(hosts({"api-4": shift, "api-5": shift}))
    assert result.facts["first_outside_spread_minutes"] == 0.0
    assert result.summary[1] == (
        "Both left at the same time, 14:00 UTC on Mon 30 Nov 2026: "
        "a shared cause is more likely than a fault in one host."
    )


def test_exits_far_apart_are_not_called_shared():
    peers = hosts(
        {
            "api-4": (EVENT, EVENT + pd.Timedelta(minutes=30), 50.0),
            "api-2": (EVENT + pd.Timedelta(hours=2), EVENT + pd.Timedelta(hours=3), 50.0),
        }
    )
    result = run(peers)
    assert result.facts["others_left"] == 1
    assert "1 of the 5 other series" in result.summary[0] and "(api-2)" in result.summary[0]
    assert (
        result.summary[1]
        == "The 2 first exits were spread over 2 h, from 14:00 UTC on Mon 30 Nov 2026."
    )


def test_target_uses_the_same_band_as_explain():
    peers = hosts({"api-4": (EVENT, EVENT + pd.Timedelta(minutes=20), 30.0)})
    result = run(peers)
    alone = explain(peers[key("api-4")], window=WINDOW, history="2W", tolerance=3.0)
    window = alone.frame[alone.frame["in_window"]]
    expected_z = (window["value"] - window["expected"]) / window["band_scale"]
    assert result.results[0].minutes_outside == alone.facts["minutes_outside"]
    np.testing.assert_allclose(result.results[0].deviation.to_numpy(), expected_z.to_numpy())


def test_peers_must_include_the_target():
    peers = hosts({})
    del peers[key("api-4")]
    with pytest.raises(ValueError, match="must include the target"):
        run(peers)


def test_every_peer_is_compared_however_many():
    names = [f"api-{i}" for i in range(1, 21)]
    result = run(hosts({}, names=names), names={key(h): h for h in names})
    assert result.available == 19 and result.compared == 19
    assert [r.name for r in result.others] == sorted(set(names) - {"api-4"}, key=key)


def test_a_whole_fleet_moving_makes_nobody_stand_out():
    shift = (EVENT, EVENT + pd.Timedelta(hours=1), 60.0)
    result = run(hosts({h: shift for h in HOSTS}))
    target = result.results[0]
    assert target.left_band and target.stood_out_from is None
    assert target.stood_out_minutes == 0
    assert "api-4 never stood out from its peers" in result.summary[-1]


def test_a_peer_that_joined_in_the_window_is_named_not_compared():
    peers = hosts({"api-4": (EVENT, EVENT + pd.Timedelta(minutes=30), 50.0)})
    peers[key("api-2")] = peers[key("api-2")][peers[key("api-2")].index >= WINDOW[0]]
    result = run(peers)
    joined = next(r for r in result.results if r.name == "api-2")
    assert joined.status == "joined" and joined.deviation is None and not joined.left_band
    assert joined.error.startswith(f"joined at {WINDOW[0].isoformat()}")
    assert result.facts["others_usable"] == 4 and result.facts["peers_failed"] == 0
    assert result.facts["peers_joined"] == ["api-2"]
    assert "none of the 4 other series" in result.summary[0]
    assert result.summary[-1] == (
        "Joined within a day of the window, too new to have a band: api-2; "
        "named here, not counted as outliers."
    )


def test_a_peer_without_data_is_reported_and_the_others_still_compared():
    peers = hosts({"api-4": (EVENT, EVENT + pd.Timedelta(minutes=30), 50.0)})
    peers[key("api-2")] = peers[key("api-2")][
        peers[key("api-2")].index < WINDOW[0] - pd.Timedelta(weeks=3)
    ]
    result = run(peers)
    broken = next(r for r in result.results if r.name == "api-2")
    assert broken.status == "failed" and broken.deviation is None and not broken.left_band
    assert broken.error == "the series has no values in the window or the history before it"
    assert result.facts["others_usable"] == 4 and result.facts["peers_failed"] == 1
    assert result.summary[-1] == "1 peer(s) could not be explained; see the table."


def test_only_a_sustained_stretch_counts_as_leaving_the_band():
    index = pd.date_range("2026-11-30", periods=12, freq="1min", tz="UTC")
    flags = pd.Series([0, 1, 0, 1, 1, 0, 1, 1, 1, 1, 1, 0], index=index, dtype=bool)
    step = pd.Timedelta(minutes=1)
    assert first_sustained(flags, step, pd.Timedelta(minutes=5)) == index[6]
    assert first_sustained(flags, step, pd.Timedelta(minutes=2)) == index[3]
    # One sample is never enough, however coarse the grid.
    assert first_sustained(flags, pd.Timedelta(minutes=10), pd.Timedelta(minutes=5)) == index[3]
    assert first_sustained(flags, step, pd.Timedelta(minutes=6)) is None
