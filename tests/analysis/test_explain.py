import json

import numpy as np
import pandas as pd
import pytest

from webapp.analysis import ENGINE_VERSION, expected_band, explain

WEEK = pd.Timedelta(weeks=1)
DOCUMENTED_FACTS = {
    "series", "unit", "tz", "tolerance", "step_seconds", "window_start", "window_end",
    "window_minutes", "history_requested_days", "history_usable_days", "excluded_minutes",
    "coverage_history", "coverage_window", "gap_count", "gap_minutes", "periods",
    "period_strengths", "scale", "scale_varies_by_hour", "window_samples", "peak_time",
    "peak_value", "peak_expected", "peak_lower", "peak_upper", "peak_deviation_sd",
    "strongest_time", "strongest_value", "strongest_expected", "strongest_deviation_sd",
    "minutes_outside", "minutes_above", "minutes_below", "outside_stretches", "first_outside",
    "last_outside", "same_hour_start", "same_hour_end", "same_hour_value", "same_hour_weeks",
    "same_hour_rank", "same_hour_past_extreme", "same_hour_past_median", "same_hour_side",
    "confidence",
    "confidence_reasons", "band_sides", "band_backtest_days", "band_coverage",
    "band_coverage_nominal", "band_habit_hours", "band_recent_spread",
}  # fmt: skip


@pytest.fixture
def incident(make_service_series):
    """Seven weeks of 5-minute latency; the last day is the window, with a 40-minute surge."""
    series, truth = make_service_series(weeks=7, sigma=4, seed=11)
    window = (series.index[-288], series.index[-1])
    surge = series.copy()
    surge.iloc[-100:-92] += 120
    return surge, truth, window


def band(exp):
    return exp.frame[["expected", "lower", "upper"]].to_numpy()


def test_frame_has_the_contract_columns_and_grid(incident):
    series, _, window = incident
    exp = explain(series, window=window, history="42D", unit="ms")
    f = exp.frame
    assert list(f.columns[:8]) == [
        "value", "expected", "lower", "upper", "trend", "seasonal", "residual", "outside",
    ]  # fmt: skip
    assert {"seasonal_1d", "seasonal_7d", "band_scale", "in_window"} <= set(f.columns)
    assert str(f.index.tz) == "UTC" and (np.diff(f.index.asi8) == 300e9).all()
    assert f.index[0] == window[0] - pd.Timedelta("42D") and f.index[-1] == window[1]
    assert f["in_window"].sum() == 288 and f["outside"].dtype == bool
    np.testing.assert_allclose(f["seasonal"], f["seasonal_1d"] + f["seasonal_7d"])
    np.testing.assert_allclose(f["expected"], f["trend"] + f["seasonal"])
    # The sides are calibrated quantiles of the forecast errors, each on its own; on Gaussian
    # noise each lies near 3 robust sds of the residual, except where the lower side stops
    # at the smallest value the history took.
    lowest = f["value"][~f["in_window"]].min()
    floored = f["lower"] == lowest
    width = (f["upper"] - f["expected"]) / f["band_scale"]
    depth = (f["expected"] - f["lower"]) / f["band_scale"]
    assert width.between(2.4, 3.6).all() and depth[~floored].between(2.4, 3.6).all()
    assert (f["lower"] >= lowest).all() and floored.mean() < 0.05
    assert exp.step == pd.Timedelta("5min") and exp.periods == [pd.Timedelta("1D"), WEEK]
    assert exp.window == window and exp.engine_version == ENGINE_VERSION
    assert exp.confidence == "high"


def test_window_values_never_move_the_band(incident):
    # The band inside the window is a forecast from history: change every window value.
    series, _, window = incident
    before = explain(series, window=window, history="42D")
    changed = series.copy()
    in_window = changed.index >= window[0]
    changed[in_window] = np.random.default_rng(0).normal(5000, 900, in_window.sum())
    after = explain(changed, window=window, history="42D")
    np.testing.assert_array_equal(band(before), band(after))
    assert after.facts["minutes_outside"] > before.facts["minutes_outside"]


def test_data_after_the_window_is_ignored(incident):
    series, _, window = incident
    short = explain(series, window=(window[0], window[1] - pd.Timedelta("6h")), history="42D")
    full = explain(series, window=window, history="42D")
    n = len(short.frame)
    np.testing.assert_array_equal(band(short), band(full)[:n])


