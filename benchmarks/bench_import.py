"""Import of a 1,000,000-row long CSV into the store, against the bare minimum.

Bar (docs/design.md): ``parse_file`` + ``record_import`` (with its commit) takes at most 2x
the time of a bare ``pandas.read_csv`` plus one ``sqlite3`` ``executemany`` of the same
rows into a plain table, measured in the same run on the same file.

The CSV is synthetic: 20 series (two metrics on ten hosts), one row per series per
minute, ISO 8601 UTC timestamps, rows in time order as exports write them.

    python benchmarks/bench_import.py [--rows 1000000] [--repeat 3]   (after pip install -e .)
"""

from __future__ import annotations

import argparse
import sqlite3
import statistics
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

from webapp.imports import parse_file
from webapp.store import db
from webapp.store.imports import record_import

HOSTS = [f"web-{i:02d}" for i in range(10)]
METRICS = ["ticket.requests", "ticket.latency_ms"]


def write_csv(path: Path, rows: int, seed: int = 1) -> None:
    series = [(m, h) for m in METRICS for h in HOSTS]
    minutes = -(-rows // len(series))
    rng = np.random.default_rng(seed)
    stamps = pd.date_range("2026-03-01", periods=minutes, freq="min", tz="UTC")
    frame = pd.DataFrame(
        {
            "timestamp": np.repeat(stamps.strftime("%Y-%m-%dT%H:%M:%SZ"), len(series)),
            "metric": np.tile([m for m, _ in series], minutes),
            "host": np.tile([h for _, h in series], minutes),
            "value": rng.gamma(4.0, 25.0, minutes * len(series)).round(3),
        }
    ).head(rows)
    frame.to_csv(path, index=False)


class Timer:
    """Wall-clock and CPU seconds of a block; CPU time is steadier on a busy machine."""

    def __enter__(self) -> Timer:
        self.wall, self.cpu = time.perf_counter(), time.process_time()
        return self

    def __exit__(self, *exc: object) -> None:
        self.wall = time.perf_counter() - self.wall
        self.cpu = time.process_time() - self.cpu


def bare(csv: Path, target: Path) -> Timer:
    """pandas.read_csv, then one executemany into a plain table, in one transaction."""
    with Timer() as timer:
        _bare(csv, target)
    return timer


def _bare(csv: Path, target: Path) -> None:
    frame = pd.read_csv(csv)
    conn = sqlite3.connect(target)
    conn.execute("CREATE TABLE rows (timestamp TEXT, metric TEXT, host TEXT, value REAL)")
    with conn:
        columns = [frame[name].tolist() for name in frame.columns]
        conn.executemany("INSERT INTO rows VALUES (?, ?, ?, ?)", zip(*columns, strict=True))
    conn.close()


def whyfired(csv: Path, target: Path) -> tuple[Timer, int]:
    """parse_file + record_import + commit into a store migrated beforehand (not timed)."""
    engine = db.make_engine(f"sqlite:///{target}")
    db.upgrade(engine)
    try:
        with Timer() as timer:
            parsed = parse_file(csv)
            with db.session_scope(engine) as session:
                summary = record_import(session, parsed)
    finally:
        engine.dispose()
    return timer, summary.points


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=1_000_000)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()

    with tempfile.TemporaryDirectory(prefix="whyfired-bench-") as tmp:
        folder = Path(tmp)
        csv = folder / "long.csv"
        write_csv(csv, args.rows)
        print(f"CSV: {args.rows:,} rows, {csv.stat().st_size / 1024**2:.1f} MB")
        runs = []
        for run in range(args.repeat):
            b = bare(csv, folder / f"bare-{run}.sqlite")
            w, points = whyfired(csv, folder / f"store-{run}.sqlite")
            assert points == args.rows, f"stored {points} points, expected {args.rows}"
            runs.append((b, w))
            print(
                f"run {run + 1}: bare {b.wall:.2f} s (cpu {b.cpu:.2f}), "
                f"whyfired {w.wall:.2f} s (cpu {w.cpu:.2f}), ratio {w.wall / b.wall:.2f}"
            )
        for kind in ("wall", "cpu"):
            b = statistics.median(getattr(r[0], kind) for r in runs)
            w = statistics.median(getattr(r[1], kind) for r in runs)
            ratio = statistics.median(getattr(r[1], kind) / getattr(r[0], kind) for r in runs)
            print(
                f"median {kind}: bare read_csv + executemany {b:.2f} s, "
                f"whyfired parse_file + record_import {w:.2f} s, ratio {ratio:.2f}"
            )
        print("bar: wall-clock ratio at most 2.00")


if __name__ == "__main__":
    main()
