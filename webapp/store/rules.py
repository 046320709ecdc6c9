"""Alert rules: the conditions that produced pages, kept so they can be replayed."""

from __future__ import annotations

import math
from typing import Any

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from webapp.analysis import burn_rule_from_fields
from webapp.analysis.vocabulary import DIRECTIONS, RULE_FIELDS, RULE_KINDS
from webapp.store._sql import delete_by_id, require
from webapp.store.models import AlertRule, Page
from webapp.store.versions import claim


def _check(rule: AlertRule) -> None:
    """Raise ValueError naming the first field that makes ``rule`` unusable."""
    if not (rule.name or "").strip():
        raise ValueError("an alert rule needs a name")
    if rule.kind not in RULE_KINDS:
        raise ValueError(f"kind must be one of {', '.join(RULE_KINDS)}, got {rule.kind!r}")
    allowed = DIRECTIONS[rule.kind]
    if rule.direction not in allowed:
        raise ValueError(
            f"direction of a {rule.kind} rule must be one of {', '.join(allowed)}, "
            f"got {rule.direction!r}"
        )
    if rule.kind == "threshold" and not _finite(rule.threshold):
        raise ValueError(f"a threshold rule needs a finite threshold, got {rule.threshold!r}")
    if rule.kind == "band" and not (_finite(rule.tolerance) and rule.tolerance > 0):
        raise ValueError(f"a band rule needs a tolerance above 0, got {rule.tolerance!r}")
    if rule.kind == "burn_rate":
        _check_burn(rule)
    if rule.hold_seconds is None or rule.hold_seconds < 0:
        raise ValueError(f"hold_seconds must be 0 or more, got {rule.hold_seconds!r}")
    if rule.check_every_seconds is not None and rule.check_every_seconds <= 0:
        raise ValueError(
            f"check_every_seconds must be above 0 when given, got {rule.check_every_seconds!r}"
        )


def _check_burn(rule: AlertRule) -> None:
    """A burn-rate rule's objective, period and windows, checked by the core's own rule."""
    if rule.good_series_id is not None and rule.good_series_id == rule.series_id:
        raise ValueError("the good events and the total events must be two different series")
    burn_rule_from_fields({name: getattr(rule, name) for name in RULE_FIELDS})


def _finite(value: Any) -> bool:
    return isinstance(value, int | float) and not isinstance(value, bool) and math.isfinite(value)


def _assign(rule: AlertRule, fields: dict[str, Any]) -> None:
    unknown = sorted(set(fields) - set(RULE_FIELDS))
    if unknown:
        raise ValueError(f"unknown alert rule field(s): {', '.join(unknown)}")
    for name, value in fields.items():
        setattr(rule, name, value)


def create_rule(session: Session, **fields: Any) -> AlertRule:
    """Add an alert rule from the fields named in :data:`RULE_FIELDS`."""
    rule = AlertRule(kind="threshold", direction="above", hold_seconds=0, label_filter={})
    _assign(rule, fields)
    _check(rule)
    session.add(rule)
    session.flush()
    return rule


def list_rules(session: Session, series_id: int | None = None) -> list[AlertRule]:
    stmt = select(AlertRule).order_by(AlertRule.name, AlertRule.id)
    if series_id is not None:
        stmt = stmt.where(AlertRule.series_id == series_id)
    return list(session.scalars(stmt))


def rules_by_last_page(session: Session, limit: int | None = None) -> list[AlertRule]:
    """The rules, the one that paged most recently first; rules that never paged last
    (newest first)."""
    last = (
        select(Page.alert_rule_id, func.max(Page.fired_at).label("last"))
        .group_by(Page.alert_rule_id)
        .subquery()
    )
    stmt = (
        select(AlertRule)
        .outerjoin(last, last.c.alert_rule_id == AlertRule.id)
        .order_by(last.c.last.is_(None), last.c.last.desc(), AlertRule.id.desc())
        .limit(limit)
    )
    return list(session.scalars(stmt))


def get_rule(session: Session, rule_id: int) -> AlertRule | None:
    return session.get(AlertRule, rule_id)


def update_rule(
    session: Session, rule_id: int, version: int | None = None, **fields: Any
) -> AlertRule:
    """Change some fields over ``version``; nothing changes when the result would be invalid
    or a newer version is stored (EditConflict)."""
    rule = require(session, AlertRule, rule_id, "alert rule")
    claim(session, rule, version, "alert rule")
    previous = {name: getattr(rule, name) for name in RULE_FIELDS}
    _assign(rule, fields)
    try:
        _check(rule)
    except ValueError:
        _assign(rule, previous)
        raise
    session.flush()
    return rule


def delete_rule(session: Session, rule_id: int) -> None:
    """Remove a rule; its pages and reviews keep their text and lose the link."""
    delete_by_id(session, AlertRule, rule_id, "alert rule")
