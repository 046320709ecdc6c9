"""replay_burn() against an independent per-grid-time loop on 30 random series.

The loop follows the documented semantics directly on the raw samples (times in seconds):
grid time t = k x step holds the samples in (t - step, t]; a window of w spans the last
ceil(w / step) steps, (t - n x step, t], and only once that reaches no further back than the
first grid time; its error ratio is bad over total events in it; no sample at t, or a window
with no events, is false; a raise starts once the rule's conditions (any of them) have held
for the hold and ends at the first later false grid time. Series are synthetic: irregular
timestamps with gaps, integer counts or error ratios in 1/64ths (so sums are exact).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from webapp.analysis import BurnRateRule, BurnWindow, replay_burn

START = 1_800_000_000


def brute_force(
    samples: list[tuple[int, float, float]], rule: BurnRateRule, step_s: int
) -> list[tuple[int, int | None]]:
    """(raise start, end or None) in seconds from samples of (time, bad, total)."""
    first_k = min(math.ceil(t / step_s) for t, _, _ in samples)
    last_k = max(math.ceil(t / step_s) for t, _, _ in samples)
    hold_s = int(rule.hold.total_seconds())

    def burn(t: int, window: pd.Timedelta) -> float | None:
        n = max(1, math.ceil(window.total_seconds() / step_s))
        if t - n * step_s + step_s < first_k * step_s:
            return None
        inside = [(b, tot) for s, b, tot in samples if t - n * step_s < s <= t]
        total = sum(tot for _, tot in inside)
        if total <= 0:
            return None
        return sum(b for b, _ in inside) / total / rule.budget

    def holds(t: int) -> bool:
        if not any(t - step_s < s <= t for s, _, _ in samples):
            return False
        for w in rule.conditions:
            long, short = burn(t, w.long), burn(t, w.short)
            if long is not None and short is not None and min(long, short) >= w.factor:
                return True
        return False

    raised: list[tuple[int, int | None]] = []
    since = start = None
    for k in range(first_k, last_k + 1):
        t = k * step_s
        if holds(t):
            since = t if since is None else since
            if start is None and t - since >= hold_s:
                start = t
        else:
            if start is not None:
                raised.append((start, t))
            since = start = None
    if start is not None:
        raised.append((start, None))
    return raised


def as_seconds(raised: pd.DataFrame) -> list[tuple[int, int | None]]:
    def sec(ts: pd.Timestamp) -> int:
        return int(ts.value // 1_000_000_000)

    return [(sec(s), None if pd.isna(e) else sec(e)) for s, e in raised.itertuples(index=False)]


def random_case(seed: int) -> tuple[object, list[tuple[int, float, float]], BurnRateRule, int]:
    rng = np.random.default_rng(seed)
    step_s = int(rng.choice([60, 120]))
    n = int(rng.integers(150, 400))
    times = START + np.cumsum(rng.choice([30, 60, 60, 60, 90, 200], size=n))
    # background errors with bursts of trouble
    trouble = np.zeros(n)
    for _ in range(int(rng.integers(1, 5))):
        at, length = int(rng.integers(0, n)), int(rng.integers(3, 40))
        trouble[at : at + length] = rng.uniform(0.05, 0.9)
    share = np.clip(trouble + rng.uniform(0, 0.02, n), 0, 1)
    windows = []
    for severity in ("page", "page", "ticket"):
        long_min = int(rng.integers(10, 60))
        short_min = int(rng.integers(1, long_min))
        factor = float(rng.choice([1.0, 2.0, 5.0, 14.4]))
        windows.append(BurnWindow(f"{long_min}min", f"{short_min}min", factor, severity))
    rule = BurnRateRule(
        objective=float(rng.choice([0.9, 0.95, 0.99])),
        windows=windows,
        severity=str(rng.choice(["page", "ticket"])),  # type: ignore[arg-type]
        hold=f"{int(rng.choice([0, 0, 60, 150, 300]))}s",
        check_every=f"{step_s}s",
    )
    index = pd.to_datetime(times, unit="s", utc=True)
    if seed % 2:
        ratio = np.round(share * 64) / 64
        events: object = pd.Series(ratio, index=index)
        samples = [(int(t), float(r), 1.0) for t, r in zip(times, ratio, strict=True)]
    else:
        total = rng.integers(0, 200, n).astype(float)
        total[rng.random(n) < 0.05] = 0.0  # idle minutes
        bad = np.round(total * share)
        events = pd.DataFrame({"good": total - bad, "total": total}, index=index)
        samples = [(int(t), float(b), float(c)) for t, b, c in zip(times, bad, total, strict=True)]
    return events, samples, rule, step_s


@pytest.mark.parametrize("seed", range(30))
def test_replay_burn_matches_a_brute_force_loop(seed):
    events, samples, rule, step_s = random_case(seed)
    expected = brute_force(samples, rule, step_s)
    assert as_seconds(replay_burn(events, rule)) == expected


def test_the_random_cases_raise_often_enough_to_mean_something():
    raised = [len(brute_force(*random_case(seed)[1:])) for seed in range(30)]
    assert sum(r > 0 for r in raised) >= 20
