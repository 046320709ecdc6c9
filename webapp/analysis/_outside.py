"""Time outside the expected band: deviations in robust sd, sustained stretches, the peak."""

from __future__ import annotations

import numpy as np
import pandas as pd


def steps_needed(step: pd.Timedelta, sustained: pd.Timedelta) -> int:
    """Grid steps a stretch must last to count as sustained: `sustained`, and at least two
    steps, so a single sample never counts however coarse the grid."""
    return max(2, int(np.ceil(sustained / step)))


def first_run_starts(flags: np.ndarray, need: int) -> np.ndarray:
    """For each row of a 2-D boolean array, the column where the first run of at least
    `need` consecutive true values starts, or -1 when there is none."""
    rows, cols = flags.shape
    length = np.zeros(rows, dtype=np.int64)
    start = np.full(rows, -1, dtype=np.int64)
    for col in range(cols):
        length = np.where(flags[:, col], length + 1, 0)
        hit = (length == need) & (start < 0)
        start[hit] = col - need + 1
    return start


def in_sustained_runs(flags: np.ndarray, need: int) -> np.ndarray:
    """2-D boolean array: True where a value belongs to a run of at least `need` true
    values along its row."""
    ahead = np.zeros(flags.shape, dtype=np.int64)
    behind = np.zeros(flags.shape, dtype=np.int64)
    cols = flags.shape[1]
    for col in range(cols):
        before = ahead[:, col - 1] if col else 0
        ahead[:, col] = np.where(flags[:, col], before + 1, 0)
        back = cols - 1 - col
        after = behind[:, back + 1] if back + 1 < cols else 0
        behind[:, back] = np.where(flags[:, back], after + 1, 0)
    return flags & (ahead + behind - 1 >= need)


def first_sustained(
    outside: pd.Series, step: pd.Timedelta, sustained: pd.Timedelta
) -> pd.Timestamp | None:
    """Start of the first run of consecutive outside samples lasting at least `sustained`
    (and at least two samples), or None."""
    flags = outside.to_numpy(dtype=bool)[None, :]
    col = int(first_run_starts(flags, steps_needed(step, sustained))[0])
    return outside.index[col] if col >= 0 else None


def deviation_sd(frame: pd.DataFrame) -> pd.Series:
    """(value - expected) / band scale: how far out, in robust sd of the residual."""
    scale = frame["band_scale"].where(frame["band_scale"] > 0)
    return (frame["value"] - frame["expected"]) / scale


def peak(deviation: pd.Series) -> float | None:
    """The deviation of largest size, with its sign (None when there is none)."""
    values = deviation.to_numpy(dtype=float)
    finite = np.isfinite(values)
    if not finite.any():
        return None
    i = int(np.argmax(np.where(finite, np.abs(values), -1.0)))
    return round(float(values[i]), 2)


def excess_area(z: np.ndarray, tolerance: float, cap: float, step_minutes: float) -> np.ndarray:
    """How far and how long, in one number per row: the sd-minutes spent beyond the band's
    edge, each step's excess capped at `cap` sd so one wild sample cannot outweigh a long
    stretch (the cap is our own choice)."""
    excess = np.clip(np.nan_to_num(np.abs(z), nan=0.0) - tolerance, 0.0, cap)
    return excess.sum(axis=-1) * step_minutes
