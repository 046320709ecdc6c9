"""Incidents as records, and a verdict per alert rule.

Adds ``incidents`` (a span of real trouble on a series or on a metric and labels, from a
review's window, a page marked real or an imported list) and ``pages.real_incident``, and
carries every review's incident window over: one incident per series the review is tied to
(its page's series and its attached explanations'). Adds ``review_verdicts`` (one row per
rule a review decides on) and moves each review's single verdict into it, then drops
``reviews.verdict``, ``verdict_parameters`` and ``verdict_rationale``. Downgrade puts each
review's first verdict back and drops the new tables and column.

Revision ID: 0005_incidents
Revises: 0006_burn_rules
Created: 2026-12-02
"""

from __future__ import annotations

import datetime as dt

import sqlalchemy as sa
from alembic import op

revision = "0005_incidents"
down_revision = "0006_burn_rules"
branch_labels = None
depends_on = None

reviews = sa.table(
    "reviews",
    sa.column("id", sa.Integer),
    sa.column("title", sa.String),
    sa.column("incident_start", sa.DateTime),
    sa.column("incident_end", sa.DateTime),
    sa.column("page_id", sa.Integer),
    sa.column("alert_rule_id", sa.Integer),
    sa.column("verdict", sa.String),
    sa.column("verdict_parameters", sa.JSON),
    sa.column("verdict_rationale", sa.Text),
)
pages = sa.table("pages", sa.column("id", sa.Integer), sa.column("series_id", sa.Integer))
explanations = sa.table(
    "explanations", sa.column("id", sa.Integer), sa.column("series_id", sa.Integer)
)
attachments = sa.table(
    "review_explanations",
    sa.column("review_id", sa.Integer),
    sa.column("explanation_id", sa.Integer),
)
rules = sa.table("alert_rules", sa.column("id", sa.Integer), sa.column("name", sa.String))
incidents = sa.table(
    "incidents",
    sa.column("start", sa.DateTime),
    sa.column("end", sa.DateTime),
    sa.column("title", sa.String),
    sa.column("series_id", sa.Integer),
    sa.column("label_filter", sa.JSON),
    sa.column("source", sa.String),
    sa.column("review_id", sa.Integer),
    sa.column("list_name", sa.String),
    sa.column("created_at", sa.DateTime),
)
verdicts = sa.table(
    "review_verdicts",
    sa.column("id", sa.Integer),
    sa.column("review_id", sa.Integer),
    sa.column("alert_rule_id", sa.Integer),
    sa.column("rule_name", sa.String),
    sa.column("decision", sa.String),
    sa.column("parameters", sa.JSON),
    sa.column("evidence", sa.JSON),
    sa.column("rationale", sa.Text),
    sa.column("created_at", sa.DateTime),
    sa.column("updated_at", sa.DateTime),
)


def _now() -> dt.datetime:
    return dt.datetime.now(dt.UTC).replace(tzinfo=None)


