"""Every class of bad input is refused with the file, the line (or row) and the column."""

import io

import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from webapp.imports import ImportRejected, parse_bytes, parse_file

HEADER = "timestamp,metric,host,value\n"
GOOD = "2026-11-30T08:00:00Z,checkout.requests,api-1,1450\n"


def test_unparseable_timestamp_names_line_and_column(rejected):
    problems = rejected(HEADER + GOOD + "30/11/2026 8am,checkout.requests,api-1,1450\n")
    assert problems == [
        "upload.csv, line 3, column 'timestamp': '30/11/2026 8am' is not a timestamp; "
        "expected ISO 8601 (e.g. 2026-11-30T08:00:00Z) or epoch seconds/ms/us/ns"
    ]


def test_missing_timestamp(rejected):
    problems = rejected(HEADER + GOOD + ",checkout.requests,api-1,1450\n")
    assert problems[0].startswith("upload.csv, line 3, column 'timestamp': missing timestamp")


def test_non_numeric_value(rejected):
    problems = rejected(HEADER + GOOD + GOOD.replace("1450", "fast"))
    assert problems == [
        "upload.csv, line 3, column 'value': 'fast' is not a number; "
        "expected a number (an empty cell or NaN marks a gap)"
    ]


@pytest.mark.parametrize("infinity", ["inf", "-inf", "Infinity"])
def test_infinities_are_refused(rejected, infinity):
    problems = rejected(HEADER + GOOD + GOOD.replace("1450", infinity))
    assert len(problems) == 1
    assert problems[0].startswith("upload.csv, line 3, column 'value': value ")
    assert "is infinite; expected a finite number" in problems[0]


def test_blank_lines_do_not_shift_line_numbers(rejected):
    problems = rejected(HEADER + GOOD + "\n\n" + GOOD.replace("1450", "x"))
    assert problems[0].startswith("upload.csv, line 5, column 'value'")


def test_missing_header(rejected):
    problems = rejected(GOOD + GOOD)
    assert len(problems) == 1
    assert "line 1 holds data, not a header" in problems[0]


def test_header_without_a_value_column_names_what_is_missing(rejected):
    problems = rejected("timestamp,metric,host\n2026-11-30T08:00:00Z,m,api-1\n", format="csv-long")
    assert problems[0].startswith("upload.csv, line 1: no value column")


def test_wrong_number_of_fields(rejected):
    problems = rejected(HEADER + GOOD + "2026-11-30T08:01:00Z,checkout.requests,api-1,1,2\n")
    assert problems == ["upload.csv, line 3: expected 4 fields separated by ',', found 5"]


def test_missing_metric_name(rejected):
    problems = rejected(HEADER + GOOD + "2026-11-30T08:01:00Z,,api-1,1\n")
    assert problems == ["upload.csv, line 3, column 'metric': missing metric name"]


def test_empty_file(rejected):
    assert rejected(b"") == ["upload.csv: the file is empty"]
    assert rejected(b"\xef\xbb\xbf \n\n") == ["upload.csv: the file is empty"]


def test_header_only(rejected):
    assert rejected(HEADER) == ["upload.csv: the file has no data rows below the header"]


def test_all_values_gaps(rejected):
    problems = rejected(HEADER + GOOD.replace("1450", "NaN") + GOOD.replace("1450", ""))
    assert problems == ["upload.csv: every value is empty or NaN; there is nothing to import"]


def test_wrong_encoding_names_the_line_and_byte(rejected):
    latin1 = (HEADER + GOOD + "2026-11-30T08:01:00Z,checkout.requests,café,1\n").encode("latin-1")
    assert rejected(latin1) == [
        "upload.csv, line 3: byte 0xE9 at character 43 is not UTF-8; "
        "expected a UTF-8 file (save or export it as UTF-8)"
    ]


def test_utf16_is_named(rejected):
    problems = rejected((HEADER + GOOD).encode("utf-16"))
    assert problems == [
        "upload.csv: the file is UTF-16 text; expected UTF-8 (save or export it as UTF-8)"
    ]


def test_utf8_byte_order_mark_is_accepted():
    parsed = parse_bytes(b"\xef\xbb\xbf" + (HEADER + GOOD).encode(), "bom.csv")
    assert parsed.table["value"].tolist() == [1450.0]


def test_file_over_the_size_limit_is_refused_before_reading(tmp_path):
    path = tmp_path / "big.csv"
    path.write_text(HEADER + GOOD * 100)
    with pytest.raises(ImportRejected) as caught:
        parse_file(path, max_bytes=1024)
    assert str(caught.value.problems[0]) == (
        f"big.csv: the file is {path.stat().st_size / 1024:.1f} KB, over the 1.0 KB limit "
        "(raise MAX_IMPORT_MB to accept larger files)"
    )


