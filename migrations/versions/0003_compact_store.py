"""Compact store: point blocks, stored sparklines, compact explanation frames.

Adds ``point_blocks`` (each series' points packed per UTC day, the layout series are read
from) and ``series.sparkline``, and fills both from the stored points; re-encodes every saved
explanation's frame and overlay compactly, bit for bit the same frame. Downgrade writes the
frames back as plain Parquet and drops the new table and column.

The data steps use the store's pure encoders (``webapp.store.blocks.block_rows``,
``webapp.store.frames``, ``webapp.store.stats.bucket_means``) on plain SQL rows.

Revision ID: 0003_compact_store
Revises: 0001
Created: 2026-12-02
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

from webapp.store.blocks import block_rows, rows_to_arrays
from webapp.store.frames import decode_frame, encode_frame
from webapp.store.stats import bucket_means

revision = "0003_compact_store"
down_revision = "0002_rule_words"
branch_labels = None
depends_on = None

point_blocks = sa.table(
    "point_blocks",
    sa.column("series_id", sa.Integer),
    sa.column("day", sa.BigInteger),
    sa.column("n", sa.Integer),
    sa.column("ts", sa.LargeBinary),
    sa.column("value", sa.LargeBinary),
)
series = sa.table("series", sa.column("id", sa.Integer), sa.column("sparkline", sa.JSON))
points = sa.table(
    "points",
    sa.column("series_id", sa.Integer),
    sa.column("ts", sa.BigInteger),
    sa.column("value", sa.Float),
)
explanations = sa.table(
    "explanations",
    sa.column("id", sa.Integer),
    sa.column("frame", sa.LargeBinary),
    sa.column("overlay", sa.LargeBinary),
)


def upgrade() -> None:
    op.create_table(
        "point_blocks",
        sa.Column("series_id", sa.Integer(), nullable=False),
        sa.Column("day", sa.BigInteger(), nullable=False),
        sa.Column("n", sa.Integer(), nullable=False),
        sa.Column("ts", sa.LargeBinary(), nullable=False),
        sa.Column("value", sa.LargeBinary(), nullable=False),
        sa.ForeignKeyConstraint(
            ["series_id"],
            ["series.id"],
            name=op.f("fk_point_blocks_series_id_series"),
            ondelete="CASCADE",
        ),
        sa.PrimaryKeyConstraint("series_id", "day", name=op.f("pk_point_blocks")),
        sqlite_with_rowid=False,
    )
    with op.batch_alter_table("series", schema=None) as batch_op:
        batch_op.add_column(sa.Column("sparkline", sa.JSON(), nullable=True))
    bind = op.get_bind()
    for (series_id,) in bind.execute(sa.select(series.c.id)).all():
        rows = bind.execute(
            sa.select(points.c.ts, points.c.value)
            .where(points.c.series_id == series_id)
            .order_by(points.c.ts)
        ).all()
        ts, values = rows_to_arrays(rows)
        blocks = block_rows(series_id, ts, values)
        if blocks:
            bind.execute(sa.insert(point_blocks), blocks)
        spark = bucket_means(ts, values) if len(ts) else None
        bind.execute(series.update().where(series.c.id == series_id).values(sparkline=spark))
    _recode_explanations(compact=True)


def downgrade() -> None:
    _recode_explanations(compact=False)
    with op.batch_alter_table("series", schema=None) as batch_op:
        batch_op.drop_column("sparkline")
    op.drop_table("point_blocks")


def _recode_explanations(*, compact: bool) -> None:
    bind = op.get_bind()
    ids = bind.execute(sa.select(explanations.c.id)).scalars().all()
    for explanation_id in ids:
        frame, overlay = bind.execute(
            sa.select(explanations.c.frame, explanations.c.overlay).where(
                explanations.c.id == explanation_id
            )
        ).one()
        values = {"frame": encode_frame(decode_frame(frame), compact=compact)}
        if overlay is not None:
            values["overlay"] = encode_frame(decode_frame(overlay), compact=compact)
        bind.execute(
            explanations.update().where(explanations.c.id == explanation_id).values(**values)
        )
