"""Reviews screen: list and search, write and edit (explicit save and autosave), attach
frozen explanations, timeline, action items, the alert verdict, and export."""

from __future__ import annotations

import io
import tempfile
import zipfile
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any

from flask import Blueprint, abort, flash, redirect, render_template, request, send_file, url_for
from werkzeug.wrappers import Response

from webapp.analysis.vocabulary import OWNER_DECIDES, fact_label
from webapp.services import review_export
from webapp.store import action_items as store_actions
from webapp.store import attachments as store_attachments
from webapp.store import db
from webapp.store import explanations as store_explanations
from webapp.store import pages as store_pages
from webapp.store import reviews as store
from webapp.store import rules as store_rules
from webapp.store import timeline as store_timeline
from webapp.store import verdicts as store_verdicts
from webapp.store.models import Review
from webapp.store.reviews import ReviewInvalid
from webapp.store.versions import EditConflict, sent_version
from webapp.web import export, filters
from webapp.web.charts.evidence import figure_embed
from webapp.web.forms import reviews as review_forms
from webapp.web.htmx import render
from webapp.web.markdown import render_markdown

bp = Blueprint("reviews", __name__)
bp.add_app_template_filter(render_markdown, "markdown")
TZ = "UTC"  # the review screens show and read times in UTC, and say so


def load_review(review_id: int) -> Review:
    """The review with this id; aborts with 404 and a readable message when there is none."""
    review = store.get_review(db.get_session(), review_id)
    if review is None:
        abort(404, description=f"There is no review #{review_id}. It may have been deleted.")
    return review


def form_values(review: Review) -> dict[str, Any]:
    """A review as the strings its edit form shows."""
    values: dict[str, Any] = {name: getattr(review, name) or "" for name in store.REVIEW_FIELDS}
    values["incident_start"] = filters.input_time(review.incident_start, TZ)
    values["incident_end"] = filters.input_time(review.incident_end, TZ)
    values["exclude_from_baselines"] = "on" if review.exclude_from_baselines else ""
    values["page_id"] = str(review.page_id or "")
    values["version"] = str(review.version)
    return values


def _form_page(
    template: str,
    review: Review | None,
    values: Mapping[str, Any],
    errors: Mapping[str, str],
    conflict: review_forms.Conflict | None = None,
) -> tuple[str, int]:
    session = db.get_session()
    pages = store_pages.list_pages(session)[:200]
    html = render_template(
        template,
        review=review,
        values=values,
        errors=errors,
        pages=pages,
        conflict=conflict,
        tz=TZ,
    )
    return html, 409 if conflict else 422 if errors else 200


def _conflict(review_id: int, err: EditConflict) -> review_forms.Conflict:
    """After the rollback: the review as stored now beside the form as typed."""
    stored = load_review(review_id)
    return review_forms.review_conflict(form_values(stored), request.form, err, stored)


@bp.get("/reviews")
def index() -> str:
    q = request.args.get("q", "").strip()
    status = request.args.get("status", "")
    found = store.list_reviews(db.get_session(), q or None, status or None)
    return render("reviews/index.html", "reviews/_list.html", reviews=found, q=q, status=status)


@bp.route("/reviews/new", methods=["GET", "POST"])
def new() -> Any:
    session = db.get_session()
    if request.method == "GET":
        return _form_page("reviews/new.html", None, _prefill(request.args), {})
    try:
        review = store.create_review(session, review_forms.review_data(request.form), TZ)
        explanation_id = request.form.get("explanation_id", "").strip()
        if explanation_id.isdigit():
            store_attachments.attach_explanation(session, review, int(explanation_id))
    except ReviewInvalid as err:
        session.rollback()
        return _form_page("reviews/new.html", None, request.form, err.errors)
    session.commit()
    flash(f"Review #{review.id} created; “Edit the text” writes the rest, saving as you type.")
    return redirect(url_for("reviews.show", review_id=review.id))


