"""Export of a review to Markdown (figures as SVG files beside it, drawn with no browser) and
to one HTML file."""

from __future__ import annotations

import re
import subprocess
import xml.etree.ElementTree as ET

import pandas as pd
import pytest

from webapp.analysis import ENGINE_VERSION
from webapp.store import action_items as store_actions
from webapp.store import attachments as store_attachments
from webapp.store import reviews
from webapp.store import rules as store_rules
from webapp.store import timeline as store_timeline
from webapp.store import verdicts as store_verdicts
from webapp.web.assets import plotly_version
from webapp.web.export import ExportError, export_review

PAYLOAD = '<script>alert("from the summary")</script><img src=x onerror=alert(2)>'


@pytest.fixture
def full_review(session, make_series, make_explanation):
    """A review with two attachments, both computed by the analysis core and saved by the
    store: one with its past-weeks overlay (band and overlay figures), one without (band
    figure only)."""
    series = make_series("checkout.latency_p95{host=api-3}")
    computed = make_explanation(series)
    synthetic = make_explanation(
        make_series("checkout.errors{host=api-3}"), title="errors", overlay=False
    )
    review = reviews.create_review(
        session,
        {
            "title": "Checkout | latency",
            "incident_start": "2026-11-30T14:00",
            "incident_end": "2026-11-30T16:00",
            "summary": f"Latency **tripled**. {PAYLOAD}",
            "root_cause": "A cold cache.",
        },
    )
    store_attachments.attach_explanation(
        session, review, computed.id, caption="p95 against its band"
    )
    store_attachments.attach_explanation(session, review, synthetic.id, caption="errors | rate")
    store_timeline.timeline_entry_from_fact(session, review, synthetic, "first_outside")
    store_timeline.add_timeline_entry(session, review, "2026-11-30 14:05", "Paged | on-call")
    store_actions.add_action_item(session, review, {"text": "Warm the cache", "owner": "Dana"})
    noisy = store_rules.create_rule(session, name="p95 noisy", series_id=series.id, threshold=5.0)
    queue = store_rules.create_rule(session, name="queue quiet", series_id=series.id, threshold=9.0)
    store_verdicts.record_verdict(
        session, review, noisy.id, "tune", parameters={"threshold": 650.0}, rationale="r",
        evidence={"pages per week": 3.5},
    )  # fmt: skip
    store_verdicts.record_verdict(session, review, queue.id, "retire", rationale="never real")
    session.commit()
    return review


@pytest.fixture
def no_browser(monkeypatch, tmp_path):
    """No Chrome or Chromium to be found, and any attempt to start a program fails."""
    empty = tmp_path / "empty-bin"
    empty.mkdir()
    monkeypatch.setenv("PATH", str(empty))
    monkeypatch.delenv("BROWSER_PATH", raising=False)

    def refuse(*args, **kwargs):
        raise AssertionError(f"the export tried to start a program: {args[:1]}")

    monkeypatch.setattr(subprocess, "Popen", refuse)


def test_markdown_names_every_figure_and_each_exists(
    session, full_review, tmp_path, no_browser
) -> None:
    out = tmp_path / "share" / "review.md"
    files = export_review(session, full_review.id, "md", out)
    assert files[0] == out
    text = out.read_text(encoding="utf-8")
    named = re.findall(r"!\[[^\]]*\]\(([^)]+)\)", text)
    assert len(named) == 3  # band + overlay, then band
    for path in named:
        figure = out.parent / path
        assert figure.is_file(), path
        root = ET.parse(figure).getroot()  # well-formed SVG
        assert root.tag == "{http://www.w3.org/2000/svg}svg"
        assert len(root.findall(".//{http://www.w3.org/2000/svg}path")) >= 3
    assert sorted(out.parent / p for p in named) == sorted(files[1:])
    assert "### 1. p95 against its band" in text and "### 2. errors \\| rate" in text
    assert f"| engine version | `{ENGINE_VERSION}` |" in text
    assert "| tolerance | `3.0` |" in text
    assert "Paged \\| on-call" in text and "First outside" in text
    assert "| 1 | Warm the cache | Dana |" in text
    assert "### p95 noisy: Tune" in text and "threshold: `650.0`" in text
    assert "- pages per week: 3.5" in text and "### queue quiet: Retire" in text
    assert text.count("Retiring an alert can hide a real failure") == 1


