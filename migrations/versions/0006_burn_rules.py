"""Burn-rate alert rules: an objective, a compliance period, window pairs and a severity.

Adds to ``alert_rules`` the columns a burn-rate rule needs: ``objective``,
``period_seconds``, ``burn_windows`` (the window pairs with their factors and severities),
``severity`` and ``good_series_id`` (the good events of a good/total pair; the rule's
``series_id`` then counts all events). Existing rules keep them empty. Downgrade deletes
the burn-rate rules, then drops the columns.

Revision ID: 0006_burn_rules
Revises: 0008_frozen_evidence
Created: 2026-12-02
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0006_burn_rules"
down_revision = "0008_frozen_evidence"
branch_labels = None
depends_on = None

COLUMNS = ("objective", "period_seconds", "burn_windows", "severity", "good_series_id")


def upgrade() -> None:
    with op.batch_alter_table("alert_rules", schema=None) as batch_op:
        batch_op.add_column(sa.Column("objective", sa.Float(), nullable=True))
        batch_op.add_column(sa.Column("period_seconds", sa.Integer(), nullable=True))
        batch_op.add_column(sa.Column("burn_windows", sa.JSON(), nullable=True))
        batch_op.add_column(sa.Column("severity", sa.String(length=10), nullable=True))
        batch_op.add_column(sa.Column("good_series_id", sa.Integer(), nullable=True))
        batch_op.create_foreign_key(
            "fk_alert_rules_good_series_id_series",
            "series",
            ["good_series_id"],
            ["id"],
            ondelete="SET NULL",
        )


def downgrade() -> None:
    rules = sa.table("alert_rules", sa.column("kind", sa.String))
    op.execute(rules.delete().where(rules.c.kind == "burn_rate"))
    with op.batch_alter_table("alert_rules", schema=None) as batch_op:
        batch_op.drop_constraint("fk_alert_rules_good_series_id_series", type_="foreignkey")
        for name in reversed(COLUMNS):
            batch_op.drop_column(name)
