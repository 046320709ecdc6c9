"""Benchmark: the expected band on real operations data, beside two plain bands.

Data: benchmarks/data/nab, cloud host metrics and road traffic sensors from the Numenta
Anomaly Benchmark (MIT licence; see its README), with labelled anomaly windows.

What is evaluated, for every series:

* normal days: every normal stretch (between labelled windows, the first one starting
  `MIN_HISTORY` after the first sample) is cut into days from its own start, the last one
  shorter; each day's band is built from all the history before it (at most `MAX_HISTORY`,
  labelled windows included, as an engineer would have it), and its samples are the normal
  samples;
* labelled windows: each window's band is built from the history before it.

Figures, per method, at width 3 (the default):

* out-of-band stretches per week of normal data: runs of consecutive normal samples
  outside the band (samples without a value are stepped over), pooled over all series and
  divided by the normal time in weeks;
* the share of normal samples outside the band;
* recall: the share of labelled windows with at least one sample outside;
* AUC: how well each window's largest deviation tells labelled windows from normal days
  (the whole days above); a deviation is measured in units of the band's
  own half-width on its side, times 3, so that every method is read on its own band.

Methods, all on the grid whyfired's explain() puts the data on:

* whyfired: `explain()` as the Explain screen calls it;
* seasonal naive: the value one day earlier (whole days back, so the window is never
  used), +- 3 robust sds (MAD x 1.4826) of the history's day-over-day differences;
* STL + MAD: statsmodels STL(period = one day, robust=True, every smoother's jump 10% of
  its span, as in bench_explain.py) on the history with gaps interpolated; the last trend
  value plus the last cycle's seasonal, +- 3 robust sds of STL's residual.

With --curve, every method also runs at other widths (whyfired at `CURVE_WIDTHS`, the plain
bands, whose width is not calibrated, up to 50 sds) and the script prints, for each, the
highest recall among the widths that stay within 5 stretches a week: the fair comparison,
since any band finds more by being left more often.

Bars: at most 5 stretches per week, at most 1% of normal samples outside, recall at least
0.90, AUC at least 0.85 (all for whyfired; the other two are printed for comparison).

    python benchmarks/bench_real_data.py            # all three methods (about a minute)
    python benchmarks/bench_real_data.py --only whyfired
    python benchmarks/bench_real_data.py --curve    # and every width: recall within the bar
"""

from __future__ import annotations

import argparse
import json
import math
import sys
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
from scipy.stats import rankdata

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from webapp.analysis import explain  # noqa: E402
from webapp.analysis._robust import robust_scale  # noqa: E402

DATA = Path(__file__).resolve().parent / "data" / "nab"
DAY = pd.Timedelta(days=1)
WEEK = pd.Timedelta(weeks=1)
MIN_HISTORY = 2 * DAY
MAX_HISTORY = 8 * WEEK
TOLERANCE = 3.0
BARS = {"stretches per week": 5.0, "normal outside": 0.01, "recall": 0.90, "AUC": 0.85}


# --- the data -------------------------------------------------------------------------------


@dataclass(frozen=True)
class Labelled:
    name: str
    series: pd.Series
    windows: list[tuple[pd.Timestamp, pd.Timestamp]]


def utc(text: str) -> pd.Timestamp:
    return pd.Timestamp(text, tz="UTC")


def load() -> list[Labelled]:
    listing = json.loads((DATA / "windows.json").read_text())
    out = []
    for name, entry in sorted(listing.items()):
        frame = pd.read_csv(DATA / name)
        index = pd.DatetimeIndex(pd.to_datetime(frame["timestamp"]), tz="UTC")
        series = pd.Series(frame["value"].to_numpy(dtype=float), index=index, name=name)
        windows = [
            (pd.Timestamp(s, tz="UTC"), pd.Timestamp(e, tz="UTC")) for s, e in entry["windows"]
        ]
        out.append(Labelled(name, series.sort_index(), windows))
    return out


# --- the three bands ------------------------------------------------------------------------
# The two plain bands take the regular-grid values (NaN = no value), the mask of the window
# slots and the grid step, and return the expected values on the window slots and one
# robust sd, from history only: the band at width w is expected +- w sds (`at_width`).

