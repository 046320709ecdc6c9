"""The demo scenario: six weeks of an invented city's bus-ticketing checkout, seeded.

(Over 400 lines on purpose: the whole invented story, its series, rules, pages and
incidents, reads best in one place.)

Harbourline Transit (invented) sells bus tickets through a checkout API on six hosts,
``api-1`` .. ``api-6``. The city keeps Lisbon's wall clock (``Europe/Lisbon``: UTC+1 in
summer, UTC in winter; the clocks go back on 25 October 2026, inside the data), so daily
and weekly cycles follow local time. Six weeks of 1-minute data end on Monday
2026-11-30 06:00 UTC, the morning after the night the on-call engineer was paged.

Series (19): ``checkout.requests{host=api-N}`` (req/s), ``checkout.latency_p95{host=api-N}``
(ms), ``payment.queue_depth{host=api-N}`` (jobs) and the service-wide
``checkout.error_ratio`` (ratio). Rush hours on weekdays, quieter weekends, noisier nights,
slow growth, rare one-to-three-minute latency spikes, and gaps: a collector outage on
11 November (every series) and a shorter one on api-2 on 29 October.

What happened:
- Last night (Monday 30 November, 01:38-02:51 UTC) the payment provider slowed down:
  its callbacks backed up in the payment queues from 01:32, and from 01:38 p95 latency
  rose past a second on every host and the error ratio jumped.
- A week earlier (Tuesday 24 November, 14:12-14:58 UTC) api-4 alone went bad.
- Every Monday at 08:05 local time the weekly fare-settlement batch fills the payment
  queues for about an hour: harmless, but the queue-depth rule pages for it.
- 4-5 November, 23:00-00:30 UTC: a planned maintenance window (checkout read-only),
  recorded as an excluded period.

A third rule, proposed and not yet paging, is the workbook's burn-rate rule on the 99.9%
checkout objective, read from the error ratio.

The pages are the firings of the two paging rules replayed over the generated data, so the
pages, the rules and the data always agree. Everything is vectorised and deterministic for
a seed; ``write_demo_csv`` is the one function that touches a file.
"""

from __future__ import annotations

import hashlib
import os
import tempfile
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from webapp.analysis import WORKBOOK_WINDOWS, replay, rule_from_fields, window_fields
from webapp.imports._types import ParsedImport, Problem, SeriesMeta
from webapp.imports.keys import parse_series_key, series_key

SERVICE = "Harbourline Transit checkout"
TZ = "Europe/Lisbon"
HOSTS = tuple(f"api-{i}" for i in range(1, 7))
END = pd.Timestamp("2026-11-30 06:00", tz="UTC")
START = END - pd.Timedelta(weeks=6)
STEP = pd.Timedelta(minutes=1)

PAYMENT_SLOWDOWN = (
    pd.Timestamp("2026-11-30 01:38", tz="UTC"),
    pd.Timestamp("2026-11-30 02:51", tz="UTC"),
)
# The provider's callbacks back up in the payment queues a few minutes before checkout slows.
QUEUE_BACKLOG = (PAYMENT_SLOWDOWN[0] - pd.Timedelta(minutes=6), PAYMENT_SLOWDOWN[1])
API4_FAULT = (
    pd.Timestamp("2026-11-24 14:12", tz="UTC"),
    pd.Timestamp("2026-11-24 14:58", tz="UTC"),
)
MAINTENANCE = (
    pd.Timestamp("2026-11-04 23:00", tz="UTC"),
    pd.Timestamp("2026-11-05 00:30", tz="UTC"),
)
OUTAGE_ALL = (
    pd.Timestamp("2026-11-11 09:20", tz="UTC"),
    pd.Timestamp("2026-11-11 10:05", tz="UTC"),
)
OUTAGE_API2 = (
    pd.Timestamp("2026-10-29 03:10", tz="UTC"),
    pd.Timestamp("2026-10-29 03:25", tz="UTC"),
)
BATCH_LOCAL_START = 8 * 60 + 5  # Monday 08:05 on the city's clock, in minutes

UNITS = {
    "checkout.requests": "req/s",
    "checkout.latency_p95": "ms",
    "checkout.error_ratio": "ratio",
    "payment.queue_depth": "jobs",
}
LATENCY_RULE_KEY = series_key("checkout.latency_p95", {"host": "api-4"})
QUEUE_RULE_KEY = series_key("payment.queue_depth", {"host": "api-1"})
ERROR_RATIO_KEY = "checkout.error_ratio"


