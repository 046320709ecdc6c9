"""screen(): which of many series left their expected bands in a window, and in what order.

Design, for speed (1,000 series of eight weeks of one-minute data in seconds):

1. A cheap first pass for every series. All series are binned onto one coarse grid (5 min by
   default) as one matrix; each row gets a seasonal baseline from per-phase medians of its
   past weeks (or days) and a MAD scale (`_phase_baseline`), all in vectorised numpy. In the
   window each series gets its deviation in robust sd, its first sustained stretch outside
   the band (the onset), its time outside, its peak and a score: the sd-minutes it spent
   beyond the band's edge (`excess_area`), so both how far and how long count.
2. The full `explain` for the best-scored series that left their bands in the first pass
   only (20 at most by default), at the series' own step,
   in worker processes when there are enough of them to pay for the start-up. Their onset,
   side, peak, time outside and score are then those of the explanation the Explain screen
   would show; the other rows keep the first pass's figures (`stage` says which).

The table ranks by score, explained rows first. The onsets of the explained series, in time
order, give the sentences; an earlier onset is a lead, not proof of cause, and they say so.
"""

from __future__ import annotations

import math
import multiprocessing
import os
from collections.abc import Iterable, Mapping
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from ._align import bin_points, points_of, spacing
from ._band import excluded_mask
from ._checks import check_exclude, check_history, check_tolerance, check_window
from ._clock import check_tz
from ._explain import DEFAULT_HISTORY, ENGINE_VERSION, Explanation, explain
from ._grid import check_step, make_grid
from ._outside import (
    deviation_sd,
    excess_area,
    first_run_starts,
    first_sustained,
    peak,
    steps_needed,
)
from ._peers import listed
from ._phase_baseline import phase_baseline
from ._sentences import fmt_duration, fmt_number, fmt_time

SCREEN_VERSION = "1.0.0"
COARSE_STEP = pd.Timedelta(minutes=5)
EXPLAIN_TOP = 20
SUSTAINED = pd.Timedelta(minutes=5)
CAP_SD = 10.0
MIN_PARALLEL = 4  # fewer explanations than this run in this process
ORDER_SENTENCES = 5
COLUMNS = [
    "rank",
    "key",
    "stage",
    "onset",
    "side",
    "peak_sd",
    "minutes_outside",
    "score",
    "note",
]
CAUTION = (
    "An earlier onset is a lead, not proof of cause: the series that left first may share "
    "a cause with the others, or only show it sooner. Check how they are connected."
)


@dataclass(frozen=True)
class ScreenResult:
    """The result of `screen`. `table` has one row per screened series (columns `COLUMNS`),
    ranked by score, the explained ones first; `explanations` holds the full explanation of
    each explained series; `skipped` says why a series could not be screened."""

    table: pd.DataFrame
    window: tuple[pd.Timestamp, pd.Timestamp]
    parameters: dict[str, Any]
    summary: list[str]
    facts: dict[str, Any]
    explanations: dict[str, Explanation] = field(default_factory=dict)
    skipped: dict[str, str] = field(default_factory=dict)
    engine_version: str = ENGINE_VERSION
    screen_version: str = SCREEN_VERSION

    @property
    def onsets(self) -> pd.DataFrame:
        """The explained series that left their bands, in the order they left."""
        return onset_order(self.table)


