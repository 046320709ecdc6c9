"""The review forms: what the browser sends, read into the values the store checks.

A checkbox that is left unticked sends nothing, so a form that shows the baseline switch
also sends ``CHECKBOX_SHOWN``; the verdict's parameters are typed as ``name: value`` lines.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any

from sqlalchemy.orm import Session

from webapp.store import verdicts
from webapp.store._sql import ReviewInvalid
from webapp.store.models import ActionItem, Review, ReviewVerdict
from webapp.store.reviews import REVIEW_FIELDS
from webapp.store.versions import EditConflict

CHECKBOX_SHOWN = "exclude_from_baselines_shown"
TICKED = {"1", "on", "true", "yes"}
# Sent by the conflict panel's "save mine" button: the stored version the reader chose to
# replace, taking the place of the version the form was opened at.
OVERWRITE = "overwrite_version"


@dataclass
class FieldPair:
    name: str
    label: str
    theirs: str
    yours: str


@dataclass
class Conflict:
    """A refused save: the fields where the stored review and the typed form differ."""

    message: str
    stored_version: int
    stored_at: Any
    fields: list[FieldPair]


def chosen_version(form: Mapping[str, Any]) -> Any:
    """The version a save is made over: the one the reader chose to replace, if any."""
    return form.get(OVERWRITE) or form.get("version")


def review_conflict(
    stored: Mapping[str, Any], typed: Mapping[str, Any], err: EditConflict, review: Review
) -> Conflict:
    """Both texts of every field where ``stored`` (form values of the stored review) and
    ``typed`` (the form as sent) differ; a field the form did not send is not compared."""
    pairs = []
    for name in REVIEW_FIELDS:
        if name == "exclude_from_baselines":
            theirs = "on" if stored.get(name) else "off"
            yours = "on" if _ticked(typed.get(name, "")) else "off"
            if CHECKBOX_SHOWN not in typed:
                continue
        elif name in typed:
            theirs, yours = _text(stored.get(name)), _text(typed.get(name))
        else:
            continue
        if theirs != yours:
            pairs.append(FieldPair(name, name.replace("_", " ").capitalize(), theirs, yours))
    return Conflict(err.errors["version"], review.version, review.updated_at, pairs)


def _text(value: Any) -> str:
    return str(value or "").replace("\r\n", "\n").strip()


def quoted(texts: Iterable[str]) -> str:
    """The first of ``texts`` in quotes, or a note that it is gone."""
    for text in texts:
        return f"“{text}”" if text else "(empty)"
    return "(removed)"


def action_text(item: ActionItem) -> str:
    """An action item in one line, as the conflict message quotes it."""
    due = f", due {item.due_date.isoformat()}" if item.due_date else ""
    owner = f", owner {item.owner}" if item.owner else ""
    return f"{item.text}{owner}{due}, {item.state}"


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
