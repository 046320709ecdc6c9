"""The replay report: a rule's firings measured against the incidents a team recorded.

Definitions (the what-if sweep and the verdict use the same ones):
- A firing *overlaps* an incident when it is raised at some moment between the incident's
  start minus ``lead`` and its end. The firing's ``incident`` is the first one it overlaps;
  firings that overlap none are the ones that paged for nothing recorded.
- A rule *caught* an incident when a firing started between the incident's start minus
  ``lead`` and its end (a firing already going long before does not count); the *delay* is
  that first start minus the incident's start, negative when the rule was early.
- An incident the data does not reach is neither caught nor missed: it is out of range.
- Pages per week = firings / weeks of evaluated data. *Flapping* counts firings that start
  within ``flap_gap`` of the previous firing's end. A firing still going at the end of the
  data has ``end`` NaT and lasts, for durations and time firing, until the data ends.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from webapp.analysis._incidents import DEFAULT_LEAD, WEEK, bounds_ns, catches, incident_windows
from webapp.analysis._replay import (
    BandGrid,
    Rule,
    evaluate,
    fire_indices,
    firing_times,
    hold_samples,
    runs,
)

DEFAULT_FLAP_GAP = pd.Timedelta(hours=1)


@dataclass(frozen=True)
class ReplayReport:
    """A rule replayed over a series and measured against recorded incidents."""

    rule_text: str
    firings: pd.DataFrame  # start, end, duration, ongoing, incident (Int64, <NA> when none)
    span: tuple[pd.Timestamp, pd.Timestamp]
    step: pd.Timedelta
    weeks: float
    pages_per_week: float
    median_duration: pd.Timedelta | None
    time_raised: pd.Timedelta
    flapping: int
    inside: int
    outside: int
    busiest_12h: int
    incidents: list[dict[str, Any]] = field(default_factory=list)
    lead: pd.Timedelta = DEFAULT_LEAD
    flap_gap: pd.Timedelta = DEFAULT_FLAP_GAP

    @property
    def n_firings(self) -> int:
        return len(self.firings)

    @property
    def caught(self) -> list[int]:
        return [i["index"] for i in self.incidents if i["caught"]]

    @property
    def missed(self) -> list[int]:
        return [i["index"] for i in self.incidents if i["in_range"] and not i["caught"]]

    @property
    def median_delay(self) -> pd.Timedelta | None:
        delays = [i["delay"] for i in self.incidents if i["caught"]]
        return pd.Series(delays).median() if delays else None

    def to_dict(self) -> dict[str, Any]:
        """A JSON-able dict: timestamps as ISO 8601 strings, durations as seconds."""
        firings = [
            {
                "start": _iso(row.start),
                "end": _iso(row.end),
                "duration_seconds": _seconds(row.duration),
                "ongoing": bool(row.ongoing),
                "incident": None if pd.isna(row.incident) else int(row.incident),
            }
            for row in self.firings.itertuples(index=False)
        ]
        incidents = [
            {
                "index": i["index"],
                "start": _iso(i["start"]),
                "end": _iso(i["end"]),
                "in_range": i["in_range"],
                "caught": i["caught"],
                "first_firing": _iso(i["first_firing"]),
                "delay_seconds": _seconds(i["delay"]),
            }
            for i in self.incidents
        ]
        return {
            "rule": self.rule_text,
            "span": [_iso(self.span[0]), _iso(self.span[1])],
            "step_seconds": _seconds(self.step),
            "weeks": round(self.weeks, 4),
            "firings": firings,
            "n_firings": self.n_firings,
            "pages_per_week": round(self.pages_per_week, 4),
            "median_duration_seconds": _seconds(self.median_duration),
            "time_raised_seconds": _seconds(self.time_raised),
            "flapping": self.flapping,
            "inside": self.inside,
            "outside": self.outside,
            "busiest_12h": self.busiest_12h,
            "incidents": incidents,
            "caught": self.caught,
            "missed": self.missed,
            "median_delay_seconds": _seconds(self.median_delay),
            "lead_seconds": _seconds(self.lead),
            "flap_gap_seconds": _seconds(self.flap_gap),
        }


def _iso(ts: pd.Timestamp | None) -> str | None:
    if ts is None or pd.isna(ts):
        return None
    return ts.tz_convert("UTC").strftime("%Y-%m-%dT%H:%M:%SZ")


def _seconds(delta: pd.Timedelta | None) -> float | None:
    if delta is None or pd.isna(delta):
        return None
    return float(delta.total_seconds())


def busiest(start_ns: np.ndarray, width: pd.Timedelta) -> int:
    """The most firings that start within any window of ``width``."""
    if start_ns.size == 0:
        return 0
    upto = np.searchsorted(start_ns, start_ns + int(width.value), side="left")
    return int((upto - np.arange(start_ns.size)).max())


def replay_report(
    series: pd.Series,
    rule: Rule,
    incidents: Iterable[object] | None = None,
    flap_gap: pd.Timedelta = DEFAULT_FLAP_GAP,
    lead: pd.Timedelta = DEFAULT_LEAD,
    exclude: Iterable[object] = (),
    bands: BandGrid | None = None,
) -> ReplayReport:
    """Replay ``rule`` over ``series`` and measure it (definitions in the module docstring).

    ``exclude``: spans left out of a band rule's baselines, as in ``replay``; ``bands``: that
    rule's ``band_grid``, when the caller has built it already."""
    times, condition, step = evaluate(series, rule, exclude, bands)
    return measure(times, condition, step, rule.hold, rule.text, incidents, flap_gap, lead)


