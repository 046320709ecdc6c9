"""Every script-injection payload of the sanitiser corpus, written into a review, runs no
script in chromium: on the review page and in the exported HTML opened from disk."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from webapp.imports.control import control_problem
from webapp.store import reviews as store_reviews
from webapp.store import rules as store_rules
from webapp.store import verdicts as store_verdicts
from webapp.web.export import export_review

pytestmark = pytest.mark.browser

PAYLOADS = json.loads(
    (Path(__file__).parents[1] / "web" / "injection_payloads.json").read_text("utf-8")
)
# What a payload that ran would leave behind: a dialog, or an element able to run script.
LIVE_SCRIPT = """() => {
    const found = [];
    for (const el of document.querySelectorAll('.user-text *')) {
        if (/^(SCRIPT|IFRAME|OBJECT|EMBED|SVG|MATH|FORM|BASE|STYLE|LINK|META)$/i.test(el.tagName))
            found.push(el.tagName);
        for (const attr of el.attributes) {
            const value = attr.value.replace(/[\\x00-\\x20]/g, '').toLowerCase();
            if (attr.name.startsWith('on') || attr.name === 'style') found.push(attr.name);
            if (/^(javascript|vbscript|data):/.test(value)) found.push(attr.name + '=' + value);
        }
    }
    return {found: found, blocks: document.querySelectorAll('.user-text').length};
}"""


@pytest.fixture
def hostile_review(session):
    # The store refuses control characters (tests/web/test_control_characters.py); the
    # sanitiser meets those payloads in tests/reviews/test_markdown_sanitiser.py.
    text = "\n\n".join(p for p in PAYLOADS if control_problem("payload", p) is None)
    review = store_reviews.create_review(
        session, {"title": "Injection corpus", "summary": text, "lessons": text}
    )
    rule = store_rules.create_rule(session, name="Hostile rule", metric="m", threshold=1.0)
    store_verdicts.record_verdict(session, review, rule.id, "keep", rationale=text)
    session.commit()
    return review


def _watch_dialogs(tab) -> list[str]:
    seen: list[str] = []

    def on_dialog(dialog) -> None:
        seen.append(dialog.message)
        dialog.dismiss()

    tab.on("dialog", on_dialog)
    return seen


def test_review_page_runs_no_payload(page, live_server, hostile_review) -> None:
    dialogs = _watch_dialogs(page)
    page.goto(live_server.at(f"/reviews/{hostile_review.id}"))
    page.wait_for_timeout(500)
    assert dialogs == []
    assert page.evaluate(LIVE_SCRIPT) == {"found": [], "blocks": 3}
    assert "<script>alert(1)</script>" in page.inner_text(".user-text >> nth=0")  # as text


def test_exported_html_runs_no_payload(page, session, hostile_review, tmp_path) -> None:
    [out] = export_review(session, hostile_review.id, "html", tmp_path / "hostile.html")
    dialogs = _watch_dialogs(page)
    page.goto(out.as_uri())
    page.wait_for_timeout(500)
    assert dialogs == []
    assert page.evaluate(LIVE_SCRIPT) == {"found": [], "blocks": 3}
