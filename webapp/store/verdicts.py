"""The verdict a review records on the alert rule that paged: keep, tune (with its new
parameters) or retire. The tool drafts; the service owner decides."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from sqlalchemy.orm import Session

from webapp.analysis.vocabulary import VERDICTS
from webapp.store._sql import ReviewInvalid
from webapp.store.models import Review


def set_verdict(
    session: Session,
    review: Review,
    verdict: str | None,
    *,
    parameters: Mapping[str, Any] | None = None,
    rationale: str = "",
    alert_rule_id: int | None = None,
) -> Review:
    """Record keep / tune (with its new parameters) / retire, or clear it with None."""
    verdict = (verdict or "").strip() or None
    if verdict is not None and verdict not in VERDICTS:
        raise ReviewInvalid({"verdict": f"The verdict must be one of {', '.join(VERDICTS)}."})
    parameters = dict(parameters or {})
    if verdict == "tune" and not parameters:
        raise ReviewInvalid({"verdict_parameters": "A tuned rule needs its new parameters."})
    review.verdict = verdict
    review.verdict_parameters = parameters if verdict == "tune" else {}
    review.verdict_rationale = (rationale or "").strip()
    if alert_rule_id is not None:
        review.alert_rule_id = alert_rule_id
    session.flush()
    return review