def test_a_50_sigma_spike_a_week_earlier_barely_moves_the_band(make_service_series):
    # Known truth: sd 4; a two-hour spike of 50 sd exactly one week before the window's hour.
    sigma = 4.0
    series, _ = make_service_series(weeks=7, sigma=sigma, seed=3)
    window = (series.index[-288], series.index[-1])
    at = series.index.get_indexer([window[0] + pd.Timedelta("10h") - WEEK])[0]
    spiked = series.copy()
    spiked.iloc[at : at + 24] += 50 * sigma
    clean = explain(series, window=window, history="42D")
    hit = explain(spiked, window=window, history="42D")
    w = clean.frame["in_window"].to_numpy()
    moved = np.abs(hit.frame["expected"].to_numpy() - clean.frame["expected"].to_numpy())[w]
    assert moved.max() < sigma
    assert abs(hit.scale - clean.scale) < 0.1 * sigma
    assert hit.frame["outside"].loc[series.index[at : at + 24]].all()


def test_a_bad_day_when_excluded_moves_nothing(make_service_series):
    series, _ = make_service_series(weeks=7, sigma=4, seed=5)
    window = (series.index[-288], series.index[-1])
    day = (window[0] - pd.Timedelta("9D"), window[0] - pd.Timedelta("8D"))
    in_day = (series.index >= day[0]) & (series.index <= day[1])
    bad = series.copy()
    bad[in_day] = 0.0  # a collector that wrote zeros all day
    worse = series.copy()
    worse[in_day] = 1e6
    a = explain(bad, window=window, history="42D", exclude=[day])
    b = explain(worse, window=window, history="42D", exclude=[day])
    np.testing.assert_array_equal(band(a), band(b))
    assert a.frame["excluded"].sum() == in_day.sum()
    assert a.facts["excluded_minutes"] == in_day.sum() * 5
    # Without the exclusion the bad day still barely moves the window's band (robustness).
    c = explain(bad, window=window, history="42D")
    w = a.frame["in_window"].to_numpy()
    assert np.abs(band(c)[w] - band(a)[w])[:, 0].max() < 4


def test_gaussian_band_coverage():
    # Standard normal table: 99.73% of a normal distribution lies within +-3 sd. Pure noise,
    # 6 weeks of history plus a 2-day window: inside share within 4 binomial sds of 0.9973.
    rng = np.random.default_rng(21)
    index = pd.date_range("2026-01-05", periods=6 * 2016 + 576, freq="5min", tz="UTC")
    series = pd.Series(rng.normal(50, 2, len(index)), index=index)
    exp = explain(series, window=(index[-576], index[-1]), history="42D")
    inside = 1 - exp.frame["outside"].mean()
    n = len(exp.frame)
    assert abs(inside - 0.9973) < 4 * np.sqrt(0.9973 * 0.0027 / n)
    assert exp.scale == pytest.approx(2, rel=0.05)


def test_gaussian_coverage_holds_in_the_forecast_window(make_service_series):
    # With cycles to learn, the window's band is a forecast; the scale is measured on
    # hold-out residuals so that the +-3 sd band still covers about 99.73% of a week.
    shares = []
    for seed in (1, 2):
        series, _ = make_service_series(weeks=8, sigma=4, seed=seed)
        exp = explain(series, window=(series.index[-2016], series.index[-1]), history="49D")
        shares.append(1 - exp.frame["outside"][exp.frame["in_window"]].mean())
    assert abs(np.mean(shares) - 0.9973) < 4 * np.sqrt(0.9973 * 0.0027 / 4032)


def test_expected_tracks_the_truth(incident):
    series, truth, window = incident
    exp = explain(series, window=window, history="42D")
    w = exp.frame["in_window"].to_numpy()
    truth = pd.Series(truth, index=series.index).reindex(exp.frame.index).to_numpy()
    assert np.abs(exp.frame["expected"].to_numpy() - truth)[w].mean() < 0.5 * 4


