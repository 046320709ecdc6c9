"""Benchmark: the store's reads and sizes.

Bars:
* reading one series back (8 weeks of 1-minute data, 80,640 points) from the store takes
  at most 1.5x reading the same points from a Parquet file into the same ``pd.Series``,
  measured in the same run (median of ``--runs``);
* a saved 8-week, 1-minute explanation takes at most 300 KB and reopens identical;
* with 1,000 series of one week of 1-minute data, the series list answers within 0.3 s
  (warm median; the first request is printed too).

Also printed: bytes per stored point (the SQLite file over the number of points; 16 is the
raw int64 time plus float64 value), and the time to encode one 8-week explanation frame with
nothing else running (median, no bar). All data is invented: latency-like minutes with daily
and weekly cycles, noise and spikes, values with one decimal as a text export gives them
(``--full-precision`` keeps every bit of the noise instead).

    python benchmarks/bench_store.py [--runs 21] [--series 1000] [--full-precision]
"""

from __future__ import annotations

import argparse
import hashlib
import sqlite3
import statistics
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from webapp import create_app  # noqa: E402
from webapp.analysis import explain  # noqa: E402
from webapp.imports import ParsedImport, SeriesMeta  # noqa: E402
from webapp.store import db  # noqa: E402
from webapp.store import imports as store_imports  # noqa: E402
from webapp.store import series as store_series  # noqa: E402
from webapp.store.frames import decode_frame, encode_frame  # noqa: E402

READ_RATIO = 1.5
EXPLANATION_BYTES = 300_000
LIST_SECONDS = 0.3


