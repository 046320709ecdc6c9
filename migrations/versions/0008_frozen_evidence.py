"""Frozen evidence: a saved explanation keeps its peer comparison and its screening.

Adds ``explanations.peers`` and ``explanations.screening``: JSON objects in the layout of the
data downloads (``webapp.analysis.to_json``: kind, versions, parameters, facts, sentences and
the rows), or null when the explanation was saved without them. Explanations saved before
this revision have neither.

Revision ID: 0008_frozen_evidence
Revises: 0010_wider_timestamp_note
Created: 2026-12-02
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0008_frozen_evidence"
down_revision = "0010_wider_timestamp_note"
branch_labels = None
depends_on = None


def upgrade() -> None:
    with op.batch_alter_table("explanations", schema=None) as batch_op:
        batch_op.add_column(sa.Column("peers", sa.JSON(), nullable=True))
        batch_op.add_column(sa.Column("screening", sa.JSON(), nullable=True))


def downgrade() -> None:
    with op.batch_alter_table("explanations", schema=None) as batch_op:
        batch_op.drop_column("screening")
        batch_op.drop_column("peers")