Band = tuple[np.ndarray, np.ndarray, np.ndarray]
Spread = tuple[np.ndarray, float]


def at_width(spread: Spread, width: float) -> Band:
    expected, scale = spread
    return expected, expected - width * scale, expected + width * scale


def seasonal_naive(values: np.ndarray, in_window: np.ndarray, step: pd.Timedelta) -> Spread:
    per_day = round(DAY / step)
    history = values[~in_window]
    window_at = np.flatnonzero(in_window)
    days_back = (window_at - window_at[0]) // per_day + 1  # whole days, before the window
    expected = values[window_at - days_back * per_day]
    return expected, robust_scale(history[per_day:] - history[:-per_day])


def stl_mad(values: np.ndarray, in_window: np.ndarray, step: pd.Timedelta) -> Spread:
    from statsmodels.tsa.seasonal import STL

    per_day = round(DAY / step)
    history = pd.Series(values[~in_window]).interpolate(limit_direction="both").to_numpy()
    n_window = int(in_window.sum())
    if len(history) < 2 * per_day or not np.isfinite(history).all():
        return np.full(n_window, np.nan), np.nan
    seasonal, trend = 7, stl_trend_span(per_day)
    fit = STL(
        history,
        period=per_day,
        seasonal=seasonal,
        trend=trend,
        robust=True,
        seasonal_jump=math.ceil(0.1 * seasonal),
        trend_jump=math.ceil(0.1 * trend),
        low_pass_jump=math.ceil(0.1 * (per_day + 1)),
    ).fit()
    ahead = np.arange(n_window)
    seasonal = fit.seasonal[len(history) - per_day + ahead % per_day]
    return fit.trend[-1] + seasonal, robust_scale(fit.resid)


def stl_trend_span(period: int, seasonal: int = 7) -> int:
    """STL's default trend span for this period and seasonal span (odd)."""
    span = math.ceil(1.5 * period / (1 - 1.5 / seasonal))
    return span + (span % 2 == 0)


def whyfired_bands(series: pd.Series, start: pd.Timestamp, end: pd.Timestamp, widths):
    """explain() on the window at each width; returns its grid values (a series), window
    mask, step and {width: band}."""
    history = min(MAX_HISTORY, start - series.index[0])
    bands = {}
    for width in widths:
        exp = explain(series, window=(start, end), history=history, tolerance=width)
        frame = exp.frame
        w = frame["in_window"].to_numpy()
        bands[width] = tuple(frame[c].to_numpy()[w] for c in ("expected", "lower", "upper"))
    return frame["value"], w, exp.step, bands


METHODS: dict[str, Callable | None] = {
    "whyfired": None,  # computed by explain() itself, on the grid the others then use
    "seasonal naive": seasonal_naive,
    "STL + MAD": stl_mad,
}


# --- scoring one window ---------------------------------------------------------------------


def outside(values: np.ndarray, band: Band) -> np.ndarray:
    expected, lower, upper = band
    with np.errstate(invalid="ignore"):
        return (values < lower) | (values > upper)


def stretches(flags: np.ndarray) -> int:
    """Runs of consecutive True."""
    padded = np.concatenate(([False], flags))
    return int(np.sum(padded[1:] & ~padded[:-1]))


def largest_deviation(values: np.ndarray, band: Band) -> float:
    """Largest distance from expected in units of the band's half-width on that side, x 3;
    minus infinity when nothing can be compared."""
    expected, lower, upper = band
    with np.errstate(invalid="ignore", divide="ignore"):
        half = np.where(values >= expected, upper - expected, expected - lower)
        score = TOLERANCE * np.abs(values - expected) / half
    score = np.where(np.abs(values - expected) == 0, 0.0, score)
    score = score[~np.isnan(score)]
    return float(score.max()) if len(score) else -np.inf


