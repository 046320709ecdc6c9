"""Kept band fits (``webapp.store.band_fits``): a band rule's daily fits stored with the
frame codec read back bit for bit, stale rows are replaced rather than piled up, and a
write that cannot happen returns False instead of raising. Data are synthetic."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from sqlalchemy import select

from webapp.analysis import (
    ENGINE_VERSION,
    BandRule,
    band_fit_frame,
    band_fit_parameters,
    band_grid,
    band_grid_from_frame,
)
from webapp.store import band_fits, db
from webapp.store.models import BandFit

RULE = BandRule(3.0, history="6D", min_history="3D")


def _points(days: int = 10) -> pd.Series:
    index = pd.date_range("2026-11-01", periods=days * 288, freq="5min", tz="UTC")
    minutes = (index.hour * 60 + index.minute).to_numpy()
    values = 200 + 40 * np.sin(2 * np.pi * minutes / 1440)
    return pd.Series(values + np.random.default_rng(3).normal(0, 3, len(index)), index)


def _key(version=("1", "1"), rule=RULE, exclude=()) -> dict[str, str]:
    return band_fits.fit_key(band_fit_parameters(rule, exclude), version, ENGINE_VERSION)


def _rows(engine, series_id: int) -> list[BandFit]:
    with db.session_scope(engine, write=False) as reader:
        return list(reader.scalars(select(BandFit).where(BandFit.series_id == series_id)))


def _read(engine, series_id: int, key: dict[str, str]) -> pd.DataFrame | None:
    with db.session_scope(engine, write=False) as reader:
        return band_fits.read_fit(reader, series_id, key)


def test_a_kept_fit_reads_back_bit_for_bit(session, engine, make_series, assert_same_bands) -> None:
    series = make_series()
    session.commit()
    values = _points()
    fresh = band_grid(values, RULE)
    assert band_fits.save_fit(engine, series.id, _key(), band_fit_frame(fresh))
    frame = _read(engine, series.id, _key())
    with db.session_scope(engine, write=False) as reader:
        assert frame is not None and band_fits.is_kept(reader, series.id, _key())
    assert_same_bands(band_grid_from_frame(values, RULE, frame), fresh)
    # anything else the fit depends on finds nothing
    other_tolerance = _key(rule=BandRule(4.0, history="6D", min_history="3D"))
    excluded = _key(exclude=[(values.index[500], values.index[600])])
    later = _key(version=("2", "2"))
    for key in (other_tolerance, excluded, later, {**_key(), "engine_version": "0.0"}):
        assert _read(engine, series.id, key) is None
    # a fit of other data does not fit this series' grid
    with pytest.raises(ValueError, match="does not match"):
        band_grid_from_frame(values.iloc[:-288], RULE, frame)


def test_stale_fits_are_replaced_not_kept_beside(session, engine, make_series) -> None:
    series = make_series()
    session.commit()
    frame = band_fit_frame(band_grid(_points(), RULE))
    other = BandRule(5.0, history="6D", min_history="3D")
    assert band_fits.save_fit(engine, series.id, _key(), frame)
    assert band_fits.save_fit(engine, series.id, _key(rule=other), frame)
    assert len(_rows(engine, series.id)) == 2  # two parameter sets, both current

    excluded = _key(exclude=[(frame.index[0], frame.index[10])])
    assert band_fits.save_fit(engine, series.id, excluded, frame)  # same parameters
    rows = _rows(engine, series.id)
    assert len(rows) == 2 and excluded["exclusions"] in {r.exclusions for r in rows}

    newer = _key(version=("2", "2"))  # an import came: every older row is stale
    assert band_fits.save_fit(engine, series.id, newer, frame)
    (row,) = _rows(engine, series.id)
    assert row.data_version == newer["data_version"]
    assert _read(engine, series.id, _key()) is None


def test_a_write_that_cannot_happen_returns_false(session, engine, make_series) -> None:
    series = make_series()
    session.commit()
    frame = band_fit_frame(band_grid(_points(), RULE))
    assert not band_fits.save_fit(engine, 999_999, _key(), frame)  # no such series
    assert _rows(engine, series.id) == []
    # another writer holds the lock on the same row: the save waits briefly, then gives up
    with db.session_scope(engine) as holder:
        holder.add(BandFit(series_id=series.id, frame=b"x", **_key()))
        holder.flush()
        assert not band_fits.save_fit(engine, series.id, _key(), frame)
    (row,) = _rows(engine, series.id)
    assert row.frame == b"x"  # the holder's row, untouched by the failed save
    assert _read(engine, series.id, _key()) is None  # unreadable: fit again


def test_a_reading_session_bind_may_save(engine, make_series, session) -> None:
    series = make_series()
    session.commit()
    frame = band_fit_frame(band_grid(_points(), RULE))
    with db.session_scope(engine, write=False) as reader:
        reader.scalars(select(BandFit)).all()  # a read snapshot is open
        assert band_fits.save_fit(reader.get_bind(), series.id, _key(), frame)
    with db.session_scope(engine, write=False) as reader:
        assert band_fits.is_kept(reader, series.id, _key())
