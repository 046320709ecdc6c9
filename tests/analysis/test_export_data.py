"""to_csv / to_json: every result as text with its parameters, read back with pandas."""

from __future__ import annotations

import io
import json

import numpy as np
import pandas as pd
import pytest

from webapp.analysis import ThresholdRule, compare_peers, explain, replay, screen, to_csv, to_json
from webapp.analysis._report import replay_report

END = pd.Timestamp("2026-11-30 06:00", tz="UTC")
WINDOW = (END - pd.Timedelta(hours=6), END)


def hosts(n: int = 6) -> dict[str, pd.Series]:
    """Invented 5-minute series over two weeks; the first jumps by 30 two hours into the window."""
    rng = np.random.default_rng(9)
    index = pd.date_range(END - pd.Timedelta(weeks=2), END, freq="5min")
    hours = (index - index[0]).total_seconds().to_numpy() / 3600
    out = {}
    for i in range(n):
        values = 80 + 10 * np.sin(2 * np.pi * hours / 24) + rng.normal(0, 2, len(index))
        if i == 0:
            values[index >= WINDOW[0] + pd.Timedelta(hours=2)] += 30
        out[f"q.depth{{host=h{i}}}"] = pd.Series(values, index=index)
    return out


def read_csv(text: str) -> tuple[dict, pd.DataFrame]:
    head = [line for line in text.splitlines() if line.startswith("# ")]
    params = {k: json.loads(v) for k, v in (line[2:].split(": ", 1) for line in head)}
    return params, pd.read_csv(io.StringIO(text), skiprows=len(head))


def test_an_explanation_round_trips():
    series = hosts()["q.depth{host=h0}"]
    exp = explain(series, window=WINDOW, history="1W", tolerance=3.5)
    params, frame = read_csv(to_csv(exp))
    assert params["kind"] == "explanation" and params["engine_version"] == exp.engine_version
    assert params["parameters"]["tolerance"] == 3.5
    assert frame.columns[0] == "time" and len(frame) == len(exp.frame)
    np.testing.assert_allclose(frame["expected"], exp.frame["expected"], equal_nan=True)
    assert pd.to_datetime(frame["time"]).tolist() == exp.frame.index.tolist()
    data = json.loads(to_json(exp))
    assert data["summary"] == exp.summary and data["facts"]["tolerance"] == 3.5
    assert data["rows"][-1]["time"] == "2026-11-30T06:00:00Z"
    assert data["rows"][-1]["value"] == pytest.approx(exp.frame["value"].iloc[-1])


def test_a_screening_keeps_its_onsets_and_parameters():
    result = screen(hosts(), WINDOW, history="1W", explain_top=2, workers=1)
    params, frame = read_csv(to_csv(result))
    assert params["kind"] == "screening" and params["parameters"]["explain_top"] == 2
    assert frame["key"].tolist() == result.table["key"].tolist()
    assert frame.loc[0, "onset"] == "2026-11-30T02:00:00Z"
    data = json.loads(to_json(result))
    assert data["summary"] == result.summary
    assert data["rows"][0]["onset"] == "2026-11-30T02:00:00Z"
    assert data["rows"][-1]["onset"] is None


def test_a_peer_comparison_lists_every_peer():
    peers = hosts()
    target = next(iter(peers))
    result = compare_peers(target, peers, window=WINDOW, history="1W", tolerance=3.0)
    _, frame = read_csv(to_csv(result))
    assert frame["key"].tolist() == [r.key for r in result.results]
    assert frame.loc[0, "first_outside"] == "2026-11-30T02:00:00Z"
    data = json.loads(to_json(result))
    assert data["facts"]["target_left"] is True and data["summary"] == result.summary


def test_a_replay_report_and_a_bare_frame_with_parameters():
    series = hosts()["q.depth{host=h0}"]
    rule = ThresholdRule(above=105.0, hold=pd.Timedelta("10min"))
    report = replay_report(series, rule)
    params, frame = read_csv(to_csv(report))
    assert params["kind"] == "replay" and params["parameters"]["rule"] == report.rule_text
    assert len(frame) == report.n_firings and "duration_seconds" in frame.columns
    firings = replay(series, rule)
    data = json.loads(to_json(firings, parameters={"rule": "above 105, held 10min"}))
    assert data["parameters"] == {"rule": "above 105, held 10min"} and len(data["rows"]) == len(
        firings
    )


def test_anything_else_is_refused_clearly():
    with pytest.raises(ValueError, match="to_csv and to_json take an explanation"):
        to_json({"not": "a result"})
