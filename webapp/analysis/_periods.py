"""Which seasonal periods the history supports, and how strongly.

Candidates: one day and one week (the usual cycles of service metrics, common practice),
plus up to two peaks of the autocorrelation function that are not a multiple or a fraction
of those. The autocorrelation is computed with gaps masked out (each lag averages only the
pairs of samples that are both present), so nights and weekends without data do not
invent cycles.

A candidate is tried only with two full cycles of history (two periods between the first and
last usable sample, and at least two cycles with a quarter of their samples present) and
with at least four samples per cycle. It is kept when its seasonal strength reaches
`STRENGTH_CUTOFF`. Strength is the measure of Wang, Smith & Hyndman (2006), as in Hyndman &
Athanasopoulos, FPP3 section 4.3: F_S = max(0, 1 - Var(R) / Var(S + R)), computed per
seasonal component as for multiple seasonal periods. Two choices of our own:

* R is an out-of-cycle residual: the pattern is estimated on even cycles and scored on odd
  cycles and the other way round. Scored in-sample, a pattern fitted to pure noise over k
  cycles earns a strength near 1/k (0.5 with two weeks of history), which would keep cycles
  that are not there; scored out of cycle, noise earns about zero.
* Both variances leave out the samples whose residual is more than 5 robust sds (MAD x
  1.4826) from its median, so one past incident in the history does not decide whether a
  cycle is kept; on clean data nothing is left out. Tests check the result against the
  strength of a known sine in noise and against the formula applied to MSTL's components.

The cut-off 0.25 is our choice: a cycle that explains under a quarter of what the other
components leave is not worth the noise its estimate brings into the band.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from ._clock import wall_clock_ns
from ._decompose import Decomposition, decompose, period_label, seasonal_table
from ._grid import ROUND_STEPS
from ._robust import robust_scale

DAY = pd.Timedelta(days=1)
WEEK = pd.Timedelta(weeks=1)
STRENGTH_CUTOFF = 0.25
MIN_SAMPLES_PER_CYCLE = 4
MIN_CYCLE_COVERAGE = 0.25
ACF_MIN_HEIGHT = 0.2
ACF_MAX_POINTS = 4096
ACF_MAX_CANDIDATES = 2
FUNDAMENTAL_SHARE = 0.8
ACF_TOP_PEAKS = 10
OUTLIER_SDS = 5.0
HARMONIC_TOLERANCE = 0.05


@dataclass
class Candidate:
    period: pd.Timedelta
    source: str
    strength: float | None = None
    kept: bool = False
    reason: str = ""

    def as_dict(self) -> dict:
        return {
            "label": period_label(self.period),
            "seconds": float(self.period.total_seconds()),
            "source": self.source,
            "strength": None if self.strength is None else round(float(self.strength), 4),
            "kept": self.kept,
            "reason": self.reason,
        }


def usable_cycles(baseline: pd.Series, period: pd.Timedelta, tz: str) -> float:
    """Cycles of usable history: the span of valid samples in periods, capped by the number
    of cycles that have at least a quarter of their samples."""
    valid = baseline.index[baseline.notna().to_numpy()]
    if len(valid) < 2:
        return 0.0
    step = baseline.index[1] - baseline.index[0]
    span = (valid[-1] - valid[0] + step) / period
    cycles = wall_clock_ns(valid, tz) // period.value
    per_cycle = np.bincount(cycles - cycles.min()) / max(1.0, period / step)
    return float(min(span, np.count_nonzero(per_cycle >= MIN_CYCLE_COVERAGE)))


def autocorrelation_peaks(baseline: pd.Series) -> list[pd.Timedelta]:
    """Lags of the highest local maxima of the gap-masked autocorrelation, highest first, each
    replaced by its fundamental: the shortest peak it is a multiple of whose height is at
    least 80% of its own (the peaks of a cycle repeat at every multiple of its period)."""
    step = baseline.index[1] - baseline.index[0]
    y = baseline.to_numpy(dtype=float)
    factor = acf_bin_factor(len(y), step)
    if factor > 1:
        pad = (-len(y)) % factor
        blocks = np.concatenate([y, np.full(pad, np.nan)]).reshape(-1, factor)
        ok = np.isfinite(blocks)
        with np.errstate(invalid="ignore", divide="ignore"):
            y = np.where(ok, blocks, 0).sum(axis=1) / ok.sum(axis=1)
    n = len(y)
    if n < 8 or np.isfinite(y).sum() < 8:
        return []
    series = pd.Series(y)
    detrended = series - series.rolling(max(3, n // 4), center=True, min_periods=1).median()
    x = detrended.to_numpy()
    mask = np.isfinite(x).astype(float)
    x = np.where(mask > 0, x - np.nanmean(x), 0.0)
    size = 1 << int(np.ceil(np.log2(2 * n)))
    num = np.fft.irfft(np.abs(np.fft.rfft(x, size)) ** 2, size)[:n]
    pairs = np.fft.irfft(np.abs(np.fft.rfft(mask, size)) ** 2, size)[:n]
    with np.errstate(invalid="ignore", divide="ignore"):
        acf = (num / np.round(pairs)) / (num[0] / pairs[0])
    acf[np.round(pairs) < max(10, mask.sum() / 4)] = np.nan
    lags = np.arange(2, n // 2)
    lags = lags[
        (acf[lags] > acf[lags - 1]) & (acf[lags] >= acf[lags + 1]) & (acf[lags] >= ACF_MIN_HEIGHT)
    ]
    ordered: list[int] = []
    for lag in lags[np.argsort(-acf[lags])][:ACF_TOP_PEAKS]:
        near = lags[acf[lags] >= FUNDAMENTAL_SHARE * acf[lag]]
        multiple = np.maximum(1, np.round(lag / near))
        fits = np.abs(lag - multiple * near) <= max(1, round(0.01 * lag))
        root = int(near[fits].min()) if fits.any() else int(lag)
        if root not in ordered:
            ordered.append(root)
    return [step * int(lag * factor) for lag in ordered]


def acf_bin_factor(n: int, step: pd.Timedelta) -> int:
    """Samples per autocorrelation bin: at most ACF_MAX_POINTS bins, each a round duration
    (so that a day is a whole number of bins)."""
    needed = int(np.ceil(n / ACF_MAX_POINTS))
    if needed <= 1:
        return 1
    for size in ROUND_STEPS:
        factor = size / step
        if factor >= needed and float(factor).is_integer():
            return int(factor)
    return needed


def is_harmonic(period: pd.Timedelta, of: pd.Timedelta) -> bool:
    """True when the ratio of the two periods is within 0.05 of a whole number."""
    long, short = max(period, of), min(period, of)
    ratio = long / short
    return abs(ratio - round(ratio)) <= HARMONIC_TOLERANCE


def strength(dec: Decomposition, baseline: pd.Series, which: int) -> float:
    """Out-of-cycle seasonal strength of component `which` (see the module docstring)."""
    y = baseline.to_numpy(dtype=float)
    part = dec.fitted_seasonals[which]
    remainder = y - dec.fitted + part
    place = dec.placements[which]
    cells = place.cell_means(remainder)
    parity = np.arange(cells.shape[0]) % 2
    if parity.max() == 0:
        return 0.0
    layout = dec.layouts[which]
    rows = np.arange(cells.shape[0])
    profiles = [seasonal_table(cells, layout, rows[parity == k][None, :])[0] for k in (0, 1)]
    crossed = np.stack([profiles[1 - k] for k in parity])
    residual = remainder - place.evaluate(crossed)
    ok = np.isfinite(residual)
    spread = robust_scale(residual)
    if np.isfinite(spread) and spread > 0:
        ok &= np.abs(residual - np.nanmedian(residual)) <= OUTLIER_SDS * spread
    if ok.sum() < 2 or np.var(remainder[ok]) == 0:
        return 0.0
    return float(max(0.0, 1.0 - np.var(residual[ok]) / np.var(remainder[ok])))


def select_periods(
    baseline: pd.Series, tz: str, cutoff: float = STRENGTH_CUTOFF
) -> tuple[Decomposition, list[Candidate]]:
    """Try the candidates, keep the strong ones, and return the final decomposition."""
    step = baseline.index[1] - baseline.index[0]
    candidates = [Candidate(DAY, "one day"), Candidate(WEEK, "one week")]
    tried = [c for c in candidates if eligible(c, baseline, step, tz)]
    found = 0
    for period in autocorrelation_peaks(baseline):
        if found == ACF_MAX_CANDIDATES:
            break
        if any(is_harmonic(period, c.period) for c in tried) or any(
            abs(period / c.period - 1) <= HARMONIC_TOLERANCE for c in candidates[:2]
        ):
            continue  # a harmonic of a cycle tried, or one day or one week itself
        cand = Candidate(period, "autocorrelation")
        if eligible(cand, baseline, step, tz):
            candidates.append(cand)
            tried.append(cand)
            found += 1
    tried.sort(key=lambda c: c.period)
    dec = decompose(baseline, [c.period for c in tried], tz=tz)
    for i, cand in enumerate(tried):
        cand.strength = strength(dec, baseline, i)
        cand.kept = cand.strength >= cutoff
        verdict = (
            "kept: strength {:.2f} reaches" if cand.kept else "dropped: strength {:.2f} is below"
        )
        cand.reason = verdict.format(cand.strength) + f" the cut-off {cutoff:g}"
    kept = [c.period for c in tried if c.kept]
    if len(kept) != len(tried):
        dec = decompose(baseline, kept, tz=tz)
    candidates.sort(key=lambda c: c.period)
    return dec, candidates


def eligible(cand: Candidate, baseline: pd.Series, step: pd.Timedelta, tz: str) -> bool:
    """Whether the history can support the candidate; records why not in `reason`."""
    if cand.period / step < MIN_SAMPLES_PER_CYCLE:
        cand.reason = f"not tried: fewer than {MIN_SAMPLES_PER_CYCLE} samples per cycle"
        return False
    cycles = usable_cycles(baseline, cand.period, tz)
    if cycles < 2:
        cand.reason = f"not tried: needs two full cycles of usable history, has {cycles:.1f}"
        return False
    return True
