"""Replay a stored alert rule over all of one series' history: read the rule, the points,
the incidents and the excluded periods from the store, and fit the core's ``RuleReplay``."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import pandas as pd
from sqlalchemy.orm import Session

from webapp.analysis import RuleReplay, RuleReplayResult, rule_from_fields
from webapp.analysis.vocabulary import RULE_FIELDS
from webapp.services.band_fits import band_fit
from webapp.services.cache import Recent
from webapp.services.explain import data_version
from webapp.services.incidents import IncidentChoice, choose_incidents
from webapp.store import excluded as store_excluded
from webapp.store import series as store_series
from webapp.store.models import AlertRule

TZ = "UTC"


def matching_series(session: Session, rule: AlertRule) -> list[store_series.SeriesInfo]:
    """The stored series a rule watches: its own, or every series of its metric whose labels
    include the filter."""
    everything = store_series.list_series(session)
    if rule.series_id:
        return [s for s in everything if s.id == rule.series_id]
    wanted = (rule.label_filter or {}).items()
    return [s for s in everything if s.metric == rule.metric and wanted <= s.labels.items()]


def rule_text(rule: AlertRule) -> str:
    try:
        return analysed_rule(rule).text
    except ValueError as err:
        return f"incomplete rule: {err}"


def analysed_rule(rule: AlertRule) -> Any:
    """The core's rule for a stored alert rule (any kind); ValueError when incomplete."""
    return rule_from_fields(_fields(rule))


def _fields(rule: AlertRule) -> dict[str, Any]:
    return {name: getattr(rule, name) for name in RULE_FIELDS} | {"tz": TZ}


def firing_rows(firings: pd.DataFrame, limit: int = 500) -> list[dict[str, Any]]:
    """The first ``limit`` firings as plain values for the table (incidents numbered from 1)."""
    return [
        {
            "start": row.start,
            "end": None if row.ongoing else row.end,
            "duration": row.duration,
            "incident": None if pd.isna(row.incident) else int(row.incident) + 1,
        }
        for row in firings.head(limit).itertuples(index=False)
    ]


@dataclass(frozen=True)
class Replay:
    """Everything the replay page shows for one rule on one series."""

    series: store_series.SeriesInfo
    result: RuleReplayResult
    values: pd.Series
    choice: IncidentChoice

    @property
    def rule(self) -> Any:
        return self.result.rule

    @property
    def report(self) -> Any:
        return self.result.report

    @property
    def incidents(self) -> list[tuple[pd.Timestamp, pd.Timestamp | None]]:
        return self.result.incidents

    @property
    def sweep(self) -> pd.DataFrame:
        return self.result.sweep

    @property
    def draft(self) -> Any:
        return self.result.draft

    @property
    def grid(self) -> tuple[list[float], list[pd.Timedelta]]:
        return self.result.grid


def run_replay(
    session: Session,
    rule: AlertRule,
    info: store_series.SeriesInfo,
    grid: tuple[list[float], list[pd.Timedelta]] | None = None,
    add: list[int] | None = None,
    drop: list[int] | None = None,
) -> Replay:
    """Replay ``rule`` over all of one series' history against the incidents of its own
    scope (``webapp.services.incidents``; ``add`` and ``drop`` change the choice by incident
    id). A band rule's bands leave out the series' excluded periods, so past incidents do
    not teach the band what is expected.

    ``grid`` (thresholds, or a band rule's tolerances, and holds) replaces the default
    what-if sweep. Raises ValueError with a readable message when the rule or the data
    cannot be replayed."""
    analysed = analysed_rule(rule)
    version = (info.id, *data_version(session, info))
    values = _points.get(version, lambda: store_series.read_series(session, info.id).dropna())
    if values.empty:
        raise ValueError(f"{info.key} has no stored points to replay over")
    keys = {s.id: s.key for s in store_series.list_series(session)}
    choice = choose_incidents(session, info.id, add or (), drop or (), keys)
    exclude = store_excluded.periods_for(session, info.id)
    bands = band_fit(session, info, values, analysed, exclude)
    result = RuleReplay(values, analysed, choice.windows, exclude, grid, bands).fit()
    return Replay(info, result, values, choice)


# The points, kept by data version: replaying again (another tolerance, another sweep)
# reads nothing.
_points = Recent(4)
