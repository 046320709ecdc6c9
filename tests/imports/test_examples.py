"""The shipped example files: each imports, and they agree with each other, since they
were all written from the same minutes of the bus-ticketing checkout."""

import pandas as pd
import pytest

from webapp.imports import EXAMPLE_FILES, FORMATS, detect_format, parse_file

T0 = pd.Timestamp("2026-11-30T07:55:00Z").value // 10**6  # the first minute in every file


def test_every_format_has_an_example_described_in_the_readme(examples):
    readme = (examples / "README.md").read_text()
    assert set(EXAMPLE_FILES) == set(FORMATS)
    for fmt, name in EXAMPLE_FILES.items():
        assert (examples / name).is_file()
        assert f"`{fmt}`" in readme and f"({name})" in readme


@pytest.mark.parametrize("fmt", FORMATS)
def test_each_example_is_detected_as_its_format(examples, fmt):
    path = examples / EXAMPLE_FILES[fmt]
    assert detect_format(path.read_bytes(), path.name) == fmt
    parsed = parse_file(path)
    assert parsed.format == fmt
    assert parsed.problems == []
    assert parsed.table["ts_utc"].min() == T0
    assert len(parsed.sha256) == 64 and parsed.size_bytes == path.stat().st_size


def _long(examples):
    return parse_file(examples / EXAMPLE_FILES["csv-long"])


def test_long_csv_reads_labels_and_a_series_without_labels(examples, points):
    parsed = _long(examples)
    assert parsed.timestamp_unit == "ISO 8601"
    assert parsed.rows_read == 80 and parsed.gap_count == 1
    assert set(parsed.series) == {
        f"checkout.{m}{{host=api-{h}}}"
        for m in ("requests", "latency_p95", "error_ratio")
        for h in (1, 2, 3)
    } | {"payment.queue_depth"}
    meta = parsed.series["checkout.latency_p95{host=api-3}"]
    assert (meta.metric, meta.labels) == ("checkout.latency_p95", {"host": "api-3"})
    first = points(parsed)[("checkout.requests{host=api-1}", T0)]
    assert first == 1418.0  # the second line of the file


def test_parquet_example_holds_the_same_points_as_the_long_csv(examples, points):
    parsed = parse_file(examples / EXAMPLE_FILES["parquet"])
    assert parsed.timestamp_unit == "Parquet timestamp"
    assert points(parsed) == points(_long(examples))


def test_wide_csv_matches_the_latency_rows_of_the_long_csv(examples, points):
    wide = parse_file(examples / EXAMPLE_FILES["csv-wide"])
    assert wide.timestamp_unit == "epoch seconds"
    assert wide.gap_count == 1
    expected = {k: v for k, v in points(_long(examples)).items() if "latency" in k[0]}
    assert points(wide) == expected


def test_json_records_match_the_error_ratio_rows(examples, points):
    records = parse_file(examples / EXAMPLE_FILES["json-records"])
    assert records.timestamp_unit == "epoch milliseconds"
    long = points(_long(examples))
    for (key, ts), value in points(records).items():
        assert key.endswith(",service=checkout}")
        assert long[(key.replace(",service=checkout", ""), ts)] == value


def test_json_series_reads_offsets_and_units(examples, points):
    parsed = parse_file(examples / EXAMPLE_FILES["json-series"])
    assert parsed.timestamp_unit == "ISO 8601"
    card = "payment.queue_depth{queue=card-payments}"
    assert parsed.series[card].unit == "jobs"
    long = points(_long(examples))
    got = {ts: v for (key, ts), v in points(parsed).items() if key == card}
    assert got == {ts: v for (key, ts), v in long.items() if key == "payment.queue_depth"}


def test_openmetrics_reads_counters_units_and_fractional_seconds(examples, points):
    parsed = parse_file(examples / EXAMPLE_FILES["openmetrics"])
    assert parsed.timestamp_unit == "epoch seconds"
    counter = "checkout_requests_total{host=api-1,route=/v1/checkout}"
    assert counter in parsed.series
    ts = sorted(ts for key, ts in points(parsed) if key == counter)
    assert ts[0] == T0 + 250  # written as ...300.250 seconds
    latency = "checkout_latency_p95_seconds{host=api-3}"
    assert parsed.series[latency].unit == "seconds"
    long = points(_long(examples))
    for (key, stamp), value in points(parsed).items():
        if key == latency:
            assert value * 1000 == pytest.approx(long[("checkout.latency_p95{host=api-3}", stamp)])
    assert parsed.gap_count == 1  # the NaN sample of api-2
