"""The alert-rule form: typed text to stored alert-rule fields, one message per field."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import pandas as pd
from sqlalchemy.orm import Session

from webapp import settings
from webapp.analysis import times
from webapp.analysis.vocabulary import DIRECTIONS, RULE_KINDS, SWEEP_LEVEL
from webapp.store import series as store_series
from webapp.store.models import AlertRule


class RuleFormInvalid(ValueError):
    def __init__(self, errors: Mapping[str, str]) -> None:
        self.errors = dict(errors)
        super().__init__("; ".join(self.errors.values()))


def parse_duration(text: str, field: str, errors: dict[str, str], *, optional: bool) -> int | None:
    """Seconds from ``10min``, ``90s``, ``1h`` or a bare number of seconds; a problem goes
    into ``errors[field]``. Empty is 0 for a required field, None for an optional one."""
    try:
        delta = times.parse_duration(text)
    except ValueError as err:
        errors[field] = "It cannot be negative." if "negative" in str(err) else str(err)
        return None
    if delta is None:
        return None if optional else 0
    if optional and delta == pd.Timedelta(0):
        errors[field] = "Give a duration above zero."
        return None
    return int(delta.total_seconds())


def parse_labels(text: str, errors: dict[str, str]) -> dict[str, str]:
    labels = {}
    for part in (text or "").split(","):
        if not part.strip():
            continue
        name, sep, value = part.partition("=")
        if not sep or not name.strip():
            errors["label_filter"] = f"{part.strip()!r} should read name=value, e.g. host=api-3."
            return {}
        labels[name.strip()] = value.strip().strip('"')
    return labels


def parse_rule_form(session: Session, form: Mapping[str, str]) -> dict[str, Any]:
    """The alert-rule fields from the form; raises RuleFormInvalid with one message per field."""
    errors: dict[str, str] = {}
    kind = form.get("kind", "threshold")
    if kind not in RULE_KINDS:
        errors["kind"] = "Choose a threshold rule or a band rule."
        kind = "threshold"
    fields: dict[str, Any] = {
        "name": form.get("name", "").strip(),
        "kind": kind,
        "description": form.get("description", "").strip(),
        "direction": form.get("direction", DIRECTIONS[kind][0]),
    }
    if not fields["name"]:
        errors["name"] = "Give the rule a name people will recognise from the page."
    if fields["direction"] not in DIRECTIONS[kind]:
        errors["direction"] = f"A {kind} rule fires {' or '.join(DIRECTIONS[kind])}."
    fields.update(_target(session, form, errors))
    for name in ("threshold", "tolerance"):
        raw = form.get(name, "").strip()
        needed = (kind == "threshold") == (name == "threshold")
        if not needed:
            fields[name] = None
        elif (
            not times.is_number(raw) or not pd.notna(float(raw)) or abs(float(raw)) == float("inf")
        ):
            errors[name] = (
                f"Give the {name} as a number, e.g. {'500' if name == 'threshold' else '3'}."
            )
        elif name == "tolerance" and float(raw) <= 0:
            errors[name] = "The band width is a number of robust standard deviations above 0."
        else:
            fields[name] = float(raw)
    fields["hold_seconds"] = parse_duration(form.get("hold", ""), "hold", errors, optional=False)
    fields["check_every_seconds"] = parse_duration(
        form.get("check_every", ""), "check_every", errors, optional=True
    )
    if errors:
        raise RuleFormInvalid(errors)
    return fields


def _target(session: Session, form: Mapping[str, str], errors: dict[str, str]) -> dict[str, Any]:
    """Either one series, or a metric with a label filter."""
    if form.get("target", "series") == "series":
        raw = form.get("series_id", "").strip()
        if not raw.isdigit() or store_series.get_series(session, int(raw)) is None:
            errors["series_id"] = "Pick one of the stored series."
            return {}
        return {"series_id": int(raw), "metric": None, "label_filter": {}}
    metric = form.get("metric", "").strip()
    if not metric:
        errors["metric"] = "Name the metric, e.g. checkout.latency_p95."
    return {
        "series_id": None,
        "metric": metric,
        "label_filter": parse_labels(form.get("label_filter", ""), errors),
    }


def rule_form_values(rule: AlertRule | None) -> dict[str, str]:
    if rule is None:
        return {
            "kind": "threshold",
            "direction": "above",
            "target": "series",
            "hold": "0",
            "tolerance": "3",
        }
    return {
        "name": rule.name,
        "kind": rule.kind,
        "direction": rule.direction,
        "target": "series" if rule.series_id else "metric",
        "series_id": str(rule.series_id or ""),
        "metric": rule.metric or "",
        "label_filter": ", ".join(f"{k}={v}" for k, v in (rule.label_filter or {}).items()),
        "threshold": "" if rule.threshold is None else f"{rule.threshold:g}",
        "tolerance": "" if rule.tolerance is None else f"{rule.tolerance:g}",
        "hold": f"{rule.hold_seconds}s",
        "check_every": f"{rule.check_every_seconds}s" if rule.check_every_seconds else "",
        "description": rule.description or "",
    }


DEFAULTS = settings.defaults()
EXAMPLES = {"threshold": "600, 700, 800", "tolerance": "2, 3, 4"}


def sweep_level(kind: str | None) -> str:
    """The setting a rule's what-if sweep varies besides the hold."""
    return SWEEP_LEVEL.get(kind or "threshold", "threshold")


def parse_sweep(
    args: Mapping[str, str],
    level: str = "threshold",
    max_levels: int = DEFAULTS["MAX_SWEEP_LEVELS"],
    max_holds: int = DEFAULTS["MAX_SWEEP_HOLDS"],
) -> tuple[tuple[list[float], list[pd.Timedelta]] | None, dict[str, str]]:
    """A what-if grid typed by the reader: ``thresholds`` (numbers), or for ``level``
    "tolerance" ``tolerances`` (numbers above 0), and ``holds`` (durations), each separated
    by commas or spaces, at most ``max_levels`` and ``max_holds`` of them (settings). None
    when neither is given."""
    errors: dict[str, str] = {}
    field, example = f"{level}s", EXAMPLES[level]
    raw_l, raw_p = args.get(field, "").strip(), args.get("holds", "").strip()
    if not raw_l and not raw_p:
        return None, errors
    levels = []
    for word in raw_l.replace(",", " ").split():
        if (
            not times.is_number(word)
            or abs(float(word)) == float("inf")
            or float(word) != float(word)
        ):
            errors[field] = f"{word!r} is not a number; list {field} like {example}."
            break
        if level == "tolerance" and float(word) <= 0:
            errors[field] = (
                f"{word!r} is not above 0; a band width counts robust standard deviations, "
                f"so list band widths like {example}."
            )
            break
        levels.append(float(word))
    holds = []
    for word in raw_p.replace(",", " ").split():
        seconds = parse_duration(word, "holds", errors, optional=False)
        if seconds is None:
            break
        holds.append(pd.Timedelta(seconds=seconds))
    if not levels and field not in errors:
        errors[field] = f"List at least one {level}, e.g. {example}."
    if not holds and "holds" not in errors:
        errors["holds"] = "List at least one hold, e.g. 0, 5min, 10min."
    if len(levels) > max_levels:
        errors[field] = f"At most {max_levels} {field} at once."
    if len(holds) > max_holds:
        errors["holds"] = f"At most {max_holds} holds at once."
    return (None if errors else (levels, holds)), errors
