"""The band's sides are calibrated out of sample: coverage on synthetic noise of known
distribution, the conformal guarantee, the Pareto tail, counts, ratios and level shifts.

Series are synthetic (invented for the tests) unless a source is named."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy.stats import genpareto, lomax, norm

from webapp.analysis import expected_band, explain
from webapp.analysis._band import fit_baseline
from webapp.analysis._tail import (
    cluster_maxima,
    fit_pareto_quantiles,
    predictive_widening,
    upper_quantile,
)

T0 = pd.Timestamp("2026-01-05", tz="UTC")
NOMINAL_OUT = 2 * norm.sf(3)  # standard normal table: 0.27% beyond +-3 sd


def share_outside(draw, seeds, weeks: int = 4, window_days: int = 7) -> tuple[float, int]:
    """Share of window samples outside the band at width 3, pooled over seeds: each series
    is `weeks` of history and a window of `window_days`, 5-minute i.i.d. noise."""
    outside, total = 0, 0
    for seed in seeds:
        n = (weeks * 7 + window_days) * 288
        index = pd.date_range(T0, periods=n, freq="5min")
        series = pd.Series(draw(np.random.default_rng(seed), n), index=index)
        window = (index[-window_days * 288], index[-1])
        frame = explain(series, window=window, history=f"{weeks * 7}D").frame
        w = frame[frame["in_window"]]
        outside += int(w["outside"].sum())
        total += len(w)
    return outside / total, total


def test_gaussian_noise_is_outside_its_nominal_share():
    share, n = share_outside(lambda rng, n: rng.normal(100, 5, n), seeds=range(4))
    assert abs(share - NOMINAL_OUT) < 4 * np.sqrt(NOMINAL_OUT * (1 - NOMINAL_OUT) / n)


@pytest.mark.parametrize(
    "draw",
    [
        pytest.param(lambda rng, n: 100 + 5 * rng.standard_t(3, n), id="student-t(3)"),
        pytest.param(lambda rng, n: rng.lognormal(3, 0.8, n), id="log-normal"),
    ],
)
def test_heavy_and_skewed_noise_stay_within_twice_nominal(draw):
    share, _ = share_outside(draw, seeds=range(4))
    assert NOMINAL_OUT / 2 <= share <= 2 * NOMINAL_OUT


def test_one_minute_gaussian_noise_at_width_two_is_outside_its_nominal_share():
    """The same-hour habit (three hours of 1-minute samples per day and hour) must not widen
    the band on noise that has none, at a narrow width either."""
    nominal = 2 * norm.sf(2.0)  # standard normal table: 4.55% beyond +-2 sd
    outside, total = 0, 0
    for seed in range(3):
        rng = np.random.default_rng(50 + seed)
        index = pd.date_range(T0, periods=15 * 1440, freq="1min")
        series = pd.Series(rng.normal(100, 5, len(index)), index=index)
        band = expected_band(series, index[-1440:], tolerance=2.0)
        values = series.iloc[-1440:].to_numpy()
        outside += int(np.sum((values < band["lower"]) | (values > band["upper"])))
        total += len(values)
    share = outside / total
    assert abs(share - nominal) < 4 * np.sqrt(nominal * (1 - nominal) / total)


def test_a_spike_near_the_same_hour_on_most_days_is_expected_there_and_nowhere_else():
    """A nightly job lifts the metric for one 5-minute sample between 03:20 and 03:40 on
    most days: that is the metric's habit, not news; the same spike at 15:30, or one three
    times as high at 03:30, is."""
    rng = np.random.default_rng(12)
    days = 22
    index = pd.date_range(T0, periods=days * 288, freq="5min")
    values = rng.normal(10, 0.5, len(index))
    for day in range(days):
        if day % 5 != 4:  # four days in five
            values[day * 288 + 40 + rng.integers(0, 5)] = rng.uniform(35, 45)  # 03:20-03:40
    series = pd.Series(values, index=index)
    window = index[-288:]
    band = expected_band(series, window)
    at = {t: window.get_loc(window[0] + pd.Timedelta(t)) for t in ("3h30min", "15h30min")}
    assert band["upper"].iloc[at["3h30min"]] > 38 > 35 > band["upper"].iloc[at["15h30min"]]
    assert band["upper"].iloc[at["3h30min"]] < 120


def test_skewed_noise_gets_a_skewed_band():
    rng = np.random.default_rng(4)
    index = pd.date_range(T0, periods=29 * 288, freq="5min")
    series = pd.Series(rng.lognormal(3, 0.8, len(index)), index=index)
    band = expected_band(series, index[-288:])
    assert ((band["upper"] - band["expected"]) > 3 * (band["expected"] - band["lower"])).all()


def test_conformal_coverage_guarantee_on_iid_noise():
    # Angelopoulos & Bates 2021, "A gentle introduction to conformal prediction", Theorem 1:
    # on exchangeable data the split-conformal interval holds at least the nominal share.
    # Width 1 (68.27%) keeps both sides on the empirical conformal rank. Averaged over 40
    # series of i.i.d. exponential noise, the share inside a day ahead must not fall more
    # than 3 standard errors below nominal.
    nominal = 1 - 2 * norm.sf(1.0)
    shares = []
    for seed in range(40):
        rng = np.random.default_rng(100 + seed)
        index = pd.date_range(T0, periods=6 * 288, freq="5min")
        series = pd.Series(rng.exponential(10, len(index)), index=index)
        band = expected_band(series, index[-288:], tolerance=1.0)
        values = series.iloc[-288:].to_numpy()
        shares.append(np.mean((values >= band["lower"]) & (values <= band["upper"])))
    se = np.std(shares, ddof=1) / np.sqrt(len(shares))
    assert np.mean(shares) >= nominal - 3 * se


def test_pareto_fit_recovers_a_known_shape_as_scipy_does():
    # Reference library: scipy.stats.genpareto (a sample of known shape 0.25, scale 2, and
    # its maximum-likelihood fit).
    sample = genpareto.rvs(0.25, scale=2.0, size=5000, random_state=np.random.default_rng(7))
    ours = fit_pareto_quantiles(sample)
    shape, _, scale = genpareto.fit(sample, floc=0)
    assert ours.shape == pytest.approx(0.25, abs=0.06) and ours.shape == pytest.approx(
        shape, abs=0.06
    )
    assert ours.scale == pytest.approx(scale, rel=0.08)
    assert ours.quantile(0.999) == pytest.approx(genpareto.ppf(0.999, 0.25, scale=2), rel=0.15)
    light = fit_pareto_quantiles(
        genpareto.rvs(-0.2, size=5000, random_state=np.random.default_rng(8))
    )
    assert light.shape == pytest.approx(-0.2, abs=0.06)


def test_a_long_run_of_exceedances_counts_as_one_cluster():
    values = np.array([0, 5, 6, 7, 0, 9, 0, np.nan, 4, 4])
    np.testing.assert_array_equal(cluster_maxima(values, 3.0), [7, 9, 4])
    rng = np.random.default_rng(3)
    noise = rng.normal(size=8000)
    incident = noise.copy()
    incident[4000:4024] = 50.0  # two hours of 5-minute samples far out
    assert upper_quantile(incident, norm.sf(3)) < 1.3 * upper_quantile(noise, norm.sf(3))


def test_a_level_shift_is_followed_within_a_day():
    rng = np.random.default_rng(5)
    index = pd.date_range(T0, periods=15 * 288, freq="5min")
    values = 100 + rng.normal(0, 2, len(index))
    values[-288 - 200 :] += 60  # the level moved 200 samples (16.7 h) before the window
    band = expected_band(pd.Series(values, index=index), index[-288:])
    assert band["expected"].sub(160).abs().max() < 2


def test_a_shift_in_the_last_hours_is_followed_and_a_short_burst_is_not():
    rng = np.random.default_rng(5)
    index = pd.date_range(T0, periods=15 * 288, freq="5min")
    values = 100 + rng.normal(0, 2, len(index))
    shifted, burst = values.copy(), values.copy()
    shifted[-288 - 72 : -288] += 60  # the level moved 6 hours before the window
    burst[-288 - 12 : -288] += 60  # one hour of burst just before the window
    moved = expected_band(pd.Series(shifted, index=index), index[-288:])
    kept = expected_band(pd.Series(burst, index=index), index[-288:])
    assert moved["expected"].sub(160).abs().max() < 2
    assert kept["expected"].sub(100).abs().max() < 2


def test_after_a_dip_of_some_hours_the_old_level_stays_inside():
    rng = np.random.default_rng(12)
    index = pd.date_range(T0, periods=15 * 288, freq="5min")
    values = 100 + rng.normal(0, 2, len(index))
    values[-288 - 144 : -288] -= 60  # twelve hours low, then back to normal in the window
    series = pd.Series(values, index=index)
    exp = explain(series, window=(index[-288], index[-1]), history="14D")
    w = exp.frame[exp.frame["in_window"]]
    assert w["expected"].sub(40).abs().max() < 2  # the forecast follows the new level ...
    assert w["outside"].mean() < 0.01  # ... and the band still holds the old one


def test_counts_get_a_whole_non_negative_band_and_a_blip_is_not_news():
    rng = np.random.default_rng(6)
    index = pd.date_range(T0, periods=15 * 1440, freq="1min")
    counts = pd.Series(rng.poisson(0.02, len(index)).astype(float), index=index)
    counts.iloc[-30] = 1.0
    exp = explain(counts, window=(index[-60], index[-1]), history="14D", agg="sum")
    w = exp.frame[exp.frame["in_window"]]
    assert (w["lower"] == 0).all() and (w["expected"] >= 0).all()
    assert (w["upper"] >= 1).all() and (w["upper"] == np.round(w["upper"])).all()
    assert not w["outside"].any()


def test_a_ratio_band_stays_in_zero_to_one():
    rng = np.random.default_rng(9)
    index = pd.date_range(T0, periods=15 * 288, freq="5min")
    ratio = pd.Series(rng.beta(30, 1.2, len(index)), index=index)  # a success ratio near 1
    band = expected_band(ratio, index[-288:])
    assert (band["upper"] <= 1).all() and (band["lower"] >= 0).all()


def test_the_band_states_its_backtest_coverage(make_service_series):
    series, _ = make_service_series(weeks=6, sigma=4, seed=2)
    exp = explain(series, window=(series.index[-288], series.index[-1]), history="35D")
    f = exp.facts
    assert f["band_sides"] == "backtest" and f["band_backtest_days"] == 28
    assert f["band_coverage_nominal"] == pytest.approx(0.9973, abs=1e-4)
    assert abs(f["band_coverage"] - 0.9973) < 0.003
    text = " ".join(exp.summary)
    assert (
        "Over the last 4 weeks, each day forecast from the days before it, this band held" in text
    )
    assert "it is built to hold 99.7%." in text


def test_short_history_falls_back_to_the_plain_spread_and_says_so(make_service_series):
    series, _ = make_service_series(weeks=1, sigma=4, seed=2)
    end = series.index[-1]
    exp = explain(series, window=(end - pd.Timedelta("2h"), end), history="1D")
    assert exp.facts["band_sides"] == "scale" and exp.facts["band_coverage"] is None
    assert any(s.startswith("The history is too short to test the band") for s in exp.summary)


def test_a_past_incident_in_the_history_does_not_set_the_band_and_wider_stays_wider():
    """A 45-minute incident at ten times the level, left in the history, is one run of
    errors: it counts once, so it neither becomes the 99.87% side by itself nor makes the
    width-3 band wider than the width-4 one (synthetic)."""
    rng = np.random.default_rng(11)
    index = pd.date_range("2026-10-01", periods=4 * 7 * 1440, freq="min", tz="UTC")
    minutes = np.arange(index.size) % 1440
    values = 140 + 10 * np.sin(2 * np.pi * minutes / 1440) + rng.normal(0, 5, index.size)
    incident = (index >= "2026-10-20 02:00") & (index < "2026-10-20 02:45")
    values[incident] = 1400.0
    series = pd.Series(values, index)
    window = (index[-360], index[-1])
    widths = {}
    for tolerance in (3.0, 4.0):
        frame = explain(series, window=window, history="3W", tolerance=tolerance).frame
        inside = frame[frame["in_window"]]
        widths[tolerance] = float((inside["upper"] - inside["expected"]).median())
    assert widths[3.0] < widths[4.0]
    assert widths[3.0] < 100  # the noise is 5 wide; the incident is 1,260 above


def test_the_explanation_names_the_hours_a_habit_widens_the_band():
    rng = np.random.default_rng(12)
    index = pd.date_range(T0, periods=22 * 288, freq="5min")
    values = rng.normal(10, 0.5, len(index))
    for day in range(21):
        values[day * 288 + 40 + rng.integers(0, 5)] = rng.uniform(35, 45)  # 03:20-03:40
    exp = explain(pd.Series(values, index=index), window=(index[-288], index[-1]))
    hours = exp.facts["band_habit_hours"]
    assert "03:00" in hours and "15:00" not in hours
    sentence = next(s for s in exp.summary if "reaches further" in s)
    assert "At 02:00–05:00 it reaches further" in sentence


def test_count_quantiles_on_a_rate_grid_only_ever_widen_the_band():
    """The Poisson quantiles are read once per rounded rate; rounding outward keeps each
    side at least as wide as scipy's exact quantile at the sample's own rate."""
    from scipy.stats import poisson

    from webapp.analysis._band import on_rate_grid

    rate = np.random.default_rng(8).gamma(0.5, 4.0, 20_000) + 1e-9
    beyond = norm.sf(3.0)
    upper = on_rate_grid(poisson.isf, beyond, rate, up=True)
    lower = on_rate_grid(poisson.ppf, beyond, rate, up=False)
    assert (upper >= poisson.isf(beyond, rate)).all() and (lower <= poisson.ppf(beyond, rate)).all()
    assert np.mean(upper == poisson.isf(beyond, rate)) > 0.99


def test_the_predictive_widening_is_the_lomax_quantile_of_a_learned_exponential_tail():
    # Reference library: scipy.stats.lomax. An exponential tail whose scale is the mean of m
    # excesses has as predictive distribution of the next excess a Lomax (Pareto II) of
    # shape m and scale m x that mean (the gamma-exponential predictive).
    mean_excess, share = 2.5, 0.027
    for m in (3, 10, 100):
        plug_in = mean_excess * -np.log(share)
        predictive = lomax.ppf(1 - share, m, scale=m * mean_excess)
        assert plug_in * predictive_widening(m, share) == pytest.approx(predictive, rel=1e-9)
    assert predictive_widening(10, share) > predictive_widening(100, share) > 1.0


def test_a_sample_too_small_for_the_share_is_never_read_below_its_largest_value():
    """288 errors cannot show a 0.135% side even once: the side is at least the largest
    of them, whatever the tail fit says (here a metric sitting on a few levels, where the
    fit sees mostly ties)."""
    errors = np.where(np.arange(288) % 2 == 0, 0.0, -2.4)
    errors[np.arange(8) * 30 + 10] = 2.4  # ten separate clusters above the threshold (0)
    errors[[245, 265, 285]] = [76.0, 79.0, 83.0]
    assert upper_quantile(errors, norm.sf(3)) >= 83.0


def bursty_cpu(rng: np.random.Generator, days: int) -> pd.Series:
    """5-minute CPU near 2.5 with short bursts to 60-72 at random times, six a day."""
    index = pd.date_range(T0, periods=days * 288, freq="5min")
    values = 2.5 + rng.gamma(2.0, 0.2, len(index))
    for start in rng.choice(len(index) - 3, size=6 * days, replace=False):
        values[start : start + 2] = rng.uniform(60, 72)
    return pd.Series(values, index=index)


def test_a_bursty_metric_s_band_reaches_no_further_than_its_backtest_went():
    """The hourly scale is large at hours that once had a burst; the side there must not
    reach past the furthest the backtest's errors went (bursts to 72 once gave a band up to
    270), so a burst to 100, higher than any before, is outside."""
    series = bursty_cpu(np.random.default_rng(5), 15)
    history, window = series.iloc[:-288], series.index[-288:]
    fit = fit_baseline(history)
    band = fit.band(window)
    lowest, highest = fit.calibration.reach(3.0)
    assert np.isfinite(highest) and highest < 72
    # measured from the higher of the two levels the band covers (the last day's and the
    # day before's)
    centre = band["expected"] + max(fit.level_before - fit.level, 0.0)
    assert (band["upper"] - centre <= highest * (1 + 1e-9)).all()
    assert band["upper"].max() < 100
    assert (band["upper"] > 60).all(), "a burst like the past ones is still inside"


def test_the_reach_bound_holds_both_sides_of_a_signed_metric_and_needs_enough_errors():
    rng = np.random.default_rng(6)
    index = pd.date_range(T0, periods=15 * 288, freq="5min")
    series = pd.Series(rng.standard_t(2, len(index)), index=index)  # a signed, heavy-tailed delta
    fit = fit_baseline(series.iloc[:-288])
    band = fit.band(series.index[-288:])
    lowest, highest = fit.calibration.reach(3.0)
    assert lowest < 0 < highest
    low_centre = band["expected"] + min(fit.level_before - fit.level, 0.0)
    high_centre = band["expected"] + max(fit.level_before - fit.level, 0.0)
    assert (low_centre - band["lower"] <= -lowest * (1 + 1e-9)).all()
    assert (band["upper"] - high_centre <= highest * (1 + 1e-9)).all()
    short = fit_baseline(series.iloc[: 2 * 288])  # one backtest day: 288 errors < 1 / 0.135%
    assert short.calibration.reach(3.0) == (-np.inf, np.inf)


def test_a_nightly_job_s_spike_is_expected_as_high_as_it_went_not_half_as_high():
    """The job's spike height varies from night to night: the band at its hour reaches as
    far as the spikes went on the backtest nights (5-minute data, a habit stretch holds
    about 36 samples, so all but a few percent of nights), not their median, which half of
    all nights pass. A spike far past all of them is still outside."""
    rng = np.random.default_rng(14)
    days = 15
    index = pd.date_range(T0, periods=days * 288, freq="5min")
    values = rng.normal(10, 0.5, len(index))
    heights = rng.uniform(30, 50, days)
    for day in range(days):
        values[day * 288 + 42] = heights[day]  # 03:30
    series = pd.Series(values, index=index)
    window = index[-288:]
    band = expected_band(series, window)
    at = window.get_loc(window[0] + pd.Timedelta("3h30min"))
    tallest = heights[:-1].max()
    assert tallest * 0.98 <= band["upper"].iloc[at] < 60
    assert band["upper"].iloc[at] > np.median(heights[:-1]) + 5


def flapping_group(rng: np.random.Generator, days: int, flap_hours: float) -> pd.Series:
    """5-minute CPU of a group of hosts near 33.4, that flaps between 31 and 36 for the last
    `flap_hours` of the series (it started to scale in and out)."""
    index = pd.date_range(T0, periods=days * 288, freq="5min")
    values = 33.4 + rng.normal(0, 0.05, len(index))
    flapping = index >= index[-1] - pd.Timedelta(hours=flap_hours)
    values[flapping] = np.where(rng.random(int(flapping.sum())) < 0.5, 31.0, 36.0)
    return pd.Series(values, index=index)


def test_a_change_of_spread_in_the_last_hours_is_followed_and_stated():
    """Like a change of level, a change of spread in the last hours of the history is
    followed at once: the next day's band holds the new flapping, and says why."""
    rng = np.random.default_rng(31)
    series = flapping_group(rng, 10, 6)
    history = series.iloc[:-1]
    window = pd.date_range(series.index[-1], periods=288, freq="5min")
    band = expected_band(history, window)
    assert (band["lower"] <= 31.0).all() and (band["upper"] >= 36.0).all()
    steady = expected_band(history.iloc[: -6 * 12], window)
    assert (steady["upper"] < 35.0).all(), "without the flapping the band stays narrow"
    more = pd.Series(np.where(rng.random(288) < 0.5, 31.0, 36.0), index=window)
    exp = explain(pd.concat([history, more]), window=(window[0], window[-1]), history="9D")
    assert exp.facts["band_recent_spread"] > 3 * exp.facts["scale"]
    assert "times as much as usual" in " ".join(exp.summary)
    assert exp.facts["minutes_outside"] == 0


def test_a_spike_or_two_in_the_last_hours_do_not_widen_the_band():
    rng = np.random.default_rng(32)
    index = pd.date_range(T0, periods=10 * 288, freq="5min")
    values = 33.4 + rng.normal(0, 0.05, len(index))
    values[[-20, -7]] = [45.0, 20.0]
    fit = fit_baseline(pd.Series(values, index=index))
    assert np.isnan(fit.spread)