def minutes(weeks: int, seed: int, decimals: int | None) -> pd.Series:
    """Latency-like minutes: daily and weekly cycles, noise, lone spikes."""
    rng = np.random.default_rng(seed)
    n = weeks * 7 * 1440
    index = pd.date_range("2026-10-05", periods=n, freq="1min", tz="UTC")
    day = np.arange(n) / 1440
    values = (
        200
        + 50 * np.sin(2 * np.pi * (day - 0.3))
        + 15 * np.sin(2 * np.pi * day / 7)
        + rng.normal(0, 6, n)
    )
    spikes = rng.choice(n, size=max(1, n // 2000), replace=False)
    values[spikes] += rng.uniform(200, 600, size=len(spikes))
    return pd.Series(values if decimals is None else np.round(values, decimals), index=index)


def parsed(named: dict[str, pd.Series], name: str) -> ParsedImport:
    table = pd.concat(
        pd.DataFrame(
            {"series_key": key, "ts_utc": s.index.as_unit("ms").asi8, "value": s.to_numpy()}
        )
        for key, s in named.items()
    )
    return ParsedImport(
        file_name=name,
        format="csv-long",
        sha256=hashlib.sha256(name.encode()).hexdigest(),
        size_bytes=int(table.memory_usage().sum()),
        table=table,
        series={key: SeriesMeta("bench.latency", {"host": key}, "ms") for key in named},
        timestamp_unit="ISO 8601",
        rows_read=len(table),
    )


def median_time(fn: Callable[[], object], runs: int) -> float:
    times = []
    for _ in range(runs):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def bench_read(folder: Path, runs: int, decimals: int | None) -> bool:
    series = minutes(8, seed=5, decimals=decimals)
    engine = db.make_engine(f"sqlite:///{folder / 'read.sqlite'}")
    db.upgrade(engine)
    with db.session_scope(engine) as session:
        store_imports.record_import(session, parsed({"api-3": series}, "eight weeks"))
    parquet = folder / "points.parquet"
    pq.write_table(
        pa.table({"ts": series.index.as_unit("ms").asi8, "value": series.to_numpy()}),
        parquet,
        compression="zstd",
    )

    def from_parquet() -> pd.Series:
        table = pq.read_table(parquet)
        ts = table.column("ts").to_numpy()
        index = pd.DatetimeIndex(ts.astype("datetime64[ms]").astype("datetime64[ns]"), name="ts")
        return pd.Series(table.column("value").to_numpy(), index=index.tz_localize("UTC"))

    def from_store() -> pd.Series:
        with db.session_scope(engine) as session:
            return store_series.read_series(session, 1)

    np.testing.assert_array_equal(from_store().to_numpy(), from_parquet().to_numpy())
    store_times, parquet_times = [], []
    for _ in range(runs):  # interleaved, so both see the same load on the machine
        store_times.append(median_time(from_store, 1))
        parquet_times.append(median_time(from_parquet, 1))
    store_s = statistics.median(store_times)
    parquet_s = statistics.median(parquet_times)
    ratio = store_s / parquet_s
    with engine.connect() as conn:
        packed = conn.exec_driver_sql(
            "SELECT sum(length(ts) + length(value)) FROM point_blocks"
        ).scalar()
    engine.dispose()
    with sqlite3.connect(folder / "read.sqlite") as conn:
        conn.execute("VACUUM")
    size = (folder / "read.sqlite").stat().st_size
    print(f"read 8 weeks of minutes ({len(series):,} points), median of {runs}:")
    print(f"  store {store_s * 1000:.1f} ms, Parquet file {parquet_s * 1000:.1f} ms")
    print(f"  ratio {ratio:.2f} (bar {READ_RATIO})")
    print(f"  store file {size:,} bytes: {size / len(series):.1f} bytes per point (raw 16),")
    print(f"  of which the point blocks' arrays {packed / len(series):.1f} bytes per point")
    return ratio <= READ_RATIO


def bench_explanation(decimals: int | None) -> bool:
    series = minutes(8, seed=5, decimals=decimals)
    end = series.index[-1]
    start = end - pd.Timedelta(hours=6)
    frame = explain(series, window=(start, end), history=start - series.index[0]).frame
    plain = encode_frame(frame, compact=False)
    t0 = time.perf_counter()
    compact = encode_frame(frame)
    saved = time.perf_counter() - t0
    t0 = time.perf_counter()
    back = decode_frame(compact)
    reopened = time.perf_counter() - t0
    pd.testing.assert_frame_equal(back, frame, check_exact=True)
    same = all(back[c].to_numpy().tobytes() == frame[c].to_numpy().tobytes() for c in frame)
    print(f"saved explanation, 8 weeks of minutes ({len(frame):,} rows x {frame.shape[1]}):")
    print(f"  plain Parquet {len(plain):,} bytes, compact {len(compact):,} bytes")
    print(f"  (bar {EXPLANATION_BYTES:,}); saved in {saved:.2f} s, reopened in {reopened:.2f} s")
    print(f"  reopened bit for bit identical: {same}")
    return same and len(compact) <= EXPLANATION_BYTES


def bench_encode(runs: int) -> None:
    """Printed, no bar: encoding one explanation frame with nothing else running, the CPU
    a save spends before its write (under load every numpy call may wait for the GIL)."""
    rng = np.random.default_rng(1)
    n = 8 * 7 * 1440
    index = pd.date_range("2026-10-05", periods=n, freq="1min", tz="UTC")
    day = np.arange(n) / 1440
    series = pd.Series(100 + 10 * np.sin(2 * np.pi * day) + rng.normal(0, 1, n), index=index)
    frame = explain(series, window=(index[-120], index[-1])).frame
    encode_frame(frame)  # imports and first-use setup out of the timing
    took = median_time(lambda: encode_frame(frame), runs)
    rows, columns = frame.shape
    print(f"encode an explanation frame, 8 weeks of minutes ({rows:,} rows x {columns}), quiet:")
    print(f"  median {took:.3f} s of {runs}, {len(encode_frame(frame)):,} bytes")


def bench_list(folder: Path, n_series: int, runs: int) -> bool:
    url = f"sqlite:///{folder / 'many.sqlite'}"
    app = create_app({"TESTING": True, "DATABASE_URL": url})
    week = minutes(1, seed=9, decimals=1)
    t0 = time.perf_counter()
    for first in range(0, n_series, 100):
        batch = {f"api-{i:04d}": week + (i % 17) for i in range(first, min(n_series, first + 100))}
        with db.session_scope(db.get_engine(app)) as session:
            store_imports.record_import(session, parsed(batch, f"hosts from {first}"))
    loaded = time.perf_counter() - t0
    client = app.test_client()

    def get() -> None:
        response = client.get("/series")
        if response.status_code != 200:
            raise SystemExit(f"status {response.status_code}")

    t0 = time.perf_counter()
    get()
    first_s = time.perf_counter() - t0
    warm = median_time(get, runs)
    db.get_engine(app).dispose()
    print(f"series list, {n_series:,} series of one week of minutes (loaded in {loaded:.0f} s):")
    print(f"  first request {first_s:.3f} s, warm median {warm:.3f} s (bar {LIST_SECONDS} s)")
    return warm <= LIST_SECONDS


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=21)
    parser.add_argument("--series", type=int, default=1000)
    parser.add_argument("--full-precision", action="store_true")
    args = parser.parse_args()
    decimals = None if args.full_precision else 1
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        results = [bench_read(folder, args.runs, decimals), bench_explanation(decimals)]
        bench_encode(min(args.runs, 7))
        results.append(bench_list(folder, args.series, args.runs))
    print("bars met" if all(results) else "BAR MISSED")
    return 0 if all(results) else 1


if __name__ == "__main__":
    raise SystemExit(main())
