"""The forms layer on its own: what a reader typed, read into values, with a message per
field that says what was expected."""

from __future__ import annotations

import pandas as pd
import pytest

from webapp import settings
from webapp.web.forms import reviews as review_forms
from webapp.web.forms.rules import parse_duration, parse_sweep


def test_sweep_limits_come_from_the_settings() -> None:
    defaults = settings.defaults()
    holds = ", ".join(f"{n}min" for n in range(defaults["MAX_SWEEP_HOLDS"] + 1))
    grid, errors = parse_sweep({"thresholds": "1, 2", "holds": holds})
    assert grid is None and "At most 12 holds" in errors["holds"]
    grid, errors = parse_sweep({"thresholds": "1, 2", "holds": "0, 5min"}, max_holds=1)
    assert grid is None and errors == {"holds": "At most 1 holds at once."}
    grid, errors = parse_sweep({"thresholds": "1 2", "holds": "0, 5min"})
    assert errors == {} and grid == ([1.0, 2.0], [pd.Timedelta(0), pd.Timedelta("5min")])


@pytest.mark.parametrize(
    ("text", "optional", "seconds", "error"),
    [
        ("10min", False, 600, None),
        ("90", False, 90, None),
        ("", False, 0, None),
        ("", True, None, None),
        ("soon", False, None, "is not a duration"),
        ("-5min", False, None, "cannot be negative"),
        ("0s", True, None, "above zero"),
    ],
)
def test_durations_are_read_or_named(text, optional, seconds, error) -> None:
    errors: dict[str, str] = {}
    assert parse_duration(text, "hold", errors, optional=optional) == seconds
    assert (error is None and errors == {}) or error in errors["hold"]


def test_the_baseline_checkbox_is_read_from_what_the_browser_sends() -> None:
    shown = {review_forms.CHECKBOX_SHOWN: "1"}
    assert review_forms.review_data(shown | {"exclude_from_baselines": "on"}) == {
        "exclude_from_baselines": True
    }
    assert review_forms.review_data(shown) == {"exclude_from_baselines": False}
    assert review_forms.review_data({"title": "t"}) == {"title": "t"}


def test_verdict_parameters_are_name_value_lines() -> None:
    text = "threshold: 650\nhold: 10min\n"
    parameters = review_forms.parse_parameters(text)
    assert parameters == {"threshold": 650.0, "hold": "10min"}
    assert review_forms.format_parameters(parameters) == text.strip()
    with pytest.raises(ValueError, match="Line 1 should read name: value"):
        review_forms.parse_parameters("just words")
