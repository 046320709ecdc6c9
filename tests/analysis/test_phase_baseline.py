"""The cheap band behind screening and fleet peers, and the binning onto one grid, checked
against plain loops and pandas."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from webapp.analysis._align import align
from webapp.analysis._grid import make_grid
from webapp.analysis._phase_baseline import phase_baseline
from webapp.analysis._robust import robust_scale

STEP = pd.Timedelta("1h")


def brute_baseline(row: np.ndarray, history_end: int, period: int) -> tuple[np.ndarray, float]:
    """Per-phase medians over whole cycles ending at the window, the last day's median
    residual as the level, and the last cycle's residual from the earlier cycles' medians
    for the scale, one value at a time."""
    cycles = history_end // period
    first = history_end - cycles * period
    profile, held_out = np.empty(period), np.empty(period)
    for phase in range(period):
        at = [row[first + c * period + phase] for c in range(cycles)]
        profile[phase] = np.nanmedian(at)
        held_out[phase] = row[first + (cycles - 1) * period + phase] - np.nanmedian(at[:-1])
    day = int(pd.Timedelta("1D") / STEP)
    tail = [
        row[t] - profile[(t - history_end) % period] for t in range(history_end - day, history_end)
    ]
    level = np.nanmedian(tail)
    window = [profile[(t - history_end) % period] + level for t in range(history_end, len(row))]
    return np.array(window), robust_scale(held_out)


def test_the_baseline_agrees_with_a_loop():
    rng = np.random.default_rng(6)
    slots = 24 * 7 * 4 + 30  # a partial cycle at the start, four whole weeks, a window
    history_end = slots - 12
    hours = np.arange(slots)
    values = 10 + 3 * np.sin(2 * np.pi * hours / 24) + 5 * (hours % 168 > 120)
    values = values + rng.normal(0, 1, (3, slots))
    values[1, rng.random(slots) < 0.1] = np.nan
    base = phase_baseline(values, STEP, history_end)
    assert base.cycle == pd.Timedelta(weeks=1)
    for i in range(3):
        expected, scale = brute_baseline(values[i], history_end, 168)
        np.testing.assert_allclose(base.expected[i], expected)
        assert base.scale[i] == pytest.approx(scale)


def test_the_window_never_moves_the_baseline():
    rng = np.random.default_rng(2)
    values = rng.normal(0, 1, (2, 24 * 10))
    before = phase_baseline(values, STEP, 24 * 9)
    values[:, 24 * 9 :] += 1000
    after = phase_baseline(values, STEP, 24 * 9)
    np.testing.assert_array_equal(before.expected, after.expected)
    np.testing.assert_array_equal(before.scale, after.scale)
    assert before.cycle == pd.Timedelta(days=1)


def test_a_short_history_has_no_cycle_and_a_flat_one_no_scale():
    values = np.vstack([np.arange(30.0), np.full(30, 4.0)])
    base = phase_baseline(values, STEP, 24)
    assert base.cycle is None
    assert np.isnan(base.scale[1])
    np.testing.assert_allclose(base.expected[1], 4.0)


@pytest.mark.parametrize("jitter", [False, True])
def test_binning_matches_pandas(jitter):
    rng = np.random.default_rng(1)
    index = pd.date_range("2026-11-01 00:03", periods=600, freq="1min", tz="UTC")
    if jitter:
        index = index + pd.to_timedelta(rng.integers(0, 50, len(index)), unit="s")
    values = rng.normal(0, 1, len(index))
    values[rng.random(len(index)) < 0.05] = np.nan
    series = pd.Series(values, index=index)
    grid = make_grid(
        pd.Timestamp("2026-11-01", tz="UTC"),
        pd.Timestamp("2026-11-01 09:00", tz="UTC"),
        pd.Timedelta("5min"),
    )
    _, matrix = align({"a": series}, grid)
    expected = series.resample("5min").mean().reindex(grid)
    np.testing.assert_allclose(matrix[0], expected.to_numpy(), equal_nan=True)
