"""draft_verdict(): keep, tune and retire on constructed cases, always leaving the decision
to the owner. Series are synthetic (invented for the test)."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest

from webapp.analysis import (
    BandRule,
    ThresholdRule,
    draft_verdict,
    replay_report,
    whatif_sweep,
)
from webapp.analysis.vocabulary import OWNER_DECIDES

T0 = pd.Timestamp("2026-03-02 00:00", tz="UTC")
MIN = pd.Timedelta(minutes=1)
DAYS = 14


def fortnight(*stretches: tuple[int, int, float]) -> pd.Series:
    """Two weeks of 1-minute zeros with ``value`` on each [first, last) minute stretch."""
    values = np.zeros(DAYS * 1440)
    for first, last, value in stretches:
        values[first:last] = value
    return pd.Series(values, index=pd.date_range(T0, periods=values.size, freq="1min"))


# An incident at day 10, 12:00 for an hour (value 100), and a daily 3-minute blip of 12 at 09:00.
INCIDENT_START = 10 * 1440 + 720
BLIPS = [(d * 1440 + 540, d * 1440 + 543, 12.0) for d in range(DAYS)]
NOISY = fortnight((INCIDENT_START, INCIDENT_START + 60, 100.0), *BLIPS)
INCIDENTS = [(T0 + INCIDENT_START * MIN, T0 + (INCIDENT_START + 60) * MIN)]


SWEEP_PENDINGS = (pd.Timedelta(0), 5 * MIN)


def draft(series, rule, thresholds=(10, 20, 50), holds=SWEEP_PENDINGS):
    report = replay_report(series, rule, INCIDENTS)
    sweep = whatif_sweep(series, thresholds, holds, INCIDENTS, direction="above")
    return report, draft_verdict(report, sweep, rule)


def test_tune_picks_the_fewest_pages_that_still_catch_the_incident():
    report, verdict = draft(NOISY, ThresholdRule(above=10))
    assert report.n_firings == DAYS + 1 and report.caught == [0]
    # One page (the incident alone) at (10, 5 min), (20, 0), (20, 5 min), (50, 0), (50, 5 min).
    # Ties go to the shorter median delay (hold 0: no delay), then to the setting
    # closest to the current one: threshold 20 is closer to 10 than 50 is.
    assert verdict.suggestion == "tune"
    assert verdict.parameters["threshold"] == 20.0
    assert verdict.parameters["hold_seconds"] == 0
    assert verdict.parameters["kind"] == "threshold"
    assert "fired 15 times" in verdict.rationale
    assert "With threshold 20 and a hold of 0s, it would have fired 1 time" in (verdict.rationale)


def test_keep_when_it_caught_the_incident_and_nothing_is_quieter():
    report, verdict = draft(NOISY, ThresholdRule(above=20))
    assert (report.n_firings, report.caught) == (1, [0])
    assert verdict.suggestion == "keep"
    assert verdict.parameters == {
        "kind": "threshold",
        "direction": "above",
        "threshold": 20.0,
        "hold_seconds": 0,
        "check_every_seconds": None,
    }
    assert "It caught 1 of 1 recorded incident" in verdict.rationale


def test_retire_when_it_pages_often_and_caught_nothing():
    blips_only = fortnight(*BLIPS)
    report, verdict = draft(blips_only, ThresholdRule(above=10))
    assert (report.n_firings, report.caught, report.outside) == (DAYS, [], DAYS)
    assert verdict.suggestion == "retire"
    assert verdict.parameters == {}
    assert "7.0 per week" in verdict.rationale
    assert "None of its firings matched a recorded incident" in verdict.rationale
    assert "at most two incidents per 12-hour on-call shift" in verdict.rationale


def test_a_rule_that_never_fired_is_kept_and_says_so():
    report, verdict = draft(fortnight(), ThresholdRule(above=10))
    assert report.n_firings == 0
    assert verdict.suggestion == "keep"
    assert "never fired" in verdict.rationale
    assert "It missed 1 incident" in verdict.rationale


@pytest.mark.parametrize("threshold", [10, 20, 500])
def test_every_draft_leaves_the_decision_to_the_owner(threshold):
    _, verdict = draft(NOISY, ThresholdRule(above=threshold))
    assert verdict.rationale.endswith(OWNER_DECIDES)
    assert "Retiring an alert can hide a real failure" in verdict.rationale
    assert "service owner" in verdict.rationale and "paging policy" in verdict.rationale
    json.dumps(verdict.to_dict())


def test_a_band_rule_is_drafted_without_a_sweep():
    series = fortnight(*BLIPS) + np.random.default_rng(5).normal(0, 1, DAYS * 1440)
    rule = BandRule(
        tolerance=5.0, hold="2min", history=pd.Timedelta(days=3), min_history=pd.Timedelta(days=3)
    )
    report = replay_report(series, rule, INCIDENTS)
    verdict = draft_verdict(report, None, rule)
    assert verdict.suggestion in {"keep", "retire"}
    assert verdict.rationale.endswith(OWNER_DECIDES)
    assert verdict.suggestion != "keep" or verdict.parameters["kind"] == "band"


def test_draft_verdict_refuses_what_is_not_a_rule():
    report = replay_report(NOISY, ThresholdRule(above=10), INCIDENTS)
    with pytest.raises(ValueError, match="ThresholdRule or a BandRule"):
        draft_verdict(report, None, "above 10")


def test_without_recorded_incidents_the_draft_does_not_retire():
    blips_only = fortnight(*BLIPS)
    rule = ThresholdRule(above=10)
    report = replay_report(blips_only, rule, [])
    sweep = whatif_sweep(blips_only, [10, 20], SWEEP_PENDINGS, [])
    verdict = draft_verdict(report, sweep, rule)
    assert (report.n_firings, verdict.suggestion) == (DAYS, "keep")
    assert "No incident is recorded within these weeks" in verdict.rationale
    assert "cannot tell which firings were real" in verdict.rationale


def test_a_missed_incident_names_the_quietest_setting_that_catches_it():
    # above 150 misses the incident (value 100). One page catches it at (10, 5 min), (50, 0)
    # and (50, 5 min); the tie goes to no delay, then to the threshold closer to 150: 50, 0.
    report, verdict = draft(NOISY, ThresholdRule(above=150), thresholds=(10, 50, 150))
    assert report.missed == [0]
    assert (
        "Of the what-if settings that catch the most incidents, the quietest (threshold 50, "
        "hold 0s) catches 1 of the 1 recorded incidents at 0.5 pages per week."
    ) in verdict.rationale


def band_sweep_rows(*rows: tuple[float, str, int, tuple[int, ...], str | None]) -> pd.DataFrame:
    """A hand-made band sweep over the fortnight: (tolerance, hold, firings, caught
    incidents, median delay) per row, the other columns following from them."""
    weeks = DAYS / 7
    return pd.DataFrame(
        {
            "tolerance": [r[0] for r in rows],
            "hold": pd.to_timedelta([r[1] for r in rows]),
            "firings": [r[2] for r in rows],
            "pages_per_week": [r[2] / weeks for r in rows],
            "incidents_caught": [len(r[3]) for r in rows],
            "incidents_missed": [1 - len(r[3]) for r in rows],
            "median_delay": pd.to_timedelta([r[4] for r in rows]),
            "caught": [r[3] for r in rows],
        }
    )


NOISY_BAND = BandRule(tolerance=2.0, history=pd.Timedelta(days=3), min_history=pd.Timedelta(days=3))


@pytest.fixture(scope="module")
def band_report():
    series = NOISY + np.random.default_rng(3).normal(0, 1, DAYS * 1440)
    report = replay_report(series, NOISY_BAND, INCIDENTS)
    assert report.caught == [0] and report.n_firings > 10  # a noisy rule that caught it
    return report


def test_a_band_rule_is_tuned_to_the_quietest_tolerance_that_still_catches(band_report):
    # Tolerance 6 pages once but misses the incident, so it is no candidate. Tolerance 3 for
    # 10 min and 4 for 5 min page once each and catch it; the tie goes to the shorter delay.
    sweep = band_sweep_rows(
        (2.0, "0s", band_report.n_firings, (0,), "0s"),
        (3.0, "0s", 3, (0,), "0s"),
        (3.0, "10min", 1, (0,), "10min"),
        (4.0, "5min", 1, (0,), "5min"),
        (6.0, "0s", 1, (), None),
    )
    verdict = draft_verdict(band_report, sweep, NOISY_BAND)
    assert verdict.suggestion == "tune"
    assert verdict.parameters == {
        "kind": "band",
        "direction": "both",
        "tolerance": 4.0,
        "hold_seconds": 300,
        "check_every_seconds": None,
    }
    expected = "With band width 4σ and a hold of 5min, it would have fired 1 time"
    assert expected in verdict.rationale
    assert verdict.rationale.endswith(OWNER_DECIDES)


def test_a_band_rule_is_kept_when_only_settings_that_miss_are_quieter(band_report):
    sweep = band_sweep_rows(
        (2.0, "0s", band_report.n_firings, (0,), "0s"),
        (6.0, "0s", 1, (), None),
    )
    verdict = draft_verdict(band_report, sweep, NOISY_BAND)
    assert verdict.suggestion == "keep" and verdict.parameters["tolerance"] == 2.0
    assert "No setting in the what-if sweep catches the same incidents" in verdict.rationale
