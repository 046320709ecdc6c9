"""Property: random valid frames written in every format import back to the same points.

The writers here use only general-purpose libraries (csv, json, pyarrow), so they check the
importers against each format's own rules rather than against the importers' code."""

import csv
import io
import json

import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from webapp.imports import FORMATS, parse_bytes, series_key

ROLE_NAMES = {
    "timestamp", "time", "ts", "datetime", "date", "timestamp_utc", "time_utc",
    "metric", "name", "metric_name", "value", "val",
}  # fmt: skip
START, END = 946_684_800_000, 4_102_444_800_000  # 2000-01-01 .. 2100-01-01 in ms

label_names = st.from_regex(r"[a-z][a-z0-9_]{0,6}", fullmatch=True).filter(
    lambda n: n not in ROLE_NAMES
)
label_values = st.text(
    st.characters(blacklist_categories=("Cs", "Cc", "Zl", "Zp")), min_size=1, max_size=8
).filter(lambda v: v == v.strip())
series_strategy = st.tuples(
    st.from_regex(r"[a-z][a-z0-9_]{0,10}", fullmatch=True),
    st.dictionaries(label_names, label_values, max_size=3),
    st.dictionaries(
        st.integers(START, END),
        st.one_of(st.none(), st.floats(allow_nan=False, allow_infinity=False, width=64)),
        min_size=1,
        max_size=6,
    ),
)
frames = st.lists(
    series_strategy, min_size=1, max_size=4, unique_by=lambda s: series_key(s[0], s[1])
).filter(lambda f: any(v is not None for _, _, pts in f for v in pts.values()))
stamp_styles = st.sampled_from(["iso-z", "iso-offset", "iso-naive", "s", "ms", "us", "ns"])
NAIVE_ZONE = "Asia/Kolkata"  # no daylight-saving changes since 1945 (tz database)


def _stamp(ms: int, style: str) -> str | int | float:
    moment = pd.Timestamp(ms, unit="ms", tz="UTC")
    if style == "iso-z":
        return moment.strftime("%Y-%m-%dT%H:%M:%S.%f")[:-3] + "Z"
    if style == "iso-offset":
        return moment.tz_convert(NAIVE_ZONE).isoformat(timespec="milliseconds")
    if style == "iso-naive":
        return moment.tz_convert(NAIVE_ZONE).tz_localize(None).isoformat(timespec="milliseconds")
    return {"s": ms / 1000, "ms": ms, "us": ms * 1000, "ns": ms * 1_000_000}[style]


def _number(value: float | None) -> str:
    return "" if value is None else repr(value)


def _rows(frame):
    for metric, labels, pts in frame:
        for ms, value in pts.items():
            yield metric, labels, ms, value


def _csv_writer(out, style):
    """Semicolons or tabs for some styles: the delimiter is detected too."""
    delimiter = {"us": ";", "iso-naive": "\t"}.get(style, ",")
    return csv.writer(out, delimiter=delimiter, lineterminator="\n")


def write_csv_long(frame, style):
    names = sorted({n for _, labels, _ in frame for n in labels})
    out = io.StringIO()
    writer = _csv_writer(out, style)
    writer.writerow(["timestamp", "metric", *names, "value"])
    for metric, labels, ms, value in _rows(frame):
        writer.writerow(
            [_stamp(ms, style), metric, *(labels.get(n, "") for n in names), _number(value)]
        )
    return out.getvalue().encode()


def write_csv_wide(frame, style):
    keys = [series_key(m, labels) for m, labels, _ in frame]
    stamps = sorted({ms for _, _, pts in frame for ms in pts})
    out = io.StringIO()
    writer = _csv_writer(out, style)
    writer.writerow(["timestamp", *keys])
    for ms in stamps:
        writer.writerow([_stamp(ms, style), *(_number(pts.get(ms)) for _, _, pts in frame)])
    return out.getvalue().encode()


def write_json_records(frame, style):
    records = [
        {"timestamp": _stamp(ms, style), "metric": m, "labels": labels, "value": value}
        for m, labels, ms, value in _rows(frame)
    ]
    return json.dumps(records, indent=1).encode()


def write_json_series(frame, style):
    series = [
        {"metric": m, "labels": labels, "points": [[_stamp(ms, style), v] for ms, v in pts.items()]}
        for m, labels, pts in frame
    ]
    return json.dumps(series if len(series) > 1 else series[0], indent=1).encode()


def _om_escape(value: str) -> str:
    return value.replace("\\", "\\\\").replace('"', '\\"')


def write_openmetrics(frame, _style):
    lines = []
    for metric, labels, pts in frame:
        lines.append(f"# TYPE {metric} gauge")
        inner = ",".join(f'{k}="{_om_escape(v)}"' for k, v in labels.items())
        name = f"{metric}{{{inner}}}" if labels else metric
        for ms, value in pts.items():
            shown = "NaN" if value is None else repr(value)
            lines.append(f"{name} {shown} {ms / 1000!r}")  # seconds, as the standard says
    return ("\n".join(lines) + "\n# EOF\n").encode()


def write_parquet(frame, style):
    names = sorted({n for _, labels, _ in frame for n in labels})
    rows = list(_rows(frame))
    columns = {
        "timestamp": pa.array([ms for _, _, ms, _ in rows], pa.timestamp("ms", tz="UTC"))
        if style.startswith("iso")
        else pa.array([_stamp(ms, style) for _, _, ms, _ in rows]),
        "metric": [m for m, _, _, _ in rows],
        **{n: [labels.get(n) for _, labels, _, _ in rows] for n in names},
        "value": pa.array([v for _, _, _, v in rows], pa.float64()),
    }
    buffer = io.BytesIO()
    pq.write_table(pa.table(columns), buffer)
    return buffer.getvalue()


WRITERS = {
    "csv-long": write_csv_long,
    "csv-wide": write_csv_wide,
    "json-records": write_json_records,
    "json-series": write_json_series,
    "openmetrics": write_openmetrics,
    "parquet": write_parquet,
}


def test_every_format_has_a_writer():
    assert set(WRITERS) == set(FORMATS)


@pytest.mark.parametrize("fmt", FORMATS)
@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(frame=frames, style=stamp_styles)
def test_written_frames_import_back_to_the_same_points(fmt, frame, style, points):
    if fmt == "openmetrics" and not all(
        all(k[0].isalpha() or k[0] == "_" for k in labels) for _, labels, _ in frame
    ):
        return
    data = WRITERS[fmt](frame, style)
    parsed = parse_bytes(data, f"frame.{fmt}", tz=NAIVE_ZONE if style == "iso-naive" else None)
    assert parsed.format == fmt  # detected, not told
    expected = {
        (series_key(m, labels), ms): value
        for m, labels, ms, value in _rows(frame)
        if value is not None
    }
    assert points(parsed) == expected
    assert parsed.duplicate_count == 0
    if fmt != "csv-wide":
        assert parsed.gap_count == sum(v is None for *_, v in _rows(frame))
    for key, meta in parsed.series.items():
        assert series_key(meta.metric, meta.labels) == key
