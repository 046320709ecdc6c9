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


def daily(index: pd.DatetimeIndex, n: int, rng: np.random.Generator) -> np.ndarray:
    """`n` rows of a daily cycle plus noise on `index` (invented)."""
    hours = (index - index[0]).total_seconds().to_numpy() / 3600
    cycle = 20 * np.sin(2 * np.pi * hours / 24)
    return 100 + np.arange(n)[:, None] % 50 + cycle + rng.normal(0, 3, (n, len(index)))


def store(n: int = 1000, weeks: int = 8) -> dict[str, pd.Series]:
    """`n` series of `weeks` of one-minute data; five of them shift up in the window."""
    index = pd.date_range(END - pd.Timedelta(weeks=weeks), END, freq="1min")
    values = daily(index, n, np.random.default_rng(1))
    for j, minutes in enumerate((60, 90, 120, 150, 170)):
        values[j * (n // 5), index >= WINDOW[0] + pd.Timedelta(minutes=minutes)] += 40
    return {f"svc.metric_{i:04d}": pd.Series(values[i], index=index) for i in range(n)}


def fleet(n: int) -> tuple[dict[str, pd.Series], dict[str, dict[str, str]]]:
    """`n` hosts over two weeks in four zones; the hosts of zone b among the first 152 shift
    up together two hours into the window, and the last host joins an hour into it."""
    index = pd.date_range(END - pd.Timedelta(weeks=2), END, freq="1min")
    values = daily(index, n, np.random.default_rng(2))
    zones = ["abcd"[i % 4] for i in range(n)]
    moved = [i for i in range(min(n, 152)) if zones[i] == "b"]
    values[np.ix_(moved, np.flatnonzero(index >= WINDOW[0] + pd.Timedelta(hours=2)))] += 40
    values[-1, index < WINDOW[0] + pd.Timedelta(hours=1)] = np.nan
    keys = [f"api.latency{{host=h{i:03d},zone={zones[i]}}}" for i in range(n)]
    series = {k: pd.Series(values[i], index=index) for i, k in enumerate(keys)}
    labels = {k: {"host": f"h{i:03d}", "zone": zones[i]} for i, k in enumerate(keys)}
    return series, labels


def timed(call, repeat: int = 1):
    """The best time of `repeat` calls, and the last call's result."""
    best, result = float("inf"), None
    for _ in range(repeat):
        began = time.perf_counter()
        result = call()
        best = min(best, time.perf_counter() - began)
    return best, result


def report(what: str, seconds: float, bar: float, summary: list[str]) -> None:
    print(f"{what:<48} {seconds:7.2f} s   bar {bar:5.1f} s   ratio {seconds / bar:4.2f}")
    print("    " + "\n    ".join(summary))


def main() -> None:
    data = store()
    points = sum(len(s) for s in data.values())
    print(f"store: {len(data)} series, {points:,} points (generated in memory)")
    seconds, result = timed(lambda: screen(data, WINDOW, history="6W", tolerance=3.0))
    report("screen 1,000 series x 8 weeks x 1 min", seconds, 10.0, result.summary)
    data = None  # free the store before the fleets

    for n, bar, repeat in ((500, 3.0, 1), (12, 0.5, 3)):
        series, labels = fleet(n)
        target = next(k for k in series if labels[k]["zone"] == "b")
        names = {k: v["host"] for k, v in labels.items()}

        def run(series=series, labels=labels, target=target, names=names):
            return compare_peers(
                target,
                series,
                window=WINDOW,
                history="2W",
                tolerance=3.0,
                labels=labels,
                names=names,
                label="host",
            )

        run()  # warm
        seconds, result = timed(run, repeat)
        report(f"peers of {n} hosts, 2 weeks x 1 min (warm)", seconds, bar, result.summary)


if __name__ == "__main__":
    main()