def _prefill(args: Mapping[str, str]) -> dict[str, Any]:
    """Start a review from a recorded page or a saved explanation (links from other screens)."""
    session = db.get_session()
    values: dict[str, Any] = {"status": "draft", "exclude_from_baselines": "on"}
    page_id, explanation_id = args.get("page_id", ""), args.get("explanation_id", "")
    page = store_pages.get_page(session, int(page_id)) if page_id.isdigit() else None
    explanation = (
        store_explanations.get_explanation(session, int(explanation_id))
        if explanation_id.isdigit()
        else None
    )
    if page is not None:
        values.update(
            page_id=str(page.id),
            title=f"Page #{page.id}: {page.rule_text}".strip(": "),
            incident_start=filters.input_time(page.fired_at, TZ),
            incident_end=filters.input_time(page.resolved_at, TZ),
        )
    if explanation is not None:
        values.setdefault("title", explanation.title or explanation.series_key)
        values.setdefault("incident_start", filters.input_time(explanation.window_start, TZ))
        values.setdefault("incident_end", filters.input_time(explanation.window_end, TZ))
        values["explanation_id"] = str(explanation.id)
    return values


@bp.get("/reviews/<int:review_id>")
def show(review_id: int) -> Any:
    return _show(load_review(review_id))


def _show(
    review: Review, forms: Mapping[str, Any] | None = None, errors: Mapping[str, Any] | None = None
) -> tuple[str, int]:
    """The review page; ``forms``/``errors`` carry a sub-form's typed values and messages."""
    session = db.get_session()
    evidence = review_export.review_evidence(session, review, TZ)
    export.draw_evidence(evidence)
    for item in evidence:
        item.html = [(name, figure_embed(fig, f"fig-{item.number}-{name}"))
                     for name, fig in item.figures]  # fmt: skip
    attached = {a.explanation_id for a in review.attachments}
    available = [
        e for e in store_explanations.list_explanations(session)[:200] if e.id not in attached
    ]
    page = store_pages.get_page(session, review.page_id) if review.page_id else None
    rule = store_rules.get_rule(session, review.alert_rule_id) if review.alert_rule_id else None
    html = render_template(
        "reviews/show.html",
        review=review,
        header=review_export.header_lines(review, page, rule),
        evidence=evidence,
        available=available,
        time_facts={
            a.explanation_id: store_timeline.time_facts(a.explanation) for a in review.attachments
        },
        rules=store_rules.list_rules(session),
        forms=forms or {},
        errors=errors or {},
        verdict_warning=OWNER_DECIDES,
        edit_verdict=request.args.get("edit_verdict", type=int),
        format_parameters=review_forms.format_parameters,
        fact_label=fact_label,
        page_times=page_times(page),
        tz=TZ,
    )
    return html, 422 if errors else 200


def page_times(page: Any) -> list[tuple[str, str]]:
    """The review's page's fired and resolved times, offered for a timeline entry."""
    if page is None:
        return []
    times = [("the page fired", page.fired_at), ("the page resolved", page.resolved_at)]
    return [(label, filters.input_time(at, TZ)) for label, at in times if at is not None]


@bp.route("/reviews/<int:review_id>/edit", methods=["GET", "POST"])
def edit(review_id: int) -> Any:
    review = load_review(review_id)
    if request.method == "GET":
        return _form_page("reviews/edit.html", review, form_values(review), {})
    session = db.get_session()
    try:
        version = sent_version(review_forms.chosen_version(request.form))
        store.update_review(session, review, review_forms.review_data(request.form), TZ, version)
    except EditConflict as err:
        session.rollback()
        conflict = _conflict(review_id, err)
        return _form_page("reviews/edit.html", review, request.form, {}, conflict)
    except ReviewInvalid as err:
        session.rollback()
        return _form_page("reviews/edit.html", review, request.form, err.errors)
    session.commit()
    flash("Review saved.")
    return redirect(url_for("reviews.show", review_id=review.id))


