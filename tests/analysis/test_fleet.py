"""Peers at fleet scale: the cross-sectional test, DBSCAN, and a fleet of 500 hosts."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from webapp.analysis import compare_peers
from webapp.analysis._fleet import dbscan, modified_z, shared_labels

END = pd.Timestamp("2026-11-30 06:00", tz="UTC")
WINDOW = (END - pd.Timedelta(hours=6), END)
GROUP_ONSET = WINDOW[0] + pd.Timedelta(hours=2)
ZONES = "abcde"


def brute_modified_z(matrix: np.ndarray) -> np.ndarray:
    """Iglewicz & Hoaglin's modified z-score, one step at a time: M = 0.6745 (x - median) / MAD,
    with the mean absolute deviation x 1.2533 (0.7979 in their M form) when MAD is 0."""
    out = np.full(matrix.shape, np.nan)
    for col in range(matrix.shape[1]):
        x = matrix[:, col]
        ok = np.isfinite(x)
        if ok.sum() < 3:
            continue
        median = np.median(x[ok])
        mad = np.median(np.abs(x[ok] - median))
        if mad > 0:
            out[ok, col] = 0.6745 * (x[ok] - median) / mad
        else:
            mean_ad = np.mean(np.abs(x[ok] - median))
            if mean_ad > 0:
                out[ok, col] = 0.7979 * (x[ok] - median) / mean_ad
    return out


def test_the_cross_sectional_test_agrees_with_a_loop():
    rng = np.random.default_rng(3)
    matrix = rng.standard_t(3, size=(41, 60))
    matrix[rng.random(matrix.shape) < 0.1] = np.nan
    matrix[:, 7] = 5.0  # every host equal: no spread at all
    matrix[:30, 8] = 1.0  # most equal: MAD 0, the mean absolute deviation stands in
    matrix[2:, 9] = np.nan  # two values only: no test
    expected = brute_modified_z(matrix)
    # 0.6745 and 0.7979 are rounded constants in the published form; allow for that.
    np.testing.assert_allclose(modified_z(matrix), expected, rtol=2e-4, equal_nan=True)
    assert np.isnan(modified_z(matrix)[:, [7, 9]]).all()


def test_dbscan_on_a_line():
    # Worked out by hand from the definition, eps 1.1 and min_samples 3 (the point itself
    # counts): 0-1-2-3 chain into one cluster, 10-11-12 form another, 20 is noise, and 4.9
    # is 1.9 from its nearest core point, so noise too.
    points = np.array([0.0, 1.0, 2.0, 3.0, 10.0, 11.0, 12.0, 20.0, 4.9])
    distance = np.abs(points[:, None] - points[None, :])
    labels = dbscan(distance, eps=1.1, min_samples=3)
    assert labels.tolist() == [0, 0, 0, 0, 1, 1, 1, -1, -1]
    # A border point within eps of a core point joins its cluster without being core.
    points = np.array([0.0, 1.0, 2.0, 3.05])
    labels = dbscan(np.abs(points[:, None] - points[None, :]), eps=1.1, min_samples=3)
    assert labels.tolist() == [0, 0, 0, 0]


def test_a_shared_label_is_named_only_when_it_sets_the_group_apart():
    labels = {
        "a": {"zone": "b", "region": "eu"},
        "b": {"zone": "b", "region": "eu"},
        "c": {"zone": "c", "region": "eu"},
    }
    assert shared_labels(["a", "b"], ["a", "b", "c"], labels) == {"zone": "b"}
    assert shared_labels(["a", "c"], ["a", "b", "c"], labels) == {}


def fleet(n: int = 500) -> tuple[dict[str, pd.Series], dict[str, dict[str, str]], dict]:
    """`n` invented hosts over two weeks at 5 minutes, in five zones. Every zone-b host shifts
    up by 12 sd from GROUP_ONSET (a zone-wide fault); h007 (zone c) has a local fault; the
    last host joins an hour into the window; the one before it idles at zero until the window
    and then climbs steadily (a new host taking traffic)."""
    rng = np.random.default_rng(17)
    index = pd.date_range(END - pd.Timedelta(weeks=2), END, freq="5min")
    hours = (index - index[0]).total_seconds().to_numpy() / 3600
    cycle = 15 * np.sin(2 * np.pi * hours / 24)
    values = 200 + cycle + rng.normal(0, 4, (n, len(index))) + rng.uniform(-20, 20, (n, 1))
    zones = [ZONES[i % len(ZONES)] for i in range(n)]
    in_window = index >= WINDOW[0]
    for i in range(n):
        if zones[i] == "b":
            values[i, index >= GROUP_ONSET] += 48
    values[
        7, (index >= WINDOW[0] + pd.Timedelta(minutes=30)) & (index < END - pd.Timedelta(hours=3))
    ] -= 60
    ramp = n - 2
    values[ramp, ~in_window] = np.abs(rng.normal(0, 0.5, (~in_window).sum()))
    values[ramp, in_window] = np.linspace(0, 250, in_window.sum()) + rng.normal(
        0, 4, in_window.sum()
    )
    joined = n - 1
    values[joined, index < WINDOW[0] + pd.Timedelta(hours=1)] = np.nan
    keys = [f"api.latency{{host=h{i:03d},zone={zones[i]}}}" for i in range(n)]
    series = {k: pd.Series(values[i], index=index) for i, k in enumerate(keys)}
    labels = {k: {"host": f"h{i:03d}", "zone": zones[i]} for i, k in enumerate(keys)}
    roles = {"ramp": keys[ramp], "joined": keys[joined], "local": keys[7]}
    roles["zone_b"] = {k for k in keys if labels[k]["zone"] == "b"} - {keys[ramp], keys[joined]}
    return series, labels, roles


@pytest.fixture(scope="module")
def big():
    series, labels, roles = fleet()
    target = sorted(roles["zone_b"])[0]
    result = compare_peers(
        target,
        series,
        window=WINDOW,
        history="2W",
        tolerance=3.0,
        labels=labels,
        names={k: v["host"] for k, v in labels.items()},
        label="host",
    )
    return result, roles


def test_the_zone_wide_fault_is_one_group_named_by_its_zone(big):
    result, roles = big
    assert len(result.groups) == 1
    group = result.groups[0]
    assert set(group.members) == roles["zone_b"]
    assert group.shared == {"zone": "b"}
    assert group.first_outside == GROUP_ONSET
    n = len(roles["zone_b"])
    assert any(
        s.startswith(f"{n} of the 500 series that differ only in host, all in zone b, left")
        for s in result.summary
    )


def test_the_joining_and_ramping_hosts_are_named_not_called_outliers(big):
    result, roles = big
    by_key = {r.key: r for r in result.results}
    assert by_key[roles["joined"]].status == "joined"
    assert by_key[roles["ramp"]].status == "ramped"
    for key in (roles["joined"], roles["ramp"]):
        assert by_key[key].deviation is None and not by_key[key].left_band
        assert all(key not in g.members for g in result.groups)
    assert result.facts["peers_joined"] == ["h499"]
    assert result.facts["peers_ramped"] == ["h498"]
    assert any(s.startswith("Ramped up from idle inside the window") for s in result.summary)


def test_the_local_fault_stands_out_alone(big):
    result, roles = big
    local = next(r for r in result.results if r.key == roles["local"])
    assert local.left_band and local.group is None
    assert local.first_outside == WINDOW[0] + pd.Timedelta(minutes=30)
    assert local.stood_out_from == local.first_outside
    calm = [r for r in result.results if r.status == "compared" and r.key not in roles["zone_b"]]
    assert sum(r.left_band for r in calm) <= 3  # h007, and at most a couple of noisy hosts


def test_a_zone_b_host_stands_out_from_a_fleet_that_mostly_stayed(big):
    result, _ = big
    target = result.results[0]
    assert target.first_outside == GROUP_ONSET and target.stood_out_from == GROUP_ONSET
    assert result.facts["groups"][0]["shared_labels"] == {"zone": "b"}