def test_html_is_one_self_contained_file(session, full_review, tmp_path) -> None:
    out = tmp_path / "review.html"
    files = export_review(session, full_review.id, "html", out)
    assert files == [out]
    text = out.read_text(encoding="utf-8")
    assert text.count(f"plotly.js (basic - minified) v{plotly_version()}") == 1  # inlined once
    assert re.search(r"<script[^>]+src=", text) is None
    assert re.search(r"<link[^>]+href=", text) is None
    for div in ("figure-1-band", "figure-1-overlay", "figure-2-band"):
        assert f'id="{div}"' in text
    assert text.count('class="plotly-graph-div"') == 3
    assert "<strong>tripled</strong>" in text
    assert PAYLOAD not in text
    assert "&lt;script&gt;alert(" in text  # shown as text, never run
    assert re.search(r"<[a-z][^>]*\sonerror", text.split("<main>")[1]) is None
    assert ENGINE_VERSION in text and "tolerance" in text
    assert "<h3>p95 noisy: Tune</h3>" in text and "<h3>queue quiet: Retire</h3>" in text
    assert text.count("Retiring an alert can hide a real failure") == 1
    assert '"showSendToCloud": false' in text and "plot.ly" not in text.split("<main>")[1]


def test_a_directory_target_gets_a_file_name(session, full_review, tmp_path) -> None:
    files = export_review(session, full_review.id, "html", tmp_path)
    assert files == [tmp_path / f"review-{full_review.id}.html"]
    assert export_review(session, full_review.id, "html", tmp_path / "x") == [tmp_path / "x.html"]


def test_a_path_ending_in_a_slash_is_a_folder_made_when_missing(
    session, full_review, tmp_path
) -> None:
    files = export_review(session, full_review.id, "md", f"{tmp_path}/new/folder/")
    folder = tmp_path / "new" / "folder"
    assert files[0] == folder / f"review-{full_review.id}.md"
    assert all(path.is_relative_to(folder) and path.is_file() for path in files)
    assert not (tmp_path / "new" / "folder.md").exists()


def test_review_without_evidence_exports_markdown_alone(session, tmp_path) -> None:
    review = reviews.create_review(session, {"title": "Quiet night"})
    session.commit()
    files = export_review(session, review.id, "md", tmp_path / "quiet.md")
    assert files == [tmp_path / "quiet.md"]
    assert "_No explanations attached._" in files[0].read_text()


@pytest.mark.parametrize(
    ("review_id", "fmt", "message"),
    [(999, "md", "no review #999"), (1, "pdf", "unknown export format 'pdf'")],
)
def test_bad_requests_say_what_is_wrong(session, tmp_path, review_id, fmt, message) -> None:
    reviews.create_review(session, {"title": "t"})
    with pytest.raises(ExportError, match=message):
        export_review(session, review_id, fmt, tmp_path / "x")


def test_download_routes(client, session, full_review) -> None:
    html = client.get(f"/reviews/{full_review.id}/export.html")
    assert html.status_code == 200 and html.mimetype == "text/html"
    assert "attachment" in html.headers["Content-Disposition"]
    assert client.get(f"/reviews/{full_review.id}/export.pdf").status_code == 404


def test_a_frame_that_cannot_be_drawn_is_named_not_fatal(
    session, client, make_explanation, tmp_path
) -> None:
    from webapp.store.frames import encode_frame

    exp = make_explanation()
    exp.frame = encode_frame(pd.DataFrame({"value": [1.0]}, index=pd.DatetimeIndex(
        ["2026-11-30"], tz="UTC")))  # fmt: skip
    review = reviews.create_review(session, {"title": "old frame"})
    store_attachments.attach_explanation(session, review, exp.id)
    session.commit()
    page = client.get(f"/reviews/{review.id}")
    assert page.status_code == 200
    assert f"The stored frame of explanation #{exp.id} could not be drawn" in page.text
    [out] = export_review(session, review.id, "html", tmp_path / "old.html")
    assert "could not be drawn" in out.read_text()
