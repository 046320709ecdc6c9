"""Timestamp forms: epoch units told apart by size, ISO 8601 offsets, naive local times."""

import pandas as pd
import pytest

from webapp.imports import parse_bytes

# 2026-11-30T08:00:00Z, written in each epoch unit.
SECONDS = 1796025600
UTC_MS = SECONDS * 1000


def _one(stamp: str, **options):
    parsed = parse_bytes(f"ts,metric,value\n{stamp},m,1\n".encode(), "t.csv", **options)
    return parsed.table["ts_utc"].iloc[0], parsed.timestamp_unit


@pytest.mark.parametrize(
    ("stamp", "unit"),
    [
        (str(SECONDS), "epoch seconds"),
        (str(SECONDS * 1000), "epoch milliseconds"),
        (str(SECONDS * 1000_000), "epoch microseconds"),
        (str(SECONDS * 1000_000_000), "epoch nanoseconds"),
        (f"{SECONDS}.0", "epoch seconds"),
    ],
)
def test_epoch_unit_is_chosen_by_magnitude(stamp, unit):
    assert _one(stamp) == (UTC_MS, unit)


def test_magnitude_edges():
    from webapp.imports._timestamps import epoch_unit

    # 1e11 seconds would be the year 5138 while 1e11 ms is 1973: the edge between them.
    assert epoch_unit(99_999_999_999) == "seconds"
    assert epoch_unit(100_000_000_000) == "milliseconds"
    assert epoch_unit(1e14) == "microseconds"
    assert epoch_unit(1e17) == "nanoseconds"


def test_sub_millisecond_parts_round_to_the_nearest_millisecond():
    assert _one(f"{SECONDS * 1000_000 + 1500}")[0] == UTC_MS + 2
    assert _one(f"{SECONDS}.0004")[0] == UTC_MS
    assert _one("2026-11-30T08:00:00.0006Z")[0] == UTC_MS + 1


@pytest.mark.parametrize(
    "stamp",
    [
        "2026-11-30T08:00:00Z",
        "2026-11-30T08:00:00z",
        "2026-11-30T09:00:00+01:00",
        "2026-11-30T03:00:00-05:00",
        "2026-11-30T09:00:00+0100",
        "2026-11-30 08:00:00",
        "2026-11-30T08:00:00.000+00:00",
    ],
)
def test_iso_8601_with_offsets_and_naive_utc(stamp):
    assert _one(stamp) == (UTC_MS, "ISO 8601")


def test_naive_times_follow_the_named_zone():
    ts, _ = _one("2026-11-30 09:00:00", tz="Europe/Vienna")  # UTC+1 in winter
    assert ts == UTC_MS
    summer, _ = _one("2026-07-01 10:00:00", tz="Europe/Vienna")  # UTC+2 in summer
    assert summer == pd.Timestamp("2026-07-01T08:00:00Z").value // 10**6


def test_times_with_an_offset_ignore_the_zone():
    assert _one("2026-11-30T08:00:00Z", tz="America/New_York")[0] == UTC_MS


def test_naive_zone_is_recorded():
    parsed = parse_bytes(b"ts,metric,value\n2026-11-30 09:00:00,m,1\n", "t.csv", tz="Europe/Vienna")
    assert parsed.naive_tz == "Europe/Vienna"


def test_nonexistent_local_time_is_refused_with_a_reason(rejected):
    # Europe/Vienna skips 02:00-03:00 on 2026-03-29 (last Sunday of March; tz database).
    problems = rejected("ts,metric,value\n2026-03-29 02:30:00,m,1\n", tz="Europe/Vienna")
    assert problems == [
        "upload.csv, line 2, column 'ts': local time 2026-03-29 02:30:00 in Europe/Vienna does "
        "not exist there (the clocks jump forward at that hour); give the time with an offset "
        "(e.g. +02:00) or in UTC"
    ]


def test_ambiguous_local_time_is_refused_with_a_reason(rejected):
    # 02:00-03:00 happens twice in Europe/Vienna on 2026-10-25 (last Sunday of October).
    text = "ts,metric,value\n2026-10-25 01:30:00,m,1\n2026-10-25 02:30:00,m,1\n"
    problems = rejected(text, tz="Europe/Vienna")
    assert problems == [
        "upload.csv, line 3, column 'ts': local time 2026-10-25 02:30:00 in Europe/Vienna "
        "occurs twice there (the clocks go back at that hour); give the time with an offset "
        "(e.g. +02:00) or in UTC"
    ]


