"""The data behind a screen as a file: any result of the analysis core as CSV or JSON, with
its parameters (``webapp.analysis.to_csv`` / ``to_json``)."""

from __future__ import annotations

from typing import Any

from flask import Response, abort

from webapp.analysis import to_csv, to_json

FORMATS = ("csv", "json")


def check_format(fmt: str) -> None:
    if fmt not in FORMATS:
        abort(404, description=f"There is no {fmt!r} download: use csv or json.")


def download(result: Any, fmt: str, name: str, parameters: dict | None = None) -> Response:
    """``result`` as a CSV or JSON file download named ``name.fmt``."""
    check_format(fmt)
    if fmt == "csv":
        body, mimetype = to_csv(result, parameters), "text/csv"
    else:
        body, mimetype = to_json(result, parameters), "application/json"
    return Response(
        body,
        mimetype=mimetype,
        headers={"Content-Disposition": f'attachment; filename="{name}.{fmt}"'},
    )