@bp.post("/reviews/<int:review_id>/autosave")
def autosave(review_id: int) -> Any:
    """Store what is valid of the draft; answer with the status line, the field errors and
    the version now stored. Against a newer version it stores nothing and answers with both
    texts; the page stops autosaving until the reader chooses (static/reviews.js)."""
    session = db.get_session()
    review = load_review(review_id)
    try:
        version = sent_version(request.form.get("version"))
        saved, errors = store.autosave_review(
            session, review, review_forms.review_data(request.form), TZ, version
        )
    except EditConflict as err:
        session.rollback()
        conflict = _conflict(review_id, err)
        html = render_template(
            "reviews/_autosave_conflict.html", conflict=conflict, review=load_review(review_id)
        )
        return html, 409
    except ReviewInvalid as err:  # a malformed version number
        session.rollback()
        saved, errors = [], err.errors
    session.commit()
    return render_template(
        "reviews/_autosave.html",
        saved=saved,
        errors=errors,
        fields=store.REVIEW_FIELDS,
        version=review.version,
        at=filters.local_time(review.updated_at, TZ),
    )


@bp.post("/reviews/<int:review_id>/delete")
def delete(review_id: int) -> Response:
    session = db.get_session()
    review = load_review(review_id)
    title = review.title
    store.delete_review(session, review)
    session.commit()
    flash(f"Review “{title}” deleted.")
    return redirect(url_for("reviews.index"))


def _change(
    review_id: int,
    form: str,
    anchor: str,
    change: Callable[..., Any],
    note: str,
    stored_text: Callable[[Review], str] | None = None,
) -> Any:
    """Run one change to a review; on a validation error show the page again, 422, with the
    sub-form's typed values and its messages. On an edit conflict (409) the message quotes
    ``stored_text`` of the review as stored now, the form keeps what was typed and carries
    the stored version, so saving again replaces theirs by choice."""
    session = db.get_session()
    review = load_review(review_id)
    try:
        change(session, review)
    except EditConflict as err:
        session.rollback()
        stored = load_review(review_id)
        message = err.errors["version"]
        if stored_text is not None:
            message += f" Stored now: {stored_text(stored)}. Yours is in the form: save again"
            message += " to put it in place of theirs."
        html, _status = _show(stored, {form: request.form}, {form: {"version": message}})
        return html, 409
    except ReviewInvalid as err:
        session.rollback()
        return _show(load_review(review_id), {form: request.form}, {form: err.errors})
    session.commit()
    flash(note)
    return redirect(url_for("reviews.show", review_id=review_id, _anchor=anchor))


@bp.post("/reviews/<int:review_id>/timeline")
def add_entry(review_id: int) -> Any:
    f = request.form
    return _change(
        review_id,
        "timeline",
        "timeline",
        lambda s, r: store_timeline.add_timeline_entry(s, r, f.get("at"), f.get("text", ""), tz=TZ),
        "Timeline entry added.",
    )


@bp.post("/reviews/<int:review_id>/timeline/fact")
def add_fact_entry(review_id: int) -> Any:
    f = request.form

    def change(session: Any, review: Review) -> None:
        explanation = store_explanations.get_explanation(
            session, _int(f.get("explanation_id"), "explanation_id")
        )
        if explanation is None:
            raise ReviewInvalid({"explanation_id": "Pick one of the attached explanations."})
        store_timeline.timeline_entry_from_fact(
            session, review, explanation, f.get("fact", ""), f.get("text", "")
        )

    return _change(review_id, "fact", "timeline", change, "Timeline entry added from the fact.")


@bp.post("/reviews/<int:review_id>/timeline/<int:entry_id>/delete")
def delete_entry(review_id: int, entry_id: int) -> Any:
    return _change(
        review_id,
        "timeline",
        "timeline",
        lambda s, r: store_timeline.delete_timeline_entry(s, r, entry_id),
        "Timeline entry removed.",
    )


@bp.post("/reviews/<int:review_id>/attachments")
def attach(review_id: int) -> Any:
    f = request.form
    return _change(
        review_id,
        "attach",
        "evidence",
        lambda s, r: store_attachments.attach_explanation(
            s, r, _int(f.get("explanation_id"), "explanation_id"), f.get("caption", "")
        ),
        "Explanation attached.",
    )


@bp.post("/reviews/<int:review_id>/attachments/<int:attachment_id>/caption")
def caption(review_id: int, attachment_id: int) -> Any:
    text = request.form.get("caption", "")
    return _change(
        review_id,
        f"caption-{attachment_id}",
        f"attachment-{attachment_id}",
        lambda s, r: store_attachments.set_caption(
            s, r, attachment_id, text, sent_version(request.form.get("version"))
        ),
        "Caption saved.",
        lambda r: review_forms.quoted(a.caption for a in r.attachments if a.id == attachment_id),
    )


