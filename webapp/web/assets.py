"""plotly.js served from the installed plotly package: nothing loads from the internet."""

from __future__ import annotations

from pathlib import Path

import plotly
from flask import Blueprint, Response, send_file

bp = Blueprint("assets", __name__)

PLOTLY_JS = Path(plotly.__file__).resolve().parent / "package_data" / "plotly.min.js"
ONE_WEEK = 7 * 24 * 3600


@bp.get("/assets/plotly-<version>.min.js")
def plotly_js(version: str) -> Response:
    """The address carries the package version, so the browser may cache it for a week."""
    return send_file(PLOTLY_JS, mimetype="text/javascript", max_age=ONE_WEEK, conditional=True)


def plotly_version() -> str:
    return plotly.__version__
