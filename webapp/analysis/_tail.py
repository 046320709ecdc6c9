"""Extreme quantiles of forecast errors: peaks over threshold with a generalised Pareto tail.

Why: at the default width each side of the band is a 99.865% quantile of the forecast
errors. Four weeks of 5-minute errors hold about eleven samples beyond it, so the plain
empirical quantile is decided by one or two bursts. Above a high threshold the excesses of
a wide class of distributions follow a generalised Pareto distribution (Pickands 1975;
Balkema & de Haan 1974); the peaks-over-threshold method fits it there and reads the far
quantile off the fit (Davison & Smith 1990; Coles 2001, chapter 4).

Choices, each our own unless cited:

* Where at least `MIN_BEYOND` errors lie beyond the wanted quantile, the empirical one is
  used, at the split-conformal rank ceil((n + 1)(1 - a)) (Angelopoulos & Bates 2021, section
  1.1), which keeps its finite-sample guarantee on exchangeable errors.
* Threshold: the side's 95th percentile (`THRESHOLD_SHARE`), common practice.
* Declustering: consecutive exceedances form one cluster and only its largest enters the
  fit (runs declustering, Coles 2001, section 5.3.2). A two-hour incident left in the history
  then weighs as one burst, not as 24 of them, so it cannot set the band on its own.
* Estimator: matching the median and the 90th percentile of the cluster excesses
  (`fit_pareto_quantiles`). Moment and likelihood fits let the single largest cluster (a
  past incident far out) pull the shape up and widen the band; a percentile fit ignores the
  top tenth of the clusters. The shape is clipped to [-0.5, 0.5] (`SHAPE_LIMIT`): heavier
  tails cannot be told apart from a few hundred values and would make the band unbounded.
* Rate: the share of all samples above the threshold, so that the quantile is per sample,
  as the nominal level is.
* With fewer than `MIN_CLUSTERS` clusters there is no tail to fit: the same conformal rank
  is read among the declustered values, so a couple of past bursts, each counted once, are
  rarer than the nominal share and stay outside.
* Parameter uncertainty: a tail fitted to m clusters is known only roughly, and its plain
  ("plug-in") far quantile is exceeded more often than asked. For an exponential tail whose
  scale is learned from m excesses the predictive distribution of the next excess is a Lomax
  (Pareto type II) with shape m, whose quantile is wider than the plug-in one by the factor
  m (q^(-1/m) - 1) / (-ln q) for a tail share q (the gamma-exponential predictive, a
  textbook result recalled from memory and checked against `scipy.stats.lomax` in the
  tests; see `predictive_widening`). We apply that factor to the fitted excess quantile
  whatever the shape (our choice): about 1.2 for 10 clusters, 1.02 for 100 (at a tail
  share of 2.7%), so it matters only where the history is short.
* A sample too small to hold the asked share even once (conformal rank past its end, e.g.
  one day of 5-minute errors for a 0.135% side) gives no ground to go below its largest
  value: the estimate is then never below the largest declustered value (the split-conformal
  quantile there is unbounded; Angelopoulos & Bates 2021, section 1.1).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

THRESHOLD_SHARE = 0.05
MIN_BEYOND = 30
MIN_CLUSTERS = 10
SHAPE_LIMIT = 0.5


@dataclass(frozen=True)
class ParetoTail:
    """A generalised Pareto distribution of excesses: shape xi, scale sigma."""

    shape: float
    scale: float

    def quantile(self, p: float) -> float:
        """The excess exceeded with probability 1 - p."""
        if abs(self.shape) < 1e-9:
            return -self.scale * np.log1p(-p)
        return self.scale / self.shape * ((1 - p) ** -self.shape - 1)


def fit_pareto_quantiles(excesses: np.ndarray) -> ParetoTail:
    """Generalised Pareto fit that matches the median and the 90th percentile of the
    excesses (a percentile-matching fit: Castillo & Hadi 1997 fit the Pareto this way).
    For the distribution Q(p) = sigma / xi ((1 - p)^-xi - 1), so Q(0.9) / Q(0.5) =
    (10^xi - 1) / (2^xi - 1), which rises with xi: xi is found by bisection, clipped to
    +-`SHAPE_LIMIT`, then sigma from the median."""
    x = np.asarray(excesses, dtype=float)
    median, upper = np.quantile(x, [0.5, 0.9])
    if median <= 0:
        return ParetoTail(0.0, max(float(np.mean(x)), 0.0))
    ratio = upper / median
    lo, hi = -SHAPE_LIMIT, SHAPE_LIMIT
    for _ in range(50):
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if quantile_ratio(mid) < ratio else (lo, mid)
    shape = 0.5 * (lo + hi)
    scale = median * shape / (2**shape - 1) if abs(shape) > 1e-9 else median / np.log(2)
    return ParetoTail(float(shape), float(scale))


def quantile_ratio(shape: float) -> float:
    """Q(0.9) / Q(0.5) of a generalised Pareto distribution of this shape."""
    if abs(shape) < 1e-9:
        return float(np.log(10) / np.log(2))
    return float((10**shape - 1) / (2**shape - 1))


def cluster_maxima(values: np.ndarray, threshold: float) -> np.ndarray:
    """The largest value of each run of consecutive values above `threshold` (time order;
    NaN ends a run)."""
    above = values > threshold
    if not above.any():
        return np.array([])
    begins = above & ~np.concatenate(([False], above[:-1]))
    run_id = np.cumsum(begins) - 1
    maxima = np.full(int(begins.sum()), -np.inf)
    np.maximum.at(maxima, run_id[above], values[above])
    return maxima


def upper_quantile(values: np.ndarray, beyond: float) -> float:
    """The value exceeded by a share `beyond` of `values` (in time order, NaN = missing):
    the conformal empirical rank among the declustered values (each run of exceedances
    counted once) where they hold enough beyond it, else the predictive tail of the
    declustered exceedances (see the module docstring)."""
    x = values[np.isfinite(values)]
    if len(x) == 0:
        return float("nan")
    threshold = float(np.quantile(x, 1 - THRESHOLD_SHARE))
    maxima = cluster_maxima(np.where(np.isfinite(values), values, -np.inf), threshold)
    # Each run of exceedances counts once, so a past incident left in the history (a long
    # run of large errors) cannot become the quantile by itself.
    declustered = np.concatenate([x[x <= threshold], maxima])
    if conformal_rank(len(declustered), beyond) <= len(declustered) - MIN_BEYOND + 1:
        return ranked(declustered, beyond)
    rate = float(np.mean(x > threshold))
    if rate <= beyond:
        return threshold
    if len(maxima) < MIN_CLUSTERS:
        return ranked(declustered, beyond)
    tail = fit_pareto_quantiles(maxima - threshold)
    share = beyond / rate
    estimate = threshold + tail.quantile(1 - share) * predictive_widening(len(maxima), share)
    if conformal_rank(len(declustered), beyond) > len(declustered):
        estimate = max(estimate, float(declustered.max()))
    return estimate


def predictive_widening(clusters: int, share: float) -> float:
    """How much wider the predictive quantile of an exponential tail learned from `clusters`
    excesses is than the plug-in one, at tail share `share`: m (q^(-1/m) - 1) / (-ln q)."""
    m = max(clusters, 1)
    return float(m * np.expm1(-np.log(share) / m) / -np.log(share))


def conformal_rank(n: int, beyond: float) -> int:
    """Split-conformal rank ceil((n + 1)(1 - beyond)), 1-based (Angelopoulos & Bates 2021)."""
    return int(np.ceil((n + 1) * (1 - beyond)))


def ranked(x: np.ndarray, beyond: float) -> float:
    """The value at the conformal rank, or the largest when the rank is past the end."""
    rank = min(conformal_rank(len(x), beyond), len(x))
    return float(np.partition(x, rank - 1)[rank - 1])
