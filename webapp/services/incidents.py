"""Which recorded incidents a replay on one series counts: by default those whose scope
covers the series (its own, or its metric and labels); the reader may add others or drop
some. Overlapping ones are merged, so two records of the same trouble count once."""

from __future__ import annotations

from collections.abc import Collection, Iterable
from dataclasses import dataclass, field
from typing import Any

import pandas as pd
from sqlalchemy.orm import Session

from webapp.analysis import merge_incidents
from webapp.store import incidents as store_incidents
from webapp.store.models import Incident, Series

SOURCE_WORDS = {"review": "review", "page": "page marked real", "list": "imported list"}


@dataclass(frozen=True)
class IncidentChoice:
    """The merged incidents a replay counts, and the recorded ones it leaves out."""

    counted: list[dict[str, Any]]
    others: list[dict[str, Any]]
    added: list[int] = field(default_factory=list)
    dropped: list[int] = field(default_factory=list)

    @property
    def windows(self) -> list[tuple[pd.Timestamp, pd.Timestamp | None]]:
        return [(i["start"], i["end"]) for i in self.counted]


def scope_text(incident: Incident, keys: dict[int, str]) -> str:
    """An incident's scope in words: a series key, or a metric with its labels."""
    if incident.series_id is not None:
        return keys.get(incident.series_id, f"series #{incident.series_id}")
    labels = ", ".join(f"{k}={v}" for k, v in sorted((incident.label_filter or {}).items()))
    return f"{incident.metric}{{{labels}}}" if labels else f"{incident.metric} (every series)"


def describe(incident: Incident, keys: dict[int, str]) -> dict[str, Any]:
    """One recorded incident as plain values for a screen: where it came from, its scope."""
    ref = {"review": incident.review_id, "page": incident.page_id}.get(incident.source)
    origin = SOURCE_WORDS[incident.source] + (f" #{ref}" if ref else "")
    if incident.source == "list" and incident.list_name:
        origin += f" ({incident.list_name})"
    return {
        "id": incident.id,
        "start": pd.Timestamp(incident.start),
        "end": None if incident.end is None else pd.Timestamp(incident.end),
        "title": incident.title,
        "source": incident.source,
        "review_id": incident.review_id,
        "origin": origin,
        "scope": scope_text(incident, keys),
    }


def choose_incidents(
    session: Session,
    series_id: int,
    add: Iterable[int] = (),
    drop: Iterable[int] = (),
    keys: dict[int, str] | None = None,
) -> IncidentChoice:
    """The incidents a replay over ``series_id`` counts: those of its scope, plus ``add``,
    minus ``drop`` (recorded incident ids; an id in both is counted), merged where they
    overlap."""
    series = session.get(Series, series_id)
    if series is None:
        raise ValueError(f"there is no series #{series_id}")
    keys = keys if keys is not None else {series.id: series.key}
    everything = store_incidents.list_incidents(session)
    own = {i.id for i in store_incidents.incidents_for_series(session, series)}
    wanted = {int(i) for i in add}
    added = sorted(wanted - own)
    dropped = sorted({int(i) for i in drop} - wanted)
    chosen = (own | set(added)) - set(dropped)
    counted = merge_incidents(describe(i, keys) for i in everything if i.id in chosen)
    others = [describe(i, keys) for i in everything if i.id not in chosen]
    return IncidentChoice(counted, others, added, dropped)


def ids_from(values: Collection[str]) -> list[int]:
    """Incident ids from query parameters, ignoring anything that is not a number."""
    return [int(v) for v in values if str(v).strip().isdigit()]