@dataclass
class Tally:
    normal_samples: int = 0
    normal_outside: int = 0
    normal_stretches: int = 0
    step_weeks: float = 0.0  # normal time in weeks
    found: int = 0
    windows: int = 0
    labelled_scores: list[float] = field(default_factory=list)
    normal_scores: list[float] = field(default_factory=list)

    def add_normal(self, values, band, normal, step, whole_day: bool) -> None:
        have = normal & np.isfinite(values) & np.isfinite(band[0])
        flags = outside(values[have], tuple(b[have] for b in band))
        self.normal_samples += int(have.sum())
        self.normal_outside += int(flags.sum())
        self.normal_stretches += stretches(flags)
        self.step_weeks += int(normal.sum()) * (step / WEEK)
        if whole_day:
            self.normal_scores.append(largest_deviation(values[have], tuple(b[have] for b in band)))

    def add_labelled(self, values, band) -> None:
        self.windows += 1
        self.found += bool(outside(values, band).any())
        self.labelled_scores.append(largest_deviation(values, band))

    def figures(self) -> dict[str, float]:
        return {
            "stretches per week": self.normal_stretches / self.step_weeks,
            "normal outside": self.normal_outside / max(self.normal_samples, 1),
            "recall": self.found / max(self.windows, 1),
            "AUC": auc(self.labelled_scores, self.normal_scores),
        }


def auc(positive: list[float], negative: list[float]) -> float:
    """Area under the ROC curve: the chance a labelled window scores above a normal day
    (ties count half), from the Mann-Whitney rank sum."""
    scores = np.concatenate([positive, negative])
    scores = np.where(np.isfinite(scores), scores, np.where(scores > 0, 1e300, -1e300))
    ranks = rankdata(scores)
    n_pos, n_neg = len(positive), len(negative)
    return float((ranks[:n_pos].sum() - n_pos * (n_pos + 1) / 2) / (n_pos * n_neg))


# --- the run --------------------------------------------------------------------------------


def in_any(index: pd.DatetimeIndex, windows) -> np.ndarray:
    mask = np.zeros(len(index), dtype=bool)
    for start, end in windows:
        mask |= (index >= start) & (index <= end)
    return mask


def normal_days(series: pd.Series, windows) -> list[tuple[pd.Timestamp, pd.Timestamp, bool]]:
    """The normal stretches (outside every labelled window, from `MIN_HISTORY` after the first
    sample to the last), each cut into days from its own start: (start, end, whole day)."""
    edges, begin = [], series.index[0] + MIN_HISTORY
    for start, end in sorted(windows):
        edges.append((begin, start))
        begin = max(begin, end + pd.Timedelta(seconds=1))
    edges.append((begin, series.index[-1] + pd.Timedelta(seconds=1)))
    days = []
    for begin, stop in edges:
        day = begin
        while day < stop:
            end = min(day + DAY, stop)
            days.append((day, end - pd.Timedelta(seconds=1), end - day == DAY))
            day = end
    return days


Tallies = dict[str, dict[str, Tally]]  # {group: {method: Tally}}


def evaluate(
    items: list[Labelled], names: list[str], widths: list[float], peer_widths: list[float]
) -> dict[float, Tallies]:
    """{width: {group: {method: Tally}}} for the groups cloud_hosts and traffic: whyfired at
    `widths` (an explain() call each), the plain bands at `peer_widths` (cheap)."""
    every = sorted({*widths, *peer_widths})
    tallies: dict[float, Tallies] = {width: {} for width in every}

    def bands(values, w, step, own):
        """{method: {width: band}} on one window."""
        out = {"whyfired": own}
        for name in names:
            if METHODS[name] is not None:
                spread = METHODS[name](values.to_numpy(), w, step)
                out[name] = {width: at_width(spread, width) for width in peer_widths}
        return out

    for number, item in enumerate(items, 1):
        print(f"  [{number}/{len(items)}] {item.name}", file=sys.stderr, flush=True)
        group = item.name.split("/")[0]
        for width in every:
            tallies[width].setdefault(group, {m: Tally() for m in names})
        for start, end, whole in normal_days(item.series, item.windows):
            values, w, step, own = whyfired_bands(item.series, start, end, widths)
            normal = ~in_any(values.index[w], item.windows)
            for name, per_width in bands(values, w, step, own).items():
                for width, band in per_width.items():
                    tally = tallies[width][group][name]
                    tally.add_normal(values.to_numpy()[w], band, normal, step, whole)
        for start, end in item.windows:
            values, w, step, own = whyfired_bands(item.series, start, end, widths)
            for name, per_width in bands(values, w, step, own).items():
                for width, band in per_width.items():
                    tallies[width][group][name].add_labelled(values.to_numpy()[w], band)
    return tallies


