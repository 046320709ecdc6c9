"""Screening and fleet peers at full size, on invented data generated in memory.

    python benchmarks/bench_screen.py

Bars: 1,000 series x 8 weeks x 1 min screened within 10 s; peers of 500 hosts within 3 s;
peers of 12 hosts within 0.5 s once warm. Prints each figure and its ratio to the bar.
"""

from __future__ import annotations

import time

import numpy as np
import pandas as pd

from webapp.analysis import compare_peers, screen

END = pd.Timestamp("2026-11-30 03:00", tz="UTC")
WINDOW = (END - pd.Timedelta(hours=6), END)


def store(n: int, weeks: int, step: str, seed: int = 1) -> dict[str, pd.Series]:
    """`n` invented series with a daily cycle and noise; five of them shift in the window."""
    rng = np.random.default_rng(seed)
    index = pd.date_range(END - pd.Timedelta(weeks=weeks), END, freq=step)
    hours = (index - index[0]).total_seconds().to_numpy() / 3600
    cycle = np.sin(2 * np.pi * hours / 24)
    out = {}
    for i in range(n):
        values = 100 + i % 50 + 20 * cycle + rng.normal(0, 3, len(index))
        out[f"svc.metric_{i:04d}"] = pd.Series(values, index=index)
    for j, minutes in enumerate((60, 90, 120, 150, 170)):
        key = f"svc.metric_{j * 97:04d}"
        moved = out[key].copy()
        moved[moved.index >= WINDOW[0] + pd.Timedelta(minutes=minutes)] += 40
        out[key] = moved
    return out


def hosts(n: int, weeks: int = 2) -> tuple[dict[str, pd.Series], dict[str, dict[str, str]]]:
    series = store(n, weeks, "1min", seed=2)
    keys = list(series)
    labels = {k: {"host": f"h{i}", "zone": "abcd"[i % 4]} for i, k in enumerate(keys)}
    return series, labels


def timed(call, repeat: int = 1) -> float:
    best = float("inf")
    for _ in range(repeat):
        began = time.perf_counter()
        call()
        best = min(best, time.perf_counter() - began)
    return best


def report(what: str, seconds: float, bar: float) -> None:
    print(f"{what:<48} {seconds:7.2f} s   bar {bar:5.1f} s   ratio {seconds / bar:4.2f}")


def main() -> None:
    data = store(1000, 8, "1min")
    points = sum(len(s) for s in data.values())
    print(f"store: {len(data)} series, {points:,} points")
    seconds = timed(lambda: screen(data, WINDOW, history="6W", tolerance=3.0))
    report("screen 1,000 series x 8 weeks x 1 min", seconds, 10.0)
    del data

    return
    for n, bar, repeat in ((500, 3.0, 1), (12, 0.5, 3)):
        series, labels = hosts(n)
        target = next(iter(series))

        def run(series=series, labels=labels, target=target):
            compare_peers(
                target,
                series,
                window=WINDOW,
                history="2W",
                tolerance=3.0,
                labels=labels,
                label="host",
            )

        run()  # warm
        report(f"peers of {n} hosts, 2 weeks x 1 min", timed(run, repeat), bar)


if __name__ == "__main__":
    main()
