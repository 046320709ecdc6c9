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
from webapp.store.models import Review

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


def parse_parameters(text: str) -> dict[str, Any]:
    """``name: value`` lines (as the verdict form shows them) to a dict; numbers as floats."""
    out: dict[str, Any] = {}
    for number, line in enumerate((text or "").splitlines(), start=1):
        if not line.strip():
            continue
        name, sep, value = line.partition(":")
        if not sep or not name.strip():
            raise ReviewInvalid(
                {"verdict_parameters": f"Line {number} should read name: value, e.g. hold: 10min."}
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
) -> Review:
    """The verdict as a form sends it: ``verdict``, ``verdict_parameters`` (``name: value``
    lines) and ``verdict_rationale``."""
    return verdicts.set_verdict(
        session,
        review,
        form.get("verdict"),
        parameters=parse_parameters(form.get("verdict_parameters", "")),
        rationale=form.get("verdict_rationale", ""),
        alert_rule_id=alert_rule_id,
    )
