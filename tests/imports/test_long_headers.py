"""A wide CSV's header may be as long as its series make it: line 1 is read whole, and
Arrow's reader gets blocks large enough to hold it."""

import pytest

from webapp.imports import parse_bytes


def _wide(keys: list[str], rows: int = 3) -> bytes:
    header = "timestamp," + ",".join(f'"{key}"' for key in keys) + "\n"
    body = "".join(
        f"{1796025600 + 60 * t}," + ",".join(str(i + t) for i in range(len(keys))) + "\n"
        for t in range(rows)
    )
    return (header + body).encode()


@pytest.mark.parametrize(
    ("count", "label_length"),
    [(1500, 40), (300, 5000)],  # a header of about 110 KB, and one of about 1.5 MB
)
def test_a_wide_header_of_any_length_is_read_whole(count, label_length):
    pool = "b" * label_length
    keys = [f"checkout.latency_p95{{host=api-{i:04d},pool={pool}}}" for i in range(count)]
    data = _wide(keys)
    assert data.index(b"\n") > 65536
    parsed = parse_bytes(data, "wide.csv")
    assert parsed.format == "csv-wide"
    assert len(parsed.series) == count
    last = parsed.table[parsed.table["series_key"] == keys[-1].replace('"', "")]
    assert last["value"].tolist() == [count - 1, count, count + 1]


def test_a_long_header_with_a_nameless_column_is_still_named_at_its_place(rejected):
    keys = [f"checkout.requests{{host=api-{i:05d}}}" for i in range(4000)]
    data = _wide(keys).replace(b'"checkout.requests{host=api-03999}"', b"", 1)
    assert rejected(data) == ["upload.csv, line 1: a column in the header has no name"]
