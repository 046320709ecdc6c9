"""Readable error pages (400, 404, 405, 413, 500): a message on the page, never a stack trace.

An htmx request gets the message as a fragment, so it lands in the panel that asked for it
and the rest of the page stays as it was.
"""

from __future__ import annotations

from flask import Flask, current_app, render_template
from werkzeug.exceptions import HTTPException, InternalServerError, RequestEntityTooLarge

from webapp.web.htmx import is_htmx

TITLES = {
    400: "That request could not be understood",
    401: "Sign in first",
    403: "Not allowed",
    404: "Not found",
    405: "That action is not available here",
    413: "That upload is too large",
    429: "Too many tries",
    500: "Something went wrong on our side",
}


def render_error(status: int, message: str) -> tuple[str, int]:
    title = TITLES.get(status, "Something went wrong")
    template = "_error.html" if is_htmx() else "error.html"
    return render_template(template, status=status, title=title, message=message), status


def _http_error(error: HTTPException) -> tuple[str, int]:
    status = error.code or 500
    if isinstance(error, RequestEntityTooLarge):
        limit = current_app.config.get("MAX_IMPORT_MB")
        message = (
            f"Uploads of up to {limit} MB are accepted at once. Split the export, "
            "or import fewer files together."
        )
    else:
        message = error.description or TITLES.get(status, "")
    field = getattr(error, "field", None)
    if field and is_htmx():
        # The message goes into the form's slot beside that field; the results stay put.
        body, status = render_error(status, message)
        return body, status, {"HX-Retarget": f"#{field}-error", "HX-Reswap": "innerHTML"}
    return render_error(status, message)


def _unexpected_error(error: Exception) -> tuple[str, int]:
    if isinstance(error, HTTPException):
        return _http_error(error)
    current_app.logger.exception("unexpected error", exc_info=error)
    return render_error(
        500,
        "whyfired hit an unexpected error and stopped this request; nothing was changed. "
        "The details are in the server log.",
    )


def init_app(app: Flask) -> None:
    app.register_error_handler(HTTPException, _http_error)
    app.register_error_handler(InternalServerError, _unexpected_error)
    app.register_error_handler(Exception, _unexpected_error)
