"""replay_report(): the numbers on a small constructed case, worked out by hand.

The series is synthetic (invented for the test)."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest

from webapp.analysis import ThresholdRule, replay_report

T0 = pd.Timestamp("2026-03-02 00:00", tz="UTC")
MIN = pd.Timedelta(minutes=1)


def at(minute: int) -> pd.Timestamp:
    return T0 + minute * MIN


def two_days_with_stretches(*stretches: tuple[int, int]) -> pd.Series:
    """Two days of 1-minute zeros with value 10 on each [first, last) minute stretch."""
    values = np.zeros(2 * 1440)
    for first, last in stretches:
        values[first:last] = 10.0
    return pd.Series(values, index=pd.date_range(T0, periods=values.size, freq="1min"))


RULE = ThresholdRule(above=5, hold="5min")
# Stretches of 10 and the firings they give with a 5-minute hold:
#   A 100-130 -> fires 105, ends 130 (25 min)
#   B 160-180 -> fires 165, ends 180 (15 min); starts 35 min after A ended: flapping
#   C 1000-1060 -> fires 1005, ends 1060 (55 min)
#   D 2870-end -> fires 2875, still going at the end of the data (5 min to the end)
SERIES = two_days_with_stretches((100, 130), (160, 180), (1000, 1060), (2870, 2880))
INCIDENTS = [
    (at(110), at(200)),  # 0: A starts 5 min before it (within the 15-min lead) -> caught
    (at(1500), at(1600)),  # 1: nothing fires -> missed
    (at(4000), at(4100)),  # 2: after the data ends -> out of range, neither
]


@pytest.fixture(scope="module")
def report():
    return replay_report(SERIES, RULE, INCIDENTS)


def test_firings_with_durations_and_incidents(report):
    firings = report.firings
    assert list(firings["start"]) == [at(105), at(165), at(1005), at(2875)]
    assert list(firings["end"][:3]) == [at(130), at(180), at(1060)]
    assert pd.isna(firings["end"].iloc[3])
    assert list(firings["duration"]) == [25 * MIN, 15 * MIN, 55 * MIN, 5 * MIN]
    assert list(firings["ongoing"]) == [False, False, False, True]
    assert firings["incident"].tolist() == [0, 0, pd.NA, pd.NA]


def test_counts_and_rates(report):
    assert report.n_firings == 4
    assert report.weeks == pytest.approx(2 / 7)
    assert report.pages_per_week == pytest.approx(4 / (2 / 7))  # 14 per week
    assert report.median_duration == 25 * MIN  # finished ones: 15, 25, 55
    assert report.time_raised == (25 + 15 + 55 + 5) * MIN
    assert report.flapping == 1
    assert (report.inside, report.outside) == (2, 2)
    assert report.busiest_12h == 2  # A and B start within 12 h of each other
    assert report.span == (at(0), at(2880))


def test_caught_missed_and_out_of_range(report):
    assert report.caught == [0]
    assert report.missed == [1]
    first, missed, later = report.incidents
    assert first["first_firing"] == at(105)
    assert first["delay"] == -5 * MIN
    assert (missed["in_range"], missed["caught"], missed["delay"]) == (True, False, None)
    assert (later["in_range"], later["caught"]) == (False, False)
    assert report.median_delay == -5 * MIN


def test_to_dict_is_json_and_carries_the_numbers(report):
    data = json.loads(json.dumps(report.to_dict()))
    assert data["n_firings"] == 4
    assert data["firings"][0] == {
        "start": "2026-03-02T01:45:00Z",
        "end": "2026-03-02T02:10:00Z",
        "duration_seconds": 1500.0,
        "ongoing": False,
        "incident": 0,
    }
    assert data["firings"][3]["end"] is None
    assert data["incidents"][0]["delay_seconds"] == -300.0
    assert data["caught"] == [0] and data["missed"] == [1]
    assert data["rule"] == "above 5 for 5min"


def test_a_firing_long_before_the_incident_overlaps_it_but_did_not_catch_it():
    # fires at minute 105 (stretch from 100), still raised when the incident begins at 121,
    # 16 minutes later: more than the 15-minute lead, so it overlaps but does not catch.
    series = two_days_with_stretches((100, 200))
    report = replay_report(series, RULE, [(at(121), at(150))])
    assert (report.inside, report.caught, report.missed) == (1, [], [0])
    edge = replay_report(series, RULE, [(at(120), at(150))])  # exactly 15 minutes: caught
    assert edge.caught == [0] and edge.incidents[0]["delay"] == -15 * MIN


def test_incidents_as_dicts_and_open_incidents():
    report = replay_report(SERIES, RULE, [{"start": at(1000), "end": None}])
    assert report.caught == [0]
    assert report.firings["incident"].tolist() == [pd.NA, pd.NA, 0, 0]


def test_flap_gap_is_a_parameter():
    assert replay_report(SERIES, RULE, flap_gap=pd.Timedelta("30min")).flapping == 0


def test_no_firings_gives_zeros_and_no_median():
    report = replay_report(two_days_with_stretches(), RULE, INCIDENTS[:1])
    assert (report.n_firings, report.pages_per_week, report.flapping) == (0, 0.0, 0)
    assert report.median_duration is None and report.median_delay is None
    assert report.missed == [0]
    json.dumps(report.to_dict())


@pytest.mark.parametrize(
    ("incidents", "message"),
    [
        ([(at(10), at(5))], "incident 1 ends .* before it starts"),
        ([("yesterday", at(5))], "incident 1 start: expected a date and time"),
        ([at(5)], r"incident 1: expected \(start, end\)"),
    ],
)
def test_bad_incidents_get_a_clear_message(incidents, message):
    with pytest.raises(ValueError, match=message):
        replay_report(SERIES, RULE, incidents)


def test_negative_lead_is_refused():
    with pytest.raises(ValueError, match="must not be negative"):
        replay_report(SERIES, RULE, lead=pd.Timedelta("-1min"))
