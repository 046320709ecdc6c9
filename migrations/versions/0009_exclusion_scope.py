"""Excluded periods belong to the series they were made for.

A row with no series used to apply to every series, including those imported later, though
nothing but a loaded scenario ever wrote one. From now on a row without a series is one
explicitly marked for every series. Each existing such row becomes one row per series that
existed when it was made (so no existing picture changes and later imports are not
touched); a row made before any series existed stays marked for every series. No schema
change. Downgrade leaves the per-series rows, which exclude the same spans.

Revision ID: 0009_exclusion_scope
Revises: 0005_incidents
Created: 2026-12-02
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0009_exclusion_scope"
down_revision = "0005_incidents"
branch_labels = None
depends_on = None

SCOPED = sa.text(
    'INSERT INTO excluded_periods (series_id, start, "end", reason, created_at) '
    'SELECT s.id, e.start, e."end", e.reason, e.created_at '
    "FROM excluded_periods e JOIN series s ON s.created_at <= e.created_at "
    "WHERE e.series_id IS NULL ORDER BY e.id, s.id"
)
FORMER = sa.text(
    "DELETE FROM excluded_periods WHERE series_id IS NULL AND EXISTS "
    "(SELECT 1 FROM series s WHERE s.created_at <= excluded_periods.created_at)"
)


def upgrade() -> None:
    conn = op.get_bind()
    conn.execute(SCOPED)
    conn.execute(FORMER)


def downgrade() -> None:
    """Nothing to undo: the per-series rows leave out the same spans as before."""