@dataclass(frozen=True)
class Demo:
    """Everything the demo database holds, as plain data (see the module docstring)."""

    parsed: ParsedImport
    rules: list[dict]
    pages: list[dict]
    incidents: list[dict]
    excluded: list[dict]
    seed: int
    tz: str = TZ
    # The payment provider's own list of its incidents, imported as a list (scope: a metric).
    incident_list: tuple[dict, ...] = ()
    list_name: str = "payment-provider-incidents.csv"

    @property
    def series_keys(self) -> list[str]:
        return sorted(self.parsed.series)

    def series(self, key: str) -> pd.Series:
        """One demo series as a float Series on a UTC index (gaps are absent samples)."""
        if key not in self.parsed.series:
            raise KeyError(f"no demo series {key!r}; the demo has {', '.join(self.series_keys)}")
        table = self.parsed.table
        rows = table[table["series_key"] == key]
        index = pd.to_datetime(rows["ts_utc"].to_numpy(), unit="ms", utc=True)
        return pd.Series(rows["value"].to_numpy(dtype=float), index=index, name=key)


def _bump(t_min: np.ndarray, start: pd.Timestamp, end: pd.Timestamp, ramp: float) -> np.ndarray:
    """0 outside [start, end), rising to 1 over ``ramp`` minutes and falling back at the end."""
    a = (start - START) / STEP
    b = (end - START) / STEP
    rise = np.clip((t_min - a) / ramp, 0.0, 1.0)
    fall = np.clip((b - t_min) / ramp, 0.0, 1.0)
    return np.where((t_min >= a) & (t_min < b), np.minimum(rise, fall), 0.0)


def _mask(t_min: np.ndarray, span: tuple[pd.Timestamp, pd.Timestamp]) -> np.ndarray:
    return (t_min >= (span[0] - START) / STEP) & (t_min < (span[1] - START) / STEP)


def _gauss(x: np.ndarray, mu: float, sd: float) -> np.ndarray:
    return np.exp(-0.5 * ((x - mu) / sd) ** 2)


def _load_shape(hour: np.ndarray, weekday: np.ndarray) -> np.ndarray:
    """Relative checkout load by local hour: two rush hours on weekdays, flatter weekends."""
    workday = (
        0.06
        + 0.95 * _gauss(hour, 8.0, 1.0)
        + 0.50 * _gauss(hour, 12.8, 2.2)
        + 0.80 * _gauss(hour, 17.6, 1.3)
        + 0.22 * _gauss(hour, 21.0, 1.8)
    )
    weekend = 0.06 + 0.45 * _gauss(hour, 11.5, 3.0) + 0.40 * _gauss(hour, 17.0, 3.0)
    weekend = weekend * np.where(weekday == 6, 0.8, 1.0)
    return np.where(weekday >= 5, weekend, workday)


def _monday_batch(local_minute_of_week: np.ndarray) -> np.ndarray:
    """Queue fill of the weekly fare-settlement batch: 0..1, rises 25 min, drains ~30 min."""
    since = local_minute_of_week - BATCH_LOCAL_START  # Monday is day 0 of the week
    rising = np.clip(since / 25.0, 0.0, 1.0)
    draining = np.exp(-np.clip(since - 50.0, 0.0, None) / 12.0)
    return np.where((since >= 0) & (since < 130), rising * draining, 0.0)


def _spikes(rng: np.random.Generator, n: int, per_day: float) -> np.ndarray:
    """Rare latency spikes of 1-3 minutes, never adjacent (one per 10-minute slot at most)."""
    out = np.zeros(n)
    slots = n // 10
    count = int(per_day * n / 1440)
    starts = rng.choice(slots, size=count, replace=False) * 10 + rng.integers(0, 5, size=count)
    lengths = rng.integers(1, 4, size=count)
    heights = rng.uniform(380.0, 850.0, size=count)
    for offset in range(3):
        hit = lengths > offset
        out[np.minimum(starts[hit] + offset, n - 1)] = heights[hit]
    return out


