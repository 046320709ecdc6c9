"""Clean refusals for requests the store cannot answer, instead of a generic 500.

- An id too large for the database is a record that does not exist: 404. Path ids are
  bounded by the ``int`` URL converter; an id from a form or query string that reaches
  the SQLite driver too large is caught the same way.
- A store that is full, read-only or stayed busy past the wait: 503 with a page that says
  which, and shows back every text field of the form that was sent so nothing typed is
  lost. (An htmx request gets the message as a fragment; its form stays on the page.)
"""

from __future__ import annotations

from flask import Flask, current_app, render_template, request
from sqlalchemy.exc import DataError, OperationalError
from werkzeug.routing import IntegerConverter

from webapp.store.db import BUSY_TIMEOUT_MS
from webapp.web.errors import render_error
from webapp.web.htmx import is_htmx

LARGEST_ID = 2**63 - 1  # SQLite and PostgreSQL bigint alike
NUMERIC_OUT_OF_RANGE = "22003"  # PostgreSQL's SQLSTATE for a number past its column's type
TOO_LARGE_FOR_SQLITE = "too large to convert to SQLite INTEGER"
UNSENT_FIELDS = frozenset({"csrf_token"})

STORE_TROUBLES = (
    (
        ("database or disk is full", "disk is full", "no space left"),
        "The disk that holds whyfired's store is full, so nothing was saved. Free some space "
        "and send it again.",
    ),
    (
        ("readonly database", "read-only", "read only"),
        "whyfired's store is read-only here (a file or folder without write permission, or "
        "a read-only disk), so nothing was saved. Ask whoever runs whyfired to make it "
        "writable, then send it again.",
    ),
    (
        ("database is locked", "database table is locked"),
        f"whyfired's store stayed busy with other changes for over {BUSY_TIMEOUT_MS // 1000} "
        "seconds (a large import?), so nothing was saved. Send it again in a moment.",
    ),
)


class BoundedId(IntegerConverter):
    """``<int:...>`` in every route: whole numbers from 0 up to the largest stored id."""

    def __init__(self, map, *args, **kwargs) -> None:  # noqa: A002 - werkzeug's name
        kwargs.setdefault("max", LARGEST_ID)
        super().__init__(map, *args, **kwargs)


def store_trouble(error: BaseException) -> str | None:
    """The reader's explanation of a store failure we can name, else None."""
    text = str(getattr(error, "orig", None) or error).lower()
    for needles, message in STORE_TROUBLES:
        if any(needle in text for needle in needles):
            return message
    return None


def typed_fields() -> list[tuple[str, str]]:
    """The non-empty text fields of the form that was sent, to show back."""
    return [
        (name, value)
        for name, value in request.form.items(multi=True)
        if name not in UNSENT_FIELDS and value.strip()
    ]


def _store_failure(error: OperationalError):
    message = store_trouble(error)
    if message is None:
        raise error
    current_app.logger.warning("store refused a request: %s", error)
    if is_htmx():
        return render_error(503, message)
    page = render_template("unsaved.html", message=message, fields=typed_fields())
    return page, 503


def _too_large_id(error: OverflowError):
    if TOO_LARGE_FOR_SQLITE not in str(error):
        raise error
    return render_error(404, "There is no record with that number.")


def _out_of_range_number(error: DataError):
    """PostgreSQL's answer to a number past its column's type: no such record either."""
    if getattr(getattr(error, "orig", None), "sqlstate", None) != NUMERIC_OUT_OF_RANGE:
        raise error
    return render_error(404, "There is no record with that number.")


def init_app(app: Flask) -> None:
    """Register before the blueprints: the converter applies to routes added after it."""
    app.url_map.converters["int"] = BoundedId
    app.register_error_handler(OperationalError, _store_failure)
    app.register_error_handler(OverflowError, _too_large_id)
    app.register_error_handler(DataError, _out_of_range_number)
