"""Screening the demo's incident window finds the series the payment slowdown moved."""

from __future__ import annotations

import pandas as pd

from webapp.analysis import screen
from webapp.demo import MAINTENANCE, PAYMENT_SLOWDOWN, TZ, build_demo


def test_screening_the_night_of_the_slowdown():
    demo = build_demo()
    series = {key: demo.series(key) for key in demo.series_keys}
    window = (
        PAYMENT_SLOWDOWN[0] - pd.Timedelta(hours=1),
        PAYMENT_SLOWDOWN[1] + pd.Timedelta(hours=1),
    )
    result = screen(series, window, history="4W", tz=TZ, exclude=[MAINTENANCE], workers=1)
    moved = {k for k in series if not k.startswith("checkout.requests")}
    onsets = result.onsets
    # The slowdown moves latency, queue depth and the error ratio, never the request rate.
    assert set(onsets["key"]) == moved
    assert set(result.table.head(len(moved))["key"]) == moved
    # It ramps up over four minutes from 01:38: each series leaves its band inside the ramp.
    assert (
        onsets["onset"]
        .between(PAYMENT_SLOWDOWN[0], PAYMENT_SLOWDOWN[0] + pd.Timedelta(minutes=4))
        .all()
    )
    assert (onsets["side"] == "above").all()
    # The first onset sentence names how many left at the earliest minute, and when.
    first = onsets["onset"].min()
    at_first = int((onsets["onset"] == first).sum())
    when = first.tz_convert(TZ).strftime("%H:%M")
    assert result.summary[1].startswith(f"{at_first} series left their bands at {when}")
