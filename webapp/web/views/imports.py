"""Imports: upload metric exports, see what was understood, undo an import."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd
from flask import Blueprint, abort, current_app, flash, redirect, request, url_for
from werkzeug.datastructures import FileStorage
from werkzeug.wrappers import Response

from webapp import resource_dir
from webapp.store import db
from webapp.web.forms.params import parse_tz
from webapp.web.htmx import render

bp = Blueprint("imports", __name__)

ACCEPTED_SUFFIXES = (
    ".csv", ".tsv", ".txt", ".json", ".jsonl", ".ndjson", ".prom", ".om", ".parquet",
)  # fmt: skip
MAX_FILES = 20
AUTO = "auto"
DATE_ORDERS = {"": None, "day-first": True, "month-first": False}


@dataclass
class FileResult:
    """What became of one uploaded file."""

    file_name: str
    summary: Any = None  # ImportSummary when it was stored
    series: list[dict[str, Any]] = field(default_factory=list)
    problems: list[Any] = field(default_factory=list)  # warnings, or the errors that refused it
    more: str | None = None  # counts the errors not listed
    refused: bool = False


def describe_series(table: pd.DataFrame) -> list[dict[str, Any]]:
    """Per series in a parsed table: points, first and last time, step, missing slots."""
    out = []
    for key, group in table.groupby("series_key", sort=True):
        ts = group["ts_utc"].to_numpy()
        step_ms = int(pd.Series(ts).diff().median()) if len(ts) > 1 else None
        missing = None
        if step_ms:
            missing = max(0, int((ts.max() - ts.min()) // step_ms) + 1 - len(ts))
        out.append(
            {
                "key": key,
                "points": len(ts),
                "first": int(ts.min()),
                "last": int(ts.max()),
                "step": pd.Timedelta(milliseconds=step_ms) if step_ms else None,
                "missing": missing,
            }
        )
    return out


def accepted_type(name: str) -> bool:
    return Path(name).suffix.lower() in ACCEPTED_SUFFIXES


def import_one(upload: FileStorage, fmt: str | None, tz: str, **options: Any) -> FileResult:
    """Parse one upload and, if it parses, record it in one transaction."""
    from webapp.imports import ImportRejected, Problem, parse_bytes
    from webapp.store import imports as store_imports

    name = Path(upload.filename or "upload").name
    result = FileResult(file_name=name)
    if not accepted_type(name):
        result.refused = True
        result.problems = [
            Problem(
                name,
                f"files of this type are not accepted; use one of {', '.join(ACCEPTED_SUFFIXES)}",
            )
        ]
        return result
    max_bytes = int(current_app.config["MAX_IMPORT_MB"]) * 1024 * 1024
    try:
        parsed = parse_bytes(upload.read(), name, format=fmt, tz=tz, max_bytes=max_bytes, **options)
    except ImportRejected as rejected:
        result.refused = True
        result.problems = list(rejected.problems)
        result.more = rejected.more
        return result
    with db.session_scope(db.get_engine()) as session:
        result.summary = store_imports.record_import(session, parsed)
    result.series = describe_series(parsed.table)
    result.problems = list(parsed.problems)
    return result


def page_context() -> dict[str, Any]:
    from webapp.imports import FORMATS
    from webapp.store import imports as store_imports

    examples_dir = resource_dir("static") / "examples"
    examples = (
        sorted(p.name for p in examples_dir.glob("*") if p.is_file() and accepted_type(p.name))
        if examples_dir.is_dir()
        else []
    )
    return {
        "imports": store_imports.list_imports(db.get_session()),
        "formats": FORMATS,
        "examples": examples,
        "accepted": ACCEPTED_SUFFIXES,
        "max_mb": current_app.config["MAX_IMPORT_MB"],
    }


@bp.get("/imports")
def index() -> str:
    return render("imports/index.html", "imports/index.html", results=None, **page_context())


@bp.post("/imports")
def upload() -> tuple[str, int]:
    from webapp.imports import FORMATS

    uploads = [f for f in request.files.getlist("files") if f and f.filename]
    fmt = request.form.get("format") or AUTO
    tz = parse_tz(request.form.get("tz"))
    date_order = request.form.get("date_order", "")
    options = {"day_first": DATE_ORDERS.get(date_order), "unit": request.form.get("unit")}
    status = 200
    if not uploads:
        results, status = [], 400
        message = "Choose at least one file to import."
    elif len(uploads) > MAX_FILES:
        results, status = [], 400
        message = f"Import at most {MAX_FILES} files at once."
    elif fmt != AUTO and fmt not in FORMATS:
        results, status = [], 400
        message = f"Unknown format {fmt!r}: choose one of {', '.join(FORMATS)}, or detect it."
    elif date_order not in DATE_ORDERS:
        results, status = [], 400
        message = f"Unknown date order {date_order!r}: choose day first or month first."
    else:
        message = None
        results = [import_one(f, None if fmt == AUTO else fmt, tz, **options) for f in uploads]
        if all(r.refused for r in results):
            status = 400
    html = render(
        "imports/index.html",
        "imports/_results.html",
        results=results,
        message=message,
        tz=tz,
        **page_context(),
    )
    return html, status


@bp.post("/imports/<int:import_id>/delete")
def delete(import_id: int) -> Response:
    """Undo an import: remove the points it wrote that no later import replaced."""
    from webapp.store import imports as store_imports

    session = db.get_session()
    row = store_imports.get_import(session, import_id)
    if row is None:
        abort(404, description=f"There is no import #{import_id}; it may have been undone already.")
    name = row.file_name
    removed = store_imports.delete_import(session, import_id)
    session.commit()
    flash(f"Import #{import_id} ({name}) undone: {removed:,} points removed.", "ok")
    return redirect(url_for("imports.index"), code=303)
