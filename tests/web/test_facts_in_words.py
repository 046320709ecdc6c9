"""The Facts panel in words: grouped, labelled with units, each said once; the raw keys
stay in the JSON download."""

from __future__ import annotations

import re

from webapp.analysis.vocabulary import FACT_GROUPS
from webapp.web.facts import fact_groups, parameter_rows

FACTS = {
    "window_start": "2026-11-29T22:38:00+00:00",
    "window_end": "2026-11-30T04:51:00+00:00",
    "window_minutes": 374.0,
    "minutes_outside": 73.0,
    "minutes_above": 73.0,
    "minutes_below": 0.0,
    "peak_time": "2026-11-30T02:39:00+00:00",
    "peak_value": 1677.7,
    "peak_lower": 94.1,
    "peak_upper": 598.2,
    "strongest_time": "2026-11-30T02:39:00+00:00",
    "strongest_value": 1677.7,
    "history_requested_days": 28.0,
    "step_seconds": 60.0,
    "coverage_history": 0.99888,
    "excluded_minutes": 138.0,
    "periods": ["1d", "7d"],
    "same_hour_rank": 1,
    "same_hour_weeks": 4,
    "same_hour_side": "high",
    "series": "checkout.latency_p95{host=api-4}",
    "a_new_fact": 2.5,
}


def test_facts_are_grouped_in_words_with_units() -> None:
    groups = dict(fact_groups(FACTS, "Europe/Lisbon", "ms"))
    assert list(groups) == ["The window", "The band", "History and data", "The past weeks",
                            "Other facts"]  # fmt: skip
    window = dict(groups["The window"])
    assert window["Window"] == "2026-11-29 22:38 to 2026-11-30 04:51 WET"
    assert window["Length"] == "6 h 14 min"
    assert window["Time outside the band"] == "1 h 13 min, all above the band"
    assert window["Peak value"] == "1,678 ms"
    assert window["Band at the peak"] == "94.1 to 598.2 ms"
    history = dict(groups["History and data"])
    assert history == {
        "History asked for": "28 days",
        "Sample step": "1 min",
        "History with a value": "99.89%",
        "Left out of the history": "2 h 18 min",
    }
    assert dict(groups["The band"])["Seasonal periods used"] == "1 day, 7 days"
    rank = dict(groups["The past weeks"])["Rank of this week"]
    assert rank == "the highest of 5 weeks (this one and 4 before)"
    assert groups["Other facts"] == [("A new fact", "2.5")]


def test_no_fact_is_said_twice_and_no_raw_key_shows() -> None:
    rows = [row for _, group in fact_groups(FACTS, "UTC", "ms") for row in group]
    labels = [label for label, _ in rows]
    assert len(labels) == len(set(labels))
    assert "Furthest from expected" not in labels  # the same sample as the peak
    assert not [label for label in labels if re.search(r"_|^[a-z]", label)]
    keys = [key for _, entries in FACT_GROUPS for _, _, ks in entries for key in ks[:1]]
    assert len(keys) == len(set(keys))
    moved = {**FACTS, "strongest_time": "2026-11-30T03:10:00+00:00", "strongest_value": -5.0}
    labels = [label for _, group in fact_groups(moved, "UTC", "ms") for label, _ in group]
    assert "Furthest from expected" in labels and "Value there" in labels


def test_left_out_periods_read_as_spans() -> None:
    rows = dict(parameter_rows(
        {"exclude": [["2026-11-04T23:00:00+00:00", "2026-11-05T00:30:00+00:00"],
                     ["2026-11-24T14:12:00+00:00", "2026-11-24T14:58:00+00:00"]],
         "history_seconds": 2419200.0, "window": ["x", "y"]},
        "UTC",
    ))  # fmt: skip
    assert rows == {
        "Left out of the history": "2026-11-04 23:00 to 2026-11-05 00:30 UTC; "
        "2026-11-24 14:12 to 14:58 UTC",
        "History": "28 d",
    }


def test_the_panel_and_the_json_download(demo_client) -> None:
    page = demo_client.get("/explanations/1").get_data(as_text=True)
    panel = page[page.index('id="h-facts"') :]
    assert "The window" in panel and "History and data" in panel
    assert "history_seconds" not in page and "strongest value" not in panel
    assert "peak_value" not in panel
    raw = demo_client.get("/explanations/1/facts.json")
    assert raw.status_code == 200 and "attachment" in raw.headers["Content-Disposition"]
    assert raw.get_json()["peak_value"] > 0 and "strongest_time" in raw.get_json()
    live = demo_client.get("/explain?series=1").get_data(as_text=True)
    link = re.search(r'href="(/explain/facts\.json\?[^"]+)"', live).group(1)
    assert "window_start" in demo_client.get(link.replace("&amp;", "&")).get_json()