def screen(
    series_by_key: Mapping[str, pd.Series],
    window: tuple,
    *,
    history: pd.Timedelta | str = DEFAULT_HISTORY,
    tolerance: float = 3.0,
    exclude: Iterable = (),
    tz: str = "UTC",
    coarse_step: pd.Timedelta | str = COARSE_STEP,
    explain_top: int = EXPLAIN_TOP,
    sustained: pd.Timedelta | str = SUSTAINED,
    workers: int | None = None,
) -> ScreenResult:
    """Rank the series of `series_by_key` (key -> points) by how far and how long each left
    its own expected band in `window`, and order those that did by when they left it.

    `history`, `tolerance`, `exclude` and `tz` mean what they mean for `explain` and apply to
    every series. `coarse_step` is the first pass's grid step; `explain_top` how many of the
    best-scored series that left their bands in the first pass get the full explanation; a
    stretch outside counts from `sustained`; `workers` is the number of processes for the
    explanations (None: up to two, when it pays; 1: all in this process).
    """
    start, end = check_window(window)
    history = check_history(history)
    tolerance = check_tolerance(tolerance)
    spans = check_exclude(exclude)
    tz = check_tz(tz)
    coarse = check_step(coarse_step)
    sustained = check_step(sustained)
    if not isinstance(explain_top, int) or explain_top < 0:
        raise ValueError(f"explain_top must be a whole number of 0 or more, got {explain_top!r}")
    if workers is not None and (not isinstance(workers, int) or workers < 1):
        raise ValueError(f"workers must be a whole number of 1 or more, got {workers!r}")
    if not series_by_key:
        raise ValueError("there are no series to screen")
    if history < coarse * 2:
        raise ValueError(f"history must hold at least two steps of {coarse}, got {history}")
    if end - start < coarse:
        raise ValueError(f"the window must be at least one step of {coarse} long")

    grid = make_grid(start - history, end - coarse, coarse)  # whole slots [t, t + step)
    w0 = int(grid.searchsorted(start))
    keys, rows, skipped = coarse_rows(series_by_key, grid, coarse, w0)
    if spans:
        rows[:, :w0][:, excluded_mask(grid[:w0], spans)] = np.nan
    first = first_pass(rows, grid, w0, tolerance, sustained)
    table = pd.DataFrame({"key": keys, "stage": "coarse", **first, "note": ""})
    table = table.sort_values(["score", "key"], ascending=[False, True], kind="stable")

    candidates = table[table["onset"].notna()]["key"].head(explain_top).tolist()
    options = dict(window=(start, end), history=history, tolerance=tolerance, exclude=spans, tz=tz)
    margin = pd.Timedelta(days=1)
    trimmed = {
        k: around(series_by_key[k], start - history - margin, end + margin) for k in candidates
    }
    explained = explain_all(trimmed, options, workers)
    explanations = {k: e for k, e in explained.items() if isinstance(e, Explanation)}
    table = merge_explained(table, explained, tolerance, sustained)

    parameters = {
        "window": [start.isoformat(), end.isoformat()],
        "history_seconds": history.total_seconds(),
        "tolerance": tolerance,
        "exclude": [[s.isoformat(), e.isoformat()] for s, e in spans],
        "tz": tz,
        "coarse_step_seconds": coarse.total_seconds(),
        "explain_top": explain_top,
        "sustained_seconds": sustained.total_seconds(),
        "cap_sd": CAP_SD,
    }
    facts = screen_facts(table, skipped, len(series_by_key))
    return ScreenResult(
        table=table,
        window=(start, end),
        parameters=parameters,
        summary=screen_sentences(table, facts, tz, sustained),
        facts=facts,
        explanations=explanations,
        skipped=skipped,
    )


def coarse_rows(
    series_by_key: Mapping[str, pd.Series], grid: pd.DatetimeIndex, coarse: pd.Timedelta, w0: int
) -> tuple[list[str], np.ndarray, dict[str, str]]:
    """Each usable series binned onto the coarse grid; a series sampled more sparsely than
    the grid is carried forward over its own spacing, so its stretches stay unbroken."""
    keys, skipped = [], {}
    matrix = np.empty((len(series_by_key), len(grid)))
    for key, series in series_by_key.items():
        ns, values = points_of(key, series)
        row = bin_points(ns, values, grid, coarse)
        if not np.isfinite(row[:w0]).any():
            skipped[key] = "no values in the history before the window"
            continue
        if not np.isfinite(row[w0:]).any():
            skipped[key] = "no values in the window"
            continue
        reach = math.ceil(spacing(ns) / coarse.value) - 1
        if reach > 0:
            row = pd.Series(row).ffill(limit=reach).to_numpy()
        matrix[len(keys)] = row
        keys.append(key)
    return keys, matrix[: len(keys)], skipped


def first_pass(
    rows: np.ndarray,
    grid: pd.DatetimeIndex,
    w0: int,
    tolerance: float,
    sustained: pd.Timedelta,
) -> dict[str, Any]:
    """The coarse figures of every row: onset, side, peak, minutes outside, score."""
    step = grid[1] - grid[0]
    minutes = step / pd.Timedelta(minutes=1)
    base = phase_baseline(rows, step, w0)
    with np.errstate(invalid="ignore"):
        z = (rows[:, w0:] - base.expected) / base.scale[:, None]
    outside = np.abs(np.nan_to_num(z, nan=0.0)) > tolerance
    onset_col = first_run_starts(outside, steps_needed(step, sustained))
    idx = np.arange(len(rows))
    at_onset = z[idx, np.maximum(onset_col, 0)]
    size = np.nan_to_num(np.abs(z), nan=-1.0)
    worst = z[idx, size.argmax(axis=1)] if z.shape[1] else np.full(len(rows), np.nan)
    window_times = grid[w0:]
    return {
        "onset": pd.DatetimeIndex(
            np.where(onset_col >= 0, window_times.asi8[np.maximum(onset_col, 0)], pd.NaT.value),
            tz="UTC",
        ),
        "side": np.where(onset_col < 0, None, np.where(at_onset > 0, "above", "below")),
        "peak_sd": np.round(worst, 2),
        "minutes_outside": outside.sum(axis=1) * minutes,
        "score": np.round(excess_area(z, tolerance, CAP_SD, minutes), 2),
    }


def around(series: pd.Series, lo: pd.Timestamp, hi: pd.Timestamp) -> pd.Series:
    """The part of a series between lo and hi (less to send to a worker process)."""
    ns = series.index.as_unit("ns").asi8
    if series.index.tz is None:
        lo, hi = lo.tz_localize(None), hi.tz_localize(None)
    return series[(ns >= lo.value) & (ns <= hi.value)]


def explain_one(item: tuple[str, pd.Series], options: dict[str, Any]) -> Explanation | str:
    key, series = item
    try:
        return explain(series.rename(key), **options)
    except ValueError as error:
        return str(error)


