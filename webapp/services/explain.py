"""Explain a series, alone or beside its peers: the evidence behind an Explain screen, live or
frozen, and the peer comparison of its Peers panel.

Live evidence is computed from the store (and kept in a small cache, so zooming in and
saving do not recompute); frozen evidence is read back from a saved explanation and is
never recomputed. The screen draws its panels from it (``webapp.web.charts.evidence``).
"""

from __future__ import annotations

import logging
from collections import Counter
from collections.abc import Sequence
from dataclasses import dataclass, field, replace
from typing import Any

import pandas as pd
from sqlalchemy.orm import Session

from webapp.analysis import compare_peers, explain, past_weeks_overlay
from webapp.analysis.times import local_time
from webapp.services.cache import Recent
from webapp.store import explanations as store_explanations
from webapp.store import imports as store_imports
from webapp.store import series as store_series

log = logging.getLogger(__name__)

Span = tuple[pd.Timestamp, pd.Timestamp]

CACHE_SIZE = 6


def format_span(span: Span) -> str:
    return f"{span[0].isoformat()}/{span[1].isoformat()}"


@dataclass(frozen=True)
class ExplainQuery:
    """Everything that decides one explanation, as read from the request."""

    series_id: int
    window: Span
    tolerance: float
    weeks: int
    tz: str
    exclude: tuple[Span, ...] = field(default=())
    page_id: int | None = None
    second: int | None = None  # a second stored series laid over the band, on its own axis

    @property
    def history(self) -> pd.Timedelta:
        return pd.Timedelta(weeks=self.weeks)

    def args(self) -> dict[str, Any]:
        """The query string that reproduces this explanation (for links and hx-push-url)."""
        args: dict[str, Any] = {
            "series": self.series_id,
            "start": self.window[0].isoformat(),
            "end": self.window[1].isoformat(),
            "tolerance": f"{self.tolerance:g}",
            "weeks": self.weeks,
            "tz": self.tz,
        }
        if self.exclude:
            args["exclude"] = [format_span(s) for s in self.exclude]
        if self.page_id is not None:
            args["page"] = self.page_id
        if self.second is not None:
            args["second"] = self.second
        return args

    def options(self) -> dict[str, Any]:
        """The core's options for this query: window, history, tolerance and time zone."""
        return {
            "window": self.window,
            "history": self.history,
            "tolerance": self.tolerance,
            "tz": self.tz,
        }

    def with_window(self, window: Span) -> ExplainQuery:
        return replace(self, window=window)


@dataclass(frozen=True)
class Second:
    """A second series drawn over the band figure on its own axis (requests over latency)."""

    key: str
    unit: str | None
    values: pd.Series


@dataclass
class Evidence:
    """What the panels draw from; ``errors`` maps a panel (or "explain") to a message."""

    series_key: str
    unit: str | None
    tz: str
    frame: pd.DataFrame | None = None
    overlay: pd.DataFrame | None = None
    facts: dict[str, Any] = field(default_factory=dict)
    summary: list[str] = field(default_factory=list)
    parameters: dict[str, Any] = field(default_factory=dict)
    engine_version: str = ""
    confidence: str | None = None
    explanation: Any = None  # the live analysis result, kept for "save explanation"
    errors: dict[str, str] = field(default_factory=dict)
    marks: list[tuple[pd.Timestamp, str]] = field(default_factory=list)
    second: Second | None = None
    # The panels drawn from it, kept with it: cached evidence is drawn once, not per request.
    drawn: dict[str, Any] | None = field(default=None, repr=False, compare=False)


_explanations = Recent(CACHE_SIZE)
_comparisons = Recent(4)
_points = Recent(2)  # moving a control re-explains without reading the points again


def imports_version(session: Session) -> tuple:
    """Changes whenever an import is recorded or undone, in whichever database."""

    ids = [row.id for row in store_imports.list_imports(session)]
    return (
        session.get_bind().url.render_as_string(hide_password=True),
        len(ids),
        max(ids, default=0),
    )


