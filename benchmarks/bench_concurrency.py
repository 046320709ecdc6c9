"""Benchmark: many hands on one store, through the real server.

Bars: 16 readers x 100 Explain-screen requests beside 4 writers (autosave, save
explanation, timeline entry, full edit) for the length of the run: 0 errors, 0 lost
acknowledged writes, p95 of reads at most 2 s; and a CLI import of 1M rows while the 4
writers run: 0 failed writes.

Loads the invented demo into a temporary SQLite file, starts ``whyfired serve`` on a free
loopback port in its own process (waitress, as users run it), and drives it over HTTP from
threads here. A write counts as acknowledged when the server answered it with success;
afterwards the store is read to check every acknowledged write is there.

    python benchmarks/bench_concurrency.py load [--readers 16] [--requests 100] [--seconds 60]
    python benchmarks/bench_concurrency.py import [--rows 1000000]
"""

from __future__ import annotations

import argparse
import http.cookiejar
import os
import re
import socket
import statistics
import subprocess
import sys
import tempfile
import threading
import time
import urllib.error
import urllib.parse
import urllib.request
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from sqlalchemy import select  # noqa: E402

from webapp.store import db  # noqa: E402
from webapp.store.models import Explanation, Review, Series, TimelineEntry  # noqa: E402

REVIEW_FORM = {
    "title": "Orders queue lag during the evening batch",
    "status": "draft",
    "severity": "major",
    "incident_start": "2026-11-30T14:00",
    "incident_end": "2026-11-30T16:00",
    "summary": "",
    "impact": "",
    "trigger": "",
    "root_cause": "",
    "detection": "",
    "resolution": "",
    "lessons": "",
}
TOLERANCES = (2.5, 3.0, 3.5, 4.0)
VERSION = re.compile(r'id="review-version" value="(\d+)"')
WHYFIRED = (sys.executable, "-c", "from webapp.cli import main; main()")


class Browser:
    """One person's browser: its own cookies and CSRF token, plain HTTP to loopback."""

    def __init__(self, base: str):
        self.base = base
        self.opener = urllib.request.build_opener(
            urllib.request.HTTPCookieProcessor(http.cookiejar.CookieJar()),
            NoRedirect(),
        )
        page = self.request("GET", "/reviews/new")[1]
        self.token = re.search(r'name="csrf_token" value="([^"]+)"', page).group(1)

    def request(self, method: str, path: str, form: dict | None = None) -> tuple[int, str, dict]:
        data = None
        if form is not None:
            data = urllib.parse.urlencode({"csrf_token": getattr(self, "token", ""), **form})
            data = data.encode()
        req = urllib.request.Request(self.base + path, data=data, method=method)
        try:
            with self.opener.open(req, timeout=120) as response:
                return response.status, response.read().decode(), dict(response.headers)
        except urllib.error.HTTPError as err:
            return err.code, err.read().decode(errors="replace"), dict(err.headers)


class NoRedirect(urllib.request.HTTPRedirectHandler):
    def redirect_request(self, *args, **kwargs):
        return None


@dataclass
class Tally:
    errors: list[str] = field(default_factory=list)
    read_seconds: list[float] = field(default_factory=list)
    write_seconds: dict[str, list[float]] = field(default_factory=dict)
    acknowledged: dict[str, list[str]] = field(default_factory=dict)
    conflicts: int = 0
    lock: threading.Lock = field(default_factory=threading.Lock)

    def error(self, what: str) -> None:
        with self.lock:
            self.errors.append(what)

    def conflict(self) -> None:
        with self.lock:
            self.conflicts += 1

    def ack(self, kind: str, marker: str, seconds: float) -> None:
        with self.lock:
            self.acknowledged.setdefault(kind, []).append(marker)
            self.write_seconds.setdefault(kind, []).append(seconds)


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def build_store(folder: Path) -> str:
    from webapp.demo import build_demo
    from webapp.services.demo import load_demo

    url = f"sqlite:///{folder / 'bench.sqlite'}"
    engine = db.make_engine(url)
    db.upgrade(engine)
    with db.session_scope(engine) as session:
        load_demo(session, build_demo(seed=7))
    engine.dispose()
    return url


def start_server(url: str) -> tuple[subprocess.Popen, str]:
    port = free_port()
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    # A file, not a pipe: a full pipe would stall the server. It lives as long as the server.
    log = tempfile.TemporaryFile()  # noqa: SIM115
    server = subprocess.Popen(
        [*WHYFIRED, "serve", "--db", url, "--port", str(port)],
        env=env,
        stdout=subprocess.DEVNULL,
        stderr=log,
    )
    base = f"http://127.0.0.1:{port}"
    for _ in range(600):
        try:
            urllib.request.urlopen(base + "/", timeout=2).close()
            return server, base
        except OSError:
            time.sleep(0.1)
    server.kill()
    server.wait()
    log.seek(0)
    raise SystemExit("the server did not start: " + log.read().decode(errors="replace"))


