"""screen() on an invented store with planted onsets at known times."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from webapp.analysis import ScreenResult, explain, screen
from webapp.analysis._outside import first_sustained

END = pd.Timestamp("2026-11-30 04:00", tz="UTC")
WINDOW = (END - pd.Timedelta(hours=4), END)
#: key -> (onset, shift in units of the series' noise sd); planted out of key order.
PLANTED = {
    "svc.m147": (pd.Timestamp("2026-11-30 00:40", tz="UTC"), 12.0),
    "svc.m023": (pd.Timestamp("2026-11-30 01:05", tz="UTC"), -10.0),
    "svc.m181": (pd.Timestamp("2026-11-30 01:35", tz="UTC"), 8.0),
    "svc.m066": (pd.Timestamp("2026-11-30 02:00", tz="UTC"), 15.0),
    "svc.m099": (pd.Timestamp("2026-11-30 02:50", tz="UTC"), 9.0),
}


def make_store(n: int = 200, weeks: int = 3, seed: int = 11) -> dict[str, pd.Series]:
    """`n` invented 5-minute series: a daily cycle of its own phase and size, a weekend dip,
    noise; the planted ones shift from their onset to the end of the window."""
    rng = np.random.default_rng(seed)
    index = pd.date_range(END - pd.Timedelta(weeks=weeks), END, freq="5min")
    hours = (index - index[0]).total_seconds().to_numpy() / 3600
    weekend = (index.day_of_week >= 5).astype(float)
    store = {}
    for i in range(n):
        level, sd = 20 + 5 * (i % 17), 1 + (i % 5)
        phase, size = rng.uniform(0, 24), rng.uniform(2, 10) * sd
        values = level + size * np.sin(2 * np.pi * (hours + phase) / 24) - 3 * sd * weekend
        values = values + rng.normal(0, sd, len(index))
        key = f"svc.m{i:03d}"
        if key in PLANTED:
            onset, shift = PLANTED[key]
            values[index >= onset] += shift * sd
        store[key] = pd.Series(values, index=index)
    return store


@pytest.fixture(scope="module")
def store() -> dict[str, pd.Series]:
    return make_store()


@pytest.fixture(scope="module")
def result(store) -> ScreenResult:
    return screen(store, WINDOW, history="2W", tolerance=3.0, explain_top=10, workers=1)


def test_the_planted_onsets_are_in_the_top_ten_in_the_order_they_happened(result):
    top = result.table.head(10)
    assert set(PLANTED) <= set(top["key"])
    onsets = result.onsets
    planted_order = sorted(PLANTED, key=lambda k: PLANTED[k][0])
    assert [k for k in onsets["key"] if k in PLANTED] == planted_order
    for key, (onset, shift) in PLANTED.items():
        row = result.table.set_index("key").loc[key]
        assert row["stage"] == "explained"
        assert row["onset"] == onset
        assert row["side"] == ("above" if shift > 0 else "below")
        assert np.sign(row["peak_sd"]) == np.sign(shift)


def test_ranks_follow_the_score_explained_first(result):
    table = result.table
    assert list(table["rank"]) == list(range(1, len(table) + 1))
    explained = table[table["stage"] == "explained"]
    assert list(explained.index) == list(range(len(explained)))
    assert explained["score"].is_monotonic_decreasing
    assert table[table["stage"] == "coarse"]["score"].is_monotonic_decreasing
    assert len(table) == 200 and not result.skipped


def test_an_explained_row_matches_its_own_explanation(store, result):
    key = "svc.m181"
    alone = explain(store[key].rename(key), window=WINDOW, history="2W", tolerance=3.0)
    row = result.table.set_index("key").loc[key]
    assert row["minutes_outside"] == alone.facts["minutes_outside"]
    in_window = alone.frame[alone.frame["in_window"]]
    assert row["onset"] == first_sustained(in_window["outside"], alone.step, pd.Timedelta("5min"))
    pd.testing.assert_frame_equal(result.explanations[key].frame, alone.frame)


def test_the_sentences_order_the_onsets_and_warn_about_cause(result):
    assert result.summary[1] == (
        "svc.m147 left its band at 00:40 UTC on Mon 30 Nov 2026 (above it), 25 min before svc.m023."
    )
    assert result.summary[2].startswith("svc.m023 left its band at 01:05 UTC (below it), 30 min")
    assert any(
        s.startswith("An earlier onset is a lead, not proof of cause") for s in result.summary
    )


def test_parameters_and_versions_are_kept(result):
    assert result.parameters["tolerance"] == 3.0
    assert result.parameters["history_seconds"] == pd.Timedelta("2W").total_seconds()
    assert result.parameters["coarse_step_seconds"] == 300
    assert result.engine_version and result.screen_version
    assert result.facts["series_screened"] == 200


def test_worker_processes_give_the_same_table(store):
    few = {k: store[k] for k in list(store)[:40] + list(PLANTED)}
    serial = screen(few, WINDOW, history="2W", explain_top=3, workers=1)
    parallel = screen(few, WINDOW, history="2W", explain_top=3, workers=2)
    pd.testing.assert_frame_equal(serial.table, parallel.table)


def test_series_without_history_or_window_values_are_skipped_with_a_reason(store):
    some = {k: store[k] for k in ("svc.m001", "svc.m147")}
    some["late"] = store["svc.m002"][store["svc.m002"].index >= WINDOW[0]]
    some["early"] = store["svc.m003"][store["svc.m003"].index < WINDOW[0]]
    result = screen(some, WINDOW, history="2W", explain_top=1, workers=1)
    assert result.skipped == {
        "late": "no values in the history before the window",
        "early": "no values in the window",
    }
    assert list(result.table["key"]) == ["svc.m147", "svc.m001"]
    assert result.summary[-1] == "2 series could not be screened; see the skipped list."


def test_a_store_with_nothing_to_screen_says_so(store):
    late = store["svc.m002"][store["svc.m002"].index >= WINDOW[0]]
    result = screen({"late": late}, WINDOW, history="2W", workers=1)
    assert result.table.empty and result.skipped == {
        "late": "no values in the history before the window"
    }
    assert result.summary == [
        "None of the 0 series screened left its expected band for 5 min or more in the window.",
        "1 series could not be screened; see the skipped list.",
    ]


def test_a_quiet_store_says_nobody_left(store):
    quiet = {k: store[k] for k in list(store)[:20] if k not in PLANTED}
    result = screen(quiet, WINDOW, history="2W", workers=1)
    assert result.onsets.empty
    assert result.summary[0].startswith("None of the ")


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"explain_top": -1}, "explain_top must be a whole number"),
        ({"workers": 0}, "workers must be a whole number"),
        ({"coarse_step": "soon"}, "the step must be a duration"),
        ({"history": "1min"}, "history must hold at least two steps"),
        ({"tolerance": 0}, "tolerance must be a positive number"),
        ({"coarse_step": "6h"}, "the window must be at least one step of 0 days 06:00:00"),
    ],
)
def test_bad_parameters_are_refused_clearly(store, kwargs, message):
    with pytest.raises(ValueError, match=message):
        screen({"a": store["svc.m001"]}, WINDOW, **kwargs)


def test_bad_series_are_named_in_the_message(store):
    with pytest.raises(ValueError, match="there are no series to screen"):
        screen({}, WINDOW)
    with pytest.raises(ValueError, match="broken: the series must be indexed by timestamps"):
        screen({"ok": store["svc.m001"], "broken": pd.Series([1.0, 2.0])}, WINDOW)
