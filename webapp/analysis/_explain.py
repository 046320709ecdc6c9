"""explain(): the expected band of one series around one window, with facts and sentences."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from ._clock import check_tz
from ._grid import Agg, find_gaps, regularize, to_utc
from ._overlay import check_window
from ._robust import robust_scale

ENGINE_VERSION = "0.1.0"
DEFAULT_HISTORY = pd.Timedelta(weeks=6)


@dataclass(frozen=True)
class Explanation:
    """The result of `explain`: read-only, JSON-able apart from `frame`."""

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
    exclude=(),
    tz: str = "UTC",
    agg: Agg = "mean",
    *,
    unit: str = "",
) -> Explanation:
    """Provisional: flat robust band from history (full decomposition follows)."""
    tz = check_tz(tz)
    start, end = check_window(window)
    history = pd.Timedelta(history)
    regular = regularize(series, agg=agg, start=start - history, end=end)
    frame = pd.DataFrame({"value": regular})
    base = regular[regular.index < start]
    level = float(np.nanmedian(base)) if base.notna().any() else np.nan
    scale = robust_scale(base)
    frame["expected"] = level
    frame["trend"] = level
    frame["seasonal"] = 0.0
    frame["band_scale"] = scale
    frame["lower"] = level - tolerance * scale
    frame["upper"] = level + tolerance * scale
    frame["residual"] = frame["value"] - frame["expected"]
    frame["outside"] = (frame["value"] < frame["lower"]) | (frame["value"] > frame["upper"])
    frame["in_window"] = frame.index >= start
    return Explanation(
        frame=frame,
        step=regular.index[1] - regular.index[0],
        periods=[],
        scale=scale,
        facts={},
        summary=[],
        window=(start, end),
        parameters={"history": str(history), "tolerance": tolerance, "tz": tz, "agg": agg},
        gaps=find_gaps(regular),
    )


__all__ = ["ENGINE_VERSION", "Explanation", "explain", "to_utc"]
