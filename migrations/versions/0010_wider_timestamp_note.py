"""Widen imports.timestamp_unit: it holds how the timestamps were read ("dates with the day
first (31/12/2026 23:00)"), longer than 40 characters; PostgreSQL enforces the length.

Revision ID: 0010_wider_timestamp_note
Revises: 0007_versions
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0010_wider_timestamp_note"
down_revision = "0007_versions"
branch_labels = None
depends_on = None


def upgrade() -> None:
    with op.batch_alter_table("imports") as batch:
        batch.alter_column(
            "timestamp_unit",
            existing_type=sa.String(40),
            type_=sa.String(120),
            existing_nullable=True,
        )


def downgrade() -> None:
    with op.batch_alter_table("imports") as batch:
        batch.alter_column(
            "timestamp_unit",
            existing_type=sa.String(120),
            type_=sa.String(40),
            existing_nullable=True,
        )
