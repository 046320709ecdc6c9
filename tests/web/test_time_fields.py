"""Times are typed in 24-hour form on every screen: no browser date-time control (which
shows "12:40 AM" in some locales beside our 24-hour UTC text), a pattern and placeholder
saying the form, values written the same way."""

from __future__ import annotations

import re

import pytest

SCREENS = [
    "/explain",
    "/pages/1/explain",
    "/pages",
    "/reviews/new",
    "/reviews/1",
    "/reviews/1/edit",
]
TIME_FIELDS = ("start", "end", "exclude_start", "exclude_end", "fired_at", "resolved_at")


@pytest.mark.parametrize("path", SCREENS)
def test_no_screen_uses_the_browsers_date_time_control(demo_client, path):
    body = demo_client.get(path, follow_redirects=True).get_data(as_text=True)
    assert 'type="datetime-local"' not in body
    fields = re.findall(r"<input [^>]*placeholder=\"YYYY-MM-DD HH:MM\"[^>]*>", body)
    assert fields, "every one of these screens has a time field"
    for field in fields:
        assert 'type="text"' in field and r'pattern="\d{4}-\d{2}-\d{2}[ T]\d{2}:\d{2}' in field


def test_the_explain_window_is_shown_in_24_hour_form(demo_client):
    body = demo_client.get(
        "/explain?series=1&start=2026-11-29 22:00&end=2026-11-30 13:40&tz=UTC"
    ).get_data(as_text=True)
    assert re.search(r'id="start"[^>]*value="2026-11-29 22:00"', body)
    assert re.search(r'id="end"[^>]*value="2026-11-30 13:40"', body)
    assert "PM" not in body.split('id="controls"')[1].split("</form>")[0]
