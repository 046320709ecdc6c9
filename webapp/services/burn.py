"""Replay a stored burn-rate rule over the stored history of its events: the error-ratio
series, or the good/total pair of event counts, against the recorded incidents."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import pandas as pd
from sqlalchemy.orm import Session

from webapp.analysis import (
    BurnRateRule,
    EventGrid,
    ReplayReport,
    budget_spent,
    burn_rates,
    burn_report,
    burn_sweep,
    burn_sweep_grid,
    event_grid,
)
from webapp.services.incidents import choose_incidents
from webapp.services.replay import analysed_rule
from webapp.store import series as store_series
from webapp.store.models import AlertRule

#: What a burn-rate what-if sweep varies: factors and (long, short) window pairs.
BurnGrid = tuple[list[float], list[tuple[pd.Timedelta, pd.Timedelta]]]


@dataclass(frozen=True)
class BurnReplay:
    """Everything the replay page shows for one burn-rate rule."""

    series: store_series.SeriesInfo  # the error ratio, or the total events of a pair
    good: store_series.SeriesInfo | None  # the good events of a pair
    rule: BurnRateRule
    events: EventGrid
    values: pd.Series  # what the replay figure draws: the error ratio per check
    report: ReplayReport
    budget: pd.Series  # share of the period's budget spent at each check
    rates: pd.DataFrame  # burn rate per window at each check
    sweep: pd.DataFrame
    grid: BurnGrid
    incidents: list[tuple[pd.Timestamp, pd.Timestamp | None]]

    @property
    def current(self) -> tuple[float, str]:
        """The rule's first condition as a point of the sweep: (factor, window pair)."""
        first = self.rule.conditions[0]
        return (first.factor, first.label)


def read_events(session: Session, rule: AlertRule, info: store_series.SeriesInfo) -> Any:
    """The rule's events as the core reads them: an error-ratio Series, or a (good, total)
    pair of event-count Series when the rule names its good events."""
    total = store_series.read_series(session, info.id).dropna()
    if total.empty:
        raise ValueError(f"{info.key} has no stored points to replay over")
    if rule.good_series_id is None:
        return total
    good = store_series.read_series(session, rule.good_series_id).dropna()
    if good.empty:
        raise ValueError("the rule's good-events series has no stored points")
    return (good, total)


def run_burn_replay(
    session: Session,
    rule: AlertRule,
    info: store_series.SeriesInfo,
    grid: tuple[Sequence[float], Sequence[tuple[pd.Timedelta, pd.Timedelta]]] | None = None,
    add: Sequence[int] = (),
    drop: Sequence[int] = (),
) -> BurnReplay:
    """Replay a burn-rate rule over all its stored events: firings, report, budget spent,
    burn rates and the what-if sweep over factors x window pairs (``grid``; the default is
    ``burn_sweep_grid``'s). Raises ValueError with a readable message."""
    analysed = analysed_rule(rule)
    if not isinstance(analysed, BurnRateRule):
        raise ValueError(f"{rule.name!r} is a {rule.kind} rule, not a burn-rate rule")
    events = event_grid(read_events(session, rule, info), analysed.check_every)
    keys = {s.id: s.key for s in store_series.list_series(session)}
    incidents = choose_incidents(session, info.id, add, drop, keys).windows
    factors, pairs = grid or burn_sweep_grid(analysed)
    used = (
        sorted({*factors, *(w.factor for w in analysed.conditions)}),
        list(dict.fromkeys([*pairs, *((w.long, w.short) for w in analysed.conditions)])),
    )
    with_data = events.total > 0
    ratio = pd.Series(events.bad[with_data] / events.total[with_data], events.times[with_data])
    good = store_series.get_series(session, rule.good_series_id) if rule.good_series_id else None
    return BurnReplay(
        series=info,
        good=store_series.info(good) if good is not None else None,
        rule=analysed,
        events=events,
        values=ratio.rename("error ratio"),
        report=burn_report(events, analysed, incidents),
        budget=budget_spent(events, analysed),
        rates=burn_rates(events, analysed),
        sweep=burn_sweep(events, analysed, *used, incidents),
        grid=used,
        incidents=[(pd.Timestamp(a), pd.Timestamp(b)) for a, b in incidents],
    )
