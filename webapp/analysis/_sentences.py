"""Plain sentences built from the facts alone: deterministic, with units and rounding.

Values keep three significant figures (no decimals from 100 up, thousands separated from
1,000); deviations one decimal; strengths two; shares whole percent. Times are read on the
explanation's wall clock with the zone's abbreviation.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd


def fmt_number(x: float | None) -> str:
    if x is None or not np.isfinite(x):
        return "n/a"
    a = abs(x)
    if a >= 100:
        text = f"{x:,.0f}"
    elif a >= 10:
        text = f"{x:.1f}"
    elif a >= 1:
        text = f"{x:.2f}"
    elif a == 0:
        return "0"
    else:
        text = f"{x:.3g}"
    if "." in text and "e" not in text:
        text = text.rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


def fmt_value(x: float | None, unit: str) -> str:
    text = fmt_number(x)
    if not unit or text == "n/a":
        return text
    return f"{text}{unit}" if unit == "%" else f"{text} {unit}"


def fmt_duration(minutes: float) -> str:
    if minutes < 1:
        return f"{round(minutes * 60)} s"
    if minutes < 60:
        return f"{fmt_number(minutes)} min"
    if minutes < 48 * 60:
        hours, rest = divmod(round(minutes), 60)
        return f"{hours} h" if rest == 0 else f"{hours} h {rest} min"
    return f"{fmt_number(minutes / 1440)} days"


def fmt_time(iso: str, tz: str, with_date: bool = True) -> str:
    local = pd.Timestamp(iso).tz_convert(tz)
    clock = local.strftime("%H:%M") if local.second == 0 else local.strftime("%H:%M:%S")
    zone = local.strftime("%Z")
    if not with_date:
        return f"{clock} {zone}"
    return f"{clock} {zone} on {local.strftime('%a')} {local.day} {local.strftime('%b %Y')}"


def describe_period(label: str) -> str:
    named = {"1d": "daily", "7d": "weekly"}
    if label in named:
        return named[label]
    number = int("".join(ch for ch in label if ch.isdigit()))
    unit = label.lstrip("0123456789")
    if unit == "d" and number % 7 == 0:
        return f"{number // 7}-week"
    return f"{number}-{ {'d': 'day', 'h': 'hour', 'min': 'minute', 's': 'second'}[unit] }"


def ordinal(n: int) -> str:
    suffix = "th" if 10 <= n % 100 <= 20 else {1: "st", 2: "nd", 3: "rd"}.get(n % 10, "th")
    return f"{n}{suffix}"


def sentences(facts: dict[str, Any]) -> list[str]:
    """The summary of an explanation, in reading order."""
    points = [peak_sentence(facts), drop_sentence(facts)]
    if drop_leads(facts):
        points = [points[1]] + ([points[0]] if peak_outside(facts) else [])
    out = [window_sentence(facts), *points, same_hour_sentence(facts)]
    out += [model_sentence(facts), band_coverage_sentence(facts)]
    out += [coverage_sentence(facts), confidence_sentence(facts)]
    return [s for s in out if s]


def drop_leads(f: dict[str, Any]) -> bool:
    """Whether the window is mostly about a drop: below the band longer than above it."""
    return bool(f["minutes_below"]) and f["minutes_below"] >= f["minutes_above"]


def peak_outside(f: dict[str, Any]) -> bool:
    return f["peak_upper"] is not None and f["peak_value"] > f["peak_upper"]


def window_sentence(f: dict[str, Any]) -> str:
    name, tz = f["series"], f["tz"]
    if not f["window_samples"]:
        return f"{name} has no data in the window."
    if f["peak_expected"] is None:
        return f"{name} could not be compared with an expected band: there is no usable history."
    if not f["minutes_outside"]:
        return f"{name} stayed inside the expected band for the whole window."
    stretches = f["outside_stretches"]
    first, last = f["first_outside"], f["last_outside"]
    if first == last:
        where = f"at {fmt_time(first, tz)}"
    elif pd.Timestamp(first).tz_convert(tz).date() == pd.Timestamp(last).tz_convert(tz).date():
        clock = fmt_time(first, tz, with_date=False).rsplit(" ", 1)[0]
        where = f"from {clock} to {fmt_time(last, tz)}"
    else:
        where = f"from {fmt_time(first, tz)} to {fmt_time(last, tz)}"
    return (
        f"{name} was outside the expected band for {fmt_duration(f['minutes_outside'])} "
        f"of the {fmt_duration(f['window_minutes'])} window, {where}, "
        f"in {stretches} stretch{'es' if stretches != 1 else ''}."
    )


def side(z: float) -> str:
    return "above" if z >= 0 else "below"


def peak_sentence(f: dict[str, Any]) -> str | None:
    if f["peak_value"] is None or f["peak_expected"] is None:
        return None
    unit, tz = f["unit"], f["tz"]
    text = (
        f"It peaked at {fmt_value(f['peak_value'], unit)} at {fmt_time(f['peak_time'], tz)}, "
        f"where {fmt_value(f['peak_expected'], unit)} was expected "
        f"(band {fmt_value(f['peak_lower'], unit)} to {fmt_value(f['peak_upper'], unit)})"
    )
    z = f["peak_deviation_sd"]
    if z is None:
        return text + "."
    return text + f": {abs(z):.1f} robust standard deviations {side(z)} the expected value."


def drop_sentence(f: dict[str, Any]) -> str | None:
    z = f["strongest_deviation_sd"]
    if z is None or z >= 0 or not f["minutes_below"]:
        return None
    unit = f["unit"]
    opening = "It fell" if drop_leads(f) else "Its deepest drop was"
    return (
        f"{opening} to {fmt_value(f['strongest_value'], unit)} at "
        f"{fmt_time(f['strongest_time'], f['tz'])}, {abs(z):.1f} robust standard deviations "
        f"below the expected {fmt_value(f['strongest_expected'], unit)}."
    )


def same_hour_sentence(f: dict[str, Any]) -> str | None:
    weeks = f["same_hour_weeks"]
    if not weeks or f["same_hour_rank"] is None:
        return None
    unit, tz = f["unit"], f["tz"]
    start = pd.Timestamp(f["same_hour_start"]).tz_convert(tz)
    hour = f"{start.strftime('%a')} {fmt_time(f['same_hour_start'], tz, with_date=False)}"
    word = "lowest" if f["same_hour_side"] == "low" else "highest"
    rank = "" if f["same_hour_rank"] == 1 else ordinal(f["same_hour_rank"]) + " "
    return (
        f"At this hour of the week ({hour}), {fmt_value(f['same_hour_value'], unit)} is the "
        f"{rank}{word} of the last {weeks + 1} weeks (before this week: {word} "
        f"{fmt_value(f['same_hour_past_extreme'], unit)}, median "
        f"{fmt_value(f['same_hour_past_median'], unit)})."
    )


def model_sentence(f: dict[str, Any]) -> str:
    if f["history_usable_days"] <= 0 or f["scale"] is None:
        return "There is no usable history before the window, so no expected band was drawn."
    days = f"{fmt_number(f['history_usable_days'])} days of history"
    spread = (
        f"plus or minus {fmt_number(f['tolerance'])} robust standard deviations of the "
        f"residual ({fmt_value(f['scale'], f['unit'])} overall"
        + (", varying with the hour of day)" if f["scale_varies_by_hour"] else ")")
    )
    if f.get("band_sides") == "backtest":
        spread = (
            f"its sides set from how far its own forecasts missed (robust standard deviation "
            f"of the residual {fmt_value(f['scale'], f['unit'])}"
            + (", varying with the hour of day)" if f["scale_varies_by_hour"] else ")")
        )
    if not f["periods"]:
        return f"No regular cycle was found in {days}: the band is the last day's level, {spread}."
    strengths = f["period_strengths"]
    cycles = [
        f"{describe_period(label)} cycle (strength {strengths[label]:.2f})"
        for label in f["periods"]
    ]
    listed = cycles[0] if len(cycles) == 1 else ", ".join(cycles[:-1]) + " and " + cycles[-1]
    return f"The expected band is the trend plus the {listed}, learned from {days}, {spread}."


def band_coverage_sentence(f: dict[str, Any]) -> str | None:
    """What share of held-out history the band held, beside what it is built to hold."""
    nominal = share(f["band_coverage_nominal"])
    if f["band_sides"] == "scale":
        return (
            "The history is too short to test the band on its own forecasts (that takes two "
            f"days), so its sides are the plain robust spread; it is meant to hold {nominal} "
            "of samples."
        )
    if f["band_sides"] != "backtest" or f["band_coverage"] is None:
        return None
    days = f["band_backtest_days"]
    span = (
        f"{days // 7} weeks" if days % 7 == 0 and days >= 14 else f"{days} day" + "s" * (days != 1)
    )
    held = (
        f"Over the last {span}, each day forecast from the days before it, this band held "
        f"{share(f['band_coverage'])} of samples; it is built to hold {nominal}."
    )
    hours = f.get("band_habit_hours")
    if hours:
        spans = hour_spans([int(h[:2]) for h in hours])
        near = spans[0] if len(spans) == 1 else ", ".join(spans[:-1]) + f" and {spans[-1]}"
        held += (
            f" At {near} it reaches further: on most of those days the metric went that "
            "far near that time of day (a habit, such as a scheduled job)."
        )
    spread = f.get("band_recent_spread")
    if spread is not None and f.get("scale"):
        held += (
            f" In the last hours of the history the metric varied {spread / f['scale']:.0f} "
            "times as much as usual, so the band allows at least "
            f"±{fmt_value(f['tolerance'] * spread, f.get('unit') or '')} around the expected "
            "value until the backtest has seen a day of it."
        )
    return held


def hour_spans(hours: list[int]) -> list[str]:
    """Consecutive wall-clock hours as spans: [2, 3, 4, 9] -> ["02:00–05:00", "09:00–10:00"]."""
    spans: list[list[int]] = []
    for h in sorted(hours):
        if spans and h == spans[-1][1] + 1:
            spans[-1][1] = h
        else:
            spans.append([h, h])
    return [f"{a:02d}:00–{(b + 1) % 24:02d}:00" for a, b in spans]


def coverage_sentence(f: dict[str, Any]) -> str:
    parts = [
        f"Data coverage: {share(f['coverage_history'])} of the history and "
        f"{share(f['coverage_window'])} of the window"
    ]
    gaps = f["gap_count"]
    if gaps:
        parts.append(
            f"{gaps} gap{'s' if gaps != 1 else ''} ({fmt_duration(f['gap_minutes'])} in total)"
        )
    if f["excluded_minutes"]:
        parts.append(f"{fmt_duration(f['excluded_minutes'])} excluded from the baseline")
    return "; ".join(parts) + "."


def share(x: float | None) -> str:
    if x is None or not np.isfinite(x):
        return "n/a"
    pct = 100 * x
    if 99 < pct < 100:
        return f"{np.floor(pct * 10) / 10:.1f}%"  # never round a gap away
    return f"{pct:.0f}%"


def confidence_sentence(f: dict[str, Any]) -> str:
    reasons = f["confidence_reasons"]
    if not reasons:
        return f"Confidence: {f['confidence']}."
    return f"Confidence: {f['confidence']}, because of " + "; ".join(reasons) + "."
