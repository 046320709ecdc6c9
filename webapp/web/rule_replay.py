"""Replaying a stored alert rule over all of one series' history, with the what-if sweep
and the verdict draft, ready for the Alert rules page."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import pandas as pd
from sqlalchemy.orm import Session

from webapp.analysis import (
    BandGrid,
    BandRule,
    ThresholdRule,
    band_grid,
    band_sweep,
    draft_verdict,
    replay_report,
    rule_from_fields,
    sweep_grid,
    whatif_sweep,
)
from webapp.store import excluded as store_excluded
from webapp.store import reviews as store_reviews
from webapp.store import rules as store_rules
from webapp.store import series as store_series
from webapp.store.models import AlertRule
from webapp.web import rule_figures
from webapp.web.evidence import figure_embed

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
        return rule_from_fields(_fields(rule)).text
    except ValueError as err:
        return f"incomplete rule: {err}"


def _fields(rule: AlertRule) -> dict[str, Any]:
    return {name: getattr(rule, name) for name in store_rules.FIELDS} | {"tz": TZ}


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


INCIDENT_SCOPES = ("all", "series")


@dataclass
class Replay:
    """Everything the replay page shows for one rule on one series."""

    series: store_series.SeriesInfo
    rule: Any
    report: Any
    incidents: list[tuple[pd.Timestamp, pd.Timestamp]]
    sweep: pd.DataFrame  # whatif_sweep, or band_sweep for a band rule
    draft: Any
    figures: dict[str, str]
    grid: tuple[list[float], list[pd.Timedelta]]  # what the sweep varied
    scope: str = "all"


def run_replay(
    session: Session,
    rule: AlertRule,
    info: store_series.SeriesInfo,
    grid: tuple[list[float], list[pd.Timedelta]] | None = None,
    scope: str = "all",
) -> Replay:
    """Replay ``rule`` over all of one series' history against recorded incidents: every
    review's incident window (``scope="all"``: a rule is judged by the incidents of the
    service, not only those its own series was tied to) or only those of reviews tied to
    this series (``scope="series"``). A band rule's bands leave out the series' excluded
    periods, so past incidents do not teach the band what is expected.

    ``grid`` (thresholds, or a band rule's tolerances, and pending periods) replaces the
    default what-if sweep; the current rule's own setting is always part of it. Raises
    ValueError with a readable message when the rule or the data cannot be replayed."""
    if scope not in INCIDENT_SCOPES:
        raise ValueError(f"incidents must be one of {', '.join(INCIDENT_SCOPES)}, got {scope!r}")
    analysed = rule_from_fields(_fields(rule))
    values = store_series.read_series(session, info.id).dropna()
    if values.empty:
        raise ValueError(f"{info.key} has no stored points to replay over")
    incidents = store_reviews.incident_windows(session, None if scope == "all" else info.id)
    exclude = store_excluded.periods_for(session, info.id)
    # A band rule's daily bands are fitted once, for both the report and the sweep.
    bands = band_grid(values, analysed, exclude) if isinstance(analysed, BandRule) else None
    report = replay_report(values, analysed, incidents, exclude=exclude, bands=bands)
    sweep, used = _whatif(values, analysed, incidents, exclude, grid, bands)
    draft = draft_verdict(report, sweep, analysed)
    threshold = analysed.threshold if isinstance(analysed, ThresholdRule) else None
    drawn_band = (bands, float(analysed.tolerance)) if bands is not None else None
    replay_fig = rule_figures.replay_figure(
        values, report.firings, incidents, threshold, info.unit, TZ, band=drawn_band
    )
    figs = {"replay": figure_embed(replay_fig, "replay-figure")}
    level = rule_figures.level_column(sweep)
    current = (getattr(analysed, level), analysed.for_)
    drafted = None
    if draft.suggestion == "tune":
        drafted = (
            draft.parameters[level],
            pd.Timedelta(seconds=draft.parameters["pending_seconds"]),
        )
    figs["sweep"] = figure_embed(rule_figures.sweep_figure(sweep, current, drafted), "sweep-figure")
    return Replay(info, analysed, report, incidents, sweep, draft, figs, used, scope)


def _whatif(
    values: pd.Series,
    rule: ThresholdRule | BandRule,
    incidents: list[tuple[pd.Timestamp, pd.Timestamp]],
    exclude: list[tuple[pd.Timestamp, pd.Timestamp]],
    grid: tuple[list[float], list[pd.Timedelta]] | None,
    bands: BandGrid | None = None,
) -> tuple[pd.DataFrame, tuple[list[float], list[pd.Timedelta]]]:
    """The what-if sweep around ``rule`` and the grid it used (its own setting included)."""
    levels, pendings = grid or sweep_grid(values, rule)
    current = rule.threshold if isinstance(rule, ThresholdRule) else float(rule.tolerance)
    used = (sorted({*levels, current}), sorted({*pendings, rule.for_}))
    if isinstance(rule, BandRule):
        return band_sweep(values, rule, *used, incidents, exclude, bands=bands), used
    sweep = whatif_sweep(values, *used, incidents, direction=rule.direction, step=rule.step)
    return sweep, used
