"""A band rule's daily fits over one series' whole history, fitted once and then reused:
from this process's memory, else from the store (kept there by whichever process fitted them
first, so they survive a restart and serve every worker), else fitted and kept."""

from __future__ import annotations

import logging
from typing import Any

import pandas as pd
from sqlalchemy.orm import Session

from webapp.analysis import (
    ENGINE_VERSION,
    BandGrid,
    BandRule,
    band_fit_frame,
    band_fit_parameters,
    band_grid,
    band_grid_from_frame,
)
from webapp.services.cache import Recent
from webapp.services.explain import data_version
from webapp.store import band_fits as store_fits

log = logging.getLogger(__name__)

# Fits kept in memory by data version and parameters: replaying again (another tolerance,
# another sweep) reads nothing and fits nothing.
_fits = Recent(8)


def fit_key(session: Session, info: Any, rule: BandRule, exclude: list) -> dict[str, str]:
    """The stored identity of ``rule``'s fits on ``info`` as the store is now."""
    return _key(data_version(session, info), rule, exclude)


def _key(version: tuple, rule: BandRule, exclude: list) -> dict[str, str]:
    # version[0], the database's address, is left out: the row is in that database.
    return store_fits.fit_key(band_fit_parameters(rule, exclude), version[1:], ENGINE_VERSION)


def band_fit(
    session: Session, info: Any, values: pd.Series, rule: Any, exclude: list
) -> BandGrid | None:
    """A band rule's daily bands over ``values`` (all of ``info``'s stored points), None for
    other kinds. Raises ValueError when no day has enough history (nothing is kept)."""
    if not isinstance(rule, BandRule):
        return None
    version = data_version(session, info)
    key = _key(version, rule, exclude)
    memo = (version[0], info.id, *key.values())
    return _fits.get(memo, lambda: _kept_or_fitted(session, info.id, key, values, rule, exclude))


def _kept_or_fitted(
    session: Session, series_id: int, key: dict, values: pd.Series, rule: BandRule, exclude: list
) -> BandGrid:
    kept = store_fits.read_fit(session, series_id, key)
    if kept is not None:
        try:
            return band_grid_from_frame(values, rule, kept)
        except ValueError as err:
            log.warning("kept band fit of series %s not used: %s", series_id, err)
    grid = band_grid(values, rule, exclude)
    store_fits.save_fit(session.get_bind(), series_id, key, band_fit_frame(grid))
    return grid
