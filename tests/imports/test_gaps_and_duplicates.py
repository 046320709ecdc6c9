"""Gaps are dropped and counted; a repeated (series, timestamp) keeps its last value."""

import pytest

from webapp.imports import parse_bytes

HEADER = "timestamp,metric,host,value\n"


def _csv(rows: list[str]):
    return parse_bytes((HEADER + "".join(r + "\n" for r in rows)).encode(), "g.csv")


@pytest.mark.parametrize("gap", ["", "NaN", "nan", "NA", "null"])
def test_empty_cells_and_nan_are_gaps(gap, points):
    parsed = _csv(
        [
            "2026-11-30T08:00:00Z,checkout.requests,api-1,1450",
            f"2026-11-30T08:01:00Z,checkout.requests,api-1,{gap}",
            "2026-11-30T08:02:00Z,checkout.requests,api-1,1460",
        ]
    )
    assert parsed.gap_count == 1
    assert parsed.rows_read == 3
    assert sorted(points(parsed).values()) == [1450.0, 1460.0]


def test_duplicates_keep_the_last_value_and_are_reported(points):
    parsed = _csv(
        [
            "2026-11-30T08:00:00Z,checkout.requests,api-1,1",
            "2026-11-30T08:00:00Z,checkout.requests,api-2,5",
            "2026-11-30T08:00:00Z,checkout.requests,api-1,2",
            "2026-11-30T08:01:00Z,checkout.requests,api-1,7",
            "2026-11-30T09:00:00+01:00,checkout.requests,api-1,3",
        ]
    )
    assert parsed.duplicate_count == 2
    got = points(parsed)
    assert got == {
        ("checkout.requests{host=api-1}", 1796025600000): 3.0,
        ("checkout.requests{host=api-2}", 1796025600000): 5.0,
        ("checkout.requests{host=api-1}", 1796025660000): 7.0,
    }
    assert [p.severity for p in parsed.problems] == ["warning"]
    assert str(parsed.problems[0]) == (
        "g.csv: 2 rows repeat a (series, timestamp) pair that appears again later; the last "
        "value of each pair was kept (first repeat at line 2)"
    )


def test_a_gap_does_not_overwrite_an_earlier_value(points):
    parsed = _csv(
        [
            "2026-11-30T08:00:00Z,checkout.requests,api-1,1",
            "2026-11-30T08:00:00Z,checkout.requests,api-1,",
        ]
    )
    assert (parsed.gap_count, parsed.duplicate_count) == (1, 0)
    assert list(points(parsed).values()) == [1.0]


def test_spellings_of_one_series_merge():
    parsed = parse_bytes(
        b"ts,metric,host,dc,value\n"
        b"1796025600,checkout.requests,api-1,,1\n"
        b"1796025660,checkout.requests, api-1 ,,2\n",
        "s.csv",
    )
    assert list(parsed.series) == ["checkout.requests{host=api-1}"]
    assert parsed.table["series_key"].nunique() == 1


def test_wide_csv_gaps_are_counted_per_cell():
    parsed = parse_bytes(b"ts,a{h=1},a{h=2},a{h=3}\n1796025600,1,,NaN\n1796025660,,2,3\n", "w.csv")
    assert parsed.gap_count == 3
    assert len(parsed.table) == 3


def test_duplicates_in_json_series_and_openmetrics(points):
    series = b'{"metric": "m", "points": [[1796025600, 1], [1796025600, 2]]}'
    parsed = parse_bytes(series, "s.json")
    assert parsed.duplicate_count == 1 and list(points(parsed).values()) == [2.0]
    om = b"# TYPE m gauge\nm 1 1796025600\nm 2 1796025600.0\n# EOF\n"
    parsed = parse_bytes(om, "m.txt")
    assert parsed.duplicate_count == 1 and list(points(parsed).values()) == [2.0]


def test_table_columns_and_types():
    parsed = _csv(["2026-11-30T08:00:00Z,checkout.requests,api-1,1"])
    table = parsed.table
    assert list(table.columns) == ["series_key", "ts_utc", "value"]
    assert str(table["ts_utc"].dtype) == "int64"
    assert str(table["value"].dtype) == "float64"
    assert table["series_key"].tolist() == ["checkout.requests{host=api-1}"]


def test_json_lines_are_records(points):
    text = (
        b'{"timestamp": "2026-11-30T08:00:00Z", "metric": "checkout.requests", '
        b'"labels": {"host": "api-1"}, "value": 1450}\n'
        b'{"timestamp": "2026-11-30T08:01:00Z", "metric": "checkout.requests", '
        b'"labels": {"host": "api-1"}, "value": null}\n'
    )
    parsed = parse_bytes(text, "r.jsonl")
    assert parsed.format == "json-records"
    assert parsed.gap_count == 1
    assert points(parsed) == {("checkout.requests{host=api-1}", 1796025600000): 1450.0}


def test_rows_of_empty_cells_are_skipped_like_blank_lines(rejected):
    text = "ts,metric,host,value\n1796025600,m,a,1\n,,,\n1796025660,m,a,2\n , , ,\n"
    parsed = parse_bytes(text.encode(), "sheet.csv")
    assert parsed.rows_read == 2 and parsed.gap_count == 0
    assert parsed.table["value"].tolist() == [1.0, 2.0]
    bad = "ts,metric,host,value\n1796025600,m,a,1\n,,,\n1796025660,m,a,x\n"
    assert rejected(bad)[0].startswith("upload.csv, line 4, column 'value'")


def test_decimal_commas_in_semicolon_and_tab_files(points):
    text = "timestamp;metric;host;value\n1796025600;checkout.latency_p95;api-1;183,4\n"
    assert list(points(parse_bytes(text.encode(), "de.csv")).values()) == [183.4]
    wide = "ts\tcheckout.latency_p95{host=api-1}\n1796025600\t-0,5\n"
    assert list(points(parse_bytes(wide.encode(), "de.tsv")).values()) == [-0.5]


def test_commas_in_comma_files_are_not_decimal_points(rejected):
    problems = rejected('timestamp,metric,value\n1796025600,m,"183,4"\n')
    assert problems[0].startswith("upload.csv, line 2, column 'value': '183,4' is not a number")


def test_other_keys_of_a_json_record_are_labels(points, rejected):
    text = (
        b'[{"timestamp": 1796025600, "metric": "checkout.requests", "host": "api-1", '
        b'"labels": {"route": "/v1/checkout"}, "value": 1450}]'
    )
    assert points(parse_bytes(text, "r.json")) == {
        ("checkout.requests{host=api-1,route=/v1/checkout}", 1796025600000): 1450.0
    }
    bad = b'[{"timestamp": 1796025600, "metric": "m", "labels": "host=api-1", "value": 1}]'
    assert rejected(bad, name="r.json") == [
        "r.json, line 1, column 'labels': labels must be an object of name: value strings"
    ]


def test_one_repeat_is_worded_as_one_and_a_parquet_repeat_names_its_row():
    import io

    import pyarrow as pa
    import pyarrow.parquet as pq

    table = pa.table(
        {
            "timestamp": ["2026-11-30T08:00:00Z"] * 2,
            "metric": ["checkout.requests"] * 2,
            "value": [1.0, 2.0],
        }
    )
    sink = io.BytesIO()
    pq.write_table(table, sink)
    parsed = parse_bytes(sink.getvalue(), "g.parquet")
    assert parsed.duplicate_count == 1
    assert str(parsed.problems[0]) == (
        "g.parquet: 1 row repeats a (series, timestamp) pair that appears again later; the "
        "last value of each pair was kept (first repeat at row 1)"
    )
