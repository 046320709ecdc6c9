"""Benchmark: replay, report and what-if sweep over six weeks of 1-minute demo data.

The data is the demo scenario (60,480 minutes per series). Figures printed: the demo build,
a threshold replay and its report, the default what-if sweep (thresholds x holds),
and a band-rule replay (one fit per day on four weeks of history). Each is the best of
``--repeat`` runs.

    python benchmarks/bench_replay.py
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from webapp.analysis import (  # noqa: E402
    BandRule,
    draft_verdict,
    replay,
    replay_report,
    rule_from_fields,
    sweep_grid,
    whatif_sweep,
)
from webapp.demo import build_demo  # noqa: E402


def best_of(repeat: int, call) -> tuple[float, object]:
    times, result = [], None
    for _ in range(repeat):
        start = time.perf_counter()
        result = call()
        times.append(time.perf_counter() - start)
    return min(times), result


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()

    seconds, demo = best_of(1, build_demo)
    print(f"build_demo: {seconds:.2f} s, {len(demo.parsed.table):,} points")
    for fields in demo.rules:
        series = demo.series(fields["series_key"])
        rule = rule_from_fields(fields)
        print(f"\n{fields['name']} ({len(series):,} points): {rule.text}")
        seconds, _ = best_of(args.repeat, lambda s=series, r=rule: replay(s, r))
        print(f"  replay:        {seconds * 1000:8.1f} ms")
        seconds, report = best_of(
            args.repeat, lambda s=series, r=rule: replay_report(s, r, demo.incidents)
        )
        print(f"  replay_report: {seconds * 1000:8.1f} ms")
        thresholds, holds = sweep_grid(series, rule)
        seconds, sweep = best_of(
            args.repeat,
            lambda s=series, t=thresholds, p=holds, r=rule: whatif_sweep(
                s, t, p, demo.incidents, direction=r.direction, check_every=r.check_every
            ),
        )
        print(
            f"  whatif_sweep:  {seconds * 1000:8.1f} ms for {len(thresholds)} thresholds x "
            f"{len(holds)} holds = {len(sweep)} settings"
        )
        verdict = draft_verdict(report, sweep, rule)
        print(
            f"  firings {report.n_firings}, {report.pages_per_week:.2f} per week, caught "
            f"{report.caught}, missed {report.missed}; draft: {verdict.suggestion}"
        )

    series = demo.series("checkout.latency_p95{host=api-4}")
    band = BandRule(tolerance=4.0, hold="5min", history=pd.Timedelta(weeks=4), tz=demo.tz)
    seconds, firings = best_of(1, lambda: replay(series, band))
    print(f"\nband rule on {series.name} ({band.text}): {seconds:.2f} s, {len(firings)} firings")


if __name__ == "__main__":
    main()
