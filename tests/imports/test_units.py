"""A `unit` column (or key) gives the series' unit, one per series, never a label."""

import io
import json

import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from webapp.imports import parse_bytes

HEADER = "timestamp,metric,host,unit,value\n"


def _row(minute: int, host: str, unit: str, value: float = 1.0) -> str:
    return f"2026-11-30T08:{minute:02d}:00Z,checkout.latency_p95,{host},{unit},{value}\n"


def _parquet(units: list[str | None]) -> bytes:
    table = pa.table(
        {
            "timestamp": pa.array(
                [1_796_025_600 + 60 * i for i in range(len(units))], type=pa.int64()
            ),
            "metric": ["checkout.latency_p95"] * len(units),
            "host": ["api-3"] * len(units),
            "unit": pa.array(units, type=pa.string()),
            "value": [float(i) for i in range(len(units))],
        }
    )
    sink = io.BytesIO()
    pq.write_table(table, sink)
    return sink.getvalue()


def test_csv_unit_column_is_the_series_unit_not_a_label():
    parsed = parse_bytes(
        (HEADER + _row(0, "api-1", "ms") + _row(1, "api-1", "ms")).encode(), "u.csv"
    )
    assert list(parsed.series) == ["checkout.latency_p95{host=api-1}"]
    meta = parsed.series["checkout.latency_p95{host=api-1}"]
    assert meta.unit == "ms"
    assert meta.labels == {"host": "api-1"}
    assert len(parsed.table) == 2


def test_unit_column_is_found_in_any_case_and_its_cells_are_trimmed():
    text = "timestamp,metric,host,Unit,value\n" + _row(0, "api-1", " ms ") + _row(1, "api-1", "ms")
    parsed = parse_bytes(text.encode(), "u.csv")
    assert parsed.series["checkout.latency_p95{host=api-1}"].unit == "ms"


def test_each_series_keeps_its_own_unit():
    text = HEADER + _row(0, "api-1", "ms") + _row(0, "api-2", "s") + _row(1, "api-1", "ms")
    parsed = parse_bytes(text.encode(), "u.csv")
    units = {key: meta.unit for key, meta in parsed.series.items()}
    assert units == {
        "checkout.latency_p95{host=api-1}": "ms",
        "checkout.latency_p95{host=api-2}": "s",
    }


def test_empty_unit_cells_mean_no_unit():
    parsed = parse_bytes((HEADER + _row(0, "api-1", "") + _row(1, "api-1", "")).encode(), "u.csv")
    meta = parsed.series["checkout.latency_p95{host=api-1}"]
    assert meta.unit is None
    assert meta.labels == {"host": "api-1"}


def test_without_a_unit_column_there_is_no_unit():
    text = "timestamp,metric,host,value\n2026-11-30T08:00:00Z,checkout.requests,api-1,1450\n"
    parsed = parse_bytes(text.encode(), "u.csv")
    assert parsed.series["checkout.requests{host=api-1}"].unit is None


def test_unit_change_names_the_line_and_both_units(rejected):
    text = HEADER + _row(0, "api-1", "ms") + _row(0, "api-2", "ms") + _row(1, "api-1", "s")
    assert rejected(text) == [
        "upload.csv, line 4, column 'unit': the unit of checkout.latency_p95{host=api-1} "
        "changes here from 'ms' (line 2) to 's'; a series has one unit, so give the same "
        "unit on all of its rows (an empty cell means no unit)"
    ]


def test_a_unit_left_empty_on_some_rows_of_a_series_is_a_change(rejected):
    text = HEADER + _row(0, "api-1", "") + _row(1, "api-1", "") + _row(2, "api-1", "ms")
    problems = rejected(text)
    assert len(problems) == 1
    assert problems[0].startswith("upload.csv, line 4, column 'unit': ")
    assert "from no unit (line 2) to 'ms'" in problems[0]


def test_unit_change_is_found_across_spellings_of_one_series(rejected):
    # " api-1" and "api-1" name one series; a unit change between them is still a change
    text = HEADER + _row(0, "api-1", "ms") + _row(1, " api-1", "s")
    problems = rejected(text)
    assert len(problems) == 1
    assert problems[0].startswith("upload.csv, line 3, column 'unit'")
    assert "from 'ms' (line 2) to 's'" in problems[0]


def test_unit_change_is_reported_with_the_other_problems_of_the_file(rejected):
    text = HEADER + _row(0, "api-1", "ms") + _row(1, "api-1", "s", value="fast")
    problems = rejected(text)
    assert len(problems) == 2
    assert all(p.startswith("upload.csv, line 3, column ") for p in problems)
    assert {p.split("'")[1] for p in problems} == {"unit", "value"}


