"""Recording imports: one transaction, overlap counts, re-imports, deleting."""

from __future__ import annotations

import pytest
from sqlalchemy import func, select

from webapp.store import bulk, db
from webapp.store import imports as store_imports
from webapp.store.models import Import, Point, Series

MIN = 60_000


def snapshot(engine) -> dict:
    """Everything an import can touch, read through a separate connection."""
    with engine.connect() as conn:
        return {
            "points": conn.exec_driver_sql(
                "SELECT series_id, ts, value, import_id FROM points ORDER BY series_id, ts"
            ).all(),
            "series": conn.exec_driver_sql(
                "SELECT id, key, unit, point_count, first_ts, last_ts, step_ms, sparkline"
                " FROM series"
            ).all(),
            "imports": conn.exec_driver_sql("SELECT id, sha256 FROM imports").all(),
            "blocks": conn.exec_driver_sql(
                "SELECT series_id, day, n, ts, value FROM point_blocks ORDER BY series_id, day"
            ).all(),
        }


def record(engine, parsed, **kwargs):
    with db.session_scope(engine) as session:
        return store_imports.record_import(session, parsed, **kwargs)


def grid(n, start=0):
    return [start + i * MIN for i in range(n)]


def test_first_import_inserts_every_point_and_creates_the_series(engine, make_parsed):
    parsed = make_parsed(["cpu{host=a}"] * 3 + ["cpu{host=b}"] * 2, grid(3) + grid(2), range(5))
    summary = record(engine, parsed)
    assert (summary.inserted, summary.updated, summary.points) == (5, 0, 5)
    assert summary.series_created == 2
    assert summary.duplicate_of is None
    assert summary.first_ts.value == 0 and summary.last_ts.value == 2 * MIN * 1_000_000
    with db.session_scope(engine) as s:
        rows = {r.key: r for r in s.scalars(select(Series))}
        assert rows["cpu{host=a}"].labels == {"host": "a"}
        assert rows["cpu{host=a}"].metric == "cpu"
        assert (rows["cpu{host=a}"].point_count, rows["cpu{host=a}"].step_ms) == (3, MIN)
        assert s.scalar(select(func.count()).select_from(Point)) == 5
        imp = s.get(Import, summary.import_id)
        assert (imp.inserted_count, imp.updated_count, imp.series_count) == (5, 0, 2)
        assert imp.summary["series_keys"] == ["cpu{host=a}", "cpu{host=b}"]