def measure(
    times: pd.DatetimeIndex,
    condition: np.ndarray,
    step: pd.Timedelta,
    hold: pd.Timedelta,
    rule_text: str,
    incidents: Iterable[object] | None = None,
    flap_gap: pd.Timedelta = DEFAULT_FLAP_GAP,
    lead: pd.Timedelta = DEFAULT_LEAD,
) -> ReplayReport:
    """The report of any rule kind from its condition at each grid time: what
    ``replay_report`` does once a rule has been checked over its grid."""
    flap_gap, lead = pd.Timedelta(flap_gap), pd.Timedelta(lead)
    if flap_gap < pd.Timedelta(0) or lead < pd.Timedelta(0):
        raise ValueError("flap_gap and lead must not be negative")
    windows = incident_windows(incidents)
    run_starts, run_ends = runs(condition)
    first_idx, end_idx = fire_indices(run_starts, run_ends, hold_samples(hold, step))
    grid_ns = times.asi8
    step_ns = int(step.value)
    data_end_ns = int(grid_ns[-1]) + step_ns
    start_ns = grid_ns[first_idx]
    ongoing = end_idx >= len(times)
    stop_ns = int(grid_ns[0]) + end_idx.astype(np.int64) * step_ns  # the data's end if ongoing

    inc_start, inc_end = bounds_ns(windows)
    incident_of = np.full(start_ns.size, -1)
    for i in range(len(windows) - 1, -1, -1):
        overlaps = (start_ns <= inc_end[i]) & (stop_ns > inc_start[i] - int(lead.value))
        incident_of[overlaps] = i
    caught, first = catches(start_ns, inc_start, inc_end, lead)

    durations = pd.to_timedelta(stop_ns - start_ns, unit="ns")
    start_times, end_times = firing_times(times, first_idx, end_idx)
    firings = pd.DataFrame(
        {
            "start": start_times,
            "end": end_times,
            "duration": durations,
            "ongoing": ongoing,
            "incident": pd.array([i if i >= 0 else None for i in incident_of], dtype="Int64"),
        }
    )
    span = (times[0], times[-1] + step)
    weeks = (span[1] - span[0]) / WEEK
    finished = durations[~ongoing]
    gaps = start_ns[1:] - stop_ns[:-1]
    report_incidents = []
    for i, (begin, finish) in enumerate(windows):
        in_range = int(begin.value) < data_end_ns and inc_end[i] >= int(grid_ns[0])
        report_incidents.append(
            {
                "index": i,
                "start": begin,
                "end": finish,
                "in_range": bool(in_range),
                "caught": bool(caught[i]),
                "first_firing": pd.Timestamp(int(first[i]), tz="UTC") if caught[i] else None,
                "delay": pd.Timedelta(int(first[i] - inc_start[i]), unit="ns")
                if caught[i]
                else None,
            }
        )
    return ReplayReport(
        rule_text=rule_text,
        firings=firings,
        span=span,
        step=step,
        weeks=float(weeks),
        pages_per_week=float(len(firings) / weeks) if weeks > 0 else math.nan,
        median_duration=finished.median() if len(finished) else None,
        time_raised=pd.Timedelta(int((stop_ns - start_ns).sum()), unit="ns"),
        flapping=int((gaps <= int(flap_gap.value)).sum()),
        inside=int((incident_of >= 0).sum()),
        outside=int((incident_of < 0).sum()),
        busiest_12h=busiest(start_ns, pd.Timedelta(hours=12)),
        incidents=report_incidents,
        lead=lead,
        flap_gap=flap_gap,
    )
