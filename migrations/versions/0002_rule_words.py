"""Alert rules in whyfired's own words: the hold and the check interval.

Renames ``alert_rules.pending_seconds`` to ``hold_seconds`` and ``step_seconds`` to
``check_every_seconds``, renames the same keys in stored verdict drafts
(``reviews.verdict_parameters``). The rule text frozen on pages stays as it was written.

Revision ID: 0002_rule_words
Revises: 0001
Created: 2026-12-02
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0002_rule_words"
down_revision = "0001"
branch_labels = None
depends_on = None

OLD_TO_NEW = {"pending_seconds": "hold_seconds", "step_seconds": "check_every_seconds"}


def upgrade() -> None:
    with op.batch_alter_table("alert_rules", schema=None) as batch_op:
        for old, new in OLD_TO_NEW.items():
            batch_op.alter_column(old, new_column_name=new)
    _rename_keys(OLD_TO_NEW)


def downgrade() -> None:
    new_to_old = {new: old for old, new in OLD_TO_NEW.items()}
    with op.batch_alter_table("alert_rules", schema=None) as batch_op:
        for new, old in new_to_old.items():
            batch_op.alter_column(new, new_column_name=old)
    _rename_keys(new_to_old)


REVIEWS = sa.table("reviews", sa.column("id", sa.Integer), sa.column("verdict_parameters", sa.JSON))


def _rename_keys(mapping: dict[str, str]) -> None:
    bind = op.get_bind()
    for review_id, params in bind.execute(sa.select(REVIEWS.c.id, REVIEWS.c.verdict_parameters)):
        if not isinstance(params, dict) or not set(mapping) & set(params):
            continue
        renamed = {mapping.get(key, key): value for key, value in params.items()}
        bind.execute(
            REVIEWS.update().where(REVIEWS.c.id == review_id).values(verdict_parameters=renamed)
        )
