"""Import of a 1,000,000-row long CSV into each store, against the bare minimum.

Bars (docs/design.md), each measured in the same run on the same file: ``parse_file`` +
``record_import`` (with its commit) takes at most 2x the time of
- SQLite: a bare ``pandas.read_csv`` plus one ``sqlite3`` ``executemany`` of the same rows
  into a plain table;
- PostgreSQL: a bare ``COPY`` of the same CSV file into a plain table.

The PostgreSQL server is ``--postgres URL``, else ``WHYFIRED_TEST_POSTGRES_URL``, else a
throwaway cluster started with ``.ci/postgres`` (where PostgreSQL is installed).

The CSV is synthetic: 20 series (two metrics on ten hosts), one row per series per
minute, ISO 8601 UTC timestamps, rows in time order as exports write them.

    python benchmarks/bench_import.py [--rows 1000000] [--repeat 3] [--store sqlite|postgresql]
"""

from __future__ import annotations

import argparse
import os
import sqlite3
import statistics
import subprocess
import tempfile
import time
import uuid
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path

import numpy as np
import pandas as pd

from webapp.imports import parse_file
from webapp.store import db
from webapp.store.imports import record_import

ROOT = Path(__file__).resolve().parents[1]

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


def sqlite_bare(csv: Path, folder: Path, run: int) -> Timer:
    """pandas.read_csv, then one executemany into a plain table, in one transaction."""
    with Timer() as timer:
        frame = pd.read_csv(csv)
        conn = sqlite3.connect(folder / f"bare-{run}.sqlite")
        conn.execute("CREATE TABLE rows (timestamp TEXT, metric TEXT, host TEXT, value REAL)")
        with conn:
            columns = [frame[name].tolist() for name in frame.columns]
            conn.executemany("INSERT INTO rows VALUES (?, ?, ?, ?)", zip(*columns, strict=True))
        conn.close()
    return timer


def postgres_bare(server: str, csv: Path) -> Timer:
    """One COPY of the CSV file into a plain table, committed, in a database of its own."""
    with scratch_database(server) as url, Timer() as timer:
        _copy_file(url, csv)
    return timer


def _copy_file(url: str, csv: Path) -> None:
    import psycopg

    table = "CREATE TABLE rows (timestamp text, metric text, host text, value float8)"
    with psycopg.connect(url.replace("+psycopg", "")) as conn, conn.cursor() as cur:
        cur.execute(table)
        copy_sql = "COPY rows FROM STDIN (FORMAT csv, HEADER true)"
        with cur.copy(copy_sql) as copy, csv.open("rb") as f:
            while block := f.read(1 << 20):
                copy.write(block)


def whyfired(csv: Path, url: str) -> tuple[Timer, int]:
    """parse_file + record_import + commit into a store migrated beforehand (not timed)."""
    engine = db.make_engine(url)
    db.upgrade(engine)
    try:
        with Timer() as timer:
            parsed = parse_file(csv)
            with db.session_scope(engine) as session:
                summary = record_import(session, parsed)
    finally:
        engine.dispose()
    return timer, summary.points


@contextmanager
def scratch_database(server: str) -> Iterator[str]:
    """A new database on the PostgreSQL server, dropped afterwards; yields its URL."""
    import psycopg
    from sqlalchemy.engine import make_url

    admin = make_url(server).set(drivername="postgresql")
    name = f"whyfired_bench_{uuid.uuid4().hex[:10]}"
    with psycopg.connect(admin.render_as_string(False), autocommit=True) as conn:
        conn.execute(f"CREATE DATABASE {name}")
    try:
        yield admin.set(drivername="postgresql+psycopg", database=name).render_as_string(False)
    finally:
        with psycopg.connect(admin.render_as_string(False), autocommit=True) as conn:
            conn.execute(f"DROP DATABASE {name} WITH (FORCE)")


@contextmanager
def postgres_server(url: str | None) -> Iterator[str | None]:
    """The server to measure on; a throwaway cluster when none is named (None if that
    cannot be started)."""
    url = url or os.environ.get("WHYFIRED_TEST_POSTGRES_URL")
    if url:
        yield url
        return
    parent = "/dev/shm" if Path("/dev/shm").is_dir() else None
    cluster = Path(tempfile.mkdtemp(prefix="whyfired-bench-postgres-", dir=parent))
    script = ROOT / ".ci" / "postgres"
    started = subprocess.run(
        [str(script), "start", str(cluster)], capture_output=True, text=True, check=False
    )
    try:
        if started.returncode != 0:
            print(f"PostgreSQL: no server ({started.stderr.strip() or 'could not start one'})")
            yield None
        else:
            yield started.stdout.strip()
    finally:
        subprocess.run([str(script), "stop", str(cluster)], check=False)


def measure(
    name: str, bare_name: str, csv: Path, rows: int, repeat: int, run_once: Callable
) -> None:
    runs = []
    for run in range(repeat):
        b, w, points = run_once(run)
        assert points == rows, f"stored {points} points, expected {rows}"
        runs.append((b, w))
        print(
            f"{name} run {run + 1}: bare {b.wall:.2f} s (cpu {b.cpu:.2f}), "
            f"whyfired {w.wall:.2f} s (cpu {w.cpu:.2f}), ratio {w.wall / b.wall:.2f}"
        )
    for kind in ("wall", "cpu"):
        b = statistics.median(getattr(r[0], kind) for r in runs)
        w = statistics.median(getattr(r[1], kind) for r in runs)
        ratio = statistics.median(getattr(r[1], kind) / getattr(r[0], kind) for r in runs)
        print(
            f"{name} median {kind}: bare {bare_name} {b:.2f} s, "
            f"whyfired parse_file + record_import {w:.2f} s, ratio {ratio:.2f}"
        )
    print(f"{name} bar: wall-clock ratio at most 2.00")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=1_000_000)
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--store", choices=["sqlite", "postgresql"], action="append")
    parser.add_argument("--postgres", help="URL of a PostgreSQL server to measure on")
    args = parser.parse_args()
    stores = args.store or ["sqlite", "postgresql"]

    with tempfile.TemporaryDirectory(prefix="whyfired-bench-") as tmp:
        folder = Path(tmp)
        csv = folder / "long.csv"
        write_csv(csv, args.rows)
        print(f"CSV: {args.rows:,} rows, {csv.stat().st_size / 1024**2:.1f} MB")
        if "sqlite" in stores:

            def sqlite_run(run: int) -> tuple[Timer, Timer, int]:
                bare = sqlite_bare(csv, folder, run)
                return (bare, *whyfired(csv, f"sqlite:///{folder / f'store-{run}.sqlite'}"))

            bare_name = "read_csv + executemany"
            measure("SQLite", bare_name, csv, args.rows, args.repeat, sqlite_run)
        if "postgresql" in stores:
            with postgres_server(args.postgres) as server:
                if server is None:
                    return

                def postgres_run(run: int) -> tuple[Timer, Timer, int]:
                    bare = postgres_bare(server, csv)
                    with scratch_database(server) as url:
                        return (bare, *whyfired(csv, url))

                measure("PostgreSQL", "COPY", csv, args.rows, args.repeat, postgres_run)


if __name__ == "__main__":
    main()
