"""Robust location and scale: the median and the normalised median absolute deviation."""

from __future__ import annotations

import warnings
from collections.abc import Iterator
from contextlib import contextmanager

import numpy as np
from numpy.typing import ArrayLike
from scipy.stats import norm

#: 1 / Phi^-1(3/4): makes the MAD a consistent estimate of the standard deviation of a
#: normal distribution.
MAD_TO_SD = float(1.0 / norm.ppf(0.75))


def robust_scale(values: ArrayLike) -> float:
    """Robust standard deviation: MAD x 1.4826, ignoring NaN. NaN when nothing is left."""
    x = np.asarray(values, dtype=float)
    x = x[np.isfinite(x)]
    if x.size == 0:
        return float("nan")
    return float(MAD_TO_SD * np.median(np.abs(x - np.median(x))))


def grouped_robust_scale(values: np.ndarray, groups: np.ndarray, n_groups: int):
    """`band_scale_estimate` and count of the valid values per group label in [0, n_groups)."""
    ok = np.isfinite(values)
    v, g = values[ok], groups[ok]
    scales = np.full(n_groups, np.nan)
    counts = np.bincount(g, minlength=n_groups)[:n_groups]
    for k in np.flatnonzero(counts):
        scales[k] = band_scale_estimate(v[g == k])
    return scales, counts


@contextmanager
def quiet_nan_warnings() -> Iterator[None]:
    """Silence numpy's warnings about all-NaN slices: NaN is the intended answer there."""
    with warnings.catch_warnings(), np.errstate(all="ignore"):
        warnings.simplefilter("ignore", RuntimeWarning)
        yield


#: sqrt(pi / 2): makes the mean absolute deviation consistent for the normal sd.
MEAN_AD_TO_SD = float(np.sqrt(np.pi / 2))


def band_scale_estimate(values: ArrayLike) -> float:
    """`robust_scale`, falling back to the mean absolute deviation x 1.2533 when more than
    half the values are equal (MAD = 0, common for counts that are mostly zero; the same
    fallback as the modified z-score in common practice)."""
    scale = robust_scale(values)
    if scale == 0:
        x = np.asarray(values, dtype=float)
        x = x[np.isfinite(x)]
        scale = float(MEAN_AD_TO_SD * np.mean(np.abs(x - np.median(x))))
    return scale
