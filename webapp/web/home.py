"""The start screen: what whyfired is for, what the store holds, and the latest page."""

from __future__ import annotations

from flask import Blueprint, render_template

bp = Blueprint("home", __name__)


@bp.get("/")
def index() -> str:
    return render_template("home/index.html", counts={}, latest_page=None)
