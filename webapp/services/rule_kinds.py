"""Rule kinds side by side for one stored rule: the same history and the same incidents,
replayed for the rule as it is, a threshold, a band rule and, where the service has an
error ratio or a good/total pair, a burn-rate rule. Each kind is shown at the draft's
setting when the draft tunes the rule's own kind, else at its best setting
(``webapp.analysis._kinds``)."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import pandas as pd
from sqlalchemy.orm import Session

from webapp.analysis import (
    BandRule,
    BurnRateRule,
    KindRow,
    ThresholdRule,
    band_sweep,
    best_setting,
    burn_sweep,
    burn_sweep_grid,
    event_grid,
    kind_row,
    kinds_sentence,
    row_from_sweep,
    sweep_grid,
    whatif_sweep,
)
from webapp.analysis.times import short_duration
from webapp.analysis.vocabulary import OWNER_DECIDES
from webapp.services.band_fits import band_fit, fit_key
from webapp.services.burn import read_events, run_burn_replay
from webapp.services.replay import TZ, analysed_rule, matching_series, run_replay
from webapp.store import band_fits as store_fits
from webapp.store import excluded as store_excluded
from webapp.store import rules as store_rules
from webapp.store import series as store_series
from webapp.store.models import AlertRule

#: The least paging a best setting may do: once a week (common practice, not a standard).
WEEKLY = 1.0
TOLERANCES = (2.0, 2.5, 3.0, 3.5, 4.0, 5.0, 6.0, 8.0)
#: Rules whose band fits the warm start keeps ahead of their pages: the most recently paged.
FIT_AHEAD_RULES = 4

Incidents = Sequence[tuple[pd.Timestamp, pd.Timestamp | None]]


@dataclass(frozen=True)
class KindComparison:
    """The rows (the rule as it is first), what they show, the caution when they suggest
    another kind, and why a kind is missing."""

    rows: list[KindRow]
    sentence: str
    suggested: KindRow | None
    caution: str | None
    notes: list[str]


def compare_kinds(
    session: Session, rule: AlertRule, info: store_series.SeriesInfo
) -> KindComparison:
    """Replay every kind over ``info``'s history against the rule's incidents. Raises
    ValueError with a readable message when the rule itself cannot be replayed."""
    notes: list[str] = []
    own: dict[str, KindRow] = {}
    if rule.kind == "burn_rate":
        burn = run_burn_replay(session, rule, info)
        current, incidents = kind_row("burn_rate", "as it is", burn.report), burn.incidents
        values = store_series.read_series(session, info.id).dropna()
        own["burn_rate"] = _best_burn(
            burn.rule, burn.events, incidents, max(current.pages_per_week, WEEKLY)
        )
    else:
        replay = run_replay(session, rule, info)
        current, values, incidents = (
            kind_row(rule.kind, "as it is", replay.report),
            replay.values,
            replay.incidents,
        )
        own[rule.kind] = _own_kind(replay, max(current.pages_per_week, WEEKLY))
    ceiling = max(current.pages_per_week, WEEKLY)
    direction = "below" if rule.direction == "below" else "above"
    every = analysed_rule(rule).check_every
    rows = [current]
    rows.append(own.get("threshold") or _threshold(values, incidents, ceiling, direction, every))
    band = own.get("band") or _band(session, info, values, incidents, ceiling, rule, notes)
    burn_row = own.get("burn_rate") or _burn(session, info, incidents, ceiling, notes)
    rows += [r for r in (band, burn_row) if r is not None]
    sentence, suggested = kinds_sentence(rows)
    return KindComparison(rows, sentence, suggested, OWNER_DECIDES if suggested else None, notes)


def _own_kind(replay: Any, ceiling: float) -> KindRow:
    """The rule's own kind at the draft's setting when the draft tunes it, else at the best
    setting of the replay's own sweep."""
    result, kind = replay.result, "band" if isinstance(replay.rule, BandRule) else "threshold"
    sweep, level = result.sweep, result.level
    if result.drafted is not None:
        at = result.drafted
        row = sweep[(sweep[level] == at[0]) & (sweep["hold"] == at[1])].iloc[0]
        role = "the draft's setting"
    else:
        row, role = best_setting(sweep, ceiling), "best of its sweep"
    return row_from_sweep(kind, role, _text(kind, row, replay.rule), row)


def _text(kind: str, row: pd.Series, like: Any) -> str:
    hold, every = row["hold"], like.check_every
    if kind == "band":
        rule = BandRule(
            float(row["tolerance"]), hold, direction=like.direction, tz=TZ, check_every=every
        )
    else:
        rule = ThresholdRule(
            **{like.direction: float(row["threshold"])}, hold=hold, check_every=every
        )
    return rule.text


