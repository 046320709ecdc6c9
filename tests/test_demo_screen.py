"""Screening the demo's incident window finds the series the payment slowdown moved."""

from __future__ import annotations

import pandas as pd

from webapp.analysis import screen
from webapp.demo import MAINTENANCE, PAYMENT_SLOWDOWN, QUEUE_BACKLOG, TZ, build_demo


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
    # The queues back up from 01:32, checkout slows from 01:38; each bump ramps up over four
    # minutes, and each series leaves its band inside its own ramp.
    ramp = pd.Timedelta(minutes=4)
    queues = onsets["key"].str.startswith("payment.queue_depth")
    assert onsets[queues]["onset"].between(QUEUE_BACKLOG[0], QUEUE_BACKLOG[0] + ramp).all()
    later = onsets[~queues]["onset"]
    assert later.between(PAYMENT_SLOWDOWN[0], PAYMENT_SLOWDOWN[0] + ramp).all()
    # In time order every queue comes before every latency and the error ratio.
    assert onsets["key"].head(int(queues.sum())).str.startswith("payment.queue_depth").all()
    assert (onsets["side"] == "above").all()
    # The first onset sentence names how many left at the earliest minute, and when, and
    # how long before the next; the caution follows the onsets.
    first = onsets["onset"].min()
    at_first = onsets[onsets["onset"] == first]
    when = first.tz_convert(TZ).strftime("%H:%M")
    if len(at_first) == 1:
        assert result.summary[1].startswith(f"{at_first['key'].iloc[0]} left its band at {when}")
    else:
        assert result.summary[1].startswith(f"{len(at_first)} series left their bands at {when}")
    assert any("lead, not proof of cause" in s for s in result.summary)
