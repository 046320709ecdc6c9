"""Team mode: users, the audit trail, kept keys, authors; points lose their foreign key.

Revision ID: 0004_team_mode
Revises: 0001
Created: 2026-12-02
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0004_team_mode"
down_revision = "0003_compact_store"
branch_labels = None
depends_on = None

POINTS_FK = "fk_points_series_id_series"


def _points_batch():
    # SQLite rebuilds the table; keep it clustered on its key (WITHOUT ROWID).
    return op.batch_alter_table(
        "points", recreate="auto", table_kwargs={"sqlite_with_rowid": False}
    )


def upgrade() -> None:
    op.create_table(
        "app_keys",
        sa.Column("name", sa.String(length=40), nullable=False),
        sa.Column("value", sa.String(length=200), nullable=False),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.PrimaryKeyConstraint("name", name=op.f("pk_app_keys")),
    )
    op.create_table(
        "users",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=100), nullable=False),
        sa.Column("password_hash", sa.String(length=300), nullable=False),
        sa.Column("role", sa.String(length=10), nullable=False),
        sa.Column("failed_sign_ins", sa.Integer(), nullable=False),
        sa.Column("last_failed_at", sa.DateTime(), nullable=True),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_users")),
        sa.UniqueConstraint("name", name=op.f("uq_users_name")),
    )
    op.create_table(
        "audit",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("at", sa.DateTime(), nullable=False),
        sa.Column("user_name", sa.String(length=100), nullable=True),
        sa.Column("action", sa.String(length=10), nullable=False),
        sa.Column("table_name", sa.String(length=60), nullable=False),
        sa.Column("record_id", sa.String(length=100), nullable=True),
        sa.Column("changes", sa.JSON(), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_audit")),
    )
    with op.batch_alter_table("audit") as batch_op:
        batch_op.create_index(batch_op.f("ix_audit_at"), ["at"], unique=False)
    with op.batch_alter_table("imports") as batch_op:
        batch_op.add_column(sa.Column("created_by", sa.String(length=100), nullable=True))
    with op.batch_alter_table("reviews") as batch_op:
        batch_op.add_column(sa.Column("created_by", sa.String(length=100), nullable=True))
        batch_op.add_column(sa.Column("updated_by", sa.String(length=100), nullable=True))
    with _points_batch() as batch_op:
        batch_op.drop_constraint(POINTS_FK, type_="foreignkey")


def downgrade() -> None:
    with _points_batch() as batch_op:
        batch_op.create_foreign_key(POINTS_FK, "series", ["series_id"], ["id"], ondelete="CASCADE")
    with op.batch_alter_table("reviews") as batch_op:
        batch_op.drop_column("updated_by")
        batch_op.drop_column("created_by")
    with op.batch_alter_table("imports") as batch_op:
        batch_op.drop_column("created_by")
    with op.batch_alter_table("audit") as batch_op:
        batch_op.drop_index(batch_op.f("ix_audit_at"))
    op.drop_table("audit")
    op.drop_table("users")
    op.drop_table("app_keys")