def _threshold(
    values: pd.Series, incidents: Incidents, ceiling: float, direction: str, every: Any
) -> KindRow:
    seed = ThresholdRule(
        **{direction: float(values.quantile(0.99 if direction == "above" else 0.01))},
        check_every=every,
    )
    thresholds, holds = sweep_grid(values, seed)
    sweep = whatif_sweep(
        values, thresholds, holds, incidents, direction=direction, check_every=every
    )
    row = best_setting(sweep, ceiling)
    return row_from_sweep("threshold", "best of its sweep", _text("threshold", row, seed), row)


def kinds_band_rule(rule: AlertRule) -> BandRule:
    """The band rule the comparison sweeps for ``rule`` (its fits serve every setting)."""
    direction = "below" if rule.direction == "below" else "above"
    return BandRule(3.0, direction=direction, tz=TZ, check_every=analysed_rule(rule).check_every)


def _band(
    session: Session,
    info: Any,
    values: pd.Series,
    incidents: Incidents,
    ceiling: float,
    rule: AlertRule,
    notes: list[str],
) -> KindRow | None:
    seed = kinds_band_rule(rule)
    exclude = store_excluded.periods_for(session, info.id)
    try:
        bands = band_fit(session, info, values, seed, exclude)
    except ValueError as err:
        notes.append(f"No band rule: {err}.")
        return None
    holds = sorted({pd.Timedelta(minutes=m) for m in (0, 1, 2, 5, 10, 15, 30)})
    sweep = band_sweep(values, seed, TOLERANCES, holds, incidents, exclude, bands=bands)
    row = best_setting(sweep, ceiling)
    return row_from_sweep("band", "best of its sweep", _text("band", row, seed), row)


def fit_ahead(session: Session, rules: int = FIT_AHEAD_RULES) -> int:
    """Fit and keep the daily bands that the replay (a band rule's) or the rule kinds (any
    other rule's) of the ``rules`` most recently paged rules will ask for, on the series
    their page shows first, where the store does not hold them yet. Returns how many were
    fitted; a rule that cannot be replayed is passed over."""
    fitted = 0
    for rule in store_rules.rules_by_last_page(session, rules):
        candidates = matching_series(session, rule)
        try:
            analysed = analysed_rule(rule)
            band_rule = analysed if isinstance(analysed, BandRule) else kinds_band_rule(rule)
        except ValueError:
            continue
        if not candidates:
            continue
        info = candidates[0]
        exclude = store_excluded.periods_for(session, info.id)
        if store_fits.is_kept(session, info.id, fit_key(session, info, band_rule, exclude)):
            continue
        values = store_series.read_series(session, info.id).dropna()
        try:
            band_fit(session, info, values, band_rule, exclude)
        except ValueError:
            continue
        fitted += 1
    return fitted


def _burn(
    session: Session, info: Any, incidents: Incidents, ceiling: float, notes: list[str]
) -> KindRow | None:
    """The best burn-rate setting on the service's events: a stored burn-rate rule's of the
    same service (the metric's first word), else the workbook's rule on its error ratio."""
    service = (info.metric or info.key).split(".")[0]
    for stored in store_rules.list_rules(session):
        if stored.kind != "burn_rate" or stored.series_id is None:
            continue
        watched = store_series.get_series(session, stored.series_id)
        if watched is not None and watched.metric.split(".")[0] == service:
            rule = analysed_rule(stored)
            events = event_grid(
                read_events(session, stored, store_series.info(watched)), rule.check_every
            )
            return _best_burn(rule, events, incidents, ceiling)
    ratio = store_series.find_series(session, f"{service}.error_ratio")
    if ratio is None:
        notes.append(
            f"No burn-rate rule: the {service} service has no stored error ratio or "
            "good/total pair of event counts."
        )
        return None
    values = store_series.read_series(session, ratio.id).dropna()
    rule = BurnRateRule()
    return _best_burn(rule, event_grid(values, rule.check_every), incidents, ceiling)


def _best_burn(rule: BurnRateRule, events: Any, incidents: Incidents, ceiling: float) -> KindRow:
    factors, pairs = burn_sweep_grid(rule)
    sweep = burn_sweep(events, rule, factors, pairs, incidents)
    row = best_setting(sweep, ceiling)
    pair = next(
        p for p in pairs if f"{short_duration(p[0])}/{short_duration(p[1])}" == row["windows"]
    )
    text = BurnRateRule(
        rule.objective,
        rule.period,
        ((*pair, float(row["factor"]), rule.severity),),
        rule.severity,
        rule.hold,
        rule.check_every,
    ).text
    return row_from_sweep("burn_rate", "best of its sweep", text, row)
