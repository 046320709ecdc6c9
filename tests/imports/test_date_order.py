"""Dates written with slashes (31/12/2026 23:00) are read in the order the user chose;
without a choice they are refused, as the day and the month cannot be told apart."""

import pandas as pd
import pytest

from webapp.imports import parse_bytes

HEADER = "timestamp,metric,value\n"


def _stamps(rows: list[str], **options) -> tuple[list[int], str]:
    text = HEADER + "".join(f"{row},m,1\n" for row in rows)
    parsed = parse_bytes(text.encode(), "d.csv", **options)
    return parsed.table["ts_utc"].tolist(), parsed.timestamp_unit


def _ms(iso: str) -> int:
    return pd.Timestamp(iso, tz="UTC").value // 10**6


def test_day_first_dates_are_read_with_the_day_first():
    stamps, unit = _stamps(["31/12/2026 23:00", "01/02/2027 9:05:30"], day_first=True)
    assert stamps == [_ms("2026-12-31T23:00"), _ms("2027-02-01T09:05:30")]
    assert unit == "dates with the day first (31/12/2026 23:00)"


def test_month_first_dates_are_read_with_the_month_first():
    stamps, unit = _stamps(["12/31/2026 23:00", "01/02/2027"], day_first=False)
    assert stamps == [_ms("2026-12-31T23:00"), _ms("2027-01-02T00:00")]
    assert unit == "dates with the month first (12/31/2026 23:00)"


def test_dots_dashes_and_fractions_of_a_second_are_read_too():
    stamps, _ = _stamps(['"31.12.2026 23:00:01,5"', "30-12-2026 23:00"], day_first=True)
    assert stamps == [_ms("2026-12-31T23:00:01.5"), _ms("2026-12-30T23:00")]


def test_the_chosen_order_meets_the_time_zone_of_naive_times():
    stamps, _ = _stamps(["31/12/2026 23:00"], day_first=True, tz="Europe/Vienna")
    assert stamps == [_ms("2026-12-31T22:00")]


def test_iso_times_are_unaffected_by_the_order():
    stamps, unit = _stamps(["2026-12-31T23:00:00Z"], day_first=True)
    assert (stamps, unit) == ([_ms("2026-12-31T23:00")], "ISO 8601")


def test_without_an_order_slashed_dates_are_refused_saying_how_to_choose(rejected):
    assert rejected(HEADER + "31/12/2026 23:00,m,1\n") == [
        "upload.csv, line 2, column 'timestamp': '31/12/2026 23:00' could be day first or "
        "month first; choose the date order (day first as in 31/12/2026, or month first as "
        "in 12/31/2026) and import again"
    ]


@pytest.mark.parametrize(
    ("stamp", "day_first", "read_as"),
    [
        ("12/31/2026 23:00", True, "dates with the day first (31/12/2026 23:00)"),
        ("31/12/2026 23:00", False, "dates with the month first (12/31/2026 23:00)"),
    ],
)
def test_a_date_impossible_in_the_chosen_order_is_refused(rejected, stamp, day_first, read_as):
    problems = rejected(HEADER + f"{stamp},m,1\n", day_first=day_first)
    assert problems == [
        f"upload.csv, line 2, column 'timestamp': '{stamp}' is not a date when read as {read_as}"
    ]
