"""One helper answers a URL with the fragment for htmx and with the full page otherwise."""

from __future__ import annotations

from typing import Any

from flask import render_template, request


def is_htmx() -> bool:
    """True when htmx made the request (and is not restoring its history cache)."""
    return request.headers.get("HX-Request") == "true" and not request.headers.get(
        "HX-History-Restore-Request"
    )


def render(full_template: str, partial_template: str, **ctx: Any) -> str:
    """Render ``partial_template`` for an htmx request, ``full_template`` otherwise."""
    return render_template(partial_template if is_htmx() else full_template, **ctx)
