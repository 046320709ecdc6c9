"""The Screening screen in a browser: the timeline and the small multiples are drawn (under
the Content-Security-Policy), and a small multiple opens its own explanation. Data: the
invented demo scenario (webapp.demo)."""

from __future__ import annotations

from urllib.parse import urlencode

import pandas as pd
import pytest

from webapp.demo import PAYMENT_SLOWDOWN, TZ

pytestmark = [pytest.mark.browser, pytest.mark.slow]


def test_the_timeline_and_the_small_multiples_are_drawn(demo_live_server, page, screenshot):
    args = {
        "start": (PAYMENT_SLOWDOWN[0] - pd.Timedelta(hours=1)).isoformat(),
        "end": (PAYMENT_SLOWDOWN[1] + pd.Timedelta(hours=1)).isoformat(),
        "tz": TZ,
        "weeks": 2,
        "filter": "host=api-",
    }
    page.set_default_timeout(120_000)
    page.goto(demo_live_server.at("/screening?" + urlencode(args)))
    page.wait_for_selector(".small-multiple .js-plotly-plot")
    drawn = page.locator(".js-plotly-plot").count()
    multiples = page.locator(".small-multiple").count()
    assert multiples >= 2 and drawn == multiples + 1  # the timeline and every small multiple
    rows = page.evaluate(
        "() => document.querySelector('.panel .js-plotly-plot')._fullLayout.yaxis.categoryarray"
    )
    assert rows[-1].startswith("payment.queue_depth")  # the earliest onset at the top
    screenshot(page, "screening")
    page.locator(".small-multiple figcaption a").first.click()
    page.wait_for_selector(".panel-band .js-plotly-plot")
    assert "/explain?series=" in page.url
