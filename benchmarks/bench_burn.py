"""Benchmark: a burn-rate rule's replay, budget spent and what-if sweep over six weeks of
1-minute data (60,480 samples of good and total request counts).

The data is invented: a storefront's requests per minute with a daily cycle, a trickle of
failures and three bad spells. Figures printed are the best of ``--repeat`` runs.

    python benchmarks/bench_burn.py
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from bench_replay import best_of  # noqa: E402  (this folder is on the path when run)

from webapp.analysis import (  # noqa: E402
    BurnRateRule,
    budget_spent,
    burn_sweep,
    burn_sweep_grid,
    event_grid,
    replay_burn,
)


def six_weeks(seed: int = 7) -> tuple[pd.DataFrame, list[tuple[pd.Timestamp, pd.Timestamp]]]:
    rng = np.random.default_rng(seed)
    index = pd.date_range("2026-01-05", periods=6 * 7 * 1440, freq="1min", tz="UTC")
    hours = np.arange(len(index)) / 60
    total = rng.poisson(800 + 500 * np.sin(2 * np.pi * (hours - 8) / 24).clip(0)).astype(float)
    share = rng.uniform(0, 0.0008, len(index))
    spells = [(9_000, 20, 0.4), (25_000, 300, 0.01), (50_000, 90, 0.03)]
    for at, length, level in spells:
        share[at : at + length] = level
    bad = rng.binomial(total.astype(int), share).astype(float)
    incidents = [(index[at], index[at + length]) for at, length, _ in spells]
    return pd.DataFrame({"good": total - bad, "total": total}, index=index), incidents


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()

    events, incidents = six_weeks()
    rule = BurnRateRule()
    print(f"{len(events):,} samples; {rule.text}")
    seconds, grid = best_of(args.repeat, lambda: event_grid(events))
    print(f"  event_grid:    {seconds * 1000:8.1f} ms")
    seconds, raised = best_of(args.repeat, lambda: replay_burn(events, rule))
    print(f"  replay_burn:   {seconds * 1000:8.1f} ms, {len(raised)} raises (from the samples)")
    seconds, _ = best_of(args.repeat, lambda: replay_burn(grid, rule))
    print(f"  replay_burn:   {seconds * 1000:8.1f} ms (on the grid already built)")
    seconds, spent = best_of(args.repeat, lambda: budget_spent(grid, rule))
    print(f"  budget_spent:  {seconds * 1000:8.1f} ms, at most {spent.max():.1%} of the budget")
    factors, pairs = burn_sweep_grid(rule)
    seconds, sweep = best_of(
        args.repeat, lambda: burn_sweep(events, rule, factors, pairs, incidents)
    )
    print(
        f"  burn_sweep:    {seconds * 1000:8.1f} ms for {len(factors)} factors x "
        f"{len(pairs)} window pairs = {len(sweep)} settings"
    )


if __name__ == "__main__":
    main()
