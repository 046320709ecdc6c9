"""Keep band rules' daily fits: ``band_fits``, one row per series and fit parameters.

Derived data: a replay or the rule kinds fill it and read it back instead of fitting every
day's band again. Downgrade drops the table (nothing is lost: the fits are recomputed).

Revision ID: 0011_band_fits
Revises: 0009_exclusion_scope
Created: 2026-12-09
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0011_band_fits"
down_revision = "0009_exclusion_scope"
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table(
        "band_fits",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("series_id", sa.Integer(), nullable=False),
        sa.Column("parameters", sa.String(length=400), nullable=False),
        sa.Column("exclusions", sa.String(length=64), nullable=False),
        sa.Column("data_version", sa.String(length=400), nullable=False),
        sa.Column("engine_version", sa.String(length=40), nullable=False),
        sa.Column("frame", sa.LargeBinary(), nullable=False),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.ForeignKeyConstraint(
            ["series_id"],
            ["series.id"],
            name=op.f("fk_band_fits_series_id_series"),
            ondelete="CASCADE",
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_band_fits")),
        sa.UniqueConstraint(
            "series_id", "parameters", name=op.f("uq_band_fits_series_id_parameters")
        ),
    )


def downgrade() -> None:
    op.drop_table("band_fits")
