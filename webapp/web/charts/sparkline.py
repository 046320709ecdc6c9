"""A sparkline as an SVG path built on the server: small, fast, no script needed."""

from __future__ import annotations

import math
from collections.abc import Sequence

WIDTH = 120.0
HEIGHT = 24.0
PAD = 1.5


def sparkline_path(
    values: Sequence[float | None], width: float = WIDTH, height: float = HEIGHT
) -> str:
    """The ``d`` attribute of a path through ``values`` (equal time buckets); a missing
    bucket (None or NaN) lifts the pen, so gaps show as gaps."""
    points = [(i, v) for i, v in enumerate(values) if v is not None and math.isfinite(v)]
    if not points:
        return ""
    low = min(v for _, v in points)
    high = max(v for _, v in points)
    span = high - low or 1.0
    x_step = (width - 2 * PAD) / max(1, len(values) - 1)
    parts: list[str] = []
    previous = None
    for i, v in points:
        x = PAD + i * x_step
        y = height - PAD - (v - low) / span * (height - 2 * PAD)
        command = "L" if previous == i - 1 else "M"
        parts.append(f"{command}{x:.1f} {y:.1f}")
        previous = i
    if len(points) == 1:
        parts.append("h0.1")
    return "".join(parts)
