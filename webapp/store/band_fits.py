"""Kept band fits: a band rule's daily fits over one series, stored so that replays and rule
kinds side by side read them instead of fitting every day's band again, after a restart and
in every worker or process that shares the store.

A row is found by series and fit parameters (canonical JSON) and used only while its data
version, engine version and excluded spans are the current ones; any other row of the
series for an older data or engine version is stale and goes when a new one is written, so
rows are replaced, never accumulated. The frame is stored with ``frames.encode_frame`` and
reads back bit for bit. Writing is best effort: it waits for the lock briefly and never
raises (the fit is simply computed again next time).
"""

from __future__ import annotations

import hashlib
import json
import logging
from collections.abc import Iterable
from typing import Any

import pandas as pd
from sqlalchemy import delete, or_, select
from sqlalchemy.orm import Session

from webapp.store import db
from webapp.store.frames import decode_frame, encode_frame
from webapp.store.models import BandFit

log = logging.getLogger(__name__)


def fit_key(
    parameters: dict[str, Any], data_version: Iterable[Any], engine_version: str
) -> dict[str, str]:
    """The stored columns that identify a fit: parameters without the excluded spans, the
    spans' digest, the data version and the engine version, as text."""
    rest = {k: v for k, v in parameters.items() if k != "exclude"}
    spans = json.dumps(parameters.get("exclude", []), sort_keys=True)
    return {
        "parameters": json.dumps(rest, sort_keys=True, separators=(",", ":")),
        "exclusions": hashlib.sha256(spans.encode()).hexdigest(),
        "data_version": json.dumps([str(part) for part in data_version]),
        "engine_version": engine_version,
    }


def _matching(series_id: int, key: dict[str, str]) -> list[Any]:
    return [BandFit.series_id == series_id, *(getattr(BandFit, k) == v for k, v in key.items())]


def is_kept(session: Session, series_id: int, key: dict[str, str]) -> bool:
    """Whether a current fit for ``key`` is stored (without reading its frame)."""
    return session.execute(select(BandFit.id).where(*_matching(series_id, key))).first() is not None


def read_fit(session: Session, series_id: int, key: dict[str, str]) -> pd.DataFrame | None:
    """The stored frame of the current fit for ``key``, or None (none kept, or unreadable)."""
    row = session.scalars(select(BandFit).where(*_matching(series_id, key))).first()
    if row is None:
        return None
    try:
        return decode_frame(row.frame)
    except Exception:  # a damaged row costs one fit, never the page
        log.warning("band fit %s of series %s does not decode; fitting again", row.id, series_id)
        return None


def save_fit(bind: Any, series_id: int, key: dict[str, str], frame: pd.DataFrame) -> bool:
    """Store ``frame`` as the fit for ``key`` in its own short writing transaction on
    ``bind`` (an engine, or a reading session's bind), replacing the series' row of the
    same parameters and its stale rows. Returns whether it was stored; never raises."""
    try:
        data = encode_frame(frame)
        with db.brief_write(bind) as session:
            session.execute(
                delete(BandFit).where(
                    BandFit.series_id == series_id,
                    or_(
                        BandFit.parameters == key["parameters"],
                        BandFit.data_version != key["data_version"],
                        BandFit.engine_version != key["engine_version"],
                    ),
                )
            )
            session.add(BandFit(series_id=series_id, frame=data, **key))
        return True
    except Exception:  # derived data: a failed write leaves the page as it is
        log.warning("could not keep the band fit of series %s", series_id, exc_info=True)
        return False
