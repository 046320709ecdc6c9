"""aggregate() against pandas computing the same thing directly."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from webapp.analysis import aggregate, explain

START = pd.Timestamp("2026-11-20", tz="UTC")


def hosts() -> dict[str, pd.Series]:
    """Three invented hosts on unequal grids: 1, 2 and 5 minutes, the 1-minute one with
    jittered stamps, the 2-minute one with a two-hour outage, the 5-minute one starting late."""
    rng = np.random.default_rng(4)
    one = pd.date_range(START, periods=6 * 60, freq="1min") + pd.to_timedelta(
        rng.integers(-20, 20, 6 * 60), unit="s"
    )
    two = pd.date_range(START, periods=3 * 60, freq="2min")
    five = pd.date_range(START + pd.Timedelta(hours=1), periods=60, freq="5min")
    out = {
        "api-1": pd.Series(rng.normal(100, 5, len(one)), index=one),
        "api-2": pd.Series(rng.normal(120, 5, len(two)), index=two),
        "api-3": pd.Series(rng.normal(90, 5, len(five)), index=five),
    }
    out["api-2"] = out["api-2"][
        (two < START + pd.Timedelta(hours=2)) | (two >= START + pd.Timedelta(hours=4))
    ]
    return out


def by_pandas(series: dict[str, pd.Series], step: str) -> pd.DataFrame:
    """Each host's mean per slot, each point to the nearest multiple of `step`."""
    delta = pd.Timedelta(step)
    columns = {
        key: s.groupby((s.index + delta / 2).floor(step)).mean() for key, s in series.items()
    }
    frame = pd.DataFrame(columns)
    grid = pd.date_range(frame.index.min(), frame.index.max(), freq=step)
    return frame.reindex(grid)


@pytest.mark.parametrize(
    ("how", "direct"),
    [
        ("sum", lambda f: f.sum(axis=1, min_count=1)),
        ("mean", lambda f: f.mean(axis=1)),
        ("min", lambda f: f.min(axis=1)),
        ("p50", lambda f: f.median(axis=1)),
        ("p95", lambda f: f.quantile(0.95, axis=1)),
        ("max", lambda f: f.max(axis=1)),
    ],
)
def test_each_aggregate_matches_pandas_on_the_coarsest_grid(how, direct):
    series = hosts()
    result = aggregate(series, how)
    expected = direct(by_pandas(series, "5min"))
    pd.testing.assert_index_equal(result.index, expected.index, exact=False, check_freq=False)
    np.testing.assert_allclose(result.to_numpy(), expected.to_numpy(), rtol=1e-12)
    assert result.name == f"{how} of 3 series"


def test_min_count_turns_partial_steps_into_gaps():
    series = hosts()
    result = aggregate(series, "sum", step="10min", min_count=3)
    frame = by_pandas(series, "10min")
    expected = frame.sum(axis=1).where(frame.notna().sum(axis=1) >= 3)
    np.testing.assert_allclose(result.to_numpy(), expected.to_numpy(), rtol=1e-12)
    assert result.isna().any() and result.notna().any()


def test_counts_can_be_summed_within_a_slot():
    index = pd.date_range(START, periods=20, freq="1min")
    ones = {"a": pd.Series(1.0, index=index), "b": pd.Series(2.0, index=index)}
    result = aggregate(ones, "sum", step="5min", agg="sum")
    # Nearest-slot snapping: the first slot (00:00) takes 00:00-00:02, the last (00:20) 00:18-00:19.
    assert result.tolist() == [9.0, 15.0, 15.0, 15.0, 6.0]


def test_an_aggregate_is_explained_like_any_series():
    index = pd.date_range(START - pd.Timedelta(weeks=2), START, freq="5min")
    hours = (index - index[0]).total_seconds().to_numpy() / 3600
    rng = np.random.default_rng(8)
    fleet = {
        f"api-{i}": pd.Series(
            50 + 10 * np.sin(2 * np.pi * hours / 24) + rng.normal(0, 1, len(index)), index=index
        )
        for i in range(4)
    }
    total = aggregate(fleet, "p95")
    exp = explain(total, window=(START - pd.Timedelta(hours=6), START), history="1W")
    assert exp.summary and exp.step == pd.Timedelta("5min")


@pytest.mark.parametrize(
    ("args", "kwargs", "message"),
    [
        (("p99",), {}, "how must be one of sum, mean, min, p50, p95, max"),
        (("sum",), {"min_count": 4}, "min_count must be a whole number from 1 to 3"),
        (("sum",), {"agg": "last"}, "agg must be 'mean' or 'sum'"),
        (("sum",), {"step": "often"}, "the step must be a duration"),
    ],
)
def test_bad_arguments_are_refused_clearly(args, kwargs, message):
    with pytest.raises(ValueError, match=message):
        aggregate(hosts(), *args, **kwargs)


def test_a_bad_series_is_named():
    with pytest.raises(ValueError, match="api-9: the series must be indexed by timestamps"):
        aggregate({**hosts(), "api-9": pd.Series([1.0, 2.0])})
    with pytest.raises(ValueError, match="there are no series to aggregate"):
        aggregate({})
