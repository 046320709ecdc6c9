"""Benchmark: explain on 8 and 16 weeks of 1-minute data, against statsmodels STL.

Bars (docs/design.md): explain on 8 weeks (80,640 points) takes at most 1/4 of the time of
statsmodels STL(robust=True, period = one week, jumps at 10% of each span) on the same data
in the same run; 16 weeks take at most 2.3x the 8-week time.

    python benchmarks/bench_explain.py            # STL runs once; it takes minutes
    python benchmarks/bench_explain.py --no-stl   # explain timings only
"""

from __future__ import annotations

import argparse
import math
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from webapp.analysis import explain  # noqa: E402

MINUTES_PER_WEEK = 7 * 24 * 60


def synthetic(weeks: int, seed: int = 3) -> pd.Series:
    """1-minute latency-like data: daily and weekly cycles, slow drift, noise, a few spikes."""
    rng = np.random.default_rng(seed)
    n = weeks * MINUTES_PER_WEEK
    index = pd.date_range("2026-01-05", periods=n, freq="1min", tz="UTC")
    day = np.arange(n) / 1440
    weekend = (index.day_of_week >= 5).astype(float)
    values = (
        220
        + 60 * np.sin(2 * np.pi * (day - 0.3))
        + 25 * np.sin(4 * np.pi * day)
        - 40 * weekend
        + 0.2 * day
        + rng.normal(0, 8, n)
    )
    for at in rng.integers(0, n - 60, size=weeks):
        values[at : at + 30] += 150
    return pd.Series(values, index=index, name="bench.latency")


def timed(func) -> tuple[float, float]:
    """(wall-clock seconds, CPU seconds of this process) of one call."""
    wall, cpu = time.perf_counter(), time.process_time()
    func()
    return time.perf_counter() - wall, time.process_time() - cpu


def time_explain(series: pd.Series, repeats: int) -> tuple[list[float], list[float]]:
    window = (series.index[-1440], series.index[-1])
    history = series.index[-1440] - series.index[0]
    explain(series, window=window, history=history)  # warm-up: imports, caches
    runs = [
        timed(lambda: explain(series, window=window, history=history, tolerance=3.0))
        for _ in range(repeats)
    ]
    return [w for w, _ in runs], [c for _, c in runs]


def stl_jumps_fit(series: pd.Series) -> tuple[float, float]:
    """statsmodels STL, robust, weekly period, every jump 10% of its span (rounded up)."""
    from statsmodels.tsa.seasonal import STL

    period = MINUTES_PER_WEEK
    seasonal = 7
    trend = math.ceil(1.5 * period / (1 - 1.5 / seasonal))
    trend += trend % 2 == 0
    low_pass = period + 1
    low_pass += low_pass % 2 == 0
    stl = STL(
        series.to_numpy(),
        period=period,
        seasonal=seasonal,
        trend=trend,
        low_pass=low_pass,
        robust=True,
        seasonal_jump=math.ceil(0.1 * seasonal),
        trend_jump=math.ceil(0.1 * trend),
        low_pass_jump=math.ceil(0.1 * low_pass),
    )
    return timed(stl.fit)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--no-stl", action="store_true", help="skip the STL reference fit")
    parser.add_argument("--repeats", type=int, default=5, help="explain runs per size")
    args = parser.parse_args()

    eight, sixteen = synthetic(8), synthetic(16)
    w8, c8 = time_explain(eight, args.repeats)
    w16, c16 = time_explain(sixteen, args.repeats)
    print(f"explain, best of {args.repeats} runs (wall-clock s / CPU s of this process):")
    print(f"  8 weeks ({len(eight):,} points):   {min(w8):.3f} / {min(c8):.3f}")
    print(f"  16 weeks ({len(sixteen):,} points): {min(w16):.3f} / {min(c16):.3f}")
    print(f"  all runs, wall: 8 weeks {fmt(w8)}; 16 weeks {fmt(w16)}")
    verdict("16 weeks / 8 weeks", min(w16) / min(w8), min(c16) / min(c8), 2.3)
    if args.no_stl:
        return
    print("statsmodels STL(robust=True, period=10080, jumps 10%) on 8 weeks, once ...")
    stl_wall, stl_cpu = stl_jumps_fit(eight)
    print(f"  STL: {stl_wall:.1f} / {stl_cpu:.1f}")
    verdict("explain / STL", min(w8) / stl_wall, min(c8) / stl_cpu, 0.25)


def fmt(times: list[float]) -> str:
    return ", ".join(f"{t:.3f}" for t in times)


def verdict(name: str, wall: float, cpu: float, bar: float) -> None:
    """Print a ratio by wall-clock and by CPU time (CPU time is what to trust on a machine
    that other work shares), against its bar."""
    ok = "PASS" if max(wall, cpu) <= bar else ("PASS by CPU time" if cpu <= bar else "FAIL")
    print(f"{name}: {wall:.3f}x wall-clock, {cpu:.3f}x CPU  (bar: at most {bar}x)  {ok}")


if __name__ == "__main__":
    main()
