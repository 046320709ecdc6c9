"""Rule kinds side by side, the panel of a rule's page that htmx loads after the replay:
the rule as it is beside a threshold, a band rule and a burn-rate rule on the same history
and the same incidents."""

from __future__ import annotations

from typing import Any

from flask import Blueprint, request

from webapp.analysis.vocabulary import KIND_NAMES
from webapp.services.replay import matching_series
from webapp.services.rule_kinds import compare_kinds
from webapp.store import db
from webapp.web.htmx import render
from webapp.web.views.rules import load_rule

bp = Blueprint("rule_kinds", __name__)


@bp.get("/rules/<int:rule_id>/kinds")
def kinds(rule_id: int) -> Any:
    """The comparison panel: a fragment when the rule's page loads it, a page of its own
    when opened directly (the link for readers without JavaScript)."""
    session = db.get_session()
    rule = load_rule(rule_id)
    chosen = request.args.get("series_id", "")
    candidates = matching_series(session, rule)
    info = next(
        (s for s in candidates if str(s.id) == chosen), candidates[0] if candidates else None
    )
    comparison, problem = None, None
    if info is None:
        problem = "No stored series matches this rule yet, so there is nothing to compare."
    else:
        try:
            comparison = compare_kinds(session, rule, info)
        except ValueError as err:
            problem = f"The rule kinds cannot be compared: {err}."
    return render(
        "rules/kinds.html",
        "rules/_kinds.html",
        rule=rule,
        comparison=comparison,
        problem=problem,
        kinds=KIND_NAMES,
    )
