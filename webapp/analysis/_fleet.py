"""Fleet statistics: a robust test across hosts at each step, and DBSCAN over hosts.

The cross-sectional test is the modified z-score of Iglewicz & Hoaglin (1993, "How to Detect
and Handle Outliers"): at each time step, M = 0.6745 (x - median) / MAD across the hosts,
and |M| > 3.5 marks an outlier (their recommended cut-off, from memory). 0.6745 is
1 / 1.4826, so M is the deviation from the fleet's median in robust sd of the fleet. Where
more than half the hosts share one value (MAD = 0), the mean absolute deviation x 1.2533
stands in for the robust sd, as is common practice.

DBSCAN (Ester, Kriegel, Sander & Xu 1996) groups points that lie within `eps` of at least
`min_samples` points (themselves included), chaining such core points together; here it
runs on a precomputed distance matrix with scipy's connected components.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np
from scipy.sparse import csr_matrix
from scipy.sparse.csgraph import connected_components

from ._phase_baseline import nanmedian_axis
from ._robust import MAD_TO_SD, MEAN_AD_TO_SD, quiet_nan_warnings

MODIFIED_Z_CUTOFF = 3.5


def modified_z(matrix: np.ndarray) -> np.ndarray:
    """The modified z-score of each host (row) against all hosts at each step (column);
    NaN where a host has no value or the step has fewer than three values."""
    with quiet_nan_warnings():
        centre = nanmedian_axis(matrix, 0)
        spread = np.abs(matrix - centre)
        scale = MAD_TO_SD * nanmedian_axis(spread, 0)
        flat = scale == 0
        scale[flat] = MEAN_AD_TO_SD * np.nanmean(spread[:, flat], axis=0)
        scale[(scale == 0) | (np.isfinite(matrix).sum(axis=0) < 3)] = np.nan
        return (matrix - centre) / scale


def dbscan(distance: np.ndarray, eps: float, min_samples: int) -> np.ndarray:
    """DBSCAN labels (0, 1, ... in order of each cluster's first point; -1 for noise) from a
    square distance matrix. A border point joins the cluster of its first core neighbour."""
    n = len(distance)
    near = distance <= eps
    core = near.sum(axis=1) >= min_samples
    links = csr_matrix(near & core[:, None] & core[None, :])
    _, component = connected_components(links, directed=False)
    labels = np.full(n, -1)
    names: dict[int, int] = {}
    for i in np.flatnonzero(core):
        labels[i] = names.setdefault(int(component[i]), len(names))
    for i in np.flatnonzero(~core):
        reach = np.flatnonzero(near[i] & core)
        if len(reach):
            labels[i] = labels[reach[0]]
    return labels


def shared_labels(
    members: Sequence[str], everyone: Sequence[str], labels: Mapping[str, Mapping[str, str]]
) -> dict[str, str]:
    """Labels whose value is the same for every member but not for everyone (what sets a
    group apart: "zone b" when the whole group is in zone b and the fleet is not)."""
    out = {}
    first = labels.get(members[0], {})
    for name, value in first.items():
        if all(labels.get(m, {}).get(name) == value for m in members) and not all(
            labels.get(k, {}).get(name) == value for k in everyone
        ):
            out[name] = value
    return out
