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


def nanpercentile_rows(matrix: np.ndarray, q: float) -> np.ndarray:
    """``np.nanpercentile(matrix, q, axis=1)`` (linear interpolation), by one sort instead
    of a Python call per row that holds a NaN: the same arithmetic, so the same bits, except
    that a zero's sign may differ where +0 and -0 tie; NaN for an all-NaN row."""
    ordered = np.sort(np.asarray(matrix, dtype=float), axis=1)  # NaN sorts last
    n = (~np.isnan(ordered)).sum(axis=1)
    virtual = (n - 1) * (np.float64(q) / 100.0)  # numpy's index for the linear method
    lower = np.floor(virtual)
    at_end = virtual >= n - 1
    lo = np.where(at_end, n - 1, lower).clip(0).astype(np.intp)
    hi = np.where(at_end, n - 1, lower + 1).clip(0).astype(np.intp)
    gamma = virtual - np.where(at_end, -1, lower)  # numpy's weight, -1 naming the last
    a = np.take_along_axis(ordered, lo[:, None], axis=1)[:, 0]
    b = np.take_along_axis(ordered, hi[:, None], axis=1)[:, 0]
    diff = b - a
    out = np.where(gamma >= 0.5, b - diff * (1 - gamma), a + diff * gamma)  # numpy's lerp
    return np.where(n > 0, out, np.nan)
