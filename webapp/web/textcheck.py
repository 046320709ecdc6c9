"""Refuse a request whose fields hold control characters, naming the field.

Checked once for every request (query string, form fields, upload file names) so that no
view has to, and so both stores receive the same text.
"""

from __future__ import annotations

from flask import Flask, abort, request

from webapp.imports.control import control_problem


def check_request() -> None:
    fields = [*request.args.items(multi=True), *request.form.items(multi=True)]
    for name, value in fields:
        problem = control_problem("A field name", name) or control_problem(
            f"The field {name!r}", value
        )
        if problem:
            abort(400, description=problem)
    for name, upload in request.files.items(multi=True):
        problem = control_problem(f"The name of the file sent as {name!r}", upload.filename or "")
        if problem:
            abort(400, description=problem)


def init_app(app: Flask) -> None:
    app.before_request(check_request)