def test_overlapping_points_are_updated_and_counted(engine, make_parsed):
    first = record(engine, make_parsed(["m"] * 4, grid(4), [1, 2, 3, 4], "one.csv"))
    second = record(engine, make_parsed(["m"] * 4, grid(4, 2 * MIN), [30, 40, 50, 60], "two.csv"))
    assert (second.inserted, second.updated, second.series_created) == (2, 2, 0)
    points = snapshot(engine)["points"]
    assert [(ts // MIN, v, imp) for _sid, ts, v, imp in points] == [
        (0, 1.0, first.import_id),
        (1, 2.0, first.import_id),
        (2, 30.0, second.import_id),
        (3, 40.0, second.import_id),
        (4, 50.0, second.import_id),
        (5, 60.0, second.import_id),
    ]


def test_same_file_again_is_detected_applied_and_reported(engine, make_parsed):
    parsed = make_parsed(["m"] * 3, grid(3), [1, 2, 3])
    first = record(engine, parsed)
    again = record(engine, parsed)
    assert again.duplicate_of == first.import_id
    assert (again.inserted, again.updated) == (0, 3)
    assert any("imported before as import #" in line for line in again.lines())
    assert {imp for *_rest, imp in snapshot(engine)["points"]} == {again.import_id}


def test_same_file_can_be_refused(engine, make_parsed):
    parsed = make_parsed(["m"] * 3, grid(3), [1, 2, 3], "twice.csv")
    first = record(engine, parsed)
    before = snapshot(engine)
    with pytest.raises(store_imports.DuplicateImport, match=r"twice.csv.*import #\d+") as err:
        record(engine, parsed, allow_duplicate=False)
    assert err.value.earlier_id == first.import_id
    assert snapshot(engine) == before


@pytest.mark.parametrize("existing", [False, True], ids=["empty store", "overlapping store"])
def test_a_failure_half_way_leaves_the_store_as_it_was(engine, make_parsed, monkeypatch, existing):
    monkeypatch.setattr(bulk, "BATCH_ROWS", 10)
    if existing:
        record(engine, make_parsed(["m{h=1}"] * 40, grid(40), [1.0] * 40, "before.csv"))
    before = snapshot(engine)

    written = []
    real_slices = bulk._row_slices

    def write_then_fail(n):
        for part in real_slices(n):
            if len(written) == 5:
                raise RuntimeError("disk went away half-way")
            yield part
            written.append(1)

    monkeypatch.setattr(bulk, "_row_slices", write_then_fail)
    keys = ["m{h=1}"] * 50 + ["m{h=2}"] * 50
    parsed = make_parsed(keys, grid(50) * 2, [9.0] * 100, "fails.csv")
    with pytest.raises(RuntimeError, match="half-way"):
        record(engine, parsed)
    assert len(written) == 5, "the failure must come after some batches were written"
    assert snapshot(engine) == before


def test_a_failure_leaves_the_callers_session_usable(engine, make_parsed, monkeypatch):
    def fail(n):
        raise RuntimeError("no")

    with db.session_scope(engine) as session:
        session.add(Series(key="kept", metric="kept", labels={}))
        session.flush()
        monkeypatch.setattr(bulk, "_row_slices", fail)
        with pytest.raises(RuntimeError):
            store_imports.record_import(session, make_parsed(["m"], [0], [1.0]))
    keys = [row[1] for row in snapshot(engine)["series"]]
    assert keys == ["kept"]


def test_delete_removes_only_points_no_later_import_replaced(engine, make_parsed):
    first = record(engine, make_parsed(["m"] * 4, grid(4), [1, 2, 3, 4], "one.csv"))
    second = record(engine, make_parsed(["m"] * 2, grid(2, 3 * MIN), [40, 50], "two.csv"))
    with db.session_scope(engine) as s:
        assert store_imports.delete_import(s, first.import_id) == 3
    points = [(ts // MIN, v) for _sid, ts, v, _imp in snapshot(engine)["points"]]
    assert points == [(3, 40.0), (4, 50.0)]
    with db.session_scope(engine) as s:
        (row,) = s.scalars(select(Series)).all()
        assert (row.point_count, row.first_ts, row.last_ts) == (2, 3 * MIN, 4 * MIN)
        assert [i.id for i in store_imports.list_imports(s)] == [second.import_id]


def test_delete_drops_series_left_empty_unless_something_refers_to_them(engine, make_parsed):
    from webapp.store import pages
    from webapp.store.times import utc

    summary = record(engine, make_parsed(["a", "b", "c"], [0, 0, 0], [1, 2, 3]))
    with db.session_scope(engine) as s:
        b = s.scalars(select(Series).where(Series.key == "b")).one()
        pages.create_page(s, b.id, fired_at=utc("2026-01-01"), resolved_at=None, rule_text="b>1")
    with db.session_scope(engine) as s:
        assert store_imports.delete_import(s, summary.import_id) == 3
    with db.session_scope(engine) as s:
        assert [(r.key, r.point_count) for r in s.scalars(select(Series))] == [("b", 0)]
        assert s.scalar(select(func.count()).select_from(Import)) == 0


def test_delete_of_an_unknown_import_says_so(session):
    with pytest.raises(LookupError, match="no import #42"):
        store_imports.delete_import(session, 42)


def test_unit_is_kept_from_the_first_import_that_names_it(engine, make_parsed):
    record(engine, make_parsed(["lat"], [0], [1.0], "a.csv"))
    record(engine, make_parsed(["lat"], [MIN], [2.0], "b.csv", unit="ms"))
    record(engine, make_parsed(["lat"], [2 * MIN], [3.0], "c.csv", unit="s"))
    assert [row[2] for row in snapshot(engine)["series"]] == ["ms"]


def test_list_imports_is_newest_first(engine, make_parsed):
    ids = [record(engine, make_parsed(["m"], [i], [1.0], f"{i}.csv")).import_id for i in range(3)]
    with db.session_scope(engine) as s:
        assert [i.id for i in store_imports.list_imports(s)] == ids[::-1]


def test_figures_kept_on_series_rows_match_a_recount(engine, make_parsed):
    from webapp.store import stats

    record(engine, make_parsed(["a"] * 3 + ["b"] * 2, [0, MIN, 3 * MIN, 0, 5 * MIN], range(5)))
    record(engine, make_parsed(["a", "c"], [10 * MIN, 0], [1.0, 2.0], "more.csv"))
    with db.session_scope(engine) as s:
        kept = [
            (r.key, r.point_count, r.first_ts, r.last_ts, r.step_ms)
            for r in s.scalars(select(Series).order_by(Series.key))
        ]
        stats.refresh(s, list(s.scalars(select(Series))))
        recounted = [
            (r.key, r.point_count, r.first_ts, r.last_ts, r.step_ms)
            for r in s.scalars(select(Series).order_by(Series.key))
        ]
    assert kept == recounted
    assert kept[0] == ("a", 4, 0, 10 * MIN, 2 * MIN)  # spacings 1, 2 and 7 minutes


def test_repeated_pairs_in_a_table_keep_the_last_value(engine, make_parsed):
    summary = record(engine, make_parsed(["m", "m", "m"], [0, 0, MIN], [1.0, 2.0, 3.0]))
    assert (summary.points, summary.inserted) == (2, 2)
    assert [v for _sid, _ts, v, _imp in snapshot(engine)["points"]] == [2.0, 3.0]


def test_driver_errors_in_the_bulk_path_come_out_as_sqlalchemy_errors(
    engine, make_parsed, monkeypatch
):
    from sqlalchemy.exc import OperationalError

    driver_error = engine.dialect.loaded_dbapi.OperationalError

    def locked(n):
        raise driver_error("database is locked")

    monkeypatch.setattr(bulk, "_row_slices", locked)
    with pytest.raises(OperationalError, match="database is locked"):
        record(engine, make_parsed(["m"], [0], [1.0]))
    assert snapshot(engine)["imports"] == []


def test_two_imports_at_once_both_land_one_after_the_other(engine, make_parsed, monkeypatch):
    import threading
    import time

    monkeypatch.setattr(bulk, "BATCH_ROWS", 5)
    real_slices = bulk._row_slices
    started = threading.Event()

    def slow_slices(n):
        for part in real_slices(n):
            started.set()
            time.sleep(0.05)
            yield part

    monkeypatch.setattr(bulk, "_row_slices", slow_slices)
    errors = []

    def run(name, key):
        try:
            record(engine, make_parsed([key] * 40, grid(40), [1.0] * 40, name))
        except Exception as err:  # noqa: BLE001 - the assertion below reports it
            errors.append(err)

    first = threading.Thread(target=run, args=("first.csv", "a"))
    first.start()
    assert started.wait(5)
    second = threading.Thread(target=run, args=("second.csv", "b"))
    second.start()
    first.join(30)
    second.join(30)
    assert errors == []
    assert len(snapshot(engine)["points"]) == 80


def test_two_imports_creating_the_same_series_at_once_both_land_with_its_figures_right(
    engine, make_parsed, monkeypatch
):
    import threading

    monkeypatch.setattr(bulk, "BATCH_ROWS", 5)
    barrier = threading.Barrier(2)
    results, errors = [], []

    def run(name, start):
        parsed = make_parsed(["shared{host=a}"] * 40, grid(40, start), [float(start)] * 40, name)
        barrier.wait(5)
        try:
            results.append(record(engine, parsed))
        except Exception as err:  # noqa: BLE001 - the assertion below reports it
            errors.append(err)

    threads = [
        threading.Thread(target=run, args=("early.csv", 0)),
        threading.Thread(target=run, args=("late.csv", 30 * MIN)),
    ]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(30)
    assert errors == []
    assert sorted(r.inserted for r in results) == [30, 40]
    assert sorted(r.series_created for r in results) == [0, 1]
    [series] = snapshot(engine)["series"]
    assert series[3:6] == (70, 0, 69 * MIN)
    assert len(snapshot(engine)["points"]) == 70