@bp.post("/reviews/<int:review_id>/attachments/<int:attachment_id>/move")
def move(review_id: int, attachment_id: int) -> Any:
    offset = -1 if request.form.get("direction") == "up" else 1
    return _change(
        review_id,
        "order",
        f"attachment-{attachment_id}",
        lambda s, r: store_attachments.move_attachment(s, r, attachment_id, offset),
        "Order changed.",
    )


@bp.post("/reviews/<int:review_id>/attachments/<int:attachment_id>/delete")
def detach(review_id: int, attachment_id: int) -> Any:
    return _change(
        review_id,
        "order",
        "evidence",
        lambda s, r: store_attachments.detach_explanation(s, r, attachment_id),
        "Explanation detached from the review (it stays saved).",
    )


@bp.post("/reviews/<int:review_id>/actions")
def add_action(review_id: int) -> Any:
    form = request.form
    return _change(
        review_id,
        "action",
        "actions",
        lambda s, r: store_actions.add_action_item(s, r, form),
        "Action item added.",
    )


@bp.post("/reviews/<int:review_id>/actions/<int:item_id>")
def update_action(review_id: int, item_id: int) -> Any:
    form = request.form
    return _change(
        review_id,
        f"action-{item_id}",
        "actions",
        lambda s, r: store_actions.update_action_item(
            s, r, item_id, form, sent_version(form.get("version"))
        ),
        "Action item saved.",
        lambda r: review_forms.quoted(
            review_forms.action_text(i) for i in r.action_items if i.id == item_id
        ),
    )


@bp.post("/reviews/<int:review_id>/actions/<int:item_id>/delete")
def delete_action(review_id: int, item_id: int) -> Any:
    return _change(
        review_id,
        "action",
        "actions",
        lambda s, r: store_actions.delete_action_item(s, r, item_id),
        "Action item removed.",
    )


@bp.post("/reviews/<int:review_id>/verdict")
def verdict(review_id: int) -> Any:
    """Record the review's verdict on one rule (a new one, or that rule's updated)."""
    return _change(
        review_id,
        "verdict",
        "verdict",
        lambda s, r: review_forms.record_verdict(s, r, request.form),
        "Verdict recorded.",
    )


@bp.post("/reviews/<int:review_id>/verdicts/<int:verdict_id>/delete")
def delete_verdict(review_id: int, verdict_id: int) -> Any:
    return _change(
        review_id,
        "verdict",
        "verdict",
        lambda s, r: store_verdicts.delete_verdict(s, r, verdict_id),
        "Verdict removed.",
    )


def _int(value: Any, field: str) -> int:
    text = str(value or "").strip()
    if not text.isdigit():
        raise ReviewInvalid({field: f"Expected a number here, got {text or 'nothing'}."})
    return int(text)


@bp.get("/reviews/<int:review_id>/export.<fmt>")
def download(review_id: int, fmt: str) -> Response:
    """The HTML export as one file; the Markdown export as a zip with its figure files."""
    review = load_review(review_id)
    if fmt not in ("html", "zip"):
        abort(404, description="Exports come as .html (one file) or .zip (Markdown, SVG figures).")
    name = f"review-{review.id}"
    kind = "html" if fmt == "html" else "md"
    with tempfile.TemporaryDirectory() as tmp:
        try:
            files = export.export_review(
                db.get_session(), review.id, kind, Path(tmp) / f"{name}.{kind}"
            )
        except review_export.ExportError as err:
            abort(500, description=f"The export failed: {err}.")
        if fmt == "html":
            payload = io.BytesIO(files[0].read_bytes())
            return send_file(payload, "text/html", as_attachment=True, download_name=f"{name}.html")
        payload = io.BytesIO()
        with zipfile.ZipFile(payload, "w", zipfile.ZIP_DEFLATED) as archive:
            for path in files:
                archive.write(path, path.relative_to(tmp))
    payload.seek(0)
    return send_file(payload, "application/zip", as_attachment=True, download_name=f"{name}.zip")
