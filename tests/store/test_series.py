"""Reading series back: dtype, index, ranges, listing, sparklines."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from webapp.store import db
from webapp.store import series as store_series
from webapp.store.imports import delete_import, record_import
from webapp.store.stats import SPARKLINE_BUCKETS, bucket_means

MIN = 60_000
T0 = 1_790_000_000_000  # 2026-09-21T14:13:20Z, a round epoch-millisecond start


@pytest.fixture
def stored(engine, make_parsed):
    keys = ["lat{host=a}"] * 10 + ["lat{host=b}"] * 3 + ["rps"] * 2
    ts = [T0 + i * MIN for i in range(10)] + [T0, T0 + 2 * MIN, T0 + 4 * MIN] + [T0, T0 + MIN]
    values = [float(i) for i in range(10)] + [1.5, 2.5, 3.5] + [7.0, 8.0]
    # Shuffled, as a file may list them: the store must hand them back in time order.
    order = np.random.default_rng(3).permutation(len(keys))
    parsed = make_parsed(
        [keys[i] for i in order], [ts[i] for i in order], [values[i] for i in order]
    )
    with db.session_scope(engine) as s:
        record_import(s, parsed)
    with db.session_scope(engine) as s:
        yield s, {row.key: row.id for row in store_series.list_series(s)}


def test_read_series_gives_float64_on_a_sorted_utc_index(stored):
    session, ids = stored
    got = store_series.read_series(session, ids["lat{host=a}"])
    assert got.dtype == np.float64
    assert isinstance(got.index, pd.DatetimeIndex)
    assert str(got.index.tz) == "UTC"
    assert got.index.is_monotonic_increasing
    assert got.name == "lat{host=a}"
    assert got.index[0] == pd.Timestamp(T0, unit="ms", tz="UTC")
    assert got.tolist() == [float(i) for i in range(10)]


def test_read_series_range_is_inclusive_and_accepts_naive_times_as_utc(stored):
    session, ids = stored
    start = pd.Timestamp(T0 + 2 * MIN, unit="ms")  # naive: taken as UTC
    end = pd.Timestamp(T0 + 4 * MIN, unit="ms", tz="UTC").tz_convert("Europe/Lisbon")
    got = store_series.read_series(session, ids["lat{host=a}"], start=start, end=end)
    assert got.tolist() == [2.0, 3.0, 4.0]


def test_read_series_of_an_empty_range_is_empty_but_typed(stored):
    session, ids = stored
    got = store_series.read_series(session, ids["rps"], start="2030-01-01")
    assert got.empty and got.dtype == np.float64 and str(got.index.tz) == "UTC"


def test_read_series_of_an_unknown_id_says_so(session):
    with pytest.raises(LookupError, match="no series #5"):
        store_series.read_series(session, 5)


def test_list_series_reports_counts_span_step_and_coverage(stored):
    session, _ids = stored
    (b,) = store_series.list_series(session, q="HOST=b")
    assert (b.metric, b.labels, b.n_points) == ("lat", {"host": "b"}, 3)
    assert b.first == pd.Timestamp(T0, unit="ms", tz="UTC")
    assert b.last - b.first == pd.Timedelta(minutes=4)
    assert b.step == pd.Timedelta(minutes=2)
    assert b.coverage == 1.0


def test_list_series_search_needs_every_word(stored):
    session, _ids = stored
    assert [i.key for i in store_series.list_series(session, q="lat")] == [
        "lat{host=a}",
        "lat{host=b}",
    ]
    assert [i.key for i in store_series.list_series(session, q="lat a}")] == ["lat{host=a}"]
    assert store_series.list_series(session, q="lat%") == []  # % is a character, not a wildcard


def test_coverage_counts_missing_grid_slots(engine, make_parsed):
    ts = [T0 + i * MIN for i in range(10) if i not in (3, 4)]  # 8 of 10 minutes
    with db.session_scope(engine) as s:
        record_import(s, make_parsed(["m"] * 8, ts, [1.0] * 8))
    with db.session_scope(engine) as s:
        (info,) = store_series.list_series(s)
    assert info.step == pd.Timedelta(minutes=1)
    assert info.coverage == pytest.approx(0.8)


def bucket_means_of(series: pd.Series, n: int = SPARKLINE_BUCKETS) -> list[float | None]:
    return bucket_means(series.index.as_unit("ms").asi8, series.to_numpy(), n)


def test_sparkline_means_each_bucket_and_leaves_empty_buckets_none(stored):
    session, ids = stored
    a, b = (store_series.read_series(session, ids[k]) for k in ("lat{host=a}", "lat{host=b}"))
    assert bucket_means_of(a, n=5) == [0.5, 2.5, 4.5, 6.5, 8.5]
    assert bucket_means_of(b, n=5) == [1.5, None, 2.5, None, 3.5]
    assert bucket_means(np.array([0, 1]), np.array([np.nan, np.nan]), 2) == [None, None]
    assert bucket_means(np.array([0, 1]), np.array([np.inf, 2.0]), 2) == [None, 2.0]


def test_the_stored_sparkline_follows_imports_and_their_undo(engine, stored, make_parsed):
    session, ids = stored
    a = ids["lat{host=a}"]
    before = store_series.sparkline(session, a)
    assert len(before) == SPARKLINE_BUCKETS and before[0] == 0.0 and before[-1] == 9.0
    assert before == bucket_means_of(store_series.read_series(session, a))
    session.close()
    later = [T0 + i * MIN for i in range(5, 20)]
    with db.session_scope(engine) as s:
        imp = record_import(s, make_parsed(["lat{host=a}"] * 15, later, [100.0] * 15, "b.csv"))
    with db.session_scope(engine) as s:
        changed = store_series.sparkline(s, a)
        assert changed == bucket_means_of(store_series.read_series(s, a))
        assert changed[-1] == 100.0 and changed != before
        (listed,) = store_series.list_series(s, q="host=a", sparklines=True)
        assert listed.sparkline == changed
        delete_import(s, imp.import_id)
    with db.session_scope(engine) as s:  # the undo removes minutes 5 to 19 (none restored)
        undone = store_series.sparkline(s, a)
        assert undone == bucket_means_of(store_series.read_series(s, a))
        assert undone[0] == 0.0 and undone[-1] == 4.0


def test_find_and_get_series(stored):
    session, ids = stored
    assert store_series.find_series(session, "rps").id == ids["rps"]
    assert store_series.find_series(session, "nope") is None
    assert store_series.get_series(session, ids["rps"]).key == "rps"
