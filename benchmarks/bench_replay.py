"""Benchmark: replay, report and what-if sweep over six weeks of 1-minute demo data.

The data is the demo scenario (60,480 minutes per series). Figures printed: the demo build,
a threshold replay and its report, the default what-if sweep (thresholds x holds),
a band-rule replay (one fit per day on four weeks of history), and the rule replay pages
served from a demo database: the first request of each (cold: points read and bands
fitted) and the best of ``--repeat`` later ones (warm), with a band rule added beside the
demo's own rules. Each core figure is the best of ``--repeat`` runs.

    python benchmarks/bench_replay.py
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from webapp import create_app  # noqa: E402
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
from webapp.services.demo import load_demo  # noqa: E402
from webapp.store import db  # noqa: E402
from webapp.store import rules as store_rules  # noqa: E402
from webapp.store import series as store_series  # noqa: E402


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
        if fields["kind"] == "burn_rate":
            continue  # benchmarks/bench_burn.py times the burn-rate core
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
    page_timings(demo, args.repeat)


FRAGMENT = {"HX-Request": "true"}


def page_timings(demo, repeat: int) -> None:
    """Time every rule's replay page (the htmx fragment) cold and warm on a demo database."""
    with tempfile.TemporaryDirectory() as folder:
        url = f"sqlite:///{Path(folder) / 'demo.sqlite'}"
        engine = db.make_engine(url)
        db.upgrade(engine)
        with db.session_scope(engine) as session:
            load_demo(session, demo)
            info = store_series.find_series(session, "checkout.latency_p95{host=api-4}")
            store_rules.create_rule(
                session,
                name="Checkout p95 outside its band on api-4",
                series_id=info.id,
                kind="band",
                direction="above",
                tolerance=4.0,
                hold_seconds=300,
                check_every_seconds=60,
            )
            rules = [(r.id, r.name, r.kind) for r in store_rules.list_rules(session)]
        engine.dispose()
        client = create_app({"DATABASE_URL": url}).test_client()
        print("\nreplay pages (cold: first request; warm: best of later ones)")
        for rule_id, name, kind in rules:
            path = f"/rules/{rule_id}/replay"
            cold, response = best_of(1, lambda p=path: client.get(p, headers=FRAGMENT))
            if response.status_code != 200:
                print(f"  {name}: HTTP {response.status_code}")
                continue
            warm, _ = best_of(repeat, lambda p=path: client.get(p, headers=FRAGMENT))
            print(f"  {kind:9} {name}: cold {cold:.2f} s, warm {warm:.2f} s")


if __name__ == "__main__":
    main()
