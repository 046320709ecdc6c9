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
    assert f": {suggestion}" in page.inner_text("#verdict-list")
    screenshot(page, "verdict-in-review")


def caught_of(page) -> str:
    return " ".join(page.inner_text("#caught-of").split())


def test_adding_an_incident_from_the_list_changes_the_counts(
    page, live_server, screenshot, unlabelled
) -> None:
    """The queue rule counts no incident of its own; adding a latency incident from the
    list of other recorded incidents replays it against that one too, and dropping it
    brings the counts back."""
    page.goto(live_server.at("/rules"))
    page.click("text=Payment queue backing up on api-1")
    page.wait_for_selector("#caught-of")
    assert caught_of(page) == "0 incidents caught of 0 counted"
    assert "Verdict draft: keep" in page.inner_text("#verdict")
    options = page.locator("#add-incident option")
    assert options.count() == 3 and "checkout.latency_p95" in options.nth(0).inner_text()
    page.select_option("#add-incident", index=0)
    page.click("#incidents button:has-text('Count it')")
    page.wait_for_function(
        "() => document.querySelector('#caught-of').innerText.includes('of 1 counted')"
    )
    assert caught_of(page) == "0 incidents caught of 1 counted"
    assert "1 added, 0 dropped" in page.inner_text("#incidents")
    assert page.locator("#counted-incidents tbody tr").count() == 1
    assert unlabelled(page) == []
    screenshot(page, "rule-incident-added")
    page.click("#counted-incidents button:has-text('Drop')")
    page.wait_for_function(
        "() => document.querySelector('#caught-of').innerText.includes('of 0 counted')"
    )
    assert page.locator("#add-incident option").count() == 3


def test_two_verdicts_in_one_review(page, live_server, screenshot, unlabelled) -> None:
    page.goto(live_server.at("/reviews"))
    page.click("table a >> nth=0")
    page.wait_for_selector("#verdict-form")
    for rule, decision, evidence in (
        ("Checkout p95 latency high on api-4", "keep", "incidents caught: 2"),
        ("Payment queue backing up on api-1", "retire", "pages per week: 1"),
    ):
        page.select_option("#f-alert_rule_id", label=rule)
        page.select_option("#f-verdict", decision)
        page.fill("#f-verdict_evidence", evidence)
        page.fill("#f-verdict_rationale", f"{decision} because the replay says so")
        page.click("#verdict-form button[type=submit]")
        page.wait_for_selector(".flash")
    listed = page.locator("#verdict-list li.verdict")
    assert listed.count() == 2
    text = page.inner_text("#verdict-list")
    assert "Checkout p95 latency high on api-4: keep" in text
    assert "Payment queue backing up on api-1: retire" in text
    assert "pages per week" in text and "incidents caught" in text
    assert page.inner_text("#verdict").count("Retiring an alert can hide a real failure") == 1
    assert unlabelled(page) == []
    screenshot(page, "review-two-verdicts")