def new_review(browser: Browser, title: str) -> int:
    status, _, headers = browser.request("POST", "/reviews/new", REVIEW_FORM | {"title": title})
    assert status == 302, status
    return int(re.search(r"/reviews/(\d+)", headers["Location"]).group(1))


def edit_version(browser: Browser, review_id: int) -> str:
    """The version a review's edit page was opened at, as a tab would send it back."""
    page = browser.request("GET", f"/reviews/{review_id}/edit")[1]
    return VERSION.search(page).group(1)


def writer(kind: str, base: str, ids: dict, series_id: int, until: threading.Event, t: Tally):
    """One tab writing in a loop. The review editors carry the version they opened: autosave
    takes the next one from each answer, a full edit opens the edit page again first."""
    browser = Browser(base)
    version = edit_version(browser, ids[kind]) if kind in ("autosave", "edit") else ""
    n = 0
    while not until.is_set():
        n += 1
        marker = f"bench-{kind}-{n}"
        if kind == "autosave":
            path = f"/reviews/{ids['autosave']}/autosave"
            form = {"summary": marker, "version": version}
        elif kind == "timeline":
            path, form = (
                f"/reviews/{ids['timeline']}/timeline",
                {"at": "2026-11-30T14:20", "text": marker},
            )
        elif kind == "edit":
            version = edit_version(browser, ids["edit"])
            path = f"/reviews/{ids['edit']}/edit"
            form = REVIEW_FORM | {"lessons": marker, "version": version}
        else:
            path, form = "/explain/save", {"series": str(series_id), "title": marker}
        started = time.perf_counter()
        try:
            status, body, _ = browser.request("POST", path, form)
        except OSError as err:
            t.error(f"{kind}: {err}")
            continue
        if status in (200, 204, 302, 303):
            t.ack(kind, marker, time.perf_counter() - started)
            found = VERSION.search(body)
            version = found.group(1) if found else version
        elif status == 409:  # refused over a newer version: answered, not lost, not an error
            t.conflict()
        else:
            text = re.sub(r"<[^>]+>|\s+", " ", body)[:160]
            t.error(f"{kind}: HTTP {status} {text}")
        time.sleep(0.05)


def reader(base: str, series: list[int], requests: int, offset: int, t: Tally) -> None:
    browser = Browser(base)
    for i in range(requests):
        sid = series[(offset + i) % len(series)]
        tolerance = TOLERANCES[(offset + i) % len(TOLERANCES)]
        started = time.perf_counter()
        try:
            status, _, _ = browser.request("GET", f"/explain?series={sid}&tolerance={tolerance}")
        except OSError as err:
            t.error(f"read: {err}")
            continue
        t.read_seconds.append(time.perf_counter() - started)
        if status != 200:
            t.error(f"read: HTTP {status}")


def lost_writes(url: str, ids: dict, t: Tally) -> list[str]:
    """Acknowledged writes the store does not hold."""
    engine = db.make_engine(url)
    lost = []
    with db.session_scope(engine, write=False) as s:
        timeline = set(
            s.scalars(select(TimelineEntry.text).where(TimelineEntry.review_id == ids["timeline"]))
        )
        lost += [m for m in t.acknowledged.get("timeline", []) if m not in timeline]
        titles = set(s.scalars(select(Explanation.title)))
        lost += [m for m in t.acknowledged.get("save", []) if m not in titles]
        for kind, column in (("autosave", "summary"), ("edit", "lessons")):
            done = t.acknowledged.get(kind, [])
            stored = getattr(s.get(Review, ids[kind]), column)
            if done and stored != done[-1]:
                lost.append(f"{kind}: stored {stored!r}, last acknowledged {done[-1]!r}")
    engine.dispose()
    return lost


def start_writers(base: str, series_id: int, until: threading.Event, t: Tally):
    setup = Browser(base)
    ids = {kind: new_review(setup, f"bench {kind}") for kind in ("autosave", "timeline", "edit")}
    threads = [
        threading.Thread(target=writer, args=(kind, base, ids, series_id, until, t))
        for kind in ("autosave", "save", "timeline", "edit")
    ]
    for thread in threads:
        thread.start()
    return ids, threads


def percentile(values: list[float], q: float) -> float:
    return float(np.percentile(values, q)) if values else float("nan")


