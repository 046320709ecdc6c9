import numpy as np
import pandas as pd

from webapp.analysis import fit_baseline, robust_scale
from webapp.analysis._band import HOURLY_PRIOR_SAMPLES, fit_scale


def hourly_residuals(sd_by_hour, days=20, seed=0):
    index = pd.date_range("2026-01-05", periods=days * 288, freq="5min", tz="UTC")
    sd = np.asarray(sd_by_hour, dtype=float)[index.hour]
    return np.random.default_rng(seed).normal(0, 1, len(index)) * sd, index


def test_thin_hours_are_shrunk_toward_the_overall_scale():
    residual, index = hourly_residuals([1] * 12 + [3] * 12)
    thin = (index.hour == 5) & (index.day > 6)  # hour 5 keeps 6 days of its 20 ...
    residual[thin] = np.nan
    loud = (index.hour == 5) & ~thin
    residual[loud] *= 10  # ... and those few are loud
    model = fit_scale(residual, index, "UTC")
    assert model.hourly is not None
    raw = robust_scale(residual[loud])
    n = np.isfinite(residual[loud]).sum()
    expected = (n * raw + HOURLY_PRIOR_SAMPLES * model.overall) / (n + HOURLY_PRIOR_SAMPLES)
    np.testing.assert_allclose(model.hourly[5], expected)
    assert model.hourly[5] < 0.75 * raw
    assert model.hourly[2] < model.hourly[15] / 2


def test_same_scale_at_every_hour_gives_one_scale():
    residual, index = hourly_residuals([2] * 24)
    model = fit_scale(residual, index, "UTC")
    assert model.hourly is None
    np.testing.assert_allclose(model.overall, 2, rtol=0.05)


def test_hourly_scale_follows_the_wall_clock():
    residual, index = hourly_residuals([1] * 12 + [3] * 12)
    local = fit_scale(residual, index, "Asia/Tokyo")  # UTC+9, no daylight saving
    utc = fit_scale(residual, index, "UTC")
    np.testing.assert_allclose(np.roll(local.hourly, -9), utc.hourly, rtol=0.02)


def test_given_periods_skip_detection():
    index = pd.date_range("2026-01-05", periods=10 * 288, freq="5min", tz="UTC")
    noise = pd.Series(np.random.default_rng(1).normal(size=len(index)), index=index)
    fit = fit_baseline(noise, periods=[pd.Timedelta("1D")])
    assert fit.periods == [pd.Timedelta("1D")]
    assert [c.reason for c in fit.candidates] == ["given"]
    band = fit.band(index[-10:] + pd.Timedelta("1D"), tolerance=2.0)
    assert fit.calibration is not None  # ten days: the sides come from the backtest
    sides = (band["upper"] - band["lower"]) / band["band_scale"]
    assert sides.between(3.4, 4.6).all()  # unit normal noise: +-2 sd is about 4 sds wide