def _generate(seed: int) -> tuple[pd.DatetimeIndex, dict[str, np.ndarray]]:
    """Every series on the full minute grid (NaN where the collector lost data)."""
    rng = np.random.default_rng(seed)
    times = pd.date_range(START, END, freq=STEP, inclusive="left")
    n = len(times)
    t_min = np.arange(n, dtype=float)
    local = times.tz_convert(TZ)
    hour = local.hour.to_numpy() + local.minute.to_numpy() / 60.0
    weekday = local.day_of_week.to_numpy()
    minute_of_week = weekday * 1440 + local.hour.to_numpy() * 60 + local.minute.to_numpy()
    shape = _load_shape(hour, weekday)
    growth = 1.0 + 0.03 * t_min / n
    slowdown = _bump(t_min, *PAYMENT_SLOWDOWN, ramp=4.0)
    backlog = _bump(t_min, *QUEUE_BACKLOG, ramp=4.0)
    api4 = _bump(t_min, *API4_FAULT, ramp=3.0)
    maintenance = _mask(t_min, MAINTENANCE)
    batch = _monday_batch(minute_of_week)

    data: dict[str, np.ndarray] = {}
    total_requests = np.zeros(n)
    weights = (1.00, 0.97, 1.03, 0.95, 1.02, 0.99)
    for host, weight in zip(HOSTS, weights, strict=True):
        load = shape * growth * weight
        noise = rng.normal(1.0, 0.045, n)
        requests = 42.0 * load * noise
        if host == "api-4":
            requests *= 1.0 - 0.6 * api4
        requests = np.where(maintenance, requests * 0.2, requests)
        total_requests += requests

        quiet = 1.0 - np.clip(load, 0.0, 1.0)
        spread = rng.normal(0.0, 1.0, n) * (0.05 + 0.08 * quiet)
        latency = (140.0 + 90.0 * np.clip(load, 0.0, None) ** 1.5) * np.exp(spread)
        latency += 18.0 * batch + _spikes(rng, n, per_day=1.2)
        latency += slowdown * rng.uniform(1150.0, 1450.0) * rng.normal(1.0, 0.05, n)
        if host == "api-4":
            latency += api4 * 1050.0 * rng.normal(1.0, 0.06, n)

        queue = 3.0 + 12.0 * load + 255.0 * weight * batch + 55.0 * backlog
        queue = rng.poisson(np.clip(queue, 0.0, None)).astype(float)
        queue = np.where(maintenance, 0.0, queue)

        data[series_key("checkout.requests", {"host": host})] = np.round(requests, 2)
        data[series_key("checkout.latency_p95", {"host": host})] = np.round(latency, 1)
        data[series_key("payment.queue_depth", {"host": host})] = queue

    load_all = total_requests / (42.0 * len(HOSTS))
    errors = 0.0015 + 0.001 * load_all + np.abs(rng.normal(0.0, 0.0006, n))
    errors += 0.034 * slowdown + 0.011 * api4
    data["checkout.error_ratio"] = np.round(errors, 5)

    everywhere = _mask(t_min, OUTAGE_ALL)
    api2 = _mask(t_min, OUTAGE_API2)
    for key, values in data.items():
        values[everywhere] = np.nan
        if "host=api-2}" in key:
            values[api2] = np.nan
    return times, data


def _parsed(times: pd.DatetimeIndex, data: dict[str, np.ndarray], seed: int) -> ParsedImport:
    ts_ms = times.as_unit("ms").asi8
    keys, stamps, values = [], [], []
    for key in sorted(data):
        present = ~np.isnan(data[key])
        keys.append(np.full(int(present.sum()), key, dtype=object))
        stamps.append(ts_ms[present])
        values.append(data[key][present])
    table = pd.DataFrame(
        {
            "series_key": np.concatenate(keys),
            "ts_utc": np.concatenate(stamps).astype(np.int64),
            "value": np.concatenate(values).astype(np.float64),
        }
    )
    digest = hashlib.sha256(f"whyfired demo seed={seed}".encode())
    for part in (table["ts_utc"].to_numpy(), table["value"].to_numpy()):
        digest.update(part.tobytes())
    series = {}
    for key in data:
        metric, labels = parse_series_key(key)
        series[key] = SeriesMeta(metric=metric, labels=labels, unit=UNITS[metric])
    rows = len(times) * len(data)
    file_name = f"demo: {SERVICE}, six weeks of 1-minute data (seed {seed})"
    return ParsedImport(
        file_name=file_name,
        format="demo",
        sha256=digest.hexdigest(),
        size_bytes=int(table.memory_usage(deep=False).sum()),
        table=table,
        series=series,
        timestamp_unit="ms",
        naive_tz="UTC",
        rows_read=rows,
        gap_count=rows - len(table),
        problems=[
            Problem(file_name, f"no samples {_span_text(span)} on {where}", severity="warning")
            for span, where in ((OUTAGE_ALL, "any series"), (OUTAGE_API2, "the api-2 series"))
        ],
    )