def report(t: Tally, ids: dict, url: str, seconds: float) -> None:
    lost = lost_writes(url, ids, t)
    acked = {kind: len(v) for kind, v in t.acknowledged.items()}
    print(f"run: {seconds:.1f} s")
    print(f"acknowledged writes: {sum(acked.values())} {acked}")
    for kind, times in sorted(t.write_seconds.items()):
        print(
            f"write latency, {kind}: p50 {percentile(times, 50):.3f} s, "
            f"p95 {percentile(times, 95):.3f} s, max {max(times):.3f} s"
        )
    if t.read_seconds:
        print(
            f"reads: {len(t.read_seconds)}, p50 {statistics.median(t.read_seconds):.3f} s, "
            f"p95 {percentile(t.read_seconds, 95):.3f} s, max {max(t.read_seconds):.3f} s"
        )
    print(f"edit conflicts answered (409, nothing stored): {t.conflicts}")
    print(f"errors: {len(t.errors)}")
    for line in t.errors[:10]:
        print("  ", line)
    print(f"lost acknowledged writes: {len(lost)}")
    for line in lost[:10]:
        print("  ", line)


def run_load(args: argparse.Namespace, url: str, base: str) -> None:
    engine = db.make_engine(url)
    with db.session_scope(engine, write=False) as s:
        series = list(s.scalars(select(Series.id).order_by(Series.id)))[: args.series]
    engine.dispose()
    t, until = Tally(), threading.Event()
    started = time.perf_counter()
    ids, writers = start_writers(base, series[0], until, t)
    readers = [
        threading.Thread(target=reader, args=(base, series, args.requests, i, t))
        for i in range(args.readers)
    ]
    for thread in readers:
        thread.start()
    deadline = started + args.seconds
    for thread in readers:
        thread.join()
    time.sleep(max(0.0, deadline - time.perf_counter()))
    until.set()
    for thread in writers:
        thread.join()
    print(
        f"{args.readers} readers x {args.requests} Explain requests over {len(series)} series "
        f"x {len(TOLERANCES)} tolerances, 4 writers"
    )
    report(t, ids, url, time.perf_counter() - started)


def big_csv(path: Path, rows: int) -> None:
    hosts = 10
    per = rows // hosts
    index = pd.date_range("2026-06-01", periods=per, freq="1min", tz="UTC")
    stamps = index.strftime("%Y-%m-%dT%H:%M:%SZ")
    rng = np.random.default_rng(11)
    with path.open("w") as out:
        out.write("timestamp,metric,host,value\n")
        for h in range(hosts):
            frame = pd.DataFrame(
                {
                    "timestamp": stamps,
                    "metric": "bench.queue_depth",
                    "host": f"node-{h}",
                    "value": rng.normal(100, 5, per).round(3),
                }  # fmt: skip
            )
            frame.to_csv(out, header=False, index=False)


def run_import(args: argparse.Namespace, url: str, base: str, folder: Path) -> None:
    path = folder / "big.csv"
    big_csv(path, args.rows)
    print(f"import file: {args.rows:,} rows, {path.stat().st_size / 1e6:.0f} MB")
    t, until = Tally(), threading.Event()
    engine = db.make_engine(url)
    with db.session_scope(engine, write=False) as s:
        first_series = s.scalars(select(Series.id).order_by(Series.id)).first()
    engine.dispose()
    ids, writers = start_writers(base, first_series, until, t)
    started = time.perf_counter()
    env = {**os.environ, "PYTHONPATH": str(ROOT), "WHYFIRED_MAX_IMPORT_MB": "1000"}
    done = subprocess.run(
        [*WHYFIRED, "import", str(path), "--db", url],
        env=env,
        capture_output=True,
        text=True,
    )
    took = time.perf_counter() - started
    time.sleep(2)
    until.set()
    for thread in writers:
        thread.join()
    print(f"CLI import: exit {done.returncode} in {took:.1f} s; {done.stdout.strip()[-200:]}")
    if done.returncode:
        print(done.stderr[-2000:])
    report(t, ids, url, time.perf_counter() - started)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    sub = parser.add_subparsers(dest="mode", required=True)
    load = sub.add_parser("load", help="readers and writers together")
    load.add_argument("--readers", type=int, default=16)
    load.add_argument("--requests", type=int, default=100)
    load.add_argument("--seconds", type=float, default=60)
    load.add_argument("--series", type=int, default=4, help="distinct series read")
    imp = sub.add_parser("import", help="a CLI import while writers run")
    imp.add_argument("--rows", type=int, default=1_000_000)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory(prefix="whyfired-bench-") as tmp:
        folder = Path(tmp)
        url = build_store(folder)
        server, base = start_server(url)
        try:
            if args.mode == "load":
                run_load(args, url, base)
            else:
                run_import(args, url, base, folder)
        finally:
            server.terminate()
            server.wait(timeout=30)


if __name__ == "__main__":
    main()
