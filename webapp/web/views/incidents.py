"""Incidents screen: every recorded incident with its scope and source, importing a list of
them, and marking a recorded page as a real incident."""

from __future__ import annotations

from typing import Any

from flask import Blueprint, abort, flash, redirect, render_template, request, url_for
from werkzeug.wrappers import Response

from webapp.imports.incident_list import parse_incident_list
from webapp.services.incidents import describe
from webapp.store import db
from webapp.store import incidents as store_incidents
from webapp.store import pages as store_pages
from webapp.store import series as store_series

bp = Blueprint("incidents", __name__)


def _back(default: str) -> str:
    """Where to go after a change: the form's own ``next`` when it is a path of this app."""
    target = (request.form.get("next") or "").strip()
    return target if target.startswith("/") and not target.startswith("//") else default


@bp.get("/incidents")
def index() -> str:
    session = db.get_session()
    keys = {s.id: s.key for s in store_series.list_series(session)}
    rows = [describe(i, keys) for i in store_incidents.list_incidents(session)]
    return render_template("incidents/index.html", incidents=rows)


@bp.post("/incidents/import")
def import_list() -> Any:
    """Record every incident of an uploaded CSV list, or none and say why, line by line."""
    back = _back(url_for("incidents.index"))
    upload = request.files.get("file")
    if upload is None or not upload.filename:
        flash("Choose the CSV file with the list of incidents.", "error")
        return redirect(back, code=303)
    default = (request.form.get("default_metric") or "").strip() or None
    rows, problems = parse_incident_list(upload.read(), upload.filename, default)
    if problems:
        flash("Nothing was imported: " + " · ".join(str(p) for p in problems), "error")
        return redirect(back, code=303)
    session = db.get_session()
    try:
        count = store_incidents.add_incident_list(session, rows, upload.filename)
    except ValueError as err:
        session.rollback()
        flash(f"Nothing was imported from {upload.filename}: {err}.", "error")
        return redirect(back, code=303)
    session.commit()
    flash(f"{count} incident{'s' if count != 1 else ''} imported from {upload.filename}.")
    return redirect(back, code=303)


@bp.post("/incidents/<int:incident_id>/delete")
def delete(incident_id: int) -> Response:
    session = db.get_session()
    try:
        store_incidents.delete_incident(session, incident_id)
    except LookupError:
        abort(404, description=f"There is no incident #{incident_id}.")
    except ValueError as err:
        flash(f"Not removed: {err}.", "error")
        return redirect(_back(url_for("incidents.index")), code=303)
    session.commit()
    flash(f"Incident #{incident_id} removed.")
    return redirect(_back(url_for("incidents.index")), code=303)


@bp.post("/pages/<int:page_id>/real")
def mark_page(page_id: int) -> Response:
    """Mark a recorded page as a real incident, or take the mark off."""
    session = db.get_session()
    page = store_pages.get_page(session, page_id)
    if page is None:
        abort(404, description=f"There is no page #{page_id}.")
    real = request.form.get("real") == "1"
    try:
        store_incidents.mark_page(session, page, real)
    except ValueError as err:
        session.rollback()
        flash(f"Not marked: {err}.", "error")
        return redirect(_back(url_for("pages.index")), code=303)
    session.commit()
    flash(
        f"Page #{page_id} marked as a real incident: replays of its series now count it."
        if real
        else f"Page #{page_id} is no longer counted as an incident."
    )
    return redirect(_back(url_for("pages.index")), code=303)