def _span_text(span: tuple[pd.Timestamp, pd.Timestamp]) -> str:
    start, end = span
    return f"from {start:%Y-%m-%d %H:%M} to {end:%H:%M} UTC (collector outage)"


def _rules() -> list[dict]:
    """The alert rules as stored alert-rule fields (``series_key`` names the series): the
    two that paged, and a proposed burn-rate rule on the error ratio that pages nobody."""
    common = {
        "kind": "threshold",
        "direction": "above",
        "tolerance": None,
        "check_every_seconds": 60,
    }
    return [
        {
            **common,
            "name": "Checkout p95 latency high on api-4",
            "series_key": LATENCY_RULE_KEY,
            "metric": "checkout.latency_p95",
            "label_filter": {"host": "api-4"},
            "threshold": 800.0,
            "hold_seconds": 300,
            "description": "Riders wait at the reader when checkout p95 passes 800 ms; "
            "api-4 also serves the payment callbacks.",
        },
        {
            **common,
            "name": "Payment queue backing up on api-1",
            "series_key": QUEUE_RULE_KEY,
            "metric": "payment.queue_depth",
            "label_filter": {"host": "api-1"},
            "threshold": 150.0,
            "hold_seconds": 600,
            "description": "Meant to catch a stuck payment worker before riders notice.",
        },
        {
            "name": "Checkout error budget burning",
            "series_key": ERROR_RATIO_KEY,
            "metric": "checkout.error_ratio",
            "label_filter": {},
            "kind": "burn_rate",
            "direction": "above",
            "threshold": None,
            "tolerance": None,
            "hold_seconds": 0,
            "check_every_seconds": 60,
            "objective": 0.999,
            "period_seconds": 30 * 86400,
            "burn_windows": window_fields(WORKBOOK_WINDOWS),
            "severity": "page",
            "description": "Proposed: the workbook's burn-rate pages on the 99.9% checkout "
            "objective, tried beside the latency rule before anyone is paged by it.",
        },
    ]


def _pages(demo_series: Callable[[str], pd.Series], rules: list[dict]) -> list[dict]:
    """One page per firing of each rule replayed over its series."""
    notes = {
        LATENCY_RULE_KEY: "Acknowledged by the on-call engineer.",
        QUEUE_RULE_KEY: "Weekly fare-settlement batch; acknowledged, no action taken.",
    }
    pages = []
    for fields in rules:
        if fields["kind"] == "burn_rate":
            continue  # proposed, not paging yet
        key, rule = fields["series_key"], rule_from_fields(fields)
        for start, end in replay(demo_series(key), rule).itertuples(index=False):
            pages.append(
                {
                    "series_key": key,
                    "fired_at": start.to_pydatetime(),
                    "resolved_at": None if pd.isna(end) else end.to_pydatetime(),
                    "rule_text": f"{key} {rule.text}",
                    "rule_name": fields["name"],
                    "note": notes[key],
                }
            )
    return sorted(pages, key=lambda page: page["fired_at"])


def _incidents() -> list[dict]:
    all_latency = [series_key("checkout.latency_p95", {"host": host}) for host in HOSTS]
    return [
        {
            "title": "Checkout slow on every host: payment provider slowdown",
            "start": PAYMENT_SLOWDOWN[0].to_pydatetime(),
            "end": PAYMENT_SLOWDOWN[1].to_pydatetime(),
            "severity": "major",
            "status": "draft",
            "summary": "Night buses' ticket checkouts took over a second for about 70 minutes "
            "while the card payment provider answered slowly.",
            "impact": "About one checkout in thirty failed; riders paid cash on board.",
            "trigger": "The payment provider's authorisation calls slowed from ~150 ms to "
            "over a second.",
            "root_cause": "",
            "detection": "Paged by the api-4 latency rule five minutes after the slowdown began.",
            "resolution": "The provider recovered on its own at 02:51 UTC.",
            "lessons": "",
            "series_keys": all_latency + ["checkout.error_ratio"],
        },
        {
            "title": "api-4 slow and failing checkouts",
            "start": API4_FAULT[0].to_pydatetime(),
            "end": API4_FAULT[1].to_pydatetime(),
            "severity": "minor",
            "status": "final",
            "summary": "One checkout host ran out of database connections after a config "
            "push; its p95 latency passed a second for 46 minutes.",
            "impact": "About one checkout in a hundred failed across the service.",
            "trigger": "A configuration push halved api-4's connection pool.",
            "root_cause": "The pool size was set per deployment group, and api-4 was in the "
            "wrong group.",
            "detection": "Paged by the api-4 latency rule.",
            "resolution": "The configuration was rolled back at 14:55 UTC.",
            "lessons": "Check pool sizes in the config review.",
            "series_keys": [
                LATENCY_RULE_KEY,
                series_key("checkout.requests", {"host": "api-4"}),
                "checkout.error_ratio",
            ],
        },
    ]


