"""plotly.js served from the vendored basic bundle in static/vendor/plotly: nothing loads
from the internet, and the same file is inlined in the exported HTML."""

from __future__ import annotations

import re
from functools import cache
from pathlib import Path

from flask import Blueprint, Response, send_file

from webapp import resource_dir

bp = Blueprint("assets", __name__)

ONE_WEEK = 7 * 24 * 3600


def plotly_js_path() -> Path:
    return resource_dir("static") / "vendor" / "plotly" / "plotly-basic.min.js"


@cache
def plotly_version() -> str:
    """The bundle's version, read from its own header (``plotly.js (basic - minified) v4.1.1``)."""
    with plotly_js_path().open(encoding="utf-8") as bundle:
        head = bundle.read(200)
    found = re.search(r"\bv(\d+\.\d+\.\d+)", head)
    return found.group(1) if found else "unknown"


@bp.get("/assets/plotly-<version>.min.js")
def plotly_js(version: str) -> Response:
    """The address carries the bundle's version, so the browser may cache it for a week."""
    return send_file(
        plotly_js_path(), mimetype="text/javascript", max_age=ONE_WEEK, conditional=True
    )