def test_unknown_format(rejected):
    problems = rejected("Dear on-call\nthe numbers are attached.\n", name="notes.txt")
    assert problems[0].startswith("notes.txt: unknown format: not CSV")


def test_mixed_format_is_refused_where_it_changes(rejected):
    om = '# TYPE x gauge\nx{host="api-1"} 1 1796025300\ntimestamp,metric,value\n# EOF\n'
    problems = rejected(om, name="mixed.txt")
    assert problems == [
        "mixed.txt, line 3: expected a space and the value after the metric name and labels"
    ]
    json_then_csv = '[{"timestamp": 1796025300, "metric": "m", "value": 1}]\nts,metric,value\n'
    assert rejected(json_then_csv, name="mixed.json") == [
        "mixed.json, line 2: unexpected content after the end of the JSON value"
    ]


def test_override_of_another_family_is_refused(rejected):
    problems = rejected(HEADER + GOOD, format="openmetrics")
    assert problems == [
        "upload.csv: the format was given as openmetrics, but the file looks like csv-long; "
        "choose the matching format or leave it to detection"
    ]
    assert rejected(HEADER + GOOD, format="xml")[0].startswith("upload.csv: unknown format 'xml'")


def test_unknown_zone(rejected):
    assert rejected(HEADER + GOOD, tz="Mars/Olympus")[0].startswith(
        "upload.csv: unknown time zone 'Mars/Olympus'"
    )


def test_problems_are_capped_with_a_count_of_the_rest(rejected):
    bad_rows = "".join(f"2026-11-30T08:{m:02d}:00Z,m,api-1,oops\n" for m in range(35))
    problems = rejected(HEADER + bad_rows)
    assert len(problems) == 21
    assert problems[0].startswith("upload.csv, line 2, column 'value'")
    assert problems[19].startswith("upload.csv, line 21, column 'value'")
    assert problems[20] == "… and 15 more problems not listed"


def test_thousands_of_bad_lines_are_all_counted(rejected):
    bad_rows = "".join(f"{1796025600 + 60 * i},m,api-1,oops\n" for i in range(3000))
    problems = rejected(HEADER + bad_rows)
    assert len(problems) == 21
    assert problems[-1] == "… and 2,980 more problems not listed"


def test_the_rejection_counts_every_problem_in_its_summary():
    bad_rows = "".join(f"{1796025600 + 60 * i},m,api-1,oops\n" for i in range(3000))
    with pytest.raises(ImportRejected) as caught:
        parse_bytes((HEADER + bad_rows).encode(), "upload.csv")
    assert caught.value.not_listed == 2980
    assert str(caught.value).endswith("(and 2,999 more)")


def test_wide_csv_bad_cell_names_its_column(rejected):
    text = "ts,checkout.requests{host=api-1},checkout.requests{host=api-2}\n1796025300,1,2\n"
    problems = rejected(text + "1796025360,3,n/a?\n")
    assert problems[0].startswith(
        "upload.csv, line 3, column 'checkout.requests{host=api-2}': 'n/a?' is not a number"
    )


def test_wide_csv_malformed_header_key(rejected):
    problems = rejected("ts,checkout.requests{host=api-1\n1796025300,1\n")
    assert problems[0].startswith(
        "upload.csv, line 1, column 'checkout.requests{host=api-1': series key"
    )


def test_json_problems_name_the_record_line(rejected):
    text = (
        "[\n"
        ' {"timestamp": 1796025300, "metric": "m", "value": 1},\n'
        ' {"timestamp": 1796025360, "metric": "m", "value": "slow"},\n'
        ' {"timestamp": 1796025420, "metric": "m"}\n'
        "]\n"
    )
    assert rejected(text, name="r.json") == [
        "r.json, line 3, column 'value': 'slow' is not a number; "
        "expected a number (an empty cell or NaN marks a gap)",
        "r.json, line 4: the record has no value field",
    ]


def test_json_syntax_error_names_line_and_character(rejected):
    text = '[\n {"timestamp": 1796025300, "metric": "m", "value": 1,}\n]\n'
    assert rejected(text, name="r.json") == [
        "r.json, line 2: not valid JSON: Expecting property name enclosed in double quotes "
        "(character 54)"
    ]


def test_json_series_point_problem_names_the_point_line(rejected):
    text = '{"metric": "m", "points": [\n  [1796025300, 1],\n  [1796025360, Infinity]\n]}\n'
    problems = rejected(text, name="s.json")
    assert problems == [
        "s.json, line 3, column 'value': value inf is infinite; expected a finite number"
    ]


