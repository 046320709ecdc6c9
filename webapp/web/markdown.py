"""Markdown for review text: rendered with markdown-it-py, then sanitised with nh3.

Two fences stand between what a reviewer types and a reader's browser: markdown-it-py
runs with raw HTML switched off (it is shown as text), and everything it produces then
passes through nh3 with a short allow-list of tags and attributes and only web and mail
link schemes. Either fence alone would stop the usual script-injection payloads; the
second one also covers any renderer plugin that might emit markup of its own.

An image written in Markdown is rendered as a link to it, never as ``<img>``: a review
page and its self-contained export load nothing from elsewhere (a remote image is also a
beacon telling its host who read the review, and when).
"""

from __future__ import annotations

import nh3
from markdown_it import MarkdownIt
from markdown_it.token import Token
from markupsafe import Markup, escape

ALLOWED_TAGS = frozenset(
    {
        "a", "blockquote", "br", "code", "del", "em", "h1", "h2", "h3", "h4", "h5", "h6",
        "hr", "li", "ol", "p", "pre", "s", "strong", "table", "tbody", "td", "th",
        "thead", "tr", "ul",
    }
)  # fmt: skip
ALLOWED_ATTRIBUTES = {
    "a": {"href", "title"},
    "ol": {"start"},
    "td": {"align"},
    "th": {"align"},
}
URL_SCHEMES = frozenset({"http", "https", "mailto"})

_md = MarkdownIt("commonmark", {"html": False, "linkify": False, "typographer": False}).enable(
    ["table", "strikethrough"]
)


def _image_as_link(_renderer: object, tokens: list[Token], idx: int, *_args: object) -> str:
    image = tokens[idx]
    alt = "".join(child.content for child in image.children or ()) or "image"
    return f'<a href="{escape(image.attrGet("src") or "")}">image: {escape(alt)}</a>'


_md.add_render_rule("image", _image_as_link)


def sanitise_html(html: str) -> str:
    """Keep only the allow-listed tags, attributes and link schemes of ``html``."""
    return nh3.clean(
        html,
        tags=set(ALLOWED_TAGS),
        clean_content_tags={"script", "style"},
        attributes={tag: set(attrs) for tag, attrs in ALLOWED_ATTRIBUTES.items()},
        url_schemes=set(URL_SCHEMES),
        link_rel="noopener noreferrer nofollow",
        strip_comments=True,
    )


def render_markdown(text: str | None) -> Markup:
    """Render review Markdown to HTML that is safe to place in a page as is."""
    if not text:
        return Markup("")
    return Markup(sanitise_html(_md.render(text)))
