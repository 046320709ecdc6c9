"""Benchmark: exporting the demo's reviews, from the web and from the command line.

Bars: the Markdown export of a demo review within 2 s, both as the web download (the zip of
the Markdown file and its SVG figures) and as ``whyfired export review ID --format md -o
DIR/`` in a fresh process (start-up, imports and database included); the HTML export at
most 1.5 MB. Neither needs a browser: the figures are written as SVG by whyfired itself.

Builds the invented demo (seed 7) into a temporary SQLite file once. The web figure is the
median of ``--runs`` downloads through Flask's test client after one untimed request; the
command-line figure is the median of ``--runs`` fresh processes, wall-clock time and the
CPU time the process used (on a busy machine the wall-clock time waits for a core; the CPU
time does not); the load average is printed beside them.

    python benchmarks/bench_export.py [--runs 3]
"""

from __future__ import annotations

import argparse
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from benchmarks.bench_pages import build_demo_store  # noqa: E402

MD_BAR = 2.0
HTML_BAR = 1_500_000
CLI = "import sys; sys.path.insert(0, {root!r}); from webapp.cli import main; main()"


def review_ids(url: str) -> list[int]:
    from sqlalchemy import select

    from webapp.store import db
    from webapp.store.models import Review

    engine = db.make_engine(url)
    with db.session_scope(engine, write=False) as s:
        ids = list(s.scalars(select(Review.id).order_by(Review.id)))
    engine.dispose()
    return ids


def web_export(url: str, review_id: int, fmt: str, runs: int) -> tuple[float, int]:
    from webapp import create_app

    client = create_app({"DATABASE_URL": url}).test_client()
    path = f"/reviews/{review_id}/export.{fmt}"
    response = client.get(path)
    assert response.status_code == 200, (path, response.status_code)
    times = []
    for _ in range(runs):
        t0 = time.perf_counter()
        client.get(path)
        times.append(time.perf_counter() - t0)
    return statistics.median(times), len(response.data)


def _children_cpu() -> float:
    usage = resource.getrusage(resource.RUSAGE_CHILDREN)
    return usage.ru_utime + usage.ru_stime


def cli_export(url: str, review_id: int, folder: Path, runs: int) -> tuple[float, float]:
    """Median wall-clock and CPU seconds of ``whyfired export review`` in a new process."""
    command = [sys.executable, "-c", CLI.format(root=str(ROOT))]
    args = ["export", "review", str(review_id), "--format", "md", "-o", f"{folder}/"]
    walls, cpus = [], []
    for _ in range(runs):
        t0, c0 = time.perf_counter(), _children_cpu()
        done = subprocess.run([*command, *args, "--db", url], capture_output=True, text=True)
        walls.append(time.perf_counter() - t0)
        cpus.append(_children_cpu() - c0)
        if done.returncode != 0 or "Traceback" in done.stderr + done.stdout:
            raise SystemExit(f"the export failed:\n{done.stdout}{done.stderr}")
    return statistics.median(walls), statistics.median(cpus)


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=3)
    args = parser.parse_args()
    failed = False
    with tempfile.TemporaryDirectory() as tmp:
        url = f"sqlite:///{Path(tmp) / 'demo.sqlite'}"
        build_demo_store(url)
        print(f"load average: {' '.join(f'{x:.1f}' for x in os.getloadavg())}")
        print(f"{'review':>6}  {'md web':>8}  {'md CLI':>8}  {'CLI cpu':>8}  {'html size':>10}")
        for review_id in review_ids(url):
            md_web, _ = web_export(url, review_id, "zip", args.runs)
            _, html_size = web_export(url, review_id, "html", 1)
            folder = Path(tmp) / f"out-{review_id}"
            md_cli, md_cpu = cli_export(url, review_id, folder, args.runs)
            ok = max(md_web, md_cli) <= MD_BAR and html_size <= HTML_BAR
            failed |= not ok
            print(
                f"{review_id:>6}  {md_web:>7.2f}s  {md_cli:>7.2f}s  {md_cpu:>7.2f}s"
                f"  {html_size / 1e6:>8.2f}MB  {'ok' if ok else 'OVER THE BAR'}"
            )
    print(f"bars: Markdown export <= {MD_BAR:g} s (web and CLI), HTML <= {HTML_BAR / 1e6:g} MB")
    return 1 if failed else 0


if __name__ == "__main__":
    raise SystemExit(main())
