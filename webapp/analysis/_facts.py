"""The named numbers behind the sentences. Every value is JSON-able (times as ISO 8601 UTC).

Keys (None where not applicable):

- series, unit, tz, tolerance, step_seconds, window_start, window_end; window_minutes (grid
  slots in the window times the step)
- history_requested_days; history_usable_days (from the first usable sample before the
  window to the window start, excluded time taken off); excluded_minutes
- coverage_history (share of the history grid with a value, excluded samples not counted),
  coverage_window; gap_count, gap_minutes (gaps anywhere in the frame)
- periods (labels of the seasonal periods used), period_strengths ({label: strength} of
  every candidate that was tried), scale (overall robust sd of the residual),
  scale_varies_by_hour
- window_samples (samples with a value in the window)
- band_sides: "backtest" (the sides are quantiles of the errors of the band's own forecasts
  of the last days of history, each day forecast from the days before it) or "scale" (the
  history is too short for that: +-tolerance x scale); None without a band.
  band_backtest_days: days forecast in that backtest; band_coverage: share of their
  samples inside the band at this tolerance; band_coverage_nominal: the share the band is
  built to hold, 1 - 2 x (1 - Phi(tolerance)) (0.9973 at 3); band_habit_hours: the
  wall-clock hours ("03:00") at which a daily habit widens the band (on most backtest days
  the errors within an hour of it went past the sides), None when there is none;
  band_recent_spread: the robust spread of the history's last hours when it was at least 3
  times the scale (the band ahead is then at least +-tolerance x it), else None
- peak_time, peak_value, peak_expected, peak_lower, peak_upper, peak_deviation_sd: the
  highest value in the window, and how far it was from expected in robust sds
- strongest_time, strongest_value, strongest_expected, strongest_deviation_sd: the sample
  furthest from expected (either side)
- minutes_outside, minutes_above, minutes_below, outside_stretches, first_outside,
  last_outside
- same_hour_side: "high" (the comparison is by highest values, in the wall-clock hour of
  the peak) or "low" (by lowest values, in the hour of the strongest deviation, when that
  is a drop); same_hour_start, same_hour_end: that hour; same_hour_value: the window's
  highest (lowest) value in it; same_hour_weeks: earlier weeks with data in the same
  hour-of-week; same_hour_rank: 1 = highest (lowest) among this week and those weeks;
  same_hour_past_extreme, same_hour_past_median: of the earlier weeks' highest (lowest)
  values
- confidence ("high" | "medium" | "low"), confidence_reasons (list of str)
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from ._clock import same_wall_clock_weeks_ago
from ._robust import quiet_nan_warnings

HIGH_HISTORY = pd.Timedelta(weeks=2)
MEDIUM_HISTORY = pd.Timedelta(days=2)
HIGH_COVERAGE = 0.8
MEDIUM_COVERAGE = 0.5


def iso(ts) -> str | None:
    return None if ts is None or pd.isna(ts) else pd.Timestamp(ts).isoformat()


def number(x) -> float | None:
    return None if x is None or not np.isfinite(x) else float(x)


def outside_facts(window: pd.DataFrame, step: pd.Timedelta) -> dict[str, Any]:
    minutes = step.total_seconds() / 60
    above = (window["value"] > window["upper"]).to_numpy()
    below = (window["value"] < window["lower"]).to_numpy()
    outside = above | below
    edges = np.diff(np.concatenate(([0], outside.astype(np.int8))))
    times = window.index[outside]
    return {
        "minutes_outside": float(outside.sum() * minutes),
        "minutes_above": float(above.sum() * minutes),
        "minutes_below": float(below.sum() * minutes),
        "outside_stretches": int((edges == 1).sum()),
        "first_outside": iso(times[0]) if len(times) else None,
        "last_outside": iso(times[-1]) if len(times) else None,
    }


def point_facts(window: pd.DataFrame) -> dict[str, Any]:
    out: dict[str, Any] = dict.fromkeys(
        [
            "peak_time",
            "peak_value",
            "peak_expected",
            "peak_lower",
            "peak_upper",
            "peak_deviation_sd",
            "strongest_time",
            "strongest_value",
            "strongest_expected",
            "strongest_deviation_sd",
        ]
    )
    values = window["value"]
    if values.notna().any():
        t = values.idxmax()
        row = window.loc[t]
        out.update(
            peak_time=iso(t),
            peak_value=number(row["value"]),
            peak_expected=number(row["expected"]),
            peak_lower=number(row["lower"]),
            peak_upper=number(row["upper"]),
            peak_deviation_sd=deviation(row),
        )
    z = (window["value"] - window["expected"]) / window["band_scale"].where(
        window["band_scale"] > 0
    )
    if z.notna().any():
        t = z.abs().idxmax()
        row = window.loc[t]
        out.update(
            strongest_time=iso(t),
            strongest_value=number(row["value"]),
            strongest_expected=number(row["expected"]),
            strongest_deviation_sd=deviation(row),
        )
    return out


def deviation(row: pd.Series) -> float | None:
    if not np.isfinite(row["band_scale"]) or row["band_scale"] <= 0:
        return None
    return number((row["value"] - row["expected"]) / row["band_scale"])


def same_hour_facts(
    frame: pd.DataFrame, baseline: pd.Series, points: dict[str, Any], tz: str
) -> dict[str, Any]:
    """Compare the window with the same wall-clock hour-of-week of every earlier week the
    history holds: by highest values around the peak or, when the window's largest deviation
    is a drop, by lowest values around that drop."""
    out: dict[str, Any] = dict.fromkeys(
        [
            "same_hour_side",
            "same_hour_start",
            "same_hour_end",
            "same_hour_value",
            "same_hour_weeks",
            "same_hour_rank",
            "same_hour_past_extreme",
            "same_hour_past_median",
        ]
    )
    low = (points["strongest_deviation_sd"] or 0) < 0
    at = points["strongest_time"] if low else points["peak_time"]
    if at is None:
        return out
    extreme = np.nanmin if low else np.nanmax
    step = frame.index[1] - frame.index[0]
    length = max(pd.Timedelta(hours=1), step)
    local = pd.Timestamp(at).tz_convert(tz)
    into_hour = pd.Timedelta(minutes=local.minute, seconds=local.second)
    start = local - into_hour if step <= pd.Timedelta(hours=1) else local  # safe at DST
    end = start + length
    in_window = frame[frame["in_window"]]
    here = in_window["value"][(in_window.index >= start) & (in_window.index < end)]
    value = float(extreme(here.to_numpy()))
    weeks = int((frame.index[-1] - frame.index[0]) / pd.Timedelta(weeks=1))
    repeated = pd.DatetimeIndex(np.full(weeks, start.value, dtype=np.int64), tz="UTC")
    starts = same_wall_clock_weeks_ago(repeated, np.arange(1, weeks + 1), tz)
    starts = starts[starts.notna()]
    lo = baseline.index.searchsorted(starts)
    hi = baseline.index.searchsorted(starts + length)
    values = baseline.to_numpy()
    with quiet_nan_warnings():
        past = [float(extreme(values[a:b])) for a, b in zip(lo, hi, strict=True) if b > a]
    past = [p for p in past if np.isfinite(p)]
    out.update(
        same_hour_side="low" if low else "high",
        same_hour_start=iso(start.tz_convert("UTC")),
        same_hour_end=iso(end.tz_convert("UTC")),
        same_hour_value=number(value),
        same_hour_weeks=len(past),
    )
    if past:
        beyond = sum(p < value for p in past) if low else sum(p > value for p in past)
        out.update(
            same_hour_rank=1 + beyond,
            same_hour_past_extreme=float(extreme(past)),
            same_hour_past_median=float(np.median(past)),
        )
    return out


def confidence(
    usable: pd.Timedelta, coverage_history: float, coverage_window: float
) -> tuple[str, list[str]]:
    """ "high", "medium" or "low", with the reasons it is not higher."""
    reasons = []
    level = 2
    days = usable / pd.Timedelta(days=1)
    if usable < MEDIUM_HISTORY:
        level = 0
        reasons.append(f"only {days:.1f} days of usable history (two days is the minimum)")
    elif usable < HIGH_HISTORY:
        level = min(level, 1)
        reasons.append(f"{days:.1f} days of usable history (two weeks gives high confidence)")
    for name, cov in (("history", coverage_history), ("window", coverage_window)):
        if not np.isfinite(cov) or cov < MEDIUM_COVERAGE:
            level = 0
            reasons.append(f"{name} coverage {0 if not np.isfinite(cov) else cov:.0%}")
        elif cov < HIGH_COVERAGE:
            level = min(level, 1)
            reasons.append(f"{name} coverage {cov:.0%}")
    return ("low", "medium", "high")[level], reasons
