"""Screen the store for one window: which stored series left their expected bands there, and
in what order (``webapp.analysis.screen``).

The series screened are every stored series, or those whose key holds every word of a filter
(``payment host=api-1``, as on the Series screen). Results are kept in a small cache keyed by
the data version (the imports), the series screened and the parameters, so the Screening
screen, its downloads and saving an explanation share one computation. Stored excluded
periods that apply to every series are left out of every series' history.

A saved explanation keeps its screening and its peer comparison as the JSON of their data
downloads (`frozen`), so they reopen as saved after the data changes.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from typing import Any

import pandas as pd
from sqlalchemy.orm import Session

from webapp.analysis import ScreenResult, screen, to_json
from webapp.analysis.times import to_utc
from webapp.services.cache import Recent
from webapp.services.explain import (
    ExplainQuery,
    Span,
    compare_with_peers,
    find_peers,
    imports_version,
)
from webapp.store import excluded as store_excluded
from webapp.store import series as store_series

MAX_SERIES = 2000  # more than this is refused with a message: narrow the filter


@dataclass(frozen=True)
class ScreenQuery:
    """Everything that decides one screening, as read from the request."""

    window: Span
    tolerance: float
    weeks: int
    tz: str
    filter: str = ""
    page_id: int | None = None

    @property
    def history(self) -> pd.Timedelta:
        return pd.Timedelta(weeks=self.weeks)

    def args(self) -> dict[str, Any]:
        """The query string that reproduces this screening."""
        args: dict[str, Any] = {
            "start": self.window[0].isoformat(),
            "end": self.window[1].isoformat(),
            "tolerance": f"{self.tolerance:g}",
            "weeks": self.weeks,
            "tz": self.tz,
        }
        if self.filter:
            args["filter"] = self.filter
        if self.page_id is not None:
            args["page"] = self.page_id
        return args


@dataclass(frozen=True)
class Screening:
    """A screening and the stored series behind its keys (for links to their explanations)."""

    query: ScreenQuery
    result: ScreenResult
    ids: dict[str, int]  # series key -> series id
    units: dict[str, str]  # series key -> unit


class NothingToScreen(ValueError):
    """No stored series match, or too many do; the message says which and what to do."""


_screenings = Recent(4)


def run_screening(session: Session, query: ScreenQuery) -> Screening:
    """Screen the stored series the query names over its window (cached); raises
    NothingToScreen or ValueError with a message for the screen."""
    rows = [r for r in store_series.list_series(session, q=query.filter) if r.n_points]
    if not rows:
        where = f" whose key holds {query.filter!r}" if query.filter else ""
        raise NothingToScreen(f"There are no stored series{where} to screen.")
    if len(rows) > MAX_SERIES:
        raise NothingToScreen(
            f"{len(rows)} series match; screen at most {MAX_SERIES} at once: narrow the filter "
            "(every word must appear in the series key, such as a metric or host=api-3)."
        )
    exclude = everywhere_excluded(session)
    version = (*imports_version(session), tuple((r.id, r.n_points, r.last) for r in rows))

    def build() -> Screening:
        start, end = query.window[0] - query.history, query.window[1]
        points = {r.key: store_series.read_series(session, r.id, start, end) for r in rows}
        result = screen(
            points,
            query.window,
            history=query.history,
            tolerance=query.tolerance,
            exclude=exclude,
            tz=query.tz,
        )
        return Screening(
            query=query,
            result=result,
            ids={r.key: r.id for r in rows},
            units={r.key: r.unit or "" for r in rows},
        )

    return _screenings.get((version, tuple(exclude), query), build)


def everywhere_excluded(session: Session) -> list[Span]:
    """The stored excluded periods that apply to every series (a maintenance window): left
    out of every screened series' history."""
    return [
        (to_utc(row.start), to_utc(row.end))
        for row in store_excluded.list_excluded(session)
        if row.series_id is None
    ]


def frozen(result: Any, parameters: dict[str, Any] | None = None) -> dict[str, Any]:
    """A result as it is kept with a saved explanation: the JSON object of its data download
    (kind, versions, parameters, facts, sentences, rows), read back without the analysis."""
    return json.loads(to_json(result, parameters))


@dataclass(frozen=True)
class FrozenExtras:
    """What a saved explanation keeps beside its own evidence; None where there was none."""

    peers: dict[str, Any] | None
    screening: dict[str, Any] | None


def extras_to_freeze(
    session: Session, series: Any, query: ExplainQuery, exclude: list[Span], screen_too: bool
) -> FrozenExtras:
    """The peer comparison of the series and (when asked) the screening of every stored
    series over the same window and parameters, as they will be kept. One that cannot be
    computed is left out, never stopping the save."""
    peers = None
    group = find_peers(session, series)
    if group is not None:
        try:
            comparison = compare_with_peers(session, series, query, group, exclude)
            peers = frozen(comparison, {"label": group.label})
        except ValueError:
            peers = None
    screening = None
    if screen_too:
        screen_query = ScreenQuery(
            window=query.window, tolerance=query.tolerance, weeks=query.weeks, tz=query.tz
        )
        try:
            screening = frozen(run_screening(session, screen_query).result)
        except ValueError:
            screening = None
    return FrozenExtras(peers=peers, screening=screening)
