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
    ],
)
def test_unknown_formats_say_what_was_looked_for(data, reason):
    with pytest.raises(UnknownFormat, match=reason):
        detect_format(data)


def test_override_within_a_family_is_honoured():
    wide_looking = b"ts,value\n1796025600,1\n"
    assert parse_bytes(wide_looking, "w.csv").format == "csv-wide"
    parsed = parse_bytes(wide_looking, "w.csv", format="csv-wide")
    assert list(parsed.series) == ["value"]


def test_override_of_csv_wide_for_a_long_file_explains_the_cell(rejected):
    problems = rejected(b"ts,metric,value\n1796025600,m,1\n", format="csv-wide")
    assert problems[0].startswith("upload.csv, line 2, column 'metric': 'm' is not a number")


def test_json_records_override_for_a_series_file_says_what_a_record_needs(rejected):
    problems = rejected(b'{"metric": "m", "points": [[1796025600, 1]]}', format="json-records")
    assert problems == ["upload.csv, line 1: the record has no timestamp or value field"]
