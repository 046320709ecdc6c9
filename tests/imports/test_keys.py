"""Series keys: the canonical form of CONTRACTS.md and its parser."""

import pytest
from hypothesis import given
from hypothesis import strategies as st

from webapp.imports import parse_series_key, series_key


def test_labels_are_sorted_and_plain_values_unquoted():
    key = series_key("checkout.latency_p95", {"region": "east", "host": "api-3"})
    assert key == "checkout.latency_p95{host=api-3,region=east}"


def test_series_without_labels_is_the_metric_name():
    assert series_key("payment.queue_depth", {}) == "payment.queue_depth"
    assert parse_series_key("payment.queue_depth") == ("payment.queue_depth", {})


@pytest.mark.parametrize(
    ("value", "written"),
    [
        ("a,b", '"a,b"'),
        ("x}y", '"x}y"'),
        ("k=v", '"k=v"'),
        ('say "hi"', '"say \\"hi\\""'),
        ("back\\slash", '"back\\\\slash"'),
        (" padded", '" padded"'),
    ],
)
def test_values_with_special_characters_are_quoted(value, written):
    key = series_key("m", {"l": value})
    assert key == f"m{{l={written}}}"
    assert parse_series_key(key) == ("m", {"l": value})


def test_parser_accepts_spaces_and_quotes_people_type():
    assert parse_series_key('m{ host = api-1 , route="/v1/checkout" }') == (
        "m",
        {"host": "api-1", "route": "/v1/checkout"},
    )


@pytest.mark.parametrize(
    ("key", "message"),
    [
        ("m{host=api-1", r"expected '\}' at the end"),
        ("m{host}", "expected name=value"),
        ("{host=api-1}", "metric name must not be empty"),
        ("m{a=1,a=2}", "appears twice"),
        ('m{a="open}', "not closed"),
        ("m{a=x=y}", "must be quoted"),
        ("m{a=1 b=2}", "must be quoted"),
        ('m{a="1" b=2}', "expected ',' or '}'"),
    ],
)
def test_malformed_keys_say_what_is_wrong(key, message):
    with pytest.raises(ValueError, match=message):
        parse_series_key(key)


def test_metric_with_braces_is_refused():
    with pytest.raises(ValueError, match="must not contain"):
        series_key("m{x}", {})


_names = st.from_regex(r"[a-z_][a-z0-9_]{0,8}", fullmatch=True)
# Any text a store keeps: no surrogates, no control characters but tab, LF and CR.
_values = st.text(
    st.one_of(st.characters(blacklist_categories=("Cs", "Cc")), st.sampled_from("\t\n\r")),
    max_size=12,
)


@given(
    metric=st.from_regex(r"[a-z][a-z0-9_.:]{0,15}", fullmatch=True),
    labels=st.dictionaries(_names, _values, max_size=4),
)
def test_every_key_round_trips(metric, labels):
    assert parse_series_key(series_key(metric, labels)) == (metric, labels)


@given(
    before=_values,
    control=st.sampled_from([chr(c) for c in (*range(0, 9), 11, 12, *range(14, 32), 127)]),
    after=_values,
)
def test_a_label_value_with_a_control_character_is_refused(before, control, after):
    with pytest.raises(ValueError, match=rf"label 'host' contains .*U\+{ord(control):04X}"):
        series_key("cpu", {"host": before + control + after})
