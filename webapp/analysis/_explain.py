"""explain(): the expected band of one series around one window, with facts and sentences.

The frame runs on the regular grid from `window start - history` to `window end` (both
inclusive). Only samples before the window start, minus the excluded periods, are the
baseline: the decomposition and the scale are fitted on them, and inside the window the band
is their forecast, so the window's own values never move it.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from ._band import BaselineFit, excluded_mask, fit_baseline
from ._calibrate import nominal_coverage
from ._checks import check_exclude, check_history, check_tolerance, check_window
from ._clock import check_tz
from ._decompose import period_label
from ._facts import (
    confidence,
    number,
    outside_facts,
    point_facts,
    same_hour_facts,
)
from ._grid import Agg, as_utc_series, check_step, find_gaps, infer_step, regularize
from ._sentences import sentences

# 2: sides calibrated on a backtest; 2.1: shifts, two levels; 2.1.2: daily habits;
# 2.2: reach bound, predictive tail, a habit as far as it went; 2.2.1: a change of spread;
# 2.3: sharp daily steps
ENGINE_VERSION = "2.3"
DEFAULT_HISTORY = pd.Timedelta(weeks=6)
BAND_COLUMNS = ("expected", "lower", "upper", "trend", "seasonal", "band_scale")


@dataclass(frozen=True)
class Explanation:
    """The result of `explain`. Everything but `frame` and the timestamps is JSON-able."""

    frame: pd.DataFrame
    step: pd.Timedelta
    periods: list[pd.Timedelta]
    scale: float
    facts: dict[str, Any]
    summary: list[str]
    window: tuple[pd.Timestamp, pd.Timestamp]
    parameters: dict[str, Any]
    candidates: list[dict[str, Any]] = field(default_factory=list)
    confidence: str = "low"
    gaps: list[tuple[pd.Timestamp, pd.Timestamp]] = field(default_factory=list)
    engine_version: str = ENGINE_VERSION


def explain(
    series: pd.Series,
    window: tuple,
    history: pd.Timedelta | str = DEFAULT_HISTORY,
    tolerance: float = 3.0,
    exclude: Iterable = (),
    tz: str = "UTC",
    agg: Agg = "mean",
    *,
    unit: str = "",
    step: pd.Timedelta | str | None = None,
) -> Explanation:
    """Rebuild what `series` was expected to do in `window` from `history` before it.

    `tolerance` is the band's width as a two-sided normal-equivalent level (3 asks for
    99.73% inside; the sides are calibrated on the history, see `_calibrate`); `exclude` lists
    (start, end) spans left out of the baseline; `tz` is the wall clock the seasonal cycles
    follow; `agg` how points sharing a grid slot combine ("sum" for counts); `unit` is
    used in the sentences; `step` forces the grid step (inferred by default).
    """
    tz = check_tz(tz)
    start, end = check_window(window)
    history = check_history(history)
    tolerance = check_tolerance(tolerance)
    excluded_spans = check_exclude(exclude)
    if agg not in ("mean", "sum"):
        raise ValueError(f"agg must be 'mean' or 'sum', got {agg!r}")
    clean = as_utc_series(series)
    margin = check_step(step) if step is not None else infer_step(clean.index)
    nearby = clean[(clean.index >= start - history - margin) & (clean.index <= end + margin)]
    regular = regularize(
        nearby if nearby.notna().any() else clean, margin, agg=agg, start=start - history, end=end
    )
    if len(regular) < 2:
        raise ValueError(
            f"the window and history hold fewer than two steps of {margin}: "
            "widen the window or the history"
        )
    grid_step = regular.index[1] - regular.index[0]
    frame = pd.DataFrame({"value": regular.to_numpy()}, index=regular.index)
    frame["in_window"] = frame.index >= start
    frame["excluded"] = excluded_mask(frame.index, excluded_spans)
    baseline = frame["value"].where(~frame["in_window"] & ~frame["excluded"])
    baseline = baseline[~frame["in_window"]]
    fit = fit_baseline(baseline, tz=tz) if len(baseline) >= 2 else None
    frame = add_band(frame, fit, tolerance)
    periods = fit.periods if fit else []
    scale = fit.scale.overall if fit else float("nan")
    gaps = find_gaps(frame["value"])
    facts = build_facts(
        frame=frame,
        baseline=baseline,
        fit=fit,
        name=str(series.name) if series.name is not None else "The metric",
        unit=unit,
        tz=tz,
        tolerance=tolerance,
        history=history,
        gaps=gaps,
        window=(start, end),
    )
    parameters = {
        "window": [start.isoformat(), end.isoformat()],
        "history_seconds": history.total_seconds(),
        "tolerance": tolerance,
        "exclude": [[s.isoformat(), e.isoformat()] for s, e in excluded_spans],
        "tz": tz,
        "agg": agg,
        "unit": unit,
        "step_seconds": grid_step.total_seconds(),
    }
    return Explanation(
        frame=frame,
        step=grid_step,
        periods=periods,
        scale=scale,
        facts=facts,
        summary=sentences(facts),
        window=(start, end),
        parameters=parameters,
        candidates=[c.as_dict() for c in fit.candidates] if fit else [],
        confidence=facts["confidence"],
        gaps=gaps,
    )


def add_band(frame: pd.DataFrame, fit: BaselineFit | None, tolerance: float) -> pd.DataFrame:
    """The frame with the band columns, in the documented order."""
    if fit is None:
        band = pd.DataFrame(np.nan, index=frame.index, columns=list(BAND_COLUMNS))
    else:
        band = fit.band(frame.index, tolerance)
    value = frame["value"]
    out = pd.DataFrame({"value": value}, index=frame.index)
    for col in ("expected", "lower", "upper", "trend", "seasonal"):
        out[col] = band[col]
    out["residual"] = value - band["expected"]
    out["outside"] = ((value < band["lower"]) | (value > band["upper"])).to_numpy()
    for col in band.columns:
        if col.startswith("seasonal_"):
            out[col] = band[col]
    out["band_scale"] = band["band_scale"]
    out["in_window"] = frame["in_window"]
    out["excluded"] = frame["excluded"]
    return out


def build_facts(
    *,
    frame: pd.DataFrame,
    baseline: pd.Series,
    fit: BaselineFit | None,
    name: str,
    unit: str,
    tz: str,
    tolerance: float,
    history: pd.Timedelta,
    gaps: list,
    window: tuple[pd.Timestamp, pd.Timestamp],
) -> dict[str, Any]:
    step = frame.index[1] - frame.index[0]
    minutes = step.total_seconds() / 60
    in_window = frame[frame["in_window"]]
    hist = frame[~frame["in_window"]]
    usable_slots = int((~hist["excluded"]).sum())
    valid = baseline.dropna()
    coverage_history = len(valid) / usable_slots if usable_slots else float("nan")
    coverage_window = in_window["value"].notna().mean() if len(in_window) else float("nan")
    excluded_minutes = float(hist["excluded"].sum() * minutes)
    if len(valid):
        since_first = hist.index >= valid.index[0]
        usable = window[0] - valid.index[0] - step * int(hist["excluded"][since_first].sum())
    else:
        usable = pd.Timedelta(0)
    level, reasons = confidence(usable, coverage_history, coverage_window)
    facts: dict[str, Any] = {
        "series": name,
        "unit": unit,
        "tz": tz,
        "tolerance": tolerance,
        "step_seconds": step.total_seconds(),
        "window_start": window[0].isoformat(),
        "window_end": window[1].isoformat(),
        "window_minutes": len(in_window) * minutes,
        "history_requested_days": history / pd.Timedelta(days=1),
        "history_usable_days": max(0.0, usable / pd.Timedelta(days=1)),
        "excluded_minutes": excluded_minutes,
        "coverage_history": number(coverage_history),
        "coverage_window": number(coverage_window),
        "gap_count": len(gaps),
        "gap_minutes": float(sum((e - s).total_seconds() for s, e in gaps) / 60),
        "periods": [period_label(p) for p in fit.periods] if fit else [],
        "period_strengths": {
            period_label(c.period): round(c.strength, 4)
            for c in (fit.candidates if fit else [])
            if c.strength is not None
        },
        "scale": number(fit.scale.overall) if fit else None,
        "scale_varies_by_hour": bool(fit is not None and fit.scale.hourly is not None),
        "window_samples": int(in_window["value"].notna().sum()),
        **band_coverage_facts(fit, tolerance),
    }
    points = point_facts(in_window)
    facts.update(points)
    facts.update(outside_facts(in_window, step))
    facts.update(same_hour_facts(frame, baseline, points, tz))
    facts["confidence"] = level
    facts["confidence_reasons"] = reasons
    return facts


def band_coverage_facts(fit: BaselineFit | None, tolerance: float) -> dict[str, Any]:
    """How the band's sides were set, and the share of held-out history it held."""
    calibration = fit.calibration if fit else None
    habits = [f"{h:02d}:00" for h in fit.habit_hours(tolerance)] if fit else []
    return {
        "band_sides": None if fit is None else ("backtest" if calibration else "scale"),
        "band_backtest_days": calibration.days if calibration else None,
        "band_coverage": number(calibration.coverage(tolerance)) if calibration else None,
        "band_coverage_nominal": nominal_coverage(tolerance),
        "band_habit_hours": habits or None,
        "band_recent_spread": number(fit.spread) if fit and np.isfinite(fit.spread) else None,
    }
