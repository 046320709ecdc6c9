"""The compact-store migration fills the point blocks and sparklines and re-encodes the
saved explanations of an existing store, losing nothing; its downgrade undoes it."""

from __future__ import annotations

import io

import numpy as np
import pandas as pd
import pyarrow.parquet as pq
from sqlalchemy import text

from webapp.store import blocks, db
from webapp.store.frames import CODECS_KEY, decode_frame, encode_frame
from webapp.store.models import Series
from webapp.store.stats import bucket_means

MIN = 60_000


def band_like_frame() -> pd.DataFrame:
    index = pd.date_range("2026-11-01", periods=3000, freq="1min", tz="UTC")
    trend = np.linspace(10, 12, len(index))
    seasonal = np.sin(np.arange(len(index)) / 60)
    expected = trend + seasonal
    value = np.round(expected + np.cos(np.arange(len(index))), 1)
    return pd.DataFrame(
        {
            "value": value,
            "expected": expected,
            "lower": expected - 3.0 * 0.5,
            "trend": trend,
            "seasonal": seasonal,
            "residual": value - expected,
            "in_window": np.arange(len(index)) > 2900,
        },
        index=index,
    )


def has_codecs(data: bytes) -> bool:
    return CODECS_KEY in (pq.read_schema(io.BytesIO(data)).metadata or {})


def test_upgrade_fills_blocks_and_sparklines_and_compacts_frames(tmp_path):
    eng = db.make_engine(f"sqlite:///{tmp_path / 'old.sqlite'}")
    frame = band_like_frame()
    plain = encode_frame(frame, compact=False)
    ts = np.arange(2000, dtype=np.int64) * 3 * MIN  # a bit over four days
    try:
        db.upgrade(eng, "0001")
        with eng.begin() as conn:
            conn.execute(
                text(
                    "INSERT INTO series (id, key, metric, labels, point_count, created_at)"
                    " VALUES (1, 'm', 'm', '{}', 2000, '2026-12-01 00:00:00')"
                )
            )
            conn.execute(
                text("INSERT INTO points (series_id, ts, value) VALUES (1, :ts, :value)"),
                [{"ts": int(t), "value": float(i)} for i, t in enumerate(ts)],
            )
            conn.execute(
                text(
                    "INSERT INTO explanations (id, series_key, title, window_start, window_end,"
                    " parameters, engine_version, frame, overlay, facts, summary, created_at)"
                    " VALUES (1, 'm', '', '2026-11-03', '2026-11-03', '{}', '1.0.0', :frame,"
                    " :overlay, '{}', '[]', '2026-12-01')"
                ),
                {"frame": plain, "overlay": plain},
            )
        db.upgrade(eng)
        with db.session_scope(eng) as s:
            got_ts, got_values = blocks.read(s, 1)
            np.testing.assert_array_equal(got_ts, ts)
            np.testing.assert_array_equal(got_values, np.arange(2000.0))
            assert s.get(Series, 1).sparkline == bucket_means(ts, np.arange(2000.0))
            stored, overlay = s.execute(text("SELECT frame, overlay FROM explanations")).one()
        assert has_codecs(stored) and has_codecs(overlay) and len(stored) < len(plain) / 2
        pd.testing.assert_frame_equal(decode_frame(stored), frame, check_exact=True)

        db.downgrade(eng, "0001")
        with eng.connect() as conn:
            back = conn.execute(text("SELECT frame FROM explanations")).scalar()
        assert not has_codecs(back)
        pd.testing.assert_frame_equal(decode_frame(back), frame, check_exact=True)
    finally:
        eng.dispose()
