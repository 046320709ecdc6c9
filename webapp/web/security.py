"""What a local web app shared on one machine needs before any view runs.

- A Host allow-list: a page from another origin that points its own name at 127.0.0.1
  (DNS rebinding) reaches this server with that foreign name in ``Host``; it gets a 400
  before any view or database work. Loopback names are always allowed;
  ``ALLOWED_HOSTS`` adds more.
- Response headers on every response: a Content-Security-Policy that allows only this
  server's own scripts (no inline script, no eval), no framing, no MIME sniffing, no
  referrer sent elsewhere.
- The session cookie is ``SameSite=Lax`` and HTTP-only.
"""

from __future__ import annotations

from collections.abc import Iterable

from flask import Flask, abort, current_app, request
from flask.wrappers import Response

LOOPBACK_NAMES = frozenset({"localhost", "127.0.0.1", "::1"})

# Plotly sets inline styles and draws some marks from data: and blob: images; scripts come
# only from this server.
CONTENT_SECURITY_POLICY = "; ".join(
    (
        "default-src 'self'",
        "script-src 'self'",
        "style-src 'self' 'unsafe-inline'",
        "img-src 'self' data: blob:",
        "font-src 'self' data:",
        "connect-src 'self'",
        "object-src 'none'",
        "base-uri 'none'",
        "form-action 'self'",
        "frame-ancestors 'none'",
    )
)
HEADERS = {
    "Content-Security-Policy": CONTENT_SECURITY_POLICY,
    "X-Content-Type-Options": "nosniff",
    "X-Frame-Options": "DENY",
    "Referrer-Policy": "no-referrer",
    "Cross-Origin-Opener-Policy": "same-origin",
    "Cross-Origin-Resource-Policy": "same-origin",
}


def host_name(host: str) -> str:
    """The name in a ``Host`` header, without its port and IPv6 brackets, lower case."""
    host = host.strip().lower()
    if host.startswith("["):
        return host[1:].split("]", 1)[0]
    return host.rsplit(":", 1)[0] if host.count(":") == 1 else host


def allowed_hosts(extra: str | Iterable[str] | None) -> frozenset[str]:
    """Loopback names plus ``extra`` (a comma-separated string or a list of names)."""
    if isinstance(extra, str):
        extra = extra.split(",")
    return LOOPBACK_NAMES | {host_name(name) for name in (extra or ()) if name.strip()}


def check_host() -> None:
    name = host_name(request.host or "")
    if name not in allowed_hosts(current_app.config.get("ALLOWED_HOSTS")):
        abort(
            400,
            description=(
                f"This whyfired answers only to the names it was told to: {name!r} is not "
                "one of them, so the request was refused and nothing was read or changed. "
                "If you reach it under another name on purpose, add that name to "
                "WHYFIRED_ALLOWED_HOSTS."
            ),
        )


def add_headers(response: Response) -> Response:
    for name, value in HEADERS.items():
        response.headers.setdefault(name, value)
    return response


def init_app(app: Flask) -> None:
    """Register before any other request hook, so a foreign Host is refused first."""
    app.config["SESSION_COOKIE_SAMESITE"] = app.config.get("SESSION_COOKIE_SAMESITE") or "Lax"
    app.config["SESSION_COOKIE_HTTPONLY"] = True
    app.before_request_funcs.setdefault(None, []).insert(0, check_host)
    app.after_request(add_headers)
