"""compare_peers(): was a deviation local to one series, or shared by its peers?

Peers are the series of one metric whose label sets differ in exactly one label (the six
``host`` values of ``checkout.latency_p95``). Each one is explained on its own history with
`explain`, so its band is the very band the Explain screen draws for it, and the results
are laid side by side: how long each was outside its band, when it first left it for good,
and how far it went, in robust standard deviations of its own residual.

A peer counts as having *left its band* only after a sustained stretch outside: at least
`sustained` long and at least two grid steps, so a single noisy sample does not make a
quiet host look involved. Its `first_outside` is the start of that first stretch. The cap,
the stretch rule and the "within `together` of each other" rule are our own choices.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import pandas as pd

from ._checks import check_history, check_tolerance, check_window
from ._explain import explain
from ._sentences import fmt_duration, fmt_time

MAX_PEERS = 12
SUSTAINED = pd.Timedelta(minutes=5)
TOGETHER = pd.Timedelta(minutes=15)


@dataclass(frozen=True)
class PeerResult:
    """One series of the group. `deviation` is (value - expected) / band scale over the
    window; `error` says why a series could not be explained (the others still are)."""

    key: str
    name: str
    is_target: bool
    minutes_outside: float | None = None
    first_outside: pd.Timestamp | None = None
    peak_deviation_sd: float | None = None
    deviation: pd.Series | None = None
    error: str | None = None

    @property
    def left_band(self) -> bool:
        return self.first_outside is not None


@dataclass(frozen=True)
class PeerComparison:
    """The result of `compare_peers`: the target first, then the other peers by key."""

    target: str
    label: str
    window: tuple[pd.Timestamp, pd.Timestamp]
    results: list[PeerResult]
    available: int  # peers other than the target that were offered
    compared: int  # of those, how many were explained (at most `max_peers`)
    summary: list[str] = field(default_factory=list)
    facts: dict[str, Any] = field(default_factory=dict)

    @property
    def capped(self) -> bool:
        return self.compared < self.available

    @property
    def others(self) -> list[PeerResult]:
        return [r for r in self.results if not r.is_target]


def compare_peers(
    target_key: str,
    peers: Mapping[str, pd.Series],
    window: tuple,
    history: pd.Timedelta | str,
    tolerance: float,
    exclude: Iterable = (),
    tz: str = "UTC",
    unit: str = "",
    *,
    names: Mapping[str, str] | None = None,
    label: str = "one label",
    max_peers: int = MAX_PEERS,
    sustained: pd.Timedelta | str = SUSTAINED,
    together: pd.Timedelta | str = TOGETHER,
) -> PeerComparison:
    """Explain `target_key` and each of its peers over `window` and compare them.

    `peers` maps series key to points and *includes* the target under `target_key`.
    `names` gives each key a short display name (the differing label's value, "api-4");
    `label` names the label they differ in ("host"). Only the first `max_peers` other
    peers by key are compared, and the summary says so. `exclude` applies to every peer.
    """
    if target_key not in peers:
        raise ValueError(f"the peers must include the target {target_key!r}")
    if max_peers < 1:
        raise ValueError(f"max_peers must be at least 1, got {max_peers!r}")
    start, end = check_window(window)
    history = check_history(history)
    tolerance = check_tolerance(tolerance)
    sustained, together = pd.Timedelta(sustained), pd.Timedelta(together)
    exclude = list(exclude)
    others = sorted(k for k in peers if k != target_key)
    chosen = [target_key, *others[:max_peers]]
    display = {k: (names or {}).get(k, k) for k in chosen}
    results = [
        peer_result(
            key,
            display[key],
            key == target_key,
            peers[key],
            dict(
                window=(start, end),
                history=history,
                tolerance=tolerance,
                exclude=exclude,
                tz=tz,
                unit=unit,
            ),
            sustained,
        )
        for key in chosen
    ]
    comparison = PeerComparison(
        target=target_key,
        label=label,
        window=(start, end),
        results=results,
        available=len(others),
        compared=len(chosen) - 1,
    )
    facts = {**peer_facts(comparison), "sustained_minutes": sustained / pd.Timedelta(minutes=1)}
    summary = peer_sentences(comparison, facts, tz, together)
    return replace(comparison, facts=facts, summary=summary)


def peer_result(
    key: str,
    name: str,
    is_target: bool,
    series: pd.Series,
    options: dict[str, Any],
    sustained: pd.Timedelta,
) -> PeerResult:
    try:
        exp = explain(series.rename(key), **options)
    except ValueError as error:
        return PeerResult(key, name, is_target, error=str(error))
    in_window = exp.frame[exp.frame["in_window"]]
    if in_window["expected"].isna().all():
        return PeerResult(key, name, is_target, error="no history before the window to fit")
    deviation = deviation_sd(in_window)
    return PeerResult(
        key,
        name,
        is_target,
        minutes_outside=float(exp.facts["minutes_outside"]),
        first_outside=first_sustained(in_window["outside"], exp.step, sustained),
        peak_deviation_sd=peak(deviation),
        deviation=deviation.rename(key),
    )


def deviation_sd(frame: pd.DataFrame) -> pd.Series:
    """(value - expected) / band scale: how far out, in robust sd of the residual."""
    scale = frame["band_scale"].where(frame["band_scale"] > 0)
    return (frame["value"] - frame["expected"]) / scale


def peak(deviation: pd.Series) -> float | None:
    """The deviation of largest size, with its sign (None when there is none)."""
    values = deviation.to_numpy(dtype=float)
    finite = np.isfinite(values)
    if not finite.any():
        return None
    i = int(np.argmax(np.where(finite, np.abs(values), -1.0)))
    return round(float(values[i]), 2)


def first_sustained(
    outside: pd.Series, step: pd.Timedelta, sustained: pd.Timedelta
) -> pd.Timestamp | None:
    """Start of the first run of consecutive outside samples lasting at least `sustained`
    (and at least two samples), or None."""
    need = max(2, int(np.ceil(sustained / step)))
    flags = outside.to_numpy(dtype=bool)
    edges = np.diff(np.concatenate(([0], flags.astype(np.int8), [0])))
    starts, ends = np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)
    long_enough = np.flatnonzero(ends - starts >= need)
    return outside.index[starts[long_enough[0]]] if len(long_enough) else None


def peer_facts(comparison: PeerComparison) -> dict[str, Any]:
    """Named numbers behind the sentences (times as ISO strings, JSON-able)."""
    target = comparison.results[0]
    others = [r for r in comparison.others if r.error is None]
    left = [r for r in comparison.results if r.left_band]
    firsts = [r.first_outside for r in left]
    spread = (max(firsts) - min(firsts)) if len(firsts) > 1 else None
    return {
        "target": comparison.target,
        "label": comparison.label,
        "peers_available": comparison.available,
        "peers_compared": comparison.compared,
        "peers_failed": sum(r.error is not None for r in comparison.others),
        "peers_capped": comparison.capped,
        "target_left": target.left_band,
        "target_minutes_outside": target.minutes_outside,
        "others_left": sum(r.left_band for r in others),
        "others_usable": len(others),
        "first_outside_earliest": min(firsts).isoformat() if firsts else None,
        "first_outside_spread_minutes": spread / pd.Timedelta(minutes=1)
        if spread is not None
        else None,
    }


def peer_sentences(
    comparison: PeerComparison, f: dict[str, Any], tz: str, together: pd.Timedelta
) -> list[str]:
    target = comparison.results[0]
    usable, left = f["others_usable"], f["others_left"]
    group = f"{usable} other series that differ only in {comparison.label}"
    if target.error is not None:
        out = [f"{target.name} could not be compared with its peers: {target.error}."]
    elif usable == 0:
        out = [f"None of the peers of {target.name} could be explained: nothing to compare."]
    elif f["target_left"] and left == usable:
        out = [
            f"All {usable + 1} series that differ only in {comparison.label} left their expected "
            f"bands; {target.name} was outside for {fmt_duration(target.minutes_outside)}."
        ]
    elif f["target_left"] and left == 0:
        out = [
            f"{target.name} was outside its expected band for "
            f"{fmt_duration(target.minutes_outside)}, first from "
            f"{fmt_time(target.first_outside.isoformat(), tz)}; none of the {group} left theirs."
        ]
    elif f["target_left"]:
        out = [
            f"{target.name} was outside its expected band for "
            f"{fmt_duration(target.minutes_outside)}; {left} of the {group} also left theirs "
            f"({names_of(comparison)})."
        ]
    elif left:
        out = [
            f"{target.name} stayed inside its expected band, but {left} of the {group} left "
            f"theirs ({names_of(comparison)})."
        ]
    else:
        out = [f"Neither {target.name} nor any of the {group} left its expected band."]
    if target.error is None and usable and f["first_outside_spread_minutes"] is not None:
        out.append(timing_sentence(f, comparison.label, tz, together))
    if comparison.capped:
        out.append(
            f"Only {comparison.compared} of the {comparison.available} peers were compared "
            "(the first by key)."
        )
    if f["peers_failed"]:
        out.append(f"{f['peers_failed']} peer(s) could not be explained; see the table.")
    return out


def timing_sentence(f: dict[str, Any], label: str, tz: str, together: pd.Timedelta) -> str:
    """How close together the first sustained exits came (only when two or more left)."""
    spread = f["first_outside_spread_minutes"]
    n = f["others_left"] + int(f["target_left"])
    when = fmt_time(f["first_outside_earliest"], tz)
    shared = f"a shared cause is more likely than a fault in one {label}"
    if spread == 0:
        who = "Both" if n == 2 else f"All {n}"
        return f"{who} left at the same time, {when}: {shared}."
    if spread <= together / pd.Timedelta(minutes=1):
        return (
            f"The {n} first exits came within {fmt_duration(spread)} of each other, from "
            f"{when}: {shared}."
        )
    return f"The {n} first exits were spread over {fmt_duration(spread)}, from {when}."


def names_of(comparison: PeerComparison) -> str:
    return ", ".join(r.name for r in comparison.others if r.left_band)