def test_parquet_unit_column_is_the_series_unit():
    parsed = parse_bytes(_parquet(["ms", "ms", "ms"]), "u.parquet")
    meta = parsed.series["checkout.latency_p95{host=api-3}"]
    assert (meta.unit, meta.labels) == ("ms", {"host": "api-3"})


@pytest.mark.parametrize("empty", [None, ""])
def test_parquet_null_or_empty_unit_means_no_unit(empty):
    parsed = parse_bytes(_parquet([empty, empty]), "u.parquet")
    assert parsed.series["checkout.latency_p95{host=api-3}"].unit is None


def test_parquet_unit_change_names_the_row(rejected):
    problems = rejected(_parquet(["ms", "ms", "s"]), name="u.parquet")
    assert problems == [
        "u.parquet, row 3, column 'unit': the unit of checkout.latency_p95{host=api-3} "
        "changes here from 'ms' (row 1) to 's'; a series has one unit, so give the same "
        "unit on all of its rows (an empty cell means no unit)"
    ]


def _records(*units) -> bytes:
    records = [
        {"timestamp": 1_796_025_600_000 + 60_000 * i, "metric": "queue.depth", "value": i}
        | ({} if unit is ... else {"unit": unit})
        for i, unit in enumerate(units)
    ]
    return ("[\n" + ",\n".join(json.dumps(r) for r in records) + "\n]\n").encode()


def test_json_records_unit_key_is_the_series_unit():
    parsed = parse_bytes(_records("jobs", "jobs"), "r.json")
    assert parsed.series["queue.depth"].unit == "jobs"
    assert parsed.series["queue.depth"].labels == {}


def test_json_records_without_or_with_an_empty_unit_have_none():
    assert parse_bytes(_records(..., ...), "r.json").series["queue.depth"].unit is None
    assert parse_bytes(_records("", " "), "r.json").series["queue.depth"].unit is None


def test_json_records_unit_change_names_the_record_line(rejected):
    problems = rejected(_records("jobs", "jobs", "items"), name="r.json")
    assert len(problems) == 1
    assert problems[0].startswith("r.json, line 4, column 'unit': the unit of queue.depth")
    assert "from 'jobs' (line 2) to 'items'" in problems[0]


def test_json_unit_that_is_not_text_is_refused(rejected):
    problems = rejected(_records(3), name="r.json")
    assert problems == ["r.json, line 2, column 'unit': unit must be a string, found int"]


WIDE = "ts,checkout.latency_p95{host=api-1},checkout.latency_p95{host=api-2}\n1796025600,1,2\n"


def test_a_unit_given_at_import_is_the_unit_of_every_series_of_the_file():
    parsed = parse_bytes(WIDE.encode(), "w.csv", unit=" ms ")
    assert {key: meta.unit for key, meta in parsed.series.items()} == {
        "checkout.latency_p95{host=api-1}": "ms",
        "checkout.latency_p95{host=api-2}": "ms",
    }


def test_without_a_given_unit_the_series_have_none():
    parsed = parse_bytes(WIDE.encode(), "w.csv", unit="  ")
    assert {meta.unit for meta in parsed.series.values()} == {None}


def test_a_given_unit_agreeing_with_the_file_is_fine():
    text = HEADER + _row(0, "api-1", "ms") + _row(1, "api-2", "")
    parsed = parse_bytes(text.encode(), "u.csv", unit="ms")
    assert {meta.unit for meta in parsed.series.values()} == {"ms"}


def test_a_given_unit_contradicting_the_file_is_refused(rejected):
    text = HEADER + _row(0, "api-1", "s") + _row(1, "api-2", "ms")
    assert rejected(text, unit="ms") == [
        "upload.csv: the file gives checkout.latency_p95{host=api-1} the unit 's', but the "
        "import's unit is 'ms'; leave the unit out to keep the file's units, or give the "
        "same one"
    ]


def test_a_given_unit_contradicting_openmetrics_unit_is_refused(rejected):
    text = "# TYPE x_seconds gauge\n# UNIT x_seconds seconds\nx_seconds 1 1796025600\n# EOF\n"
    assert rejected(text, name="x.txt", unit="ms") == [
        "x.txt: the file gives x_seconds the unit 'seconds', but the import's unit is 'ms'; "
        "leave the unit out to keep the file's units, or give the same one"
    ]


@pytest.mark.parametrize(
    ("unit", "message"),
    [
        (
            "m" * 40,
            f"upload.csv: the unit {'m' * 40!r}… is 40 characters long; expected a short unit "
            "of at most 32 characters, such as ms, s, bytes or %",
        ),
        (
            "m\ts",
            "upload.csv: the unit 'm\\ts' holds a control character; expected a unit such as ms",
        ),
    ],
)
def test_a_unit_that_cannot_be_one_is_refused(rejected, unit, message):
    assert rejected(WIDE, unit=unit) == [message]
