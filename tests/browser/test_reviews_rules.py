"""The Alert rules screen in a real browser, on a private copy of the demo database: the
replay arrives through htmx with its figures, and the drafted verdict lands in a review."""

from __future__ import annotations

import pytest

pytestmark = [pytest.mark.browser, pytest.mark.slow]  # builds the demo database once per run


@pytest.fixture
def app(demo_app):
    """Serve the demo copy: the live server takes the ``app`` fixture."""
    return demo_app


def test_replay_draws_and_the_verdict_reaches_a_review(
    page, live_server, screenshot, unlabelled
) -> None:
    page.goto(live_server.at("/rules"))
    page.click("table a:has-text('Checkout p95 latency')")
    page.wait_for_selector("#replay-summary")
    page.wait_for_function(
        "() => document.querySelectorAll('#replay .js-plotly-plot svg.main-svg').length >= 2"
    )
    assert "Retiring an alert can hide a real failure" in page.inner_text("#verdict")
    assert int(page.inner_text("#replay-summary .counts li >> nth=0").split()[0]) >= 1
    assert unlabelled(page) == []
    screenshot(page, "rule-replay")

    suggestion = page.input_value("#f-verdict")
    page.click("#verdict button[type=submit]")
    page.wait_for_selector(".flash")
    assert "recorded in review" in page.inner_text(".flashes")
    assert f"Recorded: {suggestion}" in page.inner_text("#verdict")
    screenshot(page, "verdict-in-review")