def explain_all(
    series_by_key: dict[str, pd.Series], options: dict[str, Any], workers: int | None
) -> dict[str, Explanation | str]:
    """`explain` each series, in worker processes when that pays (fork start only: a fresh
    interpreter would spend longer importing than explaining)."""
    items = list(series_by_key.items())
    if workers is None:
        workers = min(2, os.cpu_count() or 1) if len(items) >= MIN_PARALLEL else 1
    forking = "fork" in multiprocessing.get_all_start_methods()
    if workers > 1 and len(items) > 1 and forking:
        context = multiprocessing.get_context("fork")
        with ProcessPoolExecutor(workers, mp_context=context) as pool:
            results = list(pool.map(explain_one, items, [options] * len(items)))
    else:
        results = [explain_one(item, options) for item in items]
    return {key: result for (key, _), result in zip(items, results, strict=True)}


def explained_row(exp: Explanation, tolerance: float, sustained: pd.Timedelta) -> dict[str, Any]:
    in_window = exp.frame[exp.frame["in_window"]]
    if in_window["expected"].isna().all():
        raise ValueError("no history before the window to fit")
    deviation = deviation_sd(in_window)
    onset = first_sustained(in_window["outside"], exp.step, sustained)
    minutes = exp.step / pd.Timedelta(minutes=1)
    side = None if onset is None else ("above" if deviation.loc[onset] > 0 else "below")
    return {
        "stage": "explained",
        "onset": onset if onset is not None else pd.NaT,
        "side": side,
        "peak_sd": peak(deviation),
        "minutes_outside": float(exp.facts["minutes_outside"]),
        "score": round(float(excess_area(deviation.to_numpy(), tolerance, CAP_SD, minutes)), 2),
    }


def merge_explained(
    table: pd.DataFrame,
    explained: dict[str, Explanation | str],
    tolerance: float,
    sustained: pd.Timedelta,
) -> pd.DataFrame:
    """The table with the explained rows' figures replaced, re-ranked: explained first."""
    table = table.set_index("key")
    for key, exp in explained.items():
        try:
            if isinstance(exp, str):
                raise ValueError(exp)
            for column, value in explained_row(exp, tolerance, sustained).items():
                table.at[key, column] = value
        except ValueError as error:
            table.at[key, "note"] = f"could not be explained: {error}; first-pass figures"
    table = table.reset_index()
    order = table.assign(first=table["stage"] != "explained")
    table = table.loc[
        order.sort_values(["first", "score", "key"], ascending=[True, False, True]).index
    ]
    table.insert(0, "rank", np.arange(1, len(table) + 1))
    return table[COLUMNS].reset_index(drop=True)


def screen_facts(table: pd.DataFrame, skipped: dict[str, str], offered: int) -> dict[str, Any]:
    explained = table[table["stage"] == "explained"]
    return {
        "series_offered": offered,
        "series_screened": len(table),
        "series_skipped": len(skipped),
        "series_left": int(table["onset"].notna().sum()),
        "series_explained": len(explained),
        "explained_left": int(explained["onset"].notna().sum()),
    }


def screen_sentences(
    table: pd.DataFrame, facts: dict[str, Any], tz: str, sustained: pd.Timedelta
) -> list[str]:
    n, left = facts["series_screened"], facts["series_left"]
    if left == 0:
        out = [
            f"None of the {fmt_number(n)} series screened left its expected band for "
            f"{fmt_duration(sustained / pd.Timedelta(minutes=1))} or more in the window."
        ]
    else:
        out = [
            f"{fmt_number(left)} of the {fmt_number(n)} series screened left their expected "
            f"bands in the window; the {facts['series_explained']} that went furthest and "
            "longest were explained in full."
        ]
    moments = onset_moments(onset_order(table))
    for i, (onset, keys, side) in enumerate(moments[:ORDER_SENTENCES]):
        when = fmt_time(onset.isoformat(), tz, with_date=i == 0)
        if len(keys) == 1:
            text = f"{keys[0]} left its band at {when} ({side} it)"
        else:
            text = f"{len(keys)} series left their bands at {when}: {listed(keys)}"
        if i + 1 < len(moments):
            later, later_keys, _ = moments[i + 1]
            gap = fmt_duration((later - onset) / pd.Timedelta(minutes=1))
            who = later_keys[0] if len(later_keys) == 1 else f"the next {len(later_keys)}"
            text += f", {gap} before {who}"
        out.append(text + ".")
    if moments:
        out.append(CAUTION)
    if facts["series_skipped"]:
        out.append(f"{facts['series_skipped']} series could not be screened; see the skipped list.")
    return out


def onset_moments(onsets: pd.DataFrame) -> list[tuple[pd.Timestamp, list[str], str]]:
    """The onsets grouped by time: (when, keys in rank order, side of the first)."""
    return [
        (when, group["key"].tolist(), group["side"].iloc[0])
        for when, group in onsets.groupby("onset", sort=True)
    ]


def onset_order(table: pd.DataFrame) -> pd.DataFrame:
    left = table[(table["stage"] == "explained") & table["onset"].notna()]
    return left.sort_values(["onset", "rank"], kind="stable")
