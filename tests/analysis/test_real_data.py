"""The band on real metrics: a subset of the Numenta Anomaly Benchmark (NAB, MIT licence;
Lavin & Ahmad 2015), copied into benchmarks/data/nab with its licence and source."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from webapp.analysis import explain

DATA = Path(__file__).resolve().parents[2] / "benchmarks" / "data" / "nab"
COUNTS_AND_BYTES = [
    "cloud_hosts/cloud_balancer_requests_8c0756.csv",
    "cloud_hosts/cloud_disk_write_bytes_1ef3de.csv",
    "cloud_hosts/cloud_disk_write_bytes_c0d644.csv",
    "cloud_hosts/cloud_network_in_257a54.csv",
    "cloud_hosts/cloud_network_in_5abac7.csv",
]


def load(name: str) -> pd.Series:
    frame = pd.read_csv(DATA / name)
    index = pd.DatetimeIndex(pd.to_datetime(frame["timestamp"]), tz="UTC")
    return pd.Series(frame["value"].to_numpy(dtype=float), index=index, name=name)


def test_every_listed_file_is_there_with_its_source():
    listing = json.loads((DATA / "windows.json").read_text())
    assert (DATA / "LICENSE.txt").exists() and len(listing) == 24
    for name, entry in listing.items():
        assert (DATA / name).exists() and entry["source"].startswith("real")


@pytest.mark.parametrize("name", COUNTS_AND_BYTES)
def test_nothing_expected_below_the_smallest_value_ever_taken(name):
    series = load(name)
    first = series.index[0]
    for days in range(2, int((series.index[-1] - first) / pd.Timedelta(days=1)), 3):
        start = first + pd.Timedelta(days=days)
        exp = explain(series, window=(start, start + pd.Timedelta("1D")), history="56D")
        history = series[series.index < start]
        w = exp.frame[exp.frame["in_window"]]
        assert history.min() >= 0
        assert (w["expected"] >= history.min()).all(), (name, start)
        assert (w["lower"] >= history.min()).all(), (name, start)
        assert (w["expected"] <= history.max()).all(), (name, start)


def test_a_mostly_zero_byte_series_is_not_outside_on_its_zeros():
    series = load("cloud_hosts/cloud_disk_write_bytes_c0d644.csv")
    assert (series == 0).mean() > 0.5
    start = series.index[0] + pd.Timedelta("8D")
    exp = explain(series, window=(start, start + pd.Timedelta("1D")), history="56D")
    w = exp.frame[exp.frame["in_window"]]
    zeros = w["value"] == 0
    assert zeros.any() and not w["outside"][zeros].any()
    assert np.isfinite(w["upper"]).all()


@pytest.mark.parametrize(
    ("name", "floor", "start"),
    [
        ("cloud_hosts/cloud_cpu_24ae8d.csv", 0.066, "2014-02-16 14:30"),
        ("cloud_hosts/cloud_cpu_24ae8d.csv", 0.066, "2014-02-18 14:30"),
        ("cloud_hosts/cloud_network_in_5abac7.csv", 42, "2014-03-04 17:36"),
    ],
)
def test_a_value_the_backtest_saw_on_the_side_is_not_outside(name, floor, start):
    """A CPU share reported on a few levels (0.066, 0.134, 0.2) and a network count that
    idles at exactly 42, on days where the backtest's own errors set the lower side right on
    that floor: values on it are inside, not put outside by the last bit of rounding."""
    series = load(name)
    start = pd.Timestamp(start, tz="UTC")
    exp = explain(series, window=(start, start + pd.Timedelta("1D")), history="56D")
    w = exp.frame[exp.frame["in_window"]]
    on_floor = w["value"] == floor
    assert on_floor.any() and (w.loc[on_floor, "lower"] <= floor).all()
    assert not w.loc[on_floor, "outside"].any()
