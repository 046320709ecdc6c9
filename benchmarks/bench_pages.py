"""Benchmark: every screen of the demo, on the first request after start and warm.

Bars (the web screens): each screen within 0.5 s on the first request after the app
starts, and within 0.3 s warm (median of ``--runs``).

Builds the invented demo (``whyfired demo``'s scenario, seed 7) into a temporary SQLite
file once. "First request" runs in a fresh Python process per screen, which creates the
app, starts the warm start as ``serve`` does (``webapp.warmup``), and times its first
request to that screen twice over: "at once" asks while the warm start is still running
(the worst case: someone clicking the instant the address is printed), "after warm start"
asks once it has finished (a few seconds after start; the table says how long it took).
The bar applies to the latter. The first requests come before anything else has asked,
so the first warm start finds no band fit kept in the store and fits those of the paged
rules (``webapp.services.rule_kinds.fit_ahead``); later processes read them, as a
restarted server or another worker does. The demo store gets one band rule besides the
demo's own (the demo has none), for its replay screen. "Warm" then asks every screen
``--runs`` times in one process after one untimed request each.
Requests go through Flask's test client (no network, no WSGI server) and follow redirects.

    python benchmarks/bench_pages.py [--runs 5]
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

WARM_BAR = 0.3
FIRST_BAR = 0.5

FIRST_REQUEST = """
import sys, time
sys.path.insert(0, {root!r})
from webapp import create_app
from webapp.warmup import warm_in_background
app = create_app({{"DATABASE_URL": {url!r}}})
t0 = time.perf_counter()
warming = warm_in_background(app)
if {after_warm!r}:
    warming.join()
warmed = time.perf_counter() - t0
client = app.test_client()
t0 = time.perf_counter()
response = client.get({path!r}, follow_redirects=True)
elapsed = time.perf_counter() - t0
print(response.status_code, elapsed, warmed)
"""


def screens(url: str) -> list[tuple[str, str]]:
    """(name, path) of every screen, with ids taken from the demo store."""
    from sqlalchemy import select

    from webapp.store import db
    from webapp.store.models import AlertRule, Explanation, Page, Review, Series

    engine = db.make_engine(url)
    with db.session_scope(engine) as s:
        series = s.scalars(select(Series.id).order_by(Series.id)).first()
        rule = s.scalars(select(AlertRule.id).order_by(AlertRule.id)).first()
        page = s.scalars(select(Page.id).order_by(Page.id)).first()
        review = s.scalars(select(Review.id).order_by(Review.id)).first()
        saved = s.scalars(select(Explanation.id).order_by(Explanation.id)).first()
        rules = {r.kind: r.id for r in s.scalars(select(AlertRule).order_by(AlertRule.id))}
        first_page = s.get(Page, page)
        paged = first_page.series_id
        start = first_page.fired_at.strftime("%Y-%m-%dT%H:%M")
        end = (first_page.resolved_at or first_page.fired_at).strftime("%Y-%m-%dT%H:%M")
        metric = s.scalars(select(Series.metric).where(Series.id == paged)).one()
    engine.dispose()
    return [
        ("home", "/"),
        ("series list", "/series"),
        ("explain (a series' last day)", f"/explain?series={series}"),
        ("a series", f"/series/{series}"),
        ("explain a page", f"/pages/{page}/explain"),
        ("peers of a page's series", f"/explain/peers?series={paged}"),
        (
            "a fleet aggregate",
            f"/explain/aggregate?metric={metric}&how=p95&start={start}&end={end}",
        ),
        ("screening a page's window", f"/screening?page={page}"),
        ("incidents", "/incidents"),
        ("saved explanations", "/explanations"),
        ("a saved explanation", f"/explanations/{saved}"),
        ("imports", "/imports"),
        ("pages", "/pages"),
        ("alert rules", "/rules"),
        ("an alert rule", f"/rules/{rule}"),
        ("replay of a rule", f"/rules/{rule}/replay"),
        ("replay of a burn-rate rule", f"/rules/{rules['burn_rate']}/replay"),
        ("replay of a band rule", f"/rules/{rules['band']}/replay"),
        ("rule kinds side by side (band rule included)", f"/rules/{rule}/kinds"),
        ("new rule form", "/rules/new"),
        ("reviews", "/reviews"),
        ("a review", f"/reviews/{review}"),
        ("editing a review", f"/reviews/{review}/edit"),
        ("new review form", "/reviews/new"),
    ]


def build_demo_store(url: str) -> None:
    """The demo, plus a band rule on the first rule's series (the demo has none)."""
    from sqlalchemy import select

    from webapp.demo import build_demo
    from webapp.services.demo import load_demo
    from webapp.store import db, rules
    from webapp.store.models import AlertRule

    engine = db.make_engine(url)
    db.upgrade(engine)
    with db.session_scope(engine) as session:
        load_demo(session, build_demo(seed=7))
        first = session.scalars(select(AlertRule).order_by(AlertRule.id)).first()
        rules.create_rule(
            session,
            name=f"{first.name}: outside its band",
            series_id=first.series_id,
            kind="band",
            direction="above",
            tolerance=3.5,
            hold_seconds=600,
        )
    engine.dispose()


def first_request(url: str, path: str, after_warm: bool) -> tuple[int, float, float]:
    """(status, seconds of the first request, seconds the warm start took before it)."""
    code = FIRST_REQUEST.format(root=str(ROOT), url=url, path=path, after_warm=after_warm)
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    done = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, env=env, check=True
    )
    status, elapsed, warmed = done.stdout.split()[-3:]
    return int(status), float(elapsed), float(warmed)


def warm_requests(url: str, paths: list[str], runs: int) -> dict[str, tuple[int, float]]:
    from webapp import create_app

    client = create_app({"DATABASE_URL": url}).test_client()
    out = {}
    for path in paths:
        status = client.get(path, follow_redirects=True).status_code
        times = []
        for _ in range(runs):
            t0 = time.perf_counter()
            client.get(path, follow_redirects=True)
            times.append(time.perf_counter() - t0)
        out[path] = (status, statistics.median(times))
    return out


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=5)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        url = f"sqlite:///{Path(tmp) / 'demo.sqlite'}"
        t0 = time.perf_counter()
        build_demo_store(url)
        print(f"demo store built in {time.perf_counter() - t0:.0f} s")
        listed = screens(url)
        firsts = []  # before anything else asks: the store keeps no band fit yet
        for _name, path in listed:
            _, at_once, _ = first_request(url, path, after_warm=False)
            firsts.append((at_once, *first_request(url, path, after_warm=True)))
        warm = warm_requests(url, [path for _, path in listed], args.runs)
    rows = [
        (name, status, at_once, first, warmed, warm[path][1])
        for (name, path), (at_once, status, first, warmed) in zip(listed, firsts, strict=True)
    ]
    width = max(len(name) for name, *_ in rows)
    print(
        f"{'screen':<{width}}  status  first at once  first after warm start (bar {FIRST_BAR})"
        f"  warm median (bar {WARM_BAR})  warm start took"
    )
    ok = True
    for name, status, at_once, first, warmed, warm_s in rows:
        met = status == 200 and first <= FIRST_BAR and warm_s <= WARM_BAR
        ok &= met
        print(
            f"{name:<{width}}  {status:>6}  {at_once:>10.3f} s  {first:>18.3f} s {'':>9}"
            f"  {warm_s:>8.3f} s {'':>9} {warmed:>6.1f} s   {'' if met else 'MISSED'}"
        )
    print("bars met" if ok else "BAR MISSED")
    return 0 if ok else 1


if __name__ == "__main__":
    raise SystemExit(main())