def test_the_same_hour_with_an_offset_is_fine():
    ts, _ = _one("2026-10-25T02:30:00+01:00", tz="Europe/Vienna")
    assert ts == pd.Timestamp("2026-10-25T01:30:00Z").value // 10**6


def test_a_row_in_another_epoch_unit_is_refused(rejected):
    text = f"ts,metric,value\n{SECONDS},m,1\n{SECONDS + 60},m,1\n{UTC_MS},m,1\n"
    assert rejected(text) == [
        f"upload.csv, line 4, column 'ts': epoch value {UTC_MS} looks like epoch milliseconds, "
        "but this column is in epoch seconds"
    ]


def test_epoch_numbers_mixed_into_iso_text_are_refused(rejected):
    text = f"ts,metric,value\n2026-11-30T08:00:00Z,m,1\n{SECONDS},m,2\n"
    assert rejected(text) == [
        f"upload.csv, line 3, column 'ts': '{SECONDS}' is an epoch number, but other rows of "
        "this column are ISO 8601 text; use one form of timestamp throughout the file"
    ]


def test_times_before_1970_are_refused_quoting_the_cell(rejected):
    assert rejected("ts,metric,value\n1969-12-31T23:59:59Z,m,1\n") == [
        "upload.csv, line 2, column 'ts': timestamp 1969-12-31T23:59:59Z is outside "
        "1970-01-01..2262-04-11"
    ]


def test_an_epoch_past_2262_is_refused_quoting_the_number_as_written(rejected):
    text = "ts,metric,value\n100000000000000000000,m,1\n"  # read as a float: too big for int64
    assert rejected(text) == [
        "upload.csv, line 2, column 'ts': timestamp 100000000000000000000 is outside "
        "1970-01-01..2262-04-11 when read as epoch nanoseconds"
    ]


def test_openmetrics_timestamps_in_seconds_are_read_as_seconds():
    text = '# TYPE x gauge\nx{h="a"} 1 1796025600.5\nx{h="a"} 2 1796025601\n# EOF\n'
    parsed = parse_bytes(text.encode(), "x.txt")
    assert parsed.table["ts_utc"].tolist() == [UTC_MS + 500, UTC_MS + 1000]
    assert parsed.timestamp_unit == "epoch seconds"
    assert parsed.problems == []


def test_an_openmetrics_timestamp_past_2262_is_quoted_as_written(rejected):
    text = "# TYPE x gauge\nx 1 9300000000000000000\n# EOF\n"
    assert rejected(text, name="x.txt") == [
        "x.txt, line 2, column 'timestamp': timestamp '9300000000000000000' is outside "
        "1970-01-01..2262-04-11 when read as epoch nanoseconds"
    ]


def test_openmetrics_timestamps_in_milliseconds_are_told_by_size_and_said():
    text = f'# TYPE x gauge\nx{{h="a"}} 1 {UTC_MS}\nx{{h="a"}} 2 {UTC_MS + 60_000}\n# EOF\n'
    parsed = parse_bytes(text.encode(), "x.txt")
    assert parsed.table["ts_utc"].tolist() == [UTC_MS, UTC_MS + 60_000]
    assert parsed.timestamp_unit == "epoch milliseconds"
    assert [str(p) for p in parsed.problems] == [
        "x.txt: sample timestamps read as epoch milliseconds, told by their size; "
        "OpenMetrics writes seconds since the epoch"
    ]


def test_an_openmetrics_sample_in_another_unit_than_the_rest_is_refused(rejected):
    text = f"# TYPE x gauge\nx 1 {UTC_MS}\nx 2 {UTC_MS + 60_000}\nx 3 {SECONDS + 120}\n# EOF\n"
    assert rejected(text, name="x.txt") == [
        f"x.txt, line 4, column 'timestamp': epoch value {SECONDS + 120} looks like epoch "
        "seconds, but this column is in epoch milliseconds"
    ]