def data_version(session: Session, series: Any) -> tuple:
    """Changes whenever the series' stored points or the imports change; the same for a
    ``Series`` row and its ``SeriesInfo``."""
    return (*imports_version(session), *_figures(series))


def _figures(series: Any) -> tuple:
    """Point count, first and last time (UTC epoch ms) of a ``Series`` or a ``SeriesInfo``."""
    if hasattr(series, "point_count"):
        return series.point_count, series.first_ts, series.last_ts
    ms = [None if t is None else int(t.value // 1_000_000) for t in (series.first, series.last)]
    return (series.n_points, *ms)


def live_evidence(
    session: Session, series: Any, query: ExplainQuery, stored_exclusions: Sequence[Span]
) -> Evidence:

    exclude = tuple(query.exclude) + tuple(stored_exclusions)
    version = data_version(session, series)
    start, end = query.window[0] - query.history, query.window[1]
    values = _points.get(
        (series.id, version, start, end),
        lambda: store_series.read_series(session, series.id, start, end),
    )

    def build() -> Evidence:
        evidence = _compute(series, values, query, list(exclude))
        if query.second is not None:
            add_second(session, evidence, query.second, start, end)
        return evidence

    return _explanations.get((series.id, version, query, exclude), build)


def add_second(
    session: Session, evidence: Evidence, series_id: int, start: pd.Timestamp, end: pd.Timestamp
) -> None:
    """Read the second series over the same span into the evidence (or say why not)."""
    row = store_series.get_series(session, series_id)
    if row is None:
        evidence.errors["second"] = f"There is no series #{series_id} to lay over the band."
        return
    values = store_series.read_series(session, row.id, start, end)
    if values.dropna().empty:
        evidence.errors["second"] = f"{row.key} has no points in this span to lay over the band."
        return
    evidence.second = Second(key=row.key, unit=row.unit, values=values)


def _compute(series: Any, values: pd.Series, query: ExplainQuery, exclude: list[Span]) -> Evidence:
    if values.dropna().empty:
        evidence = Evidence(series_key=series.key, unit=series.unit, tz=query.tz)
        evidence.errors["explain"] = no_data_message(series, query)
        return evidence
    return compute_evidence(series.key, series.unit, values, query, exclude)


def compute_evidence(
    key: str, unit: str | None, values: pd.Series, query: ExplainQuery, exclude: list[Span]
) -> Evidence:
    """The evidence of `values` (a stored series' points, or a series made from several)
    around the query's window."""
    evidence = Evidence(series_key=key, unit=unit, tz=query.tz)
    if values.dropna().empty:
        evidence.errors["explain"] = f"{key} has no data in the window or the history before it."
        return evidence
    try:
        exp = explain(values, **query.options(), exclude=exclude, unit=unit or "")
    except ValueError as error:
        evidence.errors["explain"] = f"{key}: {error}"
        return evidence
    evidence.explanation = exp
    evidence.frame = exp.frame
    evidence.facts = dict(exp.facts)
    evidence.summary = list(exp.summary)
    evidence.parameters = dict(exp.parameters)
    evidence.engine_version = exp.engine_version
    evidence.confidence = getattr(exp, "confidence", None)
    try:
        evidence.overlay = past_weeks_overlay(
            values, window=query.window, weeks=query.weeks, tz=query.tz
        )
    except ValueError as error:
        evidence.errors["overlay"] = str(error)
    return evidence


def no_data_message(series: Any, query: ExplainQuery) -> str:
    start, end = query.window[0] - query.history, query.window[1]
    message = (
        f"{series.key} has no data from {local_time(start, query.tz)} to "
        f"{local_time(end, query.tz, True)} (the window and its {query.weeks} weeks of history)."
    )
    if series.first_ts is not None and series.last_ts is not None:
        message += (
            f" Its data runs from {local_time(series.first_ts, query.tz)} to "
            f"{local_time(series.last_ts, query.tz, True)}; choose a window inside that."
        )
    return message


def frozen_evidence(row: Any, unit: str | None) -> Evidence:
    """Evidence read back from a saved explanation, exactly as it was saved."""

    parameters = dict(row.parameters or {})
    evidence = Evidence(
        series_key=row.series_key,
        unit=unit,
        tz=str(parameters.get("tz") or "UTC"),
        facts=dict(row.facts or {}),
        summary=list(row.summary or []),
        parameters=parameters,
        engine_version=row.engine_version,
        confidence=(row.facts or {}).get("confidence"),
    )
    try:
        evidence.frame = store_explanations.load_frame(row)
    except Exception as error:  # a damaged stored frame must not take the page down
        log.exception("stored frame of explanation %s unreadable", row.id)
        evidence.errors["explain"] = f"The stored frame of this explanation is unreadable: {error}"
    try:
        evidence.overlay = store_explanations.load_overlay(row)
    except Exception as error:
        evidence.errors["overlay"] = f"The stored past-weeks overlay is unreadable: {error}"
    return evidence


def saved_header(row: Any) -> dict[str, Any]:
    """What a saved explanation's data download carries beside its frame: where it came
    from, its parameters and engine, its facts and sentences, and the peer comparison and
    screening saved with it."""
    return {
        "saved_explanation": row.id,
        "series": row.series_key,
        "window": [row.window_start.isoformat(), row.window_end.isoformat()],
        "engine_version": row.engine_version,
        **(row.parameters or {}),
        "facts": row.facts or {},
        "summary": row.summary or [],
        "peers": row.peers,
        "screening": row.screening,
    }


@dataclass(frozen=True)
class Peers:
    """The stored series of the group: the target's row plus its peers, and the label
    they differ in."""

    label: str
    rows: dict[str, Any]  # series key -> SeriesInfo, the target included
    names: dict[str, str]  # series key -> the differing label's value


def find_peers(session: Session, series: Any) -> Peers | None:
    """The series of the same metric whose labels differ from `series` in exactly one
    label. When peers differ in different labels (some in host, some in region), the label
    shared by most of them wins (ties by name). None when there are no peers."""
    mine = dict(series.labels or {})
    if not mine:
        return None
    candidates = [
        row
        for row in store_series.list_series(session, q=series.metric)
        if row.metric == series.metric and row.id != series.id and set(row.labels) == set(mine)
    ]
    by_label: dict[str, list[Any]] = {}
    for row in candidates:
        differing = [k for k in mine if row.labels[k] != mine[k]]
        if len(differing) == 1:
            by_label.setdefault(differing[0], []).append(row)
    if not by_label:
        return None
    counts = Counter({label: len(rows) for label, rows in by_label.items()})
    label = min(counts, key=lambda k: (-counts[k], k))
    rows = {series.key: series, **{row.key: row for row in by_label[label]}}
    names = {key: str((row.labels or {}).get(label, key)) for key, row in rows.items()}
    return Peers(label=label, rows=rows, names=names)


def compare_with_peers(
    session: Session, series: Any, query: ExplainQuery, peers: Peers, exclude: list
) -> Any:
    """The series and its peers explained side by side over the query's window (cached).
    The series' own explanation comes from the Explain screen's when it is at hand (the
    panel loads right after it), so it is not fitted twice."""

    version = (*imports_version(session), tuple(sorted(peers.rows)))
    start = query.window[0] - query.history
    shown = _explanations.peek((series.id, data_version(session, series), query, tuple(exclude)))

    def build() -> Any:
        points = {
            key: store_series.read_series(session, row.id, start, query.window[1])
            for key, row in peers.rows.items()
        }
        return compare_peers(
            series.key,
            points,
            **query.options(),
            exclude=exclude,
            unit=series.unit or "",
            names=peers.names,
            label=peers.label,
            labels={key: dict(row.labels or {}) for key, row in peers.rows.items()},
            target_explanation=shown.explanation if shown is not None else None,
        )

    return _comparisons.get((series.id, version, query, tuple(exclude)), build)
