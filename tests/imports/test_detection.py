"""Format detection from the first bytes, and the override."""

import io

import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from webapp.imports import FORMATS, detect_format, parse_bytes
from webapp.imports._detect import UnknownFormat


def _parquet() -> bytes:
    buffer = io.BytesIO()
    pq.write_table(pa.table({"ts": [1796025600], "metric": ["m"], "value": [1.0]}), buffer)
    return buffer.getvalue()


@pytest.mark.parametrize(
    ("data", "fmt"),
    [
        (b"timestamp,metric,host,value\n", "csv-long"),
        (b"\xef\xbb\xbfTime;Name;Value\n", "csv-long"),
        (b"ts\tm{h=1}\tm{h=2}\n", "csv-wide"),
        (b'[{"timestamp": 1, "metric": "m", "value": 1}]', "json-records"),
        (b'[{"Time": 1, "Name": "m", "Value": 1}]', "json-records"),
        (b'  {"metric": "m", "points": [[1, 2]]}', "json-series"),
        (b'[{"metric": "m", "labels": {}, "points": []}]', "json-series"),
        (b"# HELP x Something.\n# TYPE x gauge\n", "openmetrics"),
        (b'x{host="a,b"} 1 1796025600\n# EOF\n', "openmetrics"),
        (_parquet(), "parquet"),
    ],
)
def test_detects(data, fmt):
    assert detect_format(data) == fmt
    assert fmt in FORMATS


@pytest.mark.parametrize(
    ("data", "reason"),
    [
        (b"", "empty"),
        (b"hello there\n", "not CSV"),
        (b'{"kind": "dashboard"}', 'without "value" or "points"'),
        (b"host,region\napi-1,east\n", "names no timestamp column"),
        (b"ts,value\n1796025600,1\n", "has a value column but no metric column"),
    ],
)
def test_unknown_formats_say_what_was_looked_for(data, reason):
    with pytest.raises(UnknownFormat, match=reason):
        detect_format(data)


def test_override_within_a_family_is_honoured():
    parsed = parse_bytes(b"ts,value\n1796025600,1\n", "w.csv", format="csv-wide")
    assert list(parsed.series) == ["value"]


SHAPES = (
    "A long file needs columns named timestamp (or time/ts), metric (or name) and value, "
    "with an optional unit column and any other column a label; a wide file needs a "
    "timestamp column (or time/ts) and one column of numbers per series, headed by its "
    "key, e.g. checkout.latency_p95{host=api-3}"
)


@pytest.mark.parametrize(
    ("header", "why"),
    [
        ("timestamp,host,value", "it has a value column but no metric column"),
        ("timestamp,metric,host", "it has a metric column but no value column"),
        ("host,value", "it names no timestamp column"),
    ],
)
def test_a_csv_of_neither_shape_lists_what_each_shape_needs(rejected, header, why):
    problems = rejected(f"{header}\n2026-11-30T08:00:00Z,web-1,3\n")
    assert problems == [
        f"upload.csv, line 1: the CSV header fits neither shape, as {why}. {SHAPES}. "
        f"Found: {header.replace(',', ', ')}"
    ]


def test_a_text_column_in_a_wide_csv_is_named_once_with_the_shapes(rejected):
    rows = "".join(f"2026-11-30T08:0{m}:00Z,web-1,{m}\n" for m in range(5))
    assert rejected("timestamp,host,cpu_pct\n" + rows) == [
        "upload.csv, line 1, column 'host': holds text such as 'web-1', not the numbers of a "
        "series; the file was read as wide, having no metric and value columns. " + SHAPES
    ]


def test_override_of_csv_wide_for_a_long_file_names_the_text_column(rejected):
    problems = rejected(b"ts,metric,value\n1796025600,m,1\n", format="csv-wide")
    assert problems[0].startswith(
        "upload.csv, line 1, column 'metric': holds text such as 'm', not the numbers"
    )


def test_a_wide_column_with_some_bad_cells_names_each_cell(rejected):
    text = "ts,m{h=1}\n1796025600,1\n1796025660,n/a?\n"
    assert rejected(text)[0].startswith(
        "upload.csv, line 3, column 'm{h=1}': 'n/a?' is not a number"
    )


def test_json_records_override_for_a_series_file_says_what_a_record_needs(rejected):
    problems = rejected(b'{"metric": "m", "points": [[1796025600, 1]]}', format="json-records")
    assert problems == ["upload.csv, line 1: the record has no timestamp or value field"]
