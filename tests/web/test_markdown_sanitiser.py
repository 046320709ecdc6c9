"""Review Markdown must never carry executable script to a reader's browser.

The payloads (injection_payloads.json) are the usual families of script injection (script
tags, event-handler attributes, script-scheme links, SVG and MathML tricks, data: URLs, style
expressions, comment and nesting obfuscations), written for these tests from common
practice; each is
checked through the Markdown renderer, through the sanitiser alone, and through a
renderer with raw HTML switched on followed by the sanitiser.
"""

from __future__ import annotations

import json
import re
from html.parser import HTMLParser
from pathlib import Path

import pytest
from markdown_it import MarkdownIt

from webapp.web.markdown import render_markdown, sanitise_html

PAYLOADS: list[str] = json.loads(
    (Path(__file__).with_name("injection_payloads.json")).read_text(encoding="utf-8")
)

SAFE_SCHEMES = {"http", "https", "mailto"}
URL_ATTRIBUTES = {"href", "src", "action", "formaction", "xlink:href", "data", "poster", "srcset"}
DANGEROUS_TAGS = {
    "script", "iframe", "object", "embed", "svg", "math", "style", "link", "meta", "base",
    "form", "button", "input", "frame", "frameset", "applet", "noscript", "template",
}  # fmt: skip


class _Findings(HTMLParser):
    """Collect every way a fragment could run script once a browser parses it."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.problems: list[str] = []

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        if tag in DANGEROUS_TAGS:
            self.problems.append(f"tag <{tag}>")
        for name, value in attrs:
            if name.startswith("on"):
                self.problems.append(f"event handler {name} on <{tag}>")
            if name in {"style", "srcdoc"}:
                self.problems.append(f"attribute {name} on <{tag}>")
            if name in URL_ATTRIBUTES and value is not None and not _safe_url(value):
                self.problems.append(f"{name}={value!r} on <{tag}>")

    handle_startendtag = handle_starttag


def _safe_url(value: str) -> bool:
    squeezed = re.sub(r"[\x00-\x20]", "", value).lower()
    scheme = re.match(r"^([a-z][a-z0-9+.\-]*):", squeezed)
    if scheme is None:
        return True  # relative reference
    return scheme.group(1) in SAFE_SCHEMES


def problems_in(html: str) -> list[str]:
    finder = _Findings()
    finder.feed(html)
    finder.close()
    return finder.problems


def test_checker_flags_what_it_must() -> None:
    """The checker itself can fail: raw payloads are flagged before sanitising."""
    flagged = [p for p in PAYLOADS if problems_in(p)]
    assert len(flagged) >= 40
    assert problems_in('<a href="https://ok.example">x</a>') == []


@pytest.mark.parametrize("payload", PAYLOADS)
def test_rendered_markdown_carries_no_script(payload: str) -> None:
    html = str(render_markdown(payload))
    assert problems_in(html) == [], html


@pytest.mark.parametrize("payload", PAYLOADS)
def test_sanitiser_alone_removes_script(payload: str) -> None:
    html = sanitise_html(payload)
    assert problems_in(html) == [], html


@pytest.mark.parametrize("payload", PAYLOADS)
def test_sanitiser_covers_a_renderer_that_passes_raw_html(payload: str) -> None:
    unsafe = MarkdownIt("commonmark", {"html": True}).render(payload)
    html = sanitise_html(unsafe)
    assert problems_in(html) == [], html


def test_ordinary_markdown_still_renders() -> None:
    text = (
        "# Checkout slowdown\n\n"
        "Latency rose **sharply** at *14:05*.\n\n"
        "- first\n- second\n\n"
        "| step | minutes |\n|---|---:|\n| detect | 4 |\n\n"
        "`p95 > 500` and [the runbook](https://runbooks.example/checkout).\n\n"
        "~~wrong guess~~"
    )
    html = str(render_markdown(text))
    assert "<h1>Checkout slowdown</h1>" in html
    assert "<strong>sharply</strong>" in html and "<em>14:05</em>" in html
    assert "<li>first</li>" in html
    assert "<td" in html and ">4</td>" in html
    assert "<code>p95 &gt; 500</code>" in html
    assert 'href="https://runbooks.example/checkout"' in html
    assert 'rel="noopener noreferrer nofollow"' in html
    assert "<s>wrong guess</s>" in html


def test_raw_html_is_shown_as_text_not_dropped() -> None:
    """A reviewer who pastes markup sees it back as text, not silently lost."""
    html = str(render_markdown("before <b>bold</b> after"))
    assert "&lt;b&gt;bold&lt;/b&gt;" in html


def test_empty_text_renders_empty() -> None:
    assert str(render_markdown("")) == ""
    assert str(render_markdown(None)) == ""


def test_corpus_size() -> None:
    assert len(PAYLOADS) == len(set(PAYLOADS)) >= 60