def test_quieter_nights_get_a_narrower_band():
    rng = np.random.default_rng(8)
    index = pd.date_range("2026-01-05", periods=5 * 2016, freq="5min", tz="UTC")
    night = np.asarray(index.hour < 6)
    series = pd.Series(100 + rng.normal(0, 1, len(index)) * np.where(night, 1, 5), index=index)
    exp = explain(series, window=(index[-288], index[-1]), history="34D")
    scale = exp.frame["band_scale"]
    assert exp.facts["scale_varies_by_hour"]
    assert scale[exp.frame.index.hour == 3].mean() < 0.4 * scale[exp.frame.index.hour == 15].mean()


def test_steady_noise_keeps_one_scale(incident):
    series, _, window = incident
    exp = explain(series, window=window, history="42D")
    assert not exp.facts["scale_varies_by_hour"]
    assert exp.frame["band_scale"].nunique() == 1


def test_facts_are_json_and_documented(incident):
    series, _, window = incident
    exp = explain(series, window=window, history="42D", unit="ms")
    facts = json.loads(json.dumps(exp.facts))
    assert set(facts) == DOCUMENTED_FACTS
    assert json.loads(json.dumps(exp.parameters))["tolerance"] == 3.0
    assert json.loads(json.dumps(exp.candidates))[0]["label"] == "1d"


def test_facts_describe_the_surge(incident):
    series, _, window = incident
    exp = explain(series, window=window, history="42D", unit="ms")
    f = exp.facts
    surge_start = series.index[-100]
    assert pd.Timestamp(f["first_outside"]) == surge_start
    assert pd.Timestamp(f["last_outside"]) >= series.index[-93]
    assert 35 <= f["minutes_outside"] <= 50 and f["minutes_below"] == 0
    assert f["peak_deviation_sd"] > 20
    assert surge_start <= pd.Timestamp(f["peak_time"]) <= series.index[-93]
    assert f["peak_value"] == pytest.approx(series.max())
    assert f["same_hour_rank"] == 1 and f["same_hour_weeks"] == 6 and f["same_hour_side"] == "high"


def test_sentences_are_deterministic_with_units(incident):
    series, _, window = incident
    first = explain(series, window=window, history="42D", unit="ms").summary
    again = explain(series, window=window, history="42D", unit="ms").summary
    assert first == again
    text = " ".join(first)
    assert "was outside the expected band for" in text
    assert " ms " in text and "robust standard deviations above" in text
    assert "the highest of the last 7 weeks" in text
    assert "daily cycle (strength" in text and "weekly cycle" in text
    assert "Confidence: high." in text


def test_short_history_gives_low_confidence(make_service_series):
    series, _ = make_service_series(weeks=1)
    end = series.index[-1]
    exp = explain(series, window=(end - pd.Timedelta("2h"), end), history="1D")
    assert exp.confidence == "low" and exp.periods == []
    assert np.isfinite(exp.frame["expected"]).all()
    assert "only 1.0 days of usable history" in exp.summary[-1]
    medium = explain(series, window=(end - pd.Timedelta("2h"), end), history="5D")
    assert medium.confidence == "medium" and medium.periods == [pd.Timedelta("1D")]


def test_no_history_at_all_is_stated_not_raised(make_service_series):
    series, _ = make_service_series(weeks=1)
    exp = explain(series, window=(series.index[0], series.index[100]), history="0s")
    assert exp.confidence == "low" and exp.frame["expected"].isna().all()
    assert any("no usable history" in s for s in exp.summary)
    later = explain(series, window=(series.index[0], series.index[100]), history="7D")
    assert later.confidence == "low" and later.frame["expected"].isna().all()


def test_window_without_data(make_service_series):
    series, _ = make_service_series(weeks=3)
    end = series.index[-1] + pd.Timedelta("3D")
    exp = explain(series, window=(end - pd.Timedelta("1h"), end), history="14D")
    assert exp.facts["window_samples"] == 0 and exp.facts["peak_time"] is None
    assert exp.summary[0].endswith("has no data in the window.")
    assert exp.confidence == "low"


def test_gaps_are_reported_and_do_not_break_the_band(incident):
    series, _, window = incident
    holed = series.drop(series.index[3000:3060])
    exp = explain(holed, window=window, history="42D")
    assert exp.facts["gap_count"] == 1 and exp.facts["gap_minutes"] == 300
    assert exp.gaps == [(series.index[3000], series.index[3060])]
    assert np.isfinite(exp.frame["expected"]).all()
    assert exp.frame["value"].isna().sum() == 60


