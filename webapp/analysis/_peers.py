"""compare_peers(): was a deviation local to one series, or shared by its peers?

Peers are the series of one metric whose label sets differ in exactly one label (the
``host`` values of ``checkout.latency_p95``), from a handful to a fleet of hundreds.

- The target is explained with `explain`, so its band is the very band the Explain screen
  draws. Every other peer gets the cheap band of `_phase_baseline` (per-phase medians of past
  cycles, a held-out MAD scale) on the target's grid, all peers at once as one matrix, so a
  fleet of 500 hosts costs about as much as one explanation.
- A peer counts as having *left its band* only after a sustained stretch outside: at least
  `sustained` long and at least two grid steps, so a single noisy sample does not make a
  quiet host look involved. Its `first_outside` is the start of that first stretch.
- At each step the peers' deviations are compared across the fleet with the modified
  z-score (`_fleet.modified_z`, Iglewicz & Hoaglin 1993): a host *stood out* while its
  deviation was an outlier among its peers' at the same moment, for a sustained stretch as
  above (with a handful of peers the spread across them is itself noisy). When the whole
  fleet moves, nobody stands out: a shared cause.
- Hosts that left their bands are grouped by DBSCAN (Ester et al. 1996) on the Jaccard
  distance between their stretches outside (above and below counted apart), or their first
  exits' distance when larger: hosts that left within about `together` of each other and
  were out at mostly the same steps, on the same side, form a group; a label value the whole
  group shares and the fleet does not is named ("all in zone b").
- A peer with less than a day of history before the window *joined*; one idle before the
  window that climbs steadily inside it *ramped up*. Both are named as such and kept out of
  the comparison: their bands would call them outliers for being new.

The eps, group size, "a day", "idle" and "steady" rules and the "within `together`" rule
are our own choices.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import pandas as pd
from scipy.spatial.distance import pdist, squareform
from scipy.stats import spearmanr

from ._align import bin_points, points_of
from ._band import excluded_mask
from ._checks import check_exclude, check_history, check_tolerance, check_window
from ._explain import Explanation, explain
from ._fleet import MODIFIED_Z_CUTOFF, dbscan, modified_z, shared_labels
from ._grid import check_step, infer_step, make_grid
from ._outside import (
    deviation_sd,
    first_run_starts,
    in_sustained_runs,
    peak,
    steps_needed,
)
from ._phase_baseline import nanmedian_rows, phase_baseline
from ._robust import quiet_nan_warnings
from ._sentences import fmt_duration, fmt_time

__all__ = ["PeerComparison", "PeerGroup", "PeerResult", "compare_peers"]

SUSTAINED = pd.Timedelta(minutes=5)
TOGETHER = pd.Timedelta(minutes=15)
JOINED_WITHIN = pd.Timedelta(days=1)  # less history than this: joined, not compared
IDLE_SHARE = 0.05  # history's last day at most this share of the window's peak: idle
STEADY_RANK = 0.8  # Spearman correlation of value with time for a steady climb
GROUP_EPS = 0.5  # Jaccard distance between stretches outside
GROUP_MIN = 3
MIN_CROSS_SECTION = 5  # hosts needed before standing out from them means anything
NAMES_LISTED = 6
METHOD = (
    "modified z-score across the peers at each step (Iglewicz & Hoaglin 1993), "
    f"|M| > {MODIFIED_Z_CUTOFF:g}"
)


@dataclass(frozen=True)
class PeerResult:
    """One series of the group. `deviation` is (value - expected) / band scale over the
    window; `status` is compared, joined, ramped or failed, and `error` says why a series
    was not compared (the others still are)."""

    key: str
    name: str
    is_target: bool
    minutes_outside: float | None = None
    first_outside: pd.Timestamp | None = None
    peak_deviation_sd: float | None = None
    deviation: pd.Series | None = None
    error: str | None = None
    status: str = "compared"
    stood_out_minutes: float | None = None
    stood_out_from: pd.Timestamp | None = None
    group: int | None = None

    @property
    def left_band(self) -> bool:
        return self.first_outside is not None


@dataclass(frozen=True)
class PeerGroup:
    """Peers that left their bands together (a DBSCAN cluster)."""

    members: list[str]
    first_outside: pd.Timestamp
    shared: dict[str, str]


@dataclass(frozen=True)
class PeerComparison:
    """The result of `compare_peers`: the target first, then the other peers by key."""

    target: str
    label: str
    window: tuple[pd.Timestamp, pd.Timestamp]
    results: list[PeerResult]
    available: int  # peers other than the target that were offered
    compared: int  # of those, how many were compared with the target
    summary: list[str] = field(default_factory=list)
    facts: dict[str, Any] = field(default_factory=dict)
    groups: list[PeerGroup] = field(default_factory=list)

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
    labels: Mapping[str, Mapping[str, str]] | None = None,
    sustained: pd.Timedelta | str = SUSTAINED,
    together: pd.Timedelta | str = TOGETHER,
    target_explanation: Explanation | None = None,
) -> PeerComparison:
    """Compare `target_key` with each of its peers over `window`.

    `peers` maps series key to points and *includes* the target under `target_key`.
    `names` gives each key a short display name (the differing label's value, "api-4");
    `label` names the label they differ in ("host"); `labels` gives each key its whole label
    set, so a group can be named by a label it shares ("zone"). `exclude` applies to every
    peer. `target_explanation`: the target already explained over the same points with the
    same options (the Explain screen's), so it is not fitted again.
    """
    if target_key not in peers:
        raise ValueError(f"the peers must include the target {target_key!r}")
    start, end = check_window(window)
    history = check_history(history)
    tolerance = check_tolerance(tolerance)
    spans = check_exclude(exclude)
    sustained, together = check_step(sustained), check_step(together)
    keys = [target_key, *sorted(k for k in peers if k != target_key)]
    display = {k: (names or {}).get(k, k) for k in keys}
    options = dict(
        window=(start, end), history=history, tolerance=tolerance, exclude=spans, tz=tz, unit=unit
    )
    target_exp: Explanation | str
    if target_explanation is not None:
        target_exp = target_explanation
    else:
        try:
            target_exp = explain(peers[target_key].rename(target_key), **options)
        except ValueError as error:
            target_exp = str(error)
    fleet = Fleet.build(keys, peers, target_exp, start, end, history, spans)
    results = fleet.results(display, tolerance, sustained)
    groups = find_groups(results, tolerance, together, labels or {})
    results = [
        replace_group(r, groups) if r.left_band and r.status == "compared" else r for r in results
    ]
    comparison = PeerComparison(
        target=target_key,
        label=label,
        window=(start, end),
        results=results,
        available=len(keys) - 1,
        compared=sum(r.status == "compared" for r in results[1:]),
        groups=groups,
    )
    facts = {
        **peer_facts(comparison),
        "sustained_minutes": sustained / pd.Timedelta(minutes=1),
        "cross_section_method": METHOD,
    }
    summary = peer_sentences(comparison, facts, tz, together)
    return replace(comparison, facts=facts, summary=summary)


@dataclass
class Fleet:
    """Every peer on the target's grid: values (peers x steps), the window's start column,
    and the target's explanation or the reason it failed."""

    keys: list[str]
    grid: pd.DatetimeIndex
    values: np.ndarray
    w0: int
    spans: list
    target: Explanation | str

    @classmethod
    def build(cls, keys, peers, target, start, end, history, spans) -> Fleet:
        if isinstance(target, Explanation):
            grid = target.frame.index
        else:
            grid = make_grid(start - history, end, common_step(keys, peers))
        step = grid[1] - grid[0]
        values = np.empty((len(keys), len(grid)))
        for i, key in enumerate(keys):
            values[i] = bin_points(*points_of(key, peers[key]), grid, step, snap="nearest")
        return cls(keys, grid, values, int(grid.searchsorted(start)), spans, target)

    @property
    def step(self) -> pd.Timedelta:
        return self.grid[1] - self.grid[0]

    def status(self) -> list[tuple[str, str | None]]:
        """Each peer's status and, when it is not compared, why."""
        finite = np.isfinite(self.values)
        first_seen = np.where(finite.any(axis=1), finite.argmax(axis=1), -1)
        last_seen = len(self.grid) - 1 - finite[:, ::-1].argmax(axis=1)
        day = int(JOINED_WITHIN / self.step)
        idle = idle_before(self.values, self.w0, day)
        out: list[tuple[str, str | None]] = []
        for i in range(len(self.keys)):
            if i == 0 and isinstance(self.target, str):
                out.append(("failed", self.target))
            elif first_seen[i] < 0:
                why = "the series has no values in the window or the history before it"
                out.append(("failed", why))
            elif last_seen[i] < self.w0:
                out.append(("failed", "the series has no values in the window"))
            elif first_seen[i] > self.w0 - day:
                when = self.grid[first_seen[i]].isoformat()
                why = f"joined at {when}, with less than a day of history: not compared"
                out.append(("joined", why))
            elif idle[i] and climbs(self.values[i, self.w0 :]):
                out.append(("ramped", "ramped up from idle inside the window: not compared"))
            else:
                out.append(("compared", None))
        return out

    def deviations(self, compared: np.ndarray) -> np.ndarray:
        """(value - expected) / scale in the window for every peer (NaN where not compared);
        the target's from its explanation."""
        out = np.full((len(self.keys), len(self.grid) - self.w0), np.nan)
        if compared.any():
            # Fitting every row is cheaper than copying out the compared ones.
            history = self.values
            if self.spans:
                history = history.copy()
                history[:, : self.w0][:, excluded_mask(self.grid[: self.w0], self.spans)] = np.nan
            base = phase_baseline(history, self.step, self.w0)
            with np.errstate(invalid="ignore"):
                z = (self.values[:, self.w0 :] - base.expected) / base.scale[:, None]
            out[compared] = z[compared]
        if compared[0]:
            out[0] = deviation_sd(self.target.frame.iloc[self.w0 :]).to_numpy()
        return out

    def results(
        self, display: Mapping[str, str], tolerance: float, sustained: pd.Timedelta
    ) -> list[PeerResult]:
        status, why = zip(*self.status(), strict=True)
        compared = np.array([s == "compared" for s in status])
        z = self.deviations(compared)
        need = steps_needed(self.step, sustained)
        outside = np.abs(np.nan_to_num(z, nan=0.0)) > tolerance
        first = first_run_starts(outside, need)
        minutes = self.step / pd.Timedelta(minutes=1)
        cross = np.full_like(z, np.nan)
        if compared.sum() >= MIN_CROSS_SECTION:
            cross[compared] = modified_z(z[compared])
        stood = in_sustained_runs(np.abs(np.nan_to_num(cross, nan=0.0)) > MODIFIED_Z_CUTOFF, need)
        stood_first = first_run_starts(stood, need)
        index = self.grid[self.w0 :]
        results = []
        for i, key in enumerate(self.keys):
            common = dict(key=key, name=display[key], is_target=i == 0, status=status[i])
            if status[i] != "compared":
                results.append(PeerResult(**common, error=why[i]))
                continue
            deviation = pd.Series(z[i], index=index, name=key)
            if i == 0:
                spent = float(self.target.facts["minutes_outside"])
            else:
                spent = float(outside[i].sum() * minutes)
            results.append(
                PeerResult(
                    **common,
                    minutes_outside=spent,
                    first_outside=index[first[i]] if first[i] >= 0 else None,
                    peak_deviation_sd=peak(deviation),
                    deviation=deviation,
                    stood_out_minutes=float(stood[i].sum() * minutes)
                    if compared.sum() >= MIN_CROSS_SECTION
                    else None,
                    stood_out_from=index[stood_first[i]] if stood_first[i] >= 0 else None,
                )
            )
        return results


def common_step(keys: list[str], peers: Mapping[str, pd.Series]) -> pd.Timedelta:
    """The step of the first peer with two timestamps or more (when the target could not be
    explained). Without one, every peer has too little data and fails with its own reason;
    the one-minute step is then only a placeholder."""
    for key in keys:
        index = peers[key].index
        if isinstance(index, pd.DatetimeIndex) and index.nunique() > 1:
            return infer_step(index)
    return pd.Timedelta(minutes=1)


def idle_before(values: np.ndarray, w0: int, day: int) -> np.ndarray:
    """Rows whose history's last day stayed near zero: its median size at most
    `IDLE_SHARE` of the window's peak size (and the window has a peak)."""
    with quiet_nan_warnings():
        top = np.nanmax(np.abs(values[:, w0:]), axis=1)
    recent = nanmedian_rows(np.abs(values[:, max(0, w0 - day) : w0]))
    return (top > 0) & (recent <= IDLE_SHARE * top)


def climbs(window: np.ndarray) -> bool:
    """A steady climb: Spearman's correlation of value with time at least `STEADY_RANK`."""
    ok = np.isfinite(window)
    if ok.sum() < 3:
        return False
    rho = spearmanr(np.flatnonzero(ok), window[ok]).statistic
    return bool(np.isfinite(rho) and rho >= STEADY_RANK)


def find_groups(
    results: list[PeerResult],
    tolerance: float,
    together: pd.Timedelta,
    labels: Mapping[str, Mapping[str, str]],
) -> list[PeerGroup]:
    """DBSCAN over the compared peers that left their bands; the distance between two is the
    larger of the Jaccard distance between their signed stretches outside and their first
    exits' distance in units of 2 x `together` (so exits `together` apart are 0.5 apart);
    groups largest first."""
    left = [i for i, r in enumerate(results) if r.status == "compared" and r.left_band]
    if len(left) < GROUP_MIN:
        return []
    z = np.vstack([results[i].deviation.to_numpy() for i in left])
    z = np.nan_to_num(z, nan=0.0)
    signed = np.hstack([z > tolerance, z < -tolerance])
    onsets = np.array([results[i].first_outside.value for i in left], dtype=float)
    apart = np.abs(onsets[:, None] - onsets[None, :]) / (2 * together.value)
    distance = np.maximum(squareform(pdist(signed, "jaccard")), np.minimum(apart, 1.0))
    labels_of = dbscan(distance, GROUP_EPS, GROUP_MIN)
    everyone = [r.key for r in results if r.status == "compared"]
    groups = []
    for g in range(labels_of.max() + 1):
        members = [results[left[j]] for j in np.flatnonzero(labels_of == g)]
        keys = [m.key for m in members]
        groups.append(
            PeerGroup(
                members=keys,
                first_outside=min(m.first_outside for m in members),
                shared=shared_labels(keys, everyone, labels),
            )
        )
    return sorted(groups, key=lambda g: (-len(g.members), g.first_outside))


def replace_group(result: PeerResult, groups: list[PeerGroup]) -> PeerResult:
    for n, group in enumerate(groups):
        if result.key in group.members:
            return replace(result, group=n)
    return result


def peer_facts(comparison: PeerComparison) -> dict[str, Any]:
    """Named numbers behind the sentences (times as ISO strings, JSON-able)."""
    target = comparison.results[0]
    others = [r for r in comparison.others if r.status == "compared"]
    left = [r for r in comparison.results if r.left_band]
    firsts = [r.first_outside for r in left]
    spread = (max(firsts) - min(firsts)) if len(firsts) > 1 else None
    by_status = {s: [r.name for r in comparison.others if r.status == s] for s in STATUSES}
    return {
        "target": comparison.target,
        "label": comparison.label,
        "peers_available": comparison.available,
        "peers_compared": comparison.compared,
        "peers_failed": len(by_status["failed"]),
        "peers_joined": by_status["joined"],
        "peers_ramped": by_status["ramped"],
        "target_left": target.left_band,
        "target_minutes_outside": target.minutes_outside,
        "target_stood_out_minutes": target.stood_out_minutes,
        "target_stood_out_from": iso(target.stood_out_from),
        "others_left": sum(r.left_band for r in others),
        "others_usable": len(others),
        "first_outside_earliest": min(firsts).isoformat() if firsts else None,
        "first_outside_spread_minutes": spread / pd.Timedelta(minutes=1)
        if spread is not None
        else None,
        "groups": [
            {
                "size": len(g.members),
                "members": g.members,
                "first_outside": g.first_outside.isoformat(),
                "shared_labels": g.shared,
            }
            for g in comparison.groups
        ],
    }


STATUSES = ("compared", "joined", "ramped", "failed")


def iso(when: pd.Timestamp | None) -> str | None:
    return when.isoformat() if when is not None else None


def peer_sentences(
    comparison: PeerComparison, f: dict[str, Any], tz: str, together: pd.Timedelta
) -> list[str]:
    target = comparison.results[0]
    usable, left = f["others_usable"], f["others_left"]
    group = f"{usable} other series that differ only in {comparison.label}"
    if target.error is not None:
        out = [f"{target.name} could not be compared with its peers: {target.error}."]
    elif usable == 0:
        out = [f"None of the peers of {target.name} could be compared: nothing to compare."]
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
            f"({listed(r.name for r in comparison.others if r.left_band)})."
        ]
    elif left:
        out = [
            f"{target.name} stayed inside its expected band, but {left} of the {group} left "
            f"theirs ({listed(r.name for r in comparison.others if r.left_band)})."
        ]
    else:
        out = [f"Neither {target.name} nor any of the {group} left its expected band."]
    if target.error is None and usable and f["first_outside_spread_minutes"] is not None:
        out.append(timing_sentence(f, comparison.label, tz, together))
    out.extend(group_sentences(comparison, tz))
    if target.left_band and target.stood_out_minutes is not None:
        out.append(stood_out_sentence(target, comparison.label, tz))
    if f["peers_joined"]:
        out.append(
            f"Joined within a day of the window, too new to have a band: "
            f"{listed(f['peers_joined'])}; named here, not counted as outliers."
        )
    if f["peers_ramped"]:
        out.append(
            f"Ramped up from idle inside the window (a steady climb from near zero): "
            f"{listed(f['peers_ramped'])}; named here, not counted as outliers."
        )
    if f["peers_failed"]:
        out.append(f"{f['peers_failed']} peer(s) could not be explained; see the table.")
    return out


def group_sentences(comparison: PeerComparison, tz: str) -> list[str]:
    """One sentence per group of peers that left together, unless the group is simply
    every compared series and no label sets it apart (the first sentence said it)."""
    compared = sum(r.status == "compared" for r in comparison.results)
    offered = len(comparison.results)
    names = {r.key: r.name for r in comparison.results}
    out = []
    for g in comparison.groups:
        if len(g.members) == compared and not g.shared:
            continue
        where = (
            ", all in " + " and ".join(f"{k} {v}" for k, v in g.shared.items()) if g.shared else ""
        )
        out.append(
            f"{len(g.members)} of the {offered} series that differ only in {comparison.label}"
            f"{where}, left their bands together, from "
            f"{fmt_time(g.first_outside.isoformat(), tz)} "
            f"({listed(names[k] for k in g.members)})."
        )
    return out


def stood_out_sentence(target: PeerResult, label: str, tz: str) -> str:
    if target.stood_out_from is None:
        return (
            f"{target.name} never stood out from its peers at the same moments ({METHOD}): "
            f"whatever moved it moved them too, so look for a cause shared across {label}s."
        )
    return (
        f"{target.name} stood out from its peers for {fmt_duration(target.stood_out_minutes)}, "
        f"first from {fmt_time(target.stood_out_from.isoformat(), tz)} ({METHOD})."
    )


def listed(names: Iterable[str]) -> str:
    """Names joined by commas, the first few only for a long list."""
    names = list(names)
    if len(names) <= NAMES_LISTED:
        return ", ".join(names)
    return f"{', '.join(names[:NAMES_LISTED])} and {len(names) - NAMES_LISTED} more"


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