def upgrade() -> None:
    # Plain ALTER TABLE, never a batch rebuild: on SQLite a rebuild drops the old table with
    # foreign keys on, which would empty or unlink every row that refers to it.
    old_verdicts = _old_verdicts()
    for column in ("verdict_rationale", "verdict_parameters", "verdict"):
        op.drop_column("reviews", column)
    op.add_column(
        "pages", sa.Column("real_incident", sa.Boolean(), nullable=False, server_default=sa.false())
    )
    op.create_table(
        "incidents",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("start", sa.DateTime(), nullable=False),
        sa.Column("end", sa.DateTime(), nullable=True),
        sa.Column("title", sa.String(length=300), nullable=False),
        sa.Column("series_id", sa.Integer(), nullable=True),
        sa.Column("metric", sa.String(length=500), nullable=True),
        sa.Column("label_filter", sa.JSON(), nullable=False),
        sa.Column("source", sa.String(length=10), nullable=False),
        sa.Column("review_id", sa.Integer(), nullable=True),
        sa.Column("page_id", sa.Integer(), nullable=True),
        sa.Column("list_name", sa.String(length=500), nullable=False),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.ForeignKeyConstraint(
            ["page_id"], ["pages.id"], name=op.f("fk_incidents_page_id_pages"), ondelete="CASCADE"
        ),
        sa.ForeignKeyConstraint(
            ["review_id"],
            ["reviews.id"],
            name=op.f("fk_incidents_review_id_reviews"),
            ondelete="CASCADE",
        ),
        sa.ForeignKeyConstraint(
            ["series_id"],
            ["series.id"],
            name=op.f("fk_incidents_series_id_series"),
            ondelete="CASCADE",
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_incidents")),
    )
    op.create_index(op.f("ix_incidents_start"), "incidents", ["start"], unique=False)
    op.create_table(
        "review_verdicts",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("review_id", sa.Integer(), nullable=False),
        sa.Column("alert_rule_id", sa.Integer(), nullable=True),
        sa.Column("rule_name", sa.String(length=200), nullable=False),
        sa.Column("decision", sa.String(length=10), nullable=False),
        sa.Column("parameters", sa.JSON(), nullable=False),
        sa.Column("evidence", sa.JSON(), nullable=False),
        sa.Column("rationale", sa.Text(), nullable=False),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.Column("updated_at", sa.DateTime(), nullable=False),
        sa.ForeignKeyConstraint(
            ["alert_rule_id"],
            ["alert_rules.id"],
            name=op.f("fk_review_verdicts_alert_rule_id_alert_rules"),
            ondelete="SET NULL",
        ),
        sa.ForeignKeyConstraint(
            ["review_id"],
            ["reviews.id"],
            name=op.f("fk_review_verdicts_review_id_reviews"),
            ondelete="CASCADE",
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_review_verdicts")),
    )
    _carry_windows()
    if old_verdicts:
        op.get_bind().execute(verdicts.insert(), old_verdicts)


def _carry_windows() -> None:
    bind = op.get_bind()
    page_series = dict(bind.execute(sa.select(pages.c.id, pages.c.series_id)).all())
    attached: dict[int, set[int]] = {}
    joined = sa.select(attachments.c.review_id, explanations.c.series_id).join(
        explanations, explanations.c.id == attachments.c.explanation_id
    )
    for review_id, series_id in bind.execute(joined):
        if series_id is not None:
            attached.setdefault(review_id, set()).add(series_id)
    rows = []
    query = sa.select(
        reviews.c.id,
        reviews.c.title,
        reviews.c.incident_start,
        reviews.c.incident_end,
        reviews.c.page_id,
    )
    for review_id, title, start, end, page_id in bind.execute(query):
        if start is None or end is None:
            continue
        tied = set(attached.get(review_id, set()))
        if page_series.get(page_id) is not None:
            tied.add(page_series[page_id])
        rows += [
            {"start": start, "end": end, "title": title or "", "series_id": series_id,
             "label_filter": {}, "source": "review", "review_id": review_id,
             "list_name": "", "created_at": _now()}
            for series_id in sorted(tied)
        ]  # fmt: skip
    if rows:
        bind.execute(incidents.insert(), rows)


def _old_verdicts() -> list[dict]:
    bind = op.get_bind()
    names = dict(bind.execute(sa.select(rules.c.id, rules.c.name)).all())
    query = sa.select(
        reviews.c.id,
        reviews.c.alert_rule_id,
        reviews.c.verdict,
        reviews.c.verdict_parameters,
        reviews.c.verdict_rationale,
    ).where(reviews.c.verdict.is_not(None))
    rows = [
        {"review_id": review_id, "alert_rule_id": rule_id, "rule_name": names.get(rule_id, ""),
         "decision": verdict, "parameters": parameters or {}, "evidence": {},
         "rationale": rationale or "", "created_at": _now(), "updated_at": _now()}
        for review_id, rule_id, verdict, parameters, rationale in bind.execute(query)
    ]  # fmt: skip
    return rows


def downgrade() -> None:
    op.add_column("reviews", sa.Column("verdict", sa.String(length=10), nullable=True))
    op.add_column("reviews", sa.Column("verdict_parameters", sa.JSON(), nullable=True))
    op.add_column("reviews", sa.Column("verdict_rationale", sa.Text(), nullable=True))
    bind = op.get_bind()
    first: dict[int, tuple] = {}
    query = sa.select(
        verdicts.c.review_id,
        verdicts.c.decision,
        verdicts.c.parameters,
        verdicts.c.rationale,
    ).order_by(verdicts.c.id)
    for review_id, decision, parameters, rationale in bind.execute(query):
        first.setdefault(review_id, (decision, parameters, rationale))
    for review_id, (decision, parameters, rationale) in first.items():
        kept = decision if decision in ("keep", "tune", "retire") else None
        bind.execute(
            reviews.update()
            .where(reviews.c.id == review_id)
            .values(verdict=kept, verdict_parameters=parameters or {}, verdict_rationale=rationale)
        )
    bind.execute(
        reviews.update().where(reviews.c.verdict_rationale.is_(None)).values(verdict_rationale="")
    )
    bind.execute(
        reviews.update().where(reviews.c.verdict_parameters.is_(None)).values(verdict_parameters={})
    )
    op.drop_table("review_verdicts")
    op.drop_index(op.f("ix_incidents_start"), table_name="incidents")
    op.drop_table("incidents")
    op.drop_column("pages", "real_incident")
