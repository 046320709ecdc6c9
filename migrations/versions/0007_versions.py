"""Edit versions and the unique constraints that keep concurrent hands from duplicating.

Adds ``version`` (starting at 1) to the records edited in forms: reviews, action items,
attached explanations (their captions) and alert rules; a save names the version it started
from and is refused when the stored one is newer (``webapp.store.versions``). Makes an
explanation attachable once per review and action item positions unique per review, after
removing the duplicates concurrent saves could leave: a second attachment of the same
explanation is dropped (the first, with its caption, stays) and each review's action items
are renumbered 0, 1, 2... in their shown order. Downgrade drops the constraints and columns.

Revision ID: 0007_versions
Revises: 0004_team_mode
Created: 2026-12-02
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0007_versions"
down_revision = "0004_team_mode"
branch_labels = None
depends_on = None

VERSIONED = ("reviews", "action_items", "review_explanations", "alert_rules")
attachments = sa.table(
    "review_explanations",
    sa.column("id", sa.Integer),
    sa.column("review_id", sa.Integer),
    sa.column("explanation_id", sa.Integer),
)
actions = sa.table(
    "action_items",
    sa.column("id", sa.Integer),
    sa.column("review_id", sa.Integer),
    sa.column("position", sa.Integer),
)


def upgrade() -> None:
    _drop_duplicate_attachments()
    _renumber_action_items()
    for table in VERSIONED:
        with op.batch_alter_table(table, schema=None) as batch_op:
            batch_op.add_column(
                sa.Column("version", sa.Integer(), server_default="1", nullable=False)
            )
    with op.batch_alter_table("review_explanations", schema=None) as batch_op:
        batch_op.create_unique_constraint(
            "uq_review_explanations_review_id_explanation_id", ["review_id", "explanation_id"]
        )
    with op.batch_alter_table("action_items", schema=None) as batch_op:
        batch_op.create_unique_constraint(
            "uq_action_items_review_id_position", ["review_id", "position"]
        )


def downgrade() -> None:
    with op.batch_alter_table("action_items", schema=None) as batch_op:
        batch_op.drop_constraint("uq_action_items_review_id_position", type_="unique")
    with op.batch_alter_table("review_explanations", schema=None) as batch_op:
        batch_op.drop_constraint("uq_review_explanations_review_id_explanation_id", type_="unique")
    for table in VERSIONED:
        with op.batch_alter_table(table, schema=None) as batch_op:
            batch_op.drop_column("version")


def _drop_duplicate_attachments() -> None:
    bind = op.get_bind()
    rows = bind.execute(
        sa.select(attachments.c.id, attachments.c.review_id, attachments.c.explanation_id).order_by(
            attachments.c.id
        )
    ).all()
    seen: set[tuple[int, int]] = set()
    extra = []
    for row_id, review_id, explanation_id in rows:
        if (review_id, explanation_id) in seen:
            extra.append(row_id)
        seen.add((review_id, explanation_id))
    if extra:
        bind.execute(sa.delete(attachments).where(attachments.c.id.in_(extra)))


def _renumber_action_items() -> None:
    bind = op.get_bind()
    rows = bind.execute(
        sa.select(actions.c.id, actions.c.review_id).order_by(
            actions.c.review_id, actions.c.position, actions.c.id
        )
    ).all()
    numbers: dict[int, int] = {}
    for row_id, review_id in rows:
        position = numbers.get(review_id, 0)
        numbers[review_id] = position + 1
        bind.execute(sa.update(actions).where(actions.c.id == row_id).values(position=position))
