"""OpenMetrics details: escapes, families and units, exemplars, _created samples."""

from webapp.imports import parse_bytes

LABELS = b'{host="api-1",provider="Card \\"Express\\" Ltd"}'
EXPOSITION = b"\n".join(
    [
        b"# TYPE checkout_payment_seconds counter",
        b"# UNIT checkout_payment_seconds seconds",
        b"# HELP checkout_payment_seconds Time spent waiting for the payment provider.",
        b"checkout_payment_seconds_total" + LABELS + b" 812.5 1796025600",
        b"checkout_payment_seconds_created" + LABELS + b" 1795000000 1796025600",
        b"checkout_payment_seconds_total" + LABELS + b" 815.25 1796025660.125"
        b' # {trace_id="7f3a"} 2.5 1796025659.9',
        b"# TYPE payment_queue_depth gauge",
        b'payment_queue_depth{path="C:\\\\batch\\\\night"} 42 1796025600',
        b"# EOF\n",
    ]
)


def test_escaped_quotes_and_backslashes_in_label_values():
    parsed = parse_bytes(EXPOSITION, "scrape.txt")
    providers = {m.labels.get("provider") for m in parsed.series.values()}
    assert 'Card "Express" Ltd' in providers
    paths = {m.labels.get("path") for m in parsed.series.values()}
    assert "C:\\batch\\night" in paths


def test_counter_family_unit_reaches_its_total_samples():
    parsed = parse_bytes(EXPOSITION, "scrape.txt")
    total = [m for m in parsed.series.values() if m.metric == "checkout_payment_seconds_total"]
    assert len(total) == 1 and total[0].unit == "seconds"
    gauge = [m for m in parsed.series.values() if m.metric == "payment_queue_depth"]
    assert gauge[0].unit is None


def test_exemplars_are_ignored_and_created_samples_skipped():
    parsed = parse_bytes(EXPOSITION, "scrape.txt")
    total = parsed.table[parsed.table["series_key"].str.startswith("checkout_payment")]
    assert total["value"].tolist() == [812.5, 815.25]
    assert total["ts_utc"].tolist() == [1796025600000, 1796025660125]
    assert [str(p) for p in parsed.problems] == [
        "scrape.txt: 1 _created samples were skipped: they hold creation times, not values"
    ]
    assert not any(m.metric.endswith("_created") for m in parsed.series.values())


def test_unknown_metric_type_is_named(rejected):
    text = b"# TYPE x meter\nx 1 1796025600\n# EOF\n"
    assert rejected(text, name="x.txt") == [
        "x.txt, line 1: unknown metric type 'meter'; expected one of counter, gauge, "
        "gaugehistogram, histogram, info, stateset, summary, unknown"
    ]