def test_openmetrics_without_eof(rejected):
    text = '# TYPE x gauge\nx{host="api-1"} 1 1796025300\n'
    assert rejected(text, name="x.txt") == [
        "x.txt, line 2: the file does not end with '# EOF'; an OpenMetrics exposition must "
        "close with that line (was the export cut short?)"
    ]


def test_openmetrics_sample_without_timestamp_and_content_after_eof(rejected):
    text = '# TYPE x gauge\nx{host="api-1"} 1\n# EOF\nx 2 1796025300\n'
    assert rejected(text, name="x.txt") == [
        "x.txt, line 2: the sample has no timestamp; expected 'name{labels} value timestamp' "
        "with the timestamp in seconds since the epoch",
        "x.txt, line 4: nothing may follow '# EOF'",
    ]


def test_openmetrics_bad_label_escape(rejected):
    text = '# TYPE x gauge\nx{host="api\\t1"} 1 1796025300\n# EOF\n'
    assert rejected(text, name="x.txt") == ["x.txt, line 2: unknown escape \\t in label 'host'"]


def test_parquet_problems_name_the_row(rejected):
    table = pa.table(
        {
            "timestamp": ["2026-11-30T08:00:00Z", "not a time"],
            "metric": ["checkout.requests"] * 2,
            "value": [1.0, 2.0],
        }
    )
    buffer = io.BytesIO()
    pq.write_table(table, buffer)
    assert rejected(buffer.getvalue(), name="p.parquet") == [
        "p.parquet, row 2, column 'timestamp': 'not a time' is not a timestamp; "
        "expected ISO 8601 (e.g. 2026-11-30T08:00:00Z) or epoch seconds/ms/us/ns"
    ]


def test_corrupt_parquet(rejected):
    problems = rejected(b"PAR1" + b"\x00" * 40, name="p.parquet")
    assert problems[0].startswith("p.parquet: not a readable Parquet file")


def test_json_lines_problems_name_the_line(rejected):
    text = (
        '{"timestamp": 1796025600, "metric": "m", "value": 1}\n'
        '{"timestamp": 1796025660, "metric": "m", "value": 2}\n'
        '{"timestamp": "later", "metric": "m", "value": 3}\n'
    )
    assert rejected(text, name="r.jsonl") == [
        "r.jsonl, line 3, column 'timestamp': 'later' is not a timestamp; "
        "this column holds epoch seconds"
    ]


def test_missing_file_is_a_problem_not_a_traceback(tmp_path):
    with pytest.raises(ImportRejected) as caught:
        parse_file(tmp_path / "gone.csv")
    assert str(caught.value.problems[0]).startswith("gone.csv: cannot read the file")


def test_size_limit_applies_to_bytes_too(rejected):
    problems = rejected(HEADER + GOOD * 10, max_bytes=100)
    assert problems == [
        f"upload.csv: the file is {len(HEADER + GOOD * 10)} bytes, over the 100 bytes limit "
        "(raise MAX_IMPORT_MB to accept larger files)"
    ]


@pytest.mark.parametrize(
    ("name", "text"),
    [
        (
            "r.json",
            '[\n {"timestamp": 1796025600, "metric": "m", "labels": {"city": "Sal\xe9"}, '
            '"value": 1}\n]\n',
        ),
        ("x.txt", '# TYPE m gauge\nm{city="Sal\xe9"} 1 1796025600\n# EOF\n'),
    ],
)
def test_wrong_encoding_in_json_and_openmetrics(rejected, name, text):
    problems = rejected(text.encode("latin-1"), name=name)
    assert len(problems) == 1
    assert problems[0].startswith(f"{name}, line 2: byte 0xE9 at character ")
    assert problems[0].endswith("is not UTF-8; expected a UTF-8 file (save or export it as UTF-8)")


def test_windows_line_endings_keep_line_numbers(rejected):
    text = HEADER + GOOD + "\n" + GOOD.replace("1450", "x")
    problems = rejected(text.replace("\n", "\r\n"))
    assert problems[0].startswith("upload.csv, line 4, column 'value': 'x' is not a number")


@pytest.mark.parametrize(
    "text, name, expected",
    [
        (
            "timestamp,metric,host,value\n2026-01-01T00:00:00Z,cpu\x00,a,1\n",
            "nul.csv",
            "nul.csv, line 2, column 'metric': metric name 'cpu\\x00' contains a control "
            "character (U+0000) at character 4",
        ),
        (
            '[{"timestamp": "2026-01-01T00:00:00Z", "metric": "cpu", "host": "a\\u001bb", '
            '"value": 1}]',
            "escape.json",
            "the value of label 'host' contains a control character (U+001B) at character 2",
        ),
    ],
)
def test_control_characters_in_names_and_labels_are_refused(rejected, text, name, expected):
    problems = rejected(text, name)
    assert any(expected in p for p in problems), problems
