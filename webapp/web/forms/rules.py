"""The alert-rule form: typed text to stored alert-rule fields, one message per field."""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from typing import Any

import pandas as pd
from sqlalchemy.orm import Session

from webapp import settings
from webapp.analysis import WORKBOOK_WINDOWS, times, window_fields
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
        errors["kind"] = "Choose a threshold, a band or a burn-rate rule."
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
        needed = kind == {"threshold": "threshold", "tolerance": "band"}[name]
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
    fields.update(_burn_fields(session, form, errors) if kind == "burn_rate" else NO_BURN)
    if errors:
        raise RuleFormInvalid(errors)
    return fields


NO_BURN = {
    "objective": None,
    "period_seconds": None,
    "burn_windows": None,
    "severity": None,
    "good_series_id": None,
}
WINDOW_LINE = re.compile(
    r"^\s*(?P<factor>[0-9.]+)\s*x?\s+(?:over\s+)?(?P<long>\S+?)\s*/\s*(?P<short>\S+)"
    r"\s+(?P<severity>page|ticket)\s*$"
)
WINDOW_EXAMPLE = "14.4x over 1h/5min page"


def _burn_fields(session: Session, form: Mapping[str, str], errors: dict[str, str]) -> dict:
    """A burn-rate rule's objective (a percentage), compliance period, window pairs (one per
    line, e.g. ``14.4x over 1h/5min page``), severity and optional good-events series."""
    fields: dict[str, Any] = dict(NO_BURN)
    raw = form.get("objective", "").strip().rstrip("%").strip()
    if not times.is_number(raw) or not 0 < float(raw) < 100:
        errors["objective"] = "Give the objective as a percentage below 100, e.g. 99.9."
    else:
        fields["objective"] = float(raw) / 100
    period = parse_duration(form.get("period", ""), "period", errors, optional=True)
    if period is None and "period" not in errors:
        errors["period"] = "Give the compliance period, e.g. 30d."
    fields["period_seconds"] = period
    fields["burn_windows"] = parse_windows(form.get("burn_windows", ""), errors)
    fields["severity"] = form.get("severity", "page")
    if fields["severity"] not in ("page", "ticket"):
        errors["severity"] = "A burn-rate rule raises on its page or its ticket conditions."
    elif fields["burn_windows"] and not any(
        w["severity"] == fields["severity"] for w in fields["burn_windows"]
    ):
        errors["burn_windows"] = f"No window pair is marked {fields['severity']}."
    good = form.get("good_series_id", "").strip()
    if good:
        if not good.isdigit() or store_series.get_series(session, int(good)) is None:
            errors["good_series_id"] = "Pick one of the stored series, or none."
        elif good == form.get("series_id", "").strip():
            errors["good_series_id"] = "The good events and all events are two series."
        else:
            fields["good_series_id"] = int(good)
    return fields


def parse_windows(text: str, errors: dict[str, str]) -> list[dict[str, Any]]:
    """Window pairs, one per line: ``factor over long/short severity``."""
    windows = []
    for number, line in enumerate((text or "").splitlines(), start=1):
        if not line.strip():
            continue
        match = WINDOW_LINE.match(line)
        if match is None or not times.is_number(match["factor"]):
            errors["burn_windows"] = (
                f"Line {number}, {line.strip()!r}: write factor, windows and severity like "
                f"{WINDOW_EXAMPLE}."
            )
            return []
        pair = {}
        for name in ("long", "short"):
            seconds = parse_duration(match[name], "burn_windows", errors, optional=True)
            if seconds is None:
                errors["burn_windows"] = f"Line {number}: {match[name]!r} is not a duration."
                return []
            pair[f"{name}_seconds"] = seconds
        if pair["short_seconds"] > pair["long_seconds"]:
            errors["burn_windows"] = f"Line {number}: the short window is longer than the long."
            return []
        if float(match["factor"]) <= 0:
            errors["burn_windows"] = f"Line {number}: the factor must be above 0."
            return []
        windows.append(pair | {"factor": float(match["factor"]), "severity": match["severity"]})
    if not windows and "burn_windows" not in errors:
        errors["burn_windows"] = f"List at least one window pair, e.g. {WINDOW_EXAMPLE}."
    return windows


def windows_text(windows: Sequence[Mapping[str, Any]]) -> str:
    """Stored window pairs as the form's lines."""
    return "\n".join(
        f"{w['factor']:g}x over {times.short_duration(pd.Timedelta(seconds=w['long_seconds']))}"
        f"/{times.short_duration(pd.Timedelta(seconds=w['short_seconds']))} {w['severity']}"
        for w in windows
    )


# The workbook's alerts (Beyer et al., The Site Reliability Workbook, 2018, ch. 5): what a
# new burn-rate rule starts from.
BURN_DEFAULTS = {
    "objective": "99.9",
    "period": "30d",
    "burn_windows": windows_text(window_fields(WORKBOOK_WINDOWS)),
    "severity": "page",
}


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
            **BURN_DEFAULTS,
        }
    burn = BURN_DEFAULTS
    if rule.kind == "burn_rate":
        burn = {
            "objective": f"{(rule.objective or 0) * 100:g}",
            "period": times.short_duration(pd.Timedelta(seconds=rule.period_seconds or 0)),
            "burn_windows": windows_text(rule.burn_windows or []),
            "severity": rule.severity or "page",
            "good_series_id": str(rule.good_series_id or ""),
        }
    return burn | {
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
        "version": str(rule.version),
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


def parse_burn_sweep(
    args: Mapping[str, str],
    max_levels: int = DEFAULTS["MAX_SWEEP_LEVELS"],
    max_pairs: int = DEFAULTS["MAX_SWEEP_HOLDS"],
) -> tuple[tuple[list[float], list[tuple[pd.Timedelta, pd.Timedelta]]] | None, dict[str, str]]:
    """A burn-rate what-if grid typed by the reader: ``factors`` (numbers above 0) and
    ``pairs`` (long/short window pairs such as ``1h/5min``), separated by commas or spaces.
    None when neither is given."""
    errors: dict[str, str] = {}
    raw_f, raw_p = args.get("factors", "").strip(), args.get("pairs", "").strip()
    if not raw_f and not raw_p:
        return None, errors
    factors = []
    for word in raw_f.replace(",", " ").split():
        if not times.is_number(word) or not 0 < float(word) < float("inf"):
            errors["factors"] = f"{word!r} is not a number above 0; list factors like 6, 14.4."
            break
        factors.append(float(word))
    pairs = []
    for word in raw_p.replace(",", " ").split():
        long, sep, short = word.partition("/")
        spans = [parse_duration(part, "pairs", errors, optional=True) for part in (long, short)]
        if not sep or None in spans or spans[1] > spans[0]:
            errors["pairs"] = f"{word!r} is not a window pair; list pairs like 1h/5min, 6h/30min."
            break
        pairs.append((pd.Timedelta(seconds=spans[0]), pd.Timedelta(seconds=spans[1])))
    if not factors and "factors" not in errors:
        errors["factors"] = "List at least one factor, e.g. 6, 14.4."
    if not pairs and "pairs" not in errors:
        errors["pairs"] = "List at least one window pair, e.g. 1h/5min."
    if len(factors) > max_levels:
        errors["factors"] = f"At most {max_levels} factors at once."
    if len(pairs) > max_pairs:
        errors["pairs"] = f"At most {max_pairs} window pairs at once."
    return (None if errors else (factors, pairs)), errors
