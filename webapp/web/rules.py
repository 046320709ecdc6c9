"""Alert rules screen: the rules, their replay over all stored history, the what-if sweep,
and a drafted verdict a reviewer can carry into a review."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import pandas as pd
from flask import Blueprint, abort, flash, redirect, render_template, request, url_for
from sqlalchemy.orm import Session

from webapp.analysis import (
    ThresholdRule,
    draft_verdict,
    replay_report,
    rule_from_fields,
    sweep_grid,
    whatif_sweep,
)
from webapp.store import db
from webapp.store import reviews as store_reviews
from webapp.store import rules as store_rules
from webapp.store import series as store_series
from webapp.store.models import AlertRule, Review
from webapp.store.reviews import ReviewInvalid
from webapp.web import rule_figures
from webapp.web.export import figure_div

bp = Blueprint("rules", __name__)
TZ = "UTC"
KINDS = ("threshold", "band")
DIRECTIONS = {"threshold": ("above", "below"), "band": ("both", "above", "below")}


class RuleFormInvalid(ValueError):
    def __init__(self, errors: Mapping[str, str]) -> None:
        self.errors = dict(errors)
        super().__init__("; ".join(self.errors.values()))


def load_rule(rule_id: int) -> AlertRule:
    """The alert rule with this id; aborts with 404 and a readable message when there is none."""
    rule = store_rules.get_rule(db.get_session(), rule_id)
    if rule is None:
        abort(404, description=f"There is no alert rule #{rule_id}. It may have been deleted.")
    return rule


def parse_duration(text: str, field: str, errors: dict[str, str], *, optional: bool) -> int | None:
    """Seconds from ``10min``, ``90s``, ``1h`` or a bare number of seconds."""
    text = (text or "").strip()
    if not text:
        if not optional:
            return 0
        return None
    try:
        delta = pd.Timedelta(float(text), unit="s") if _is_number(text) else pd.Timedelta(text)
    except (ValueError, TypeError):
        errors[field] = f"{text!r} is not a duration; write e.g. 10min, 90s or 1h."
        return None
    if pd.isna(delta) or delta < pd.Timedelta(0) or (optional and delta == pd.Timedelta(0)):
        errors[field] = "Give a duration above zero." if optional else "It cannot be negative."
        return None
    return int(delta.total_seconds())


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def parse_labels(text: str, errors: dict[str, str]) -> dict[str, str]:
    labels = {}
    for part in (text or "").split(","):
        if not part.strip():
            continue
        name, sep, value = part.partition("=")
        if not sep or not name.strip():
            errors["label_filter"] = f"{part.strip()!r} should read name=value, e.g. host=api-3."
            return {}
        labels[name.strip()] = value.strip().strip('"')
    return labels


def parse_rule_form(session: Session, form: Mapping[str, str]) -> dict[str, Any]:
    """The alert-rule fields from the form; raises RuleFormInvalid with one message per field."""
    errors: dict[str, str] = {}
    kind = form.get("kind", "threshold")
    if kind not in KINDS:
        errors["kind"] = "Choose a threshold rule or a band rule."
        kind = "threshold"
    fields: dict[str, Any] = {
        "name": form.get("name", "").strip(),
        "kind": kind,
        "description": form.get("description", "").strip(),
        "direction": form.get("direction", DIRECTIONS[kind][0]),
    }
    if not fields["name"]:
        errors["name"] = "Give the rule a name people will recognise from the page."
    if fields["direction"] not in DIRECTIONS[kind]:
        errors["direction"] = f"A {kind} rule fires {' or '.join(DIRECTIONS[kind])}."
    fields.update(_target(session, form, errors))
    for name in ("threshold", "tolerance"):
        raw = form.get(name, "").strip()
        needed = (kind == "threshold") == (name == "threshold")
        if not needed:
            fields[name] = None
        elif not _is_number(raw) or not pd.notna(float(raw)) or abs(float(raw)) == float("inf"):
            errors[name] = (
                f"Give the {name} as a number, e.g. {'500' if name == 'threshold' else '3'}."
            )
        elif name == "tolerance" and float(raw) <= 0:
            errors[name] = "The tolerance is a number of robust standard deviations above 0."
        else:
            fields[name] = float(raw)
    fields["pending_seconds"] = parse_duration(
        form.get("pending", ""), "pending", errors, optional=False
    )
    fields["step_seconds"] = parse_duration(form.get("step", ""), "step", errors, optional=True)
    if errors:
        raise RuleFormInvalid(errors)
    return fields


def _target(session: Session, form: Mapping[str, str], errors: dict[str, str]) -> dict[str, Any]:
    """Either one series, or a metric with a label filter."""
    if form.get("target", "series") == "series":
        raw = form.get("series_id", "").strip()
        if not raw.isdigit() or store_series.get_series(session, int(raw)) is None:
            errors["series_id"] = "Pick one of the stored series."
            return {}
        return {"series_id": int(raw), "metric": None, "label_filter": {}}
    metric = form.get("metric", "").strip()
    if not metric:
        errors["metric"] = "Name the metric, e.g. checkout.latency_p95."
    return {
        "series_id": None,
        "metric": metric,
        "label_filter": parse_labels(form.get("label_filter", ""), errors),
    }


def rule_form_values(rule: AlertRule | None) -> dict[str, str]:
    if rule is None:
        return {
            "kind": "threshold",
            "direction": "above",
            "target": "series",
            "pending": "0",
            "tolerance": "3",
        }
    return {
        "name": rule.name,
        "kind": rule.kind,
        "direction": rule.direction,
        "target": "series" if rule.series_id else "metric",
        "series_id": str(rule.series_id or ""),
        "metric": rule.metric or "",
        "label_filter": ", ".join(f"{k}={v}" for k, v in (rule.label_filter or {}).items()),
        "threshold": "" if rule.threshold is None else f"{rule.threshold:g}",
        "tolerance": "" if rule.tolerance is None else f"{rule.tolerance:g}",
        "pending": f"{rule.pending_seconds}s",
        "step": f"{rule.step_seconds}s" if rule.step_seconds else "",
        "description": rule.description or "",
    }


def matching_series(session: Session, rule: AlertRule) -> list[store_series.SeriesInfo]:
    """The stored series a rule watches: its own, or every series of its metric whose labels
    include the filter."""
    everything = store_series.list_series(session)
    if rule.series_id:
        return [s for s in everything if s.id == rule.series_id]
    wanted = (rule.label_filter or {}).items()
    return [s for s in everything if s.metric == rule.metric and wanted <= s.labels.items()]


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
    texts = {r.id: _rule_text(r) for r in rules}
    return render_template("rules/index.html", rules=rules, keys=keys, texts=texts)


def _rule_text(rule: AlertRule) -> str:
    try:
        return rule_from_fields(_fields(rule)).text
    except ValueError as err:
        return f"incomplete rule: {err}"


def _fields(rule: AlertRule) -> dict[str, Any]:
    return {name: getattr(rule, name) for name in store_rules.FIELDS} | {"tz": TZ}


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
            store_rules.update_rule(session, rule.id, **fields)
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


def firing_rows(firings: pd.DataFrame, limit: int = 500) -> list[dict[str, Any]]:
    """The first ``limit`` firings as plain values for the table (incidents numbered from 1)."""
    return [
        {
            "start": row.start,
            "end": None if row.ongoing else row.end,
            "duration": row.duration,
            "incident": None if pd.isna(row.incident) else int(row.incident) + 1,
        }
        for row in firings.head(limit).itertuples(index=False)
    ]


@dataclass
class Replay:
    """Everything the replay page shows for one rule on one series."""

    series: store_series.SeriesInfo
    rule: Any
    report: Any
    incidents: list[tuple[pd.Timestamp, pd.Timestamp]]
    sweep: pd.DataFrame | None
    draft: Any
    figures: dict[str, str]


def run_replay(session: Session, rule: AlertRule, info: store_series.SeriesInfo) -> Replay:
    """Replay ``rule`` over all of one series' history against the incidents of its reviews.

    Raises ValueError with a readable message when the rule or the data cannot be replayed."""
    analysed = rule_from_fields(_fields(rule))
    values = store_series.read_series(session, info.id).dropna()
    if values.empty:
        raise ValueError(f"{info.key} has no stored points to replay over")
    incidents = store_reviews.incident_windows(session, info.id)
    report = replay_report(values, analysed, incidents)
    sweep = None
    if isinstance(analysed, ThresholdRule):
        thresholds, pendings = sweep_grid(values, analysed)
        sweep = whatif_sweep(
            values,
            thresholds,
            pendings,
            incidents,
            direction=analysed.direction,
            step=analysed.step,
        )
    draft = draft_verdict(report, sweep, analysed)
    threshold = analysed.threshold if isinstance(analysed, ThresholdRule) else None
    figs = {
        "replay": figure_div(
            rule_figures.replay_figure(values, report.firings, incidents, threshold, info.unit, TZ),
            "replay-figure",
            False,
        )
    }
    if sweep is not None:
        current = (analysed.threshold, analysed.for_)
        drafted = None
        if draft.suggestion == "tune":
            drafted = (
                draft.parameters["threshold"],
                pd.Timedelta(seconds=draft.parameters["pending_seconds"]),
            )
        figs["sweep"] = figure_div(
            rule_figures.sweep_figure(sweep, current, drafted), "sweep-figure", False
        )
    return Replay(info, analysed, report, incidents, sweep, draft, figs)


@bp.get("/rules/<int:rule_id>")
def show(rule_id: int) -> Any:
    return _show(load_rule(rule_id))


def _show(
    rule: AlertRule, form: Mapping[str, Any] | None = None, errors: Mapping[str, str] | None = None
):
    session = db.get_session()
    candidates = matching_series(session, rule)
    chosen = request.values.get("series_id", "")
    info = next(
        (s for s in candidates if str(s.id) == chosen), candidates[0] if candidates else None
    )
    replay, problem = None, None
    if info is None:
        problem = (
            "No stored series matches this rule yet. Import its data, or edit the rule's series."
        )
    else:
        try:
            replay = run_replay(session, rule, info)
        except ValueError as err:
            problem = f"This rule cannot be replayed: {err}."
    reviews = _reviews_for(session, info.id if info else None)
    html = render_template(
        "rules/show.html",
        rule=rule,
        candidates=candidates,
        info=info,
        replay=replay,
        problem=problem,
        reviews=reviews,
        form=form or _verdict_values(replay, rule, reviews),
        errors=errors or {},
        firings=firing_rows(replay.report.firings) if replay else [],
        verdict_warning=store_reviews.VERDICT_WARNING,
        tz=TZ,
    )
    return html, 422 if errors else 200


def _reviews_for(session: Session, series_id: int | None) -> list[Review]:
    """This series' reviews first (latest incident first), then every other review."""
    tied = store_reviews.reviews_for_series(session, series_id) if series_id else []
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
        "verdict_parameters": store_reviews.format_parameters(parameters),
        "verdict_rationale": replay.draft.rationale,
    }


@bp.post("/rules/<int:rule_id>/verdict")
def carry_verdict(rule_id: int) -> Any:
    """Record the (possibly edited) drafted verdict in the chosen review."""
    session = db.get_session()
    rule = load_rule(rule_id)
    f = request.form
    raw = f.get("review_id", "").strip()
    review = store_reviews.get_review(session, int(raw)) if raw.isdigit() else None
    try:
        if review is None:
            raise ReviewInvalid({"review_id": "Pick the review that records this verdict."})
        store_reviews.set_verdict(
            session,
            review,
            f.get("verdict"),
            parameters=store_reviews.parse_parameters(f.get("verdict_parameters", "")),
            rationale=f.get("verdict_rationale", ""),
            alert_rule_id=rule.id,
        )
    except ReviewInvalid as err:
        session.rollback()
        return _show(load_rule(rule_id), f, err.errors)
    session.commit()
    flash(f"Verdict “{review.verdict}” recorded in review #{review.id}.")
    return redirect(url_for("reviews.show", review_id=review.id, _anchor="verdict"))
