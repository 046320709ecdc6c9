"""Alert rules screen: the rules, their replay over all stored history, the what-if sweep,
and a drafted verdict a reviewer can carry into a review."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import pandas as pd
from flask import Blueprint, abort, current_app, flash, redirect, render_template, request, url_for
from sqlalchemy.orm import Session

from webapp.analysis.times import short_duration
from webapp.analysis.vocabulary import OWNER_DECIDES
from webapp.services.incidents import ids_from
from webapp.services.replay import TZ, Replay, firing_rows, matching_series, rule_text, run_replay
from webapp.services.verdicts import evidence_numbers
from webapp.store import db
from webapp.store import incidents as store_incidents
from webapp.store import reviews as store_reviews
from webapp.store import rules as store_rules
from webapp.store import series as store_series
from webapp.store.models import AlertRule, Review
from webapp.store.reviews import ReviewInvalid
from webapp.store.versions import EditConflict, sent_version
from webapp.web.charts import rules as rule_charts
from webapp.web.charts.evidence import figure_embed
from webapp.web.downloads import check_format, download
from webapp.web.forms import reviews as review_forms
from webapp.web.forms.rules import (
    RuleFormInvalid,
    parse_rule_form,
    parse_sweep,
    rule_form_values,
    sweep_level,
)
from webapp.web.htmx import render
from webapp.web.views import burn_rules

bp = Blueprint("rules", __name__)


def load_rule(rule_id: int) -> AlertRule:
    """The alert rule with this id; aborts with 404 and a readable message when there is none."""
    rule = store_rules.get_rule(db.get_session(), rule_id)
    if rule is None:
        abort(404, description=f"There is no alert rule #{rule_id}. It may have been deleted.")
    return rule


def _rule_form(rule: AlertRule | None, values: Mapping[str, Any], errors: Mapping[str, str]):
    series = store_series.list_series(db.get_session())
    html = render_template(
        "rules/form.html", rule=rule, values=values, errors=errors, series=series
    )
    return html, 422 if errors else 200


@bp.get("/rules")
def index() -> str:
    session = db.get_session()
    rules = store_rules.list_rules(session)
    keys = {s.id: s.key for s in store_series.list_series(session)}
    texts = {r.id: rule_text(r) for r in rules}
    return render_template("rules/index.html", rules=rules, keys=keys, texts=texts)


@bp.route("/rules/new", methods=["GET", "POST"])
def new() -> Any:
    if request.method == "GET":
        return _rule_form(None, rule_form_values(None) | dict(request.args), {})
    return _save(None)


@bp.route("/rules/<int:rule_id>/edit", methods=["GET", "POST"])
def edit(rule_id: int) -> Any:
    rule = load_rule(rule_id)
    if request.method == "GET":
        return _rule_form(rule, rule_form_values(rule), {})
    return _save(rule)


def _save(rule: AlertRule | None) -> Any:
    session = db.get_session()
    try:
        fields = parse_rule_form(session, request.form)
        if rule is None:
            rule = store_rules.create_rule(session, **fields)
        else:
            version = sent_version(request.form.get("version"))
            store_rules.update_rule(session, rule.id, version, **fields)
    except EditConflict as err:
        session.rollback()
        stored = load_rule(rule.id)
        message = (
            f"{err.errors['version']} Stored now: “{stored.name}”, {rule_text(stored)}; "
            f"description: “{stored.description or ''}”. Yours is in the form: save again to "
            "put it in place of theirs."
        )
        html, _status = _rule_form(
            stored, {**request.form, "version": stored.version}, {"form": message}
        )
        return html, 409
    except RuleFormInvalid as err:
        session.rollback()
        return _rule_form(rule, request.form, err.errors)
    except ValueError as err:
        session.rollback()
        return _rule_form(rule, request.form, {"form": f"The rule was not saved: {err}."})
    session.commit()
    flash(f"Alert rule “{rule.name}” saved. Its replay is below.")
    return redirect(url_for("rules.show", rule_id=rule.id))


@bp.post("/rules/<int:rule_id>/delete")
def delete(rule_id: int) -> Any:
    session = db.get_session()
    rule = load_rule(rule_id)
    name = rule.name
    store_rules.delete_rule(session, rule.id)
    session.commit()
    flash(f"Alert rule “{name}” deleted. Pages and reviews that named it keep their text.")
    return redirect(url_for("rules.index"))


@bp.get("/rules/<int:rule_id>")
def show(rule_id: int) -> Any:
    """The rule's page at once; its replay (seconds for a band rule) follows through htmx."""
    return _show(load_rule(rule_id), lazy=True)


@bp.get("/rules/<int:rule_id>/replay")
def replay(rule_id: int) -> Any:
    """The replay, sweep and verdict draft: the fragment for htmx, or the whole page."""
    return _show(load_rule(rule_id))


def chosen_series(candidates: list, chosen: str) -> Any:
    """The matching series the request names, else the first; None when none match."""
    return next(
        (s for s in candidates if str(s.id) == chosen), candidates[0] if candidates else None
    )


@bp.get("/rules/<int:rule_id>/replay/data.<fmt>")
def replay_data(rule_id: int, fmt: str) -> Any:
    """The replay's firings with the rule, the series and the counts, as CSV or JSON."""
    check_format(fmt)
    rule = load_rule(rule_id)
    session = db.get_session()
    candidates = matching_series(session, rule)
    info = chosen_series(candidates, request.args.get("series_id", ""))
    if info is None:
        abort(404, description="No stored series matches this rule yet, so there is no replay.")
    try:
        add, drop = (ids_from(request.args.getlist(n)) for n in ("add", "drop"))
        replay = run_replay(session, rule, info, None, add, drop)
    except ValueError as err:
        abort(400, description=f"This rule cannot be replayed: {err}.")
    counted = [
        [str(i["start"]), None if i["end"] is None else str(i["end"])]
        for i in replay.choice.counted
    ]
    extra = {"rule": rule.name, "series": info.key, "incidents": counted}
    return download(replay.report, fmt, f"replay-rule-{rule.id}", extra)


