import pytest

from webapp.analysis._sentences import (
    describe_period,
    fmt_duration,
    fmt_number,
    fmt_time,
    fmt_value,
    ordinal,
    share,
)


@pytest.mark.parametrize(
    ("x", "text"),
    [
        (22262.4, "22,262"),
        (812.49, "812"),
        (-45.25, "-45.2"),
        (12.0, "12"),
        (3.14159, "3.14"),
        (0.012345, "0.0123"),
        (0.0, "0"),
        (float("nan"), "n/a"),
        (None, "n/a"),
    ],
)
def test_numbers_keep_three_significant_figures(x, text):
    assert fmt_number(x) == text


def test_units():
    assert fmt_value(812.4, "ms") == "812 ms"
    assert fmt_value(12.5, "%") == "12.5%"
    assert fmt_value(3.0, "") == "3"


@pytest.mark.parametrize(
    ("minutes", "text"),
    [(0.5, "30 s"), (35, "35 min"), (130, "2 h 10 min"), (120, "2 h"), (5040, "3.5 days")],
)
def test_durations(minutes, text):
    assert fmt_duration(minutes) == text


def test_times_read_on_the_wall_clock():
    assert fmt_time("2026-03-03T01:31:00+00:00", "Europe/Berlin") == "02:31 CET on Tue 3 Mar 2026"
    assert fmt_time("2026-07-03T01:31:00+00:00", "Europe/Berlin", with_date=False) == "03:31 CEST"


def test_periods_ordinals_shares():
    assert describe_period("1d") == "daily" and describe_period("7d") == "weekly"
    assert describe_period("364d") == "52-week" and describe_period("100min") == "100-minute"
    assert [ordinal(n) for n in (1, 2, 3, 4, 11, 12, 13, 21)] == [
        "1st", "2nd", "3rd", "4th", "11th", "12th", "13th", "21st",
    ]  # fmt: skip
    assert share(0.9996) == "99.9%" and share(1.0) == "100%" and share(0.5) == "50%"
