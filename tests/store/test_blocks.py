"""Point blocks: what a series is read from always holds exactly the rows of ``points``."""

from __future__ import annotations

import numpy as np
import pytest
from sqlalchemy import select

from webapp.store import blocks, db
from webapp.store.imports import delete_import, record_import
from webapp.store.models import PointBlock, Series

MIN = 60_000
DAY = blocks.DAY_MS


def blocks_match_rows(engine) -> None:
    """Every series' blocks decode to exactly its rows, and no block is empty."""
    with db.session_scope(engine) as s:
        for series_id in s.scalars(select(Series.id)):
            from_blocks = blocks.read(s, series_id)
            from_rows = blocks.read_rows(s, series_id, None, None)
            np.testing.assert_array_equal(from_blocks[0], from_rows[0])
            assert from_blocks[1].tobytes() == from_rows[1].tobytes()
        assert all(n > 0 for n in s.scalars(select(PointBlock.n)))


def test_pack_and_unpack_are_exact():
    ts = np.array([5, 6, 60_000, 60_001, 10**12], dtype=np.int64)
    values = np.array([1.5, np.nan, -0.0, np.inf, 1e-310])
    got_ts, got_values = blocks.unpack(len(ts), *blocks.pack(ts, values))
    np.testing.assert_array_equal(got_ts, ts)
    assert got_values.tobytes() == values.tobytes()


def test_blocks_written_by_pyarrows_zstd_codec_still_read():
    """Stores written before blocks moved to the zstandard package hold frames from
    pyarrow's codec; both write standard zstd frames, so several such blocks decode as one."""
    import pyarrow as pa

    codec = pa.Codec("zstd", compression_level=1)
    days = [np.array([DAY, DAY + MIN, DAY + 3 * MIN]), np.array([2 * DAY + 7, 2 * DAY + 9])]
    values = [np.array([1.25, -2.0, np.nan]), np.array([3.0, 1e300])]
    found = [
        (
            len(ts),
            codec.compress(np.diff(ts, prepend=0).astype("<i8").tobytes(), asbytes=True),
            codec.compress(v.astype("<f8").tobytes(), asbytes=True),
        )
        for ts, v in zip(days, values, strict=True)
    ]
    got_ts, got_values = blocks.unpack_all(found)
    np.testing.assert_array_equal(got_ts, np.concatenate(days))
    assert got_values.tobytes() == np.concatenate(values).tobytes()


def test_blocks_follow_overlapping_imports_and_undo(engine, make_parsed):
    def parsed(key, start, n, value, name):
        ts = [start + i * MIN for i in range(n)]
        return make_parsed([key] * n, ts, [value + i for i in range(n)], name)

    with db.session_scope(engine) as s:
        record_import(s, parsed("a", DAY - 30 * MIN, 3000, 0.0, "a1.csv"))  # three days
        record_import(s, parsed("b", 0, 10, 5.0, "b1.csv"))
    blocks_match_rows(engine)
    with db.session_scope(engine) as s:
        second = record_import(s, parsed("a", 2 * DAY - 5 * MIN, 20, 1000.0, "a2.csv"))
        record_import(s, make_parsed(["b", "b"], [3 * MIN, 4 * DAY], [-1.0, 1.0], "b2.csv"))
    blocks_match_rows(engine)
    with db.session_scope(engine) as s:
        assert delete_import(s, second.import_id) > 0
    blocks_match_rows(engine)


def test_read_keeps_only_the_asked_range(engine, make_parsed):
    ts = [i * 7 * MIN for i in range(1000)]  # about five days
    with db.session_scope(engine) as s:
        record_import(s, make_parsed(["m"] * 1000, ts, [float(i) for i in range(1000)]))
    with db.session_scope(engine) as s:
        got_ts, got_values = blocks.read(s, 1, DAY + 1, 2 * DAY + 3 * MIN)
    expected = np.array([t for t in ts if DAY + 1 <= t <= 2 * DAY + 3 * MIN])
    np.testing.assert_array_equal(got_ts, expected)
    np.testing.assert_array_equal(got_values, expected / (7 * MIN))


@pytest.mark.parametrize("start, end", [(None, -1), (10 * DAY, None)])
def test_read_outside_the_data_is_empty(engine, make_parsed, start, end):
    with db.session_scope(engine) as s:
        record_import(s, make_parsed(["m"] * 2, [0, MIN], [1.0, 2.0]))
    with db.session_scope(engine) as s:
        ts, values = blocks.read(s, 1, start, end)
    assert len(ts) == 0 and values.dtype == np.float64
