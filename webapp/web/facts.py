"""An explanation's facts and a saved explanation's parameters in words, for people: grouped,
labelled, with units, each said once. The raw keys stay in the JSON download."""

from __future__ import annotations

import math
import re
from typing import Any

from webapp.analysis.times import local_time, long_duration, to_timestamp
from webapp.analysis.vocabulary import FACT_GROUPS, FACT_WORDS, PARAMETER_LABELS, fact_label
from webapp.web.filters import fact_value, number, percent

#: Shown elsewhere on the screen (the heading names the series, its unit and time zone).
NOT_LISTED = frozenset({"series", "unit", "tz"})

Rows = list[tuple[str, str]]


def _missing(value: Any) -> bool:
    return value is None or value == "" or (isinstance(value, float) and not math.isfinite(value))


def _span(start: Any, end: Any, tz: str) -> str:
    """``2026-11-30 02:00 to 03:00 WET``: the second date only when it differs."""
    first, last = to_timestamp(start), to_timestamp(end)
    if first is None or last is None:
        return "—"
    begin, finish = local_time(first, tz), local_time(last, tz, with_zone=True)
    if begin[:10] == finish[:10]:
        finish = finish[11:]
    return f"{begin} to {finish}"


def _period(label: str) -> str:
    """A period's label (``1d``, ``12h``, ``30min``) in words: ``1 day``, ``12 hours``."""
    found = re.fullmatch(r"(\d+)\s*(d|h|min|m)", str(label).strip(), re.IGNORECASE)
    if found is None:
        return str(label)
    count, unit = int(found.group(1)), found.group(2).lower()
    name = {"d": "day", "h": "hour"}.get(unit, "minute")
    return f"{count} {name}{'' if count == 1 else 's'}"


def _share(value: Any) -> str:
    share = float(value)
    if share >= 1 or share < 0.99:
        return percent(share)
    return f"{100 * share:.2f}%"


def _outside(total: Any, above: Any, below: Any) -> str:
    said = long_duration(float(total) * 60)
    if not below:
        return f"{said}, all above the band" if above else said
    if not above:
        return f"{said}, all below the band"
    above, below = (long_duration(float(v) * 60) for v in (above, below))
    return f"{said} ({above} above, {below} below)"


def _ordinal(n: int) -> str:
    suffix = "th" if 10 <= n % 100 <= 20 else {1: "st", 2: "nd", 3: "rd"}.get(n % 10, "th")
    return f"{n}{suffix}"


def _say(kind: str, values: list[Any], tz: str, unit: str) -> str:
    first = values[0]
    with_unit = f" {unit}" if unit else ""
    if kind == "time":
        return local_time(first, tz, with_zone=True)
    if kind == "span":
        return _span(first, values[1], tz)
    if kind == "minutes":
        return long_duration(float(first) * 60)
    if kind == "seconds":
        return long_duration(float(first))
    if kind == "days":
        return f"{number(float(first), 3)} days"
    if kind == "share":
        return _share(first)
    if kind == "number":
        return number(first)
    if kind == "value":
        return f"{number(first)}{with_unit}"
    if kind == "range":
        return f"{number(first)} to {number(values[1])}{with_unit}"
    if kind == "sd":
        return f"{number(float(first), 3)} robust standard deviations"
    if kind == "yes/no":
        return "yes" if first else "no"
    if kind == "periods":
        return ", ".join(_period(p) for p in first) or "none"
    if kind == "strengths":
        return ", ".join(f"{_period(p)}: {number(v, 2)}" for p, v in first.items()) or "—"
    if kind == "list":
        return "; ".join(str(v) for v in first)
    if kind == "outside":
        return _outside(*values)
    if kind == "rank":
        weeks, side = values[1], values[2]
        most = "highest" if side != "low" else "lowest"
        if int(first) == 1:
            return f"the {most} of {int(weeks) + 1} weeks (this one and {int(weeks)} before)"
        return f"{_ordinal(int(first))} {most} of {int(weeks) + 1} weeks"
    return str(first)


def _repeats_the_peak(facts: dict[str, Any]) -> bool:
    return facts.get("strongest_time") == facts.get("peak_time")


def fact_groups(facts: dict[str, Any], tz: str, unit: str | None) -> list[tuple[str, Rows]]:
    """``[(group title, [(label, text), ...]), ...]`` for the Facts panel; empty groups and
    facts without a value are left out, and the furthest sample when it is the peak."""
    shown: set[str] = set(NOT_LISTED)
    out = []
    for title, entries in FACT_GROUPS:
        rows = []
        for label, kind, keys in entries:
            shown.update(keys)
            if keys[0].startswith("strongest_") and _repeats_the_peak(facts):
                continue
            values = [facts.get(key) for key in keys]
            if _missing(values[0]) or values[0] in ([], {}):
                continue
            words = FACT_WORDS.get(keys[0], {})
            text = words.get(values[0]) if kind == "words" else None
            rows.append((label, text or _say(kind, values, tz, unit or "")))
        if rows:
            out.append((title, rows))
    others = [
        (fact_label(key), fact_value(value, tz, key))
        for key, value in sorted(facts.items())
        if key not in shown and not _missing(value)
    ]
    if others:
        out.append(("Other facts", others))
    return out


def parameter_rows(parameters: dict[str, Any], tz: str) -> Rows:
    """A saved explanation's parameters in words: left-out periods as readable spans."""
    rows = []
    for key, value in parameters.items():
        if key == "window" or _missing(value):
            continue
        label = PARAMETER_LABELS.get(key) or fact_label(key)
        if key == "exclude":
            text = "; ".join(_span(start, end, tz) for start, end in value) or "nothing"
        elif key.endswith("_seconds"):
            text = long_duration(float(value))
        else:
            text = fact_value(value, tz, key)
        rows.append((label, text))
    return rows