def pooled(tallies: Tallies, name: str) -> Tally:
    total = Tally()
    for per_method in tallies.values():
        t = per_method[name]
        for attr in ("normal_samples", "normal_outside", "normal_stretches"):
            setattr(total, attr, getattr(total, attr) + getattr(t, attr))
        total.step_weeks += t.step_weeks
        total.found += t.found
        total.windows += t.windows
        total.labelled_scores += t.labelled_scores
        total.normal_scores += t.normal_scores
    return total


CURVE_WIDTHS = [2.0, 2.5, 3.0, 3.5, 4.0, 5.0, 6.0]
PEER_WIDTHS = [*CURVE_WIDTHS, 8.0, 10.0, 15.0, 20.0, 30.0, 50.0]  # theirs are not calibrated


def print_table(tallies: Tallies, names: list[str]) -> None:
    header = f"{'':26}{'stretches/wk':>13}{'normal out':>12}{'recall':>8}{'AUC':>7}"
    for group in [*tallies, "pooled"]:
        print(f"\n{group}" + ("" if group != "pooled" else " (cloud_hosts + traffic)"))
        print(header)
        for name in names:
            t = pooled(tallies, name) if group == "pooled" else tallies[group][name]
            f = t.figures()
            print(
                f"  {name:24}{f['stretches per week']:>13.1f}{f['normal outside']:>12.2%}"
                f"{f['recall']:>8.2f}{f['AUC']:>7.2f}"
            )


def print_curve(by_width: dict[float, Tallies], names: list[str]) -> None:
    """Each method at every width, pooled, and the most it finds within the stretch bar: the
    fair comparison, since a wider band is left less often and finds less."""
    budget = BARS["stretches per week"]
    print(f"\nEvery width, pooled{'':7}{'width':>7}{'stretches/wk':>13}", end="")
    print(f"{'normal out':>12}{'recall':>8}")
    for name in names:
        best = None
        for width, tallies in by_width.items():
            t = pooled(tallies, name)
            if not t.windows:
                continue  # not run at this width
            f = t.figures()
            print(
                f"  {name:24}{width:>7g}{f['stretches per week']:>13.1f}"
                f"{f['normal outside']:>12.2%}{f['recall']:>8.2f}"
            )
            if f["stretches per week"] <= budget and (best is None or f["recall"] > best[1]):
                best = (width, f["recall"])
        found = (
            "none of these widths" if best is None else f"recall {best[1]:.2f} at width {best[0]:g}"
        )
        print(f"  {name}: at most {budget:g} stretches a week: {found}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--only", choices=list(METHODS), help="run one method only")
    parser.add_argument(
        "--curve", action="store_true", help=f"also every width of {CURVE_WIDTHS} (slower)"
    )
    args = parser.parse_args()
    names = [args.only] if args.only else list(METHODS)
    if "whyfired" not in names:
        names = ["whyfired", *names]  # its explain() call provides the grid
    began = time.perf_counter()
    widths = CURVE_WIDTHS if args.curve else [TOLERANCE]
    by_width = evaluate(load(), names, widths, PEER_WIDTHS if args.curve else widths)
    tallies = by_width[TOLERANCE]
    print(f"NAB subset, width {TOLERANCE:g}, history at most {MAX_HISTORY.days // 7} weeks")
    print_table(tallies, names)
    if args.curve:
        print_curve(by_width, names)
    t = pooled(tallies, "whyfired")
    f = t.figures()
    print(
        f"\nwhyfired pooled at width {TOLERANCE:g}: {t.step_weeks:.1f} weeks of normal data, "
        f"{t.normal_samples:,} normal samples, {t.windows} labelled windows, "
        f"{len(t.normal_scores)} normal days"
    )
    for key, bar in BARS.items():
        ok = f[key] <= bar if key in ("stretches per week", "normal outside") else f[key] >= bar
        sign = "at most" if key in ("stretches per week", "normal outside") else "at least"
        print(f"  {key}: {f[key]:.4g} (bar: {sign} {bar:g})  {'PASS' if ok else 'FAIL'}")
    print(f"({time.perf_counter() - began:.0f} s)")


if __name__ == "__main__":
    main()
