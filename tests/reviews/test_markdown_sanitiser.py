"""Review Markdown must never carry executable script to a reader's browser.

The payloads are the usual families of script injection (script tags, event-handler
attributes, script-scheme links, SVG and MathML tricks, data: URLs, style expressions,
comment and nesting obfuscations), written for these tests from common practice; each is
checked through the Markdown renderer, through the sanitiser alone, and through a
renderer with raw HTML switched on followed by the sanitiser.
"""

from __future__ import annotations

import re
from html.parser import HTMLParser

import pytest
from markdown_it import MarkdownIt

from webapp.web.markdown import render_markdown, sanitise_html

PAYLOADS = [
    "<script>alert(1)</script>",
    "<SCRIPT SRC=https://evil.example/x.js></SCRIPT>",
    "<scr<script>ipt>alert(1)</scr</script>ipt>",
    "<script\n>alert(1)</script\n>",
    "<img src=x onerror=alert(1)>",
    "<IMG SRC=x OnErRoR=alert(1)>",
    '<img src="x" onerror="alert(1)"/>',
    "<img src=x onerror=&#97;&#108;&#101;&#114;&#116;(1)>",
    "<svg onload=alert(1)>",
    "<svg><script>alert(1)</script></svg>",
    "<svg><animate onbegin=alert(1) attributeName=x dur=1s>",
    '<svg><a xlink:href="javascript:alert(1)"><text x="20" y="20">x</text></a></svg>',
    "<math><mtext><table><mglyph><style><img src=x onerror=alert(1)>",
    '<noscript><p title="</noscript><img src=x onerror=alert(1)>">',
    '<!--<img src="--><img src=x onerror=alert(1)//">',
    "<body onload=alert(1)>",
    "<iframe src=javascript:alert(1)></iframe>",
    '<iframe srcdoc="<script>alert(1)</script>"></iframe>',
    '<object data="javascript:alert(1)"></object>',
    '<embed src="data:text/html;base64,PHNjcmlwdD5hbGVydCgxKTwvc2NyaXB0Pg==">',
    '<form action="javascript:alert(1)"><button>go</button></form>',
    '<button formaction="javascript:alert(1)">go</button>',
    "<input onfocus=alert(1) autofocus>",
    "<details open ontoggle=alert(1)>x</details>",
    "<video><source onerror=alert(1)></video>",
    "<marquee onstart=alert(1)>x</marquee>",
    '<base href="javascript:alert(1)//">',
    '<meta http-equiv="refresh" content="0;url=javascript:alert(1)">',
    '<link rel="stylesheet" href="javascript:alert(1)">',
    '<div style="background:url(javascript:alert(1))">x</div>',
    '<p style="width: expression(alert(1))">x</p>',
    "<style>@import 'javascript:alert(1)';</style>",
    '<a href="javascript:alert(1)">x</a>',
    '<a href="JaVaScRiPt:alert(1)">x</a>',
    '<a href="jav&#x09;ascript:alert(1)">x</a>',
    '<a href="&#106;&#97;&#118;&#97;&#115;&#99;&#114;&#105;&#112;&#116;:alert(1)">x</a>',
    '<a href="  javascript:alert(1)">x</a>',
    '<a href="vbscript:msgbox(1)">x</a>',
    '<a href="data:text/html;base64,PHNjcmlwdD5hbGVydCgxKTwvc2NyaXB0Pg==">x</a>',
    "[x](javascript:alert(1))",
    "[x](JAVASCRIPT:alert(1))",
    "[x](javascript://%0aalert(1))",
    "[x](&#106;avascript:alert(1))",
    "[x](javascript&colon;alert(1))",
    "[x](<javascript:alert(1)>)",
    "[x](vbscript:msgbox(1))",
    "[x](data:text/html,<script>alert(1)</script>)",
    "[x][r]\n\n[r]: javascript:alert(1)",
    "<javascript:alert(1)>",
    "![x](javascript:alert(1))",
    "![x](data:image/svg+xml;base64,PHN2ZyBvbmxvYWQ9YWxlcnQoMSk+)",
    "![x](data:image/png;base64,iVBORw0KGgo=)",
    '![x](x" onerror="alert(1))',
    '[x](https://ok.example "t\\" onmouseover=\\"alert(1)")',
    "`<script>alert(1)</script>`",
    "```html\n<script>alert(1)</script>\n```",
    "> <img src=x onerror=alert(1)>",
    "* <svg/onload=alert(1)>",
    "| a |\n|---|\n| <img src=x onerror=alert(1)> |",
    "java\0script:alert(1) [x](java\0script:alert(1))",
]

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
