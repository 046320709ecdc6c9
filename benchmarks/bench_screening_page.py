"""Benchmark: the Screening screen on the demo, and the Peers panel of 12 hosts once warm.

Loads the demo scenario into a temporary SQLite file and GETs the Screening screen over the
night of the payment slowdown (every stored series, four weeks of history): once cold (the
points read and screened) and again with the same parameters (from the screening cache).
Then stores 12 hosts of 6 weeks of invented 1-minute latency and GETs the Peers panel of
one of them over a 6-hour window, first cold and then warm (the bar: 0.5 s warm).

    python benchmarks/bench_screening_page.py [--runs 3]
"""

from __future__ import annotations

import argparse
import hashlib
import statistics
import sys
import tempfile
import time
from pathlib import Path
from urllib.parse import urlencode

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from webapp import create_app  # noqa: E402
from webapp.demo import PAYMENT_SLOWDOWN, TZ, build_demo  # noqa: E402
from webapp.imports import ParsedImport, SeriesMeta  # noqa: E402
from webapp.services.demo import load_demo  # noqa: E402
from webapp.store import db  # noqa: E402
from webapp.store import imports as store_imports  # noqa: E402

PEERS_WARM_BAR = 0.5
HOSTS = 12
END = pd.Timestamp("2026-11-30 06:00", tz="UTC")


def hosts_import(weeks: int = 6, seed: int = 9) -> ParsedImport:
    """12 hosts of invented 1-minute latency with a daily cycle; h-1 to h-4 jump at the end."""
    rng = np.random.default_rng(seed)
    index = pd.date_range(END - pd.Timedelta(weeks=weeks), END, freq="1min", inclusive="left")
    day = np.arange(len(index)) / 1440
    parts, meta = [], {}
    for n in range(1, HOSTS + 1):
        key = f"checkout.latency_p95{{host=h-{n}}}"
        values = 200 + 50 * np.sin(2 * np.pi * day) + rng.normal(0, 6, len(index))
        if n <= 4:
            values[-150:] += 200
        parts.append(
            pd.DataFrame({"series_key": key, "ts_utc": index.as_unit("ms").asi8, "value": values})
        )
        meta[key] = SeriesMeta("checkout.latency_p95", {"host": f"h-{n}"}, "ms")
    table = pd.concat(parts, ignore_index=True)
    return ParsedImport(
        file_name="bench: 12 hosts",
        format="csv-long",
        sha256=hashlib.sha256(table["value"].to_numpy().tobytes()).hexdigest(),
        size_bytes=int(table.memory_usage().sum()),
        table=table,
        series=meta,
        timestamp_unit="ISO 8601",
        rows_read=len(table),
    )


def timed(client, url: str) -> float:
    t0 = time.perf_counter()
    response = client.get(url, headers={"HX-Request": "true"} if "/peers" in url else {})
    elapsed = time.perf_counter() - t0
    if response.status_code != 200:
        raise SystemExit(f"status {response.status_code}: {response.get_data()[:300]}")
    return elapsed


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=3)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        demo_app = create_app({"TESTING": True, "DATABASE_URL": f"sqlite:///{tmp}/demo.sqlite"})
        with db.session_scope(db.get_engine(demo_app)) as session:
            load_demo(session, build_demo())
        window = {
            "start": (PAYMENT_SLOWDOWN[0] - pd.Timedelta(hours=1)).isoformat(),
            "end": (PAYMENT_SLOWDOWN[1] + pd.Timedelta(hours=1)).isoformat(),
            "tz": TZ,
            "weeks": 4,
        }
        client = demo_app.test_client()
        url = "/screening?" + urlencode(window)
        cold = timed(client, url)
        warm = [timed(client, url) for _ in range(args.runs)]
        print(f"screening page, demo (19 series, 4 weeks of 1-minute history): cold {cold:.2f} s")
        print(
            "screening page, same parameters again (cached): "
            f"median {statistics.median(warm):.3f} s"
        )
        db.get_engine(demo_app).dispose()

        app = create_app({"TESTING": True, "DATABASE_URL": f"sqlite:///{tmp}/hosts.sqlite"})
        with db.session_scope(db.get_engine(app)) as session:
            store_imports.record_import(session, hosts_import())
        client = app.test_client()
        peers = "/explain/peers?" + urlencode(
            {
                "series": 1,
                "start": (END - pd.Timedelta(hours=6)).isoformat(),
                "end": END.isoformat(),
                "weeks": 4,
            }
        )
        cold = timed(client, peers)
        warm = [timed(client, peers) for _ in range(args.runs)]
        median = statistics.median(warm)
        print(
            f"peers panel, {HOSTS} hosts of 1-minute data: cold {cold:.2f} s, "
            f"warm median {median:.3f} s (bar {PEERS_WARM_BAR} s)"
        )
        db.get_engine(app).dispose()
    ok = median <= PEERS_WARM_BAR
    print("bars met" if ok else "BAR MISSED")
    return 0 if ok else 1


if __name__ == "__main__":
    raise SystemExit(main())