def _show(
    rule: AlertRule,
    form: Mapping[str, Any] | None = None,
    errors: Mapping[str, str] | None = None,
    *,
    lazy: bool = False,
    import_errors: list[str] | None = None,
):
    session = db.get_session()
    candidates = matching_series(session, rule)
    info = chosen_series(candidates, request.values.get("series_id", ""))
    if rule.kind == "burn_rate":
        return burn_rules.show(rule, candidates, info, lazy)
    replay, problem, sweep_errors = None, None, {}
    level = sweep_level(rule.kind)
    if info is None:
        problem = (
            "No stored series matches this rule yet. Import its data, or edit the rule's series."
        )
    elif not lazy:
        limits = (current_app.config["MAX_SWEEP_LEVELS"], current_app.config["MAX_SWEEP_HOLDS"])
        grid, sweep_errors = parse_sweep(request.args, level, *limits)
        try:
            add, drop = (ids_from(request.values.getlist(n)) for n in ("add", "drop"))
            replay = run_replay(session, rule, info, grid, add, drop)
        except ValueError as err:
            problem = f"This rule cannot be replayed: {err}."
    reviews = _reviews_for(session, info.id if info else None)
    html = render(
        "rules/show.html",
        "rules/_replay.html",
        lazy=lazy and info is not None,
        rule=rule,
        text=rule_text(rule),
        candidates=candidates,
        info=info,
        replay=replay,
        figures=_figures(replay) if replay else {},
        problem=problem,
        reviews=reviews,
        form=form or _verdict_values(replay, rule, reviews),
        errors=errors or {},
        firings=firing_rows(replay.report.firings) if replay else [],
        level=level,
        sweep_values=_sweep_values(replay, request.args, f"{level}s"),
        sweep_errors=sweep_errors,
        import_errors=import_errors or [],
        verdict_warning=OWNER_DECIDES,
        tz=TZ,
    )
    return html, 422 if errors else 200


def _figures(replay: Replay) -> dict[str, str]:
    """The replay figure (a band rule's band drawn from the replay's own daily fits) and
    the what-if figure with the rule's own and the drafted setting marked."""
    result = replay.result
    threshold = result.current[0] if result.bands is None else None
    band = (result.bands, result.current[0]) if result.bands is not None else None
    replay_fig = rule_charts.replay_figure(
        replay.values,
        result.firings,
        result.incidents,
        threshold,
        replay.series.unit,
        TZ,
        band=band,
    )
    sweep_fig = rule_charts.sweep_figure(result.sweep, result.current, result.drafted)
    return {
        "replay": figure_embed(replay_fig, "replay-figure"),
        "sweep": figure_embed(sweep_fig, "sweep-figure"),
    }


def _sweep_values(replay: Replay | None, args: Mapping[str, str], field: str) -> dict[str, str]:
    """What the what-if form shows: the reader's own text, else the grid the sweep used.
    ``field`` names the levels: "thresholds", or "tolerances" for a band rule."""
    if field in args or "holds" in args:
        return {field: args.get(field, ""), "holds": args.get("holds", "")}
    if replay is None:
        return {}
    levels, holds = replay.grid
    return {
        field: ", ".join(f"{t:g}" for t in levels),
        "holds": ", ".join(short_duration(p) for p in holds),
    }


def _reviews_for(session: Session, series_id: int | None) -> list[Review]:
    """This series' reviews first (latest incident first), then every other review."""
    tied = store_incidents.reviews_for_series(session, series_id) if series_id else []
    tied_ids = {r.id for r in tied}
    return sorted(
        tied, key=lambda r: r.incident_start or pd.Timestamp.min.tz_localize("UTC"), reverse=True
    ) + [r for r in store_reviews.list_reviews(session) if r.id not in tied_ids]


def _verdict_values(
    replay: Replay | None, rule: AlertRule, reviews: list[Review]
) -> dict[str, Any]:
    if replay is None:
        return {}
    tied = [r for r in reviews if r.alert_rule_id == rule.id]
    parameters = replay.draft.parameters if replay.draft.suggestion == "tune" else {}
    return {
        "review_id": str((tied or reviews or [None])[0].id) if (tied or reviews) else "",
        "verdict": replay.draft.suggestion,
        "verdict_parameters": review_forms.format_parameters(parameters),
        "verdict_evidence": review_forms.format_parameters(evidence_numbers(replay.report)),
        "verdict_rationale": replay.draft.rationale,
    }


@bp.post("/rules/<int:rule_id>/verdict")
def carry_verdict(rule_id: int) -> Any:
    """Record the (possibly edited) drafted verdict in the chosen review: this rule's
    verdict there is added, or updated when it has one."""
    session = db.get_session()
    rule = load_rule(rule_id)
    f = request.form
    raw = f.get("review_id", "").strip()
    review = store_reviews.get_review(session, int(raw)) if raw.isdigit() else None
    try:
        if review is None:
            raise ReviewInvalid({"review_id": "Pick the review that records this verdict."})
        recorded = review_forms.record_verdict(session, review, f, rule.id)
    except ReviewInvalid as err:
        session.rollback()
        return _show(load_rule(rule_id), f, err.errors)
    session.commit()
    flash(f"Verdict “{recorded.decision}” on “{rule.name}” recorded in review #{review.id}.")
    return redirect(url_for("reviews.show", review_id=review.id, _anchor="verdict"))
