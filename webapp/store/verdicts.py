"""A review's verdicts, one per alert rule it discusses: keep, tune (with the new parameters),
replace (with a rule of another kind, its parameters given) or retire, each with the evidence
numbers it rests on. The tool drafts; the service owner decides."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from sqlalchemy.orm import Session

from webapp.analysis.vocabulary import VERDICTS
from webapp.store._sql import ReviewInvalid, child_of
from webapp.store.models import AlertRule, Review, ReviewVerdict

NEEDS_PARAMETERS = {
    "tune": "A tuned rule needs its new parameters.",
    "replace": "A replacement needs the other rule's kind and parameters.",
}


def record_verdict(
    session: Session,
    review: Review,
    alert_rule_id: int | None,
    decision: str | None,
    *,
    parameters: Mapping[str, Any] | None = None,
    evidence: Mapping[str, Any] | None = None,
    rationale: str = "",
    verdict_id: int | None = None,
) -> ReviewVerdict:
    """Record the review's verdict on one rule: a new one, or the rule's existing verdict
    (or ``verdict_id``) updated. Raises ReviewInvalid with one message per field."""
    decision = (decision or "").strip()
    errors: dict[str, str] = {}
    if decision not in VERDICTS:
        errors["verdict"] = f"The verdict must be one of {', '.join(VERDICTS)}."
    rule = session.get(AlertRule, alert_rule_id) if alert_rule_id is not None else None
    if rule is None:
        errors["alert_rule_id"] = "Pick the alert rule this verdict is about."
    parameters = dict(parameters or {})
    if decision in NEEDS_PARAMETERS and not parameters:
        errors["verdict_parameters"] = NEEDS_PARAMETERS[decision]
    if errors:
        raise ReviewInvalid(errors)
    if verdict_id is not None:
        row = child_of(review.verdicts, verdict_id, "verdict")
    else:
        row = next((v for v in review.verdicts if v.alert_rule_id == rule.id), None)
    if row is None:
        row = ReviewVerdict(decision=decision)
        review.verdicts.append(row)
    row.alert_rule_id = rule.id
    row.rule_name = rule.name
    row.decision = decision
    row.parameters = parameters if decision in NEEDS_PARAMETERS else {}
    row.evidence = dict(evidence or {})
    row.rationale = (rationale or "").strip()
    session.flush()
    return row


def delete_verdict(session: Session, review: Review, verdict_id: int) -> None:
    review.verdicts.remove(child_of(review.verdicts, verdict_id, "verdict"))
    session.flush()
