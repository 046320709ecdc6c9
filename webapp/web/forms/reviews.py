"""The review forms: what the browser sends, read into the values the store checks.

A checkbox that is left unticked sends nothing, so a form that shows the baseline switch
also sends ``CHECKBOX_SHOWN``; the verdict's parameters are typed as ``name: value`` lines.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from sqlalchemy.orm import Session

from webapp.store import verdicts
from webapp.store._sql import ReviewInvalid
from webapp.store.models import Review, ReviewVerdict

CHECKBOX_SHOWN = "exclude_from_baselines_shown"
TICKED = {"1", "on", "true", "yes"}


def review_data(form: Mapping[str, Any]) -> dict[str, Any]:
    """The review fields of a form, the baseline switch read as a bool: ticked, unticked
    (the form showed it and it sent nothing), or absent (left as stored)."""
    data = {name: value for name, value in form.items() if name != CHECKBOX_SHOWN}
    if "exclude_from_baselines" in form:
        data["exclude_from_baselines"] = _ticked(form["exclude_from_baselines"])
    elif CHECKBOX_SHOWN in form:
        data["exclude_from_baselines"] = False
    return data


def _ticked(value: Any) -> bool:
    if isinstance(value, str):
        return value.strip().lower() in TICKED
    return bool(value)


def parse_parameters(text: str, field: str = "verdict_parameters") -> dict[str, Any]:
    """``name: value`` lines (as the verdict form shows them) to a dict; numbers as floats.
    A line that is not ``name: value`` is reported against ``field``."""
    out: dict[str, Any] = {}
    for number, line in enumerate((text or "").splitlines(), start=1):
        if not line.strip():
            continue
        name, sep, value = line.partition(":")
        if not sep or not name.strip():
            raise ReviewInvalid(
                {field: f"Line {number} should read name: value, e.g. hold: 10min."}
            )
        value = value.strip()
        try:
            out[name.strip()] = float(value)
        except ValueError:
            out[name.strip()] = value
    return out


def format_parameters(parameters: Mapping[str, Any]) -> str:
    return "\n".join(
        f"{name}: {value:g}" if isinstance(value, float) else f"{name}: {value}"
        for name, value in (parameters or {}).items()
    )


def record_verdict(
    session: Session, review: Review, form: Mapping[str, str], alert_rule_id: int | None = None
) -> ReviewVerdict:
    """A verdict on one rule as a form sends it: ``alert_rule_id`` (unless given),
    ``verdict``, ``verdict_parameters`` and ``verdict_evidence`` (``name: value`` lines),
    ``verdict_rationale``, and ``verdict_id`` when an existing verdict is edited."""
    if alert_rule_id is None:
        raw = str(form.get("alert_rule_id") or "").strip()
        alert_rule_id = int(raw) if raw.isdigit() else None
    raw_id = str(form.get("verdict_id") or "").strip()
    return verdicts.record_verdict(
        session,
        review,
        alert_rule_id,
        form.get("verdict"),
        parameters=parse_parameters(form.get("verdict_parameters", "")),
        evidence=parse_parameters(form.get("verdict_evidence", ""), "verdict_evidence"),
        rationale=form.get("verdict_rationale", ""),
        verdict_id=int(raw_id) if raw_id.isdigit() else None,
    )