def _provider_list() -> tuple[dict, ...]:
    """The payment provider's status list, as the team imports it: its slowdown of last night
    (its own, slightly wider times) on every host's checkout latency."""
    return (
        {
            "start": PAYMENT_SLOWDOWN[0] - pd.Timedelta(minutes=3),
            "end": PAYMENT_SLOWDOWN[1] + pd.Timedelta(minutes=4),
            "title": "Card payment provider: slow authorisations",
            "metric": "checkout.latency_p95",
            "labels": {},
        },
    )


def build_demo(seed: int = 7) -> Demo:
    """The whole demo scenario for ``seed`` (same seed, same data, same pages)."""
    times, data = _generate(seed)
    parsed = _parsed(times, data, seed)

    def demo_series(key: str) -> pd.Series:
        return pd.Series(data[key], index=times, name=key).dropna()

    rules = _rules()
    excluded = [
        {
            "series_key": None,
            "start": MAINTENANCE[0].to_pydatetime(),
            "end": MAINTENANCE[1].to_pydatetime(),
            "reason": "Planned maintenance: checkout read-only during the fare-table upgrade.",
        }
    ]
    return Demo(
        parsed=parsed,
        rules=rules,
        pages=_pages(demo_series, rules),
        incidents=_incidents(),
        excluded=excluded,
        seed=seed,
        incident_list=_provider_list(),
    )


def _iso(ms: np.ndarray) -> np.ndarray:
    text = np.datetime_as_string(ms.astype("datetime64[ms]"), unit="s")
    return np.char.add(text, "Z").astype(object)


def demo_csv_frame(
    demo: Demo,
    series_keys: list[str] | None = None,
    start: pd.Timestamp | str | None = None,
    end: pd.Timestamp | str | None = None,
) -> pd.DataFrame:
    """The long CSV layout of a slice: ``timestamp`` (ISO 8601, Z), ``metric``, ``host``,
    ``value``; ``host`` is empty for the service-wide series. ``end`` is exclusive."""
    table = demo.parsed.table
    keep = np.ones(len(table), dtype=bool)
    if series_keys is not None:
        unknown = sorted(set(series_keys) - set(demo.parsed.series))
        if unknown:
            raise ValueError(f"no demo series {', '.join(map(repr, unknown))}")
        keep &= table["series_key"].isin(series_keys).to_numpy()
    for bound, before in ((start, False), (end, True)):
        if bound is None:
            continue
        ts = pd.Timestamp(bound)
        ts = ts.tz_localize("UTC") if ts.tz is None else ts.tz_convert("UTC")
        ms = int(ts.value) // 1_000_000
        keep &= (table["ts_utc"] < ms).to_numpy() if before else (table["ts_utc"] >= ms).to_numpy()
    rows = table[keep]
    meta = {key: demo.parsed.series[key] for key in rows["series_key"].unique()}
    keys = rows["series_key"]
    return pd.DataFrame(
        {
            "timestamp": _iso(rows["ts_utc"].to_numpy()),
            "metric": keys.map({k: m.metric for k, m in meta.items()}).to_numpy(),
            "host": keys.map({k: m.labels.get("host", "") for k, m in meta.items()}).to_numpy(),
            "value": rows["value"].to_numpy(),
        }
    )


def write_demo_csv(
    path: str | os.PathLike,
    demo: Demo,
    series_keys: list[str] | None = None,
    start: pd.Timestamp | str | None = None,
    end: pd.Timestamp | str | None = None,
) -> Path:
    """Write a slice of the demo as a long CSV (see :func:`demo_csv_frame`); returns the path.

    The file is written beside its target and renamed into place, so it is never half
    written.
    """
    target = Path(path)
    frame = demo_csv_frame(demo, series_keys, start, end)
    fd, tmp = tempfile.mkstemp(dir=target.parent, prefix=f".{target.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "w", newline="", encoding="utf-8") as handle:
            frame.to_csv(handle, index=False)
        os.replace(tmp, target)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return target
