"""The explanations attached to a review as its frozen evidence, with captions, in order."""

from __future__ import annotations

from collections.abc import Iterable

from sqlalchemy.orm import Session

from webapp.store import incidents as store_incidents
from webapp.store._sql import ReviewInvalid, child_of, flush_unique
from webapp.store.models import Explanation, Review, ReviewExplanation
from webapp.store.versions import claim


def attach_explanation(
    session: Session, review: Review, explanation_id: int, caption: str = ""
) -> ReviewExplanation:
    """Attach a saved explanation at the end, with its caption."""
    explanation = session.get(Explanation, explanation_id)
    if explanation is None:
        raise ReviewInvalid({"explanation_id": f"There is no saved explanation #{explanation_id}."})
    already = {"explanation_id": f"Explanation #{explanation_id} is already attached."}
    if any(a.explanation_id == explanation_id for a in review.attachments):
        raise ReviewInvalid(already)
    attachment = ReviewExplanation(
        explanation=explanation, caption=(caption or "").strip(), position=len(review.attachments)
    )
    review.attachments.append(attachment)
    flush_unique(session, already)
    store_incidents.sync_review(session, review)
    return attachment


def set_caption(
    session: Session,
    review: Review,
    attachment_id: int,
    caption: str,
    version: int | None = None,
) -> None:
    """Save the caption over ``version`` (EditConflict when a newer one is stored)."""
    attachment = child_of(review.attachments, attachment_id, "attachment")
    claim(session, attachment, version, "caption")
    attachment.caption = (caption or "").strip()
    session.flush()


def reorder_attachments(session: Session, review: Review, ordered_ids: Iterable[int]) -> None:
    """Put the attachments in the order given; every attachment must be named once."""
    ordered = [int(i) for i in ordered_ids]
    current = {a.id: a for a in review.attachments}
    if sorted(ordered) != sorted(current):
        raise ReviewInvalid(
            {"order": "Name every attached explanation exactly once to reorder them."}
        )
    for position, attachment_id in enumerate(ordered):
        current[attachment_id].position = position
    session.flush()
    session.expire(review, ["attachments"])


def move_attachment(session: Session, review: Review, attachment_id: int, offset: int) -> None:
    """Move one attachment up (negative) or down (positive), clamped to the ends."""
    ids = [a.id for a in sorted(review.attachments, key=lambda a: a.position)]
    child_of(review.attachments, attachment_id, "attachment")
    old = ids.index(attachment_id)
    new = min(max(old + offset, 0), len(ids) - 1)
    ids.insert(new, ids.pop(old))
    reorder_attachments(session, review, ids)


def detach_explanation(session: Session, review: Review, attachment_id: int) -> None:
    review.attachments.remove(child_of(review.attachments, attachment_id, "attachment"))
    session.flush()
    for position, attachment in enumerate(sorted(review.attachments, key=lambda a: a.position)):
        attachment.position = position
    session.flush()
    store_incidents.sync_review(session, review)
