"""CSRF protection: one random token per browser session, checked on every changing request.

Forms carry it as the hidden field ``csrf_token`` (template global ``csrf_field()``); htmx
sends it as the ``X-CSRF-Token`` header, set once in ``base.html``.
"""

from __future__ import annotations

import hmac
import secrets

from flask import Flask, abort, request, session
from markupsafe import Markup, escape

SESSION_KEY = "csrf_token"
FIELD_NAME = "csrf_token"
HEADER_NAME = "X-CSRF-Token"
UNSAFE_METHODS = frozenset({"POST", "PUT", "PATCH", "DELETE"})


def get_token() -> str:
    """The session's token, created on first use."""
    token = session.get(SESSION_KEY)
    if not token:
        token = secrets.token_urlsafe(32)
        session[SESSION_KEY] = token
    return token


def csrf_field() -> Markup:
    return Markup(f'<input type="hidden" name="{FIELD_NAME}" value="{escape(get_token())}">')


def check_request() -> None:
    """Refuse a changing request whose token is missing or does not match (400)."""
    if request.method not in UNSAFE_METHODS:
        return
    expected = session.get(SESSION_KEY)
    sent = request.headers.get(HEADER_NAME) or request.form.get(FIELD_NAME)
    if not expected or not sent or not hmac.compare_digest(str(sent), str(expected)):
        abort(
            400,
            description=(
                "The form's security token is missing or out of date. Reload the page "
                "and send the form again."
            ),
        )


def init_app(app: Flask) -> None:
    app.before_request(check_request)
    app.add_template_global(csrf_field, "csrf_field")
    app.add_template_global(get_token, "csrf_token")