def test_count_metrics_can_be_summed(make_service_series):
    series, _ = make_service_series(weeks=3, step="1min")
    window = (series.index[-60], series.index[-1])
    summed = explain(series, window=window, history="14D", agg="sum", step="5min")
    meaned = explain(series, window=window, history="14D", step="5min")
    ratio = summed.frame["value"].dropna() / meaned.frame["value"].dropna()
    assert np.allclose(ratio.iloc[1:-1], 5)
    assert summed.parameters["agg"] == "sum" and summed.step == pd.Timedelta("5min")


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"window": ("2026-02-01", "2026-01-01")}, "must start before it ends"),
        ({"window": "2026-02-01"}, r"the window must be a \(start, end\) pair"),
        ({"tz": "Mars/Olympus"}, "unknown time zone"),
        ({"tolerance": 0}, "positive number"),
        ({"tolerance": "wide"}, "must be a number"),
        ({"history": "-1D"}, "zero or more"),
        ({"history": "lots"}, "duration"),
        ({"exclude": [("2026-01-03", "2026-01-02")]}, "excluded period 1 must start before"),
        ({"exclude": ["2026-01-03"]}, r"excluded period 1 must be a \(start, end\) pair"),
        ({"agg": "max"}, "agg must be"),
        ({"step": "often"}, "the step must be a duration such as '5min'"),
        ({"step": "-5min"}, "the step must be positive"),
    ],
)
def test_bad_parameters_get_clear_messages(make_service_series, kwargs, message):
    series, _ = make_service_series(weeks=1)
    args = {"window": (series.index[-12], series.index[-1])} | kwargs
    with pytest.raises(ValueError, match=message):
        explain(series, **args)


@pytest.mark.parametrize(
    "series",
    [
        pd.Series([], dtype=float, index=pd.DatetimeIndex([], tz="UTC")),
        pd.Series([np.nan] * 3, index=pd.date_range("2026-01-01", periods=3, freq="1h")),
    ],
)
def test_empty_or_all_missing_series_is_refused(series):
    with pytest.raises(ValueError, match="no values"):
        explain(series, window=("2026-01-01", "2026-01-02"))


def test_expected_band_is_the_band_explain_draws(incident):
    # The lower-level "fit on this history, forecast on that grid" gives the same band.
    series, _, window = incident
    exp = explain(series, window=window, history="42D")
    grid = exp.frame.index[exp.frame["in_window"]]
    direct = expected_band(series, grid, history_length="42D")
    inside = exp.frame.loc[grid]
    for col in ("expected", "lower", "upper", "band_scale"):
        np.testing.assert_allclose(direct[col], inside[col])


def test_expected_band_without_history_is_nan(incident):
    series, _, _ = incident
    grid = pd.date_range(series.index[0] - pd.Timedelta("1D"), periods=12, freq="5min")
    assert expected_band(series, grid)["expected"].isna().all()


def test_a_flat_metric_stays_inside_its_band():
    index = pd.date_range("2026-01-05", periods=3 * 2016, freq="5min", tz="UTC")
    exp = explain(pd.Series(5.0, index=index), window=(index[-12], index[-1]), history="20D")
    assert not exp.frame["outside"].any() and exp.scale > 0
    assert exp.summary[0].endswith("stayed inside the expected band for the whole window.")
    assert exp.facts["window_minutes"] == 60


def test_a_drop_leads_the_sentences(make_service_series):
    series, _ = make_service_series(weeks=7, sigma=4, seed=12)
    window = (series.index[-288], series.index[-1])
    series.iloc[-150:-120] -= 150  # traffic fell for 2.5 hours
    exp = explain(series, window=window, history="42D", unit="ms")
    f = exp.facts
    assert f["minutes_below"] == 150 and f["strongest_deviation_sd"] < -20
    assert f["same_hour_side"] == "low" and f["same_hour_rank"] == 1
    assert exp.summary[1].startswith("It fell to ")
    assert not any(s.startswith("It peaked") for s in exp.summary)
    assert "is the lowest of the last 7 weeks" in " ".join(exp.summary)
