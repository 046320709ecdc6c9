"""SQLAlchemy 2 models for the data model in docs/design.md.

Point timestamps are UTC epoch milliseconds (``BigInteger``); every other timestamp is
a :class:`UTCDateTime`, stored naive in UTC and handed back timezone-aware, so the same
models work on SQLite and on any other SQLAlchemy backend.
Alembic in ``migrations/`` is the only way the schema changes: edit the models, then add
a migration; a test fails when the two disagree.
"""

from __future__ import annotations

import datetime as dt
from typing import Any

from sqlalchemy import (
    JSON,
    BigInteger,
    Boolean,
    DateTime,
    Float,
    ForeignKey,
    Integer,
    LargeBinary,
    MetaData,
    String,
    Text,
    TypeDecorator,
)
from sqlalchemy.orm import DeclarativeBase, Mapped, mapped_column, relationship

NAMING = {
    "ix": "ix_%(table_name)s_%(column_0_N_name)s",
    "uq": "uq_%(table_name)s_%(column_0_N_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}


def utcnow() -> dt.datetime:
    return dt.datetime.now(dt.UTC)


class UTCDateTime(TypeDecorator):
    """A datetime kept in UTC: aware values in, aware UTC values out."""

    impl = DateTime
    cache_ok = True

    def process_bind_param(self, value: dt.datetime | None, dialect: Any) -> dt.datetime | None:
        if value is None:
            return None
        if value.tzinfo is None:
            raise ValueError("naive datetime given to a UTC column; attach a time zone first")
        return value.astimezone(dt.UTC).replace(tzinfo=None)

    def process_result_value(self, value: dt.datetime | None, dialect: Any) -> dt.datetime | None:
        if value is None:
            return None
        return value.replace(tzinfo=dt.UTC)


class Base(DeclarativeBase):
    metadata = MetaData(naming_convention=NAMING)


class Import(Base):
    """One uploaded file of metric data, kept with its provenance."""

    __tablename__ = "imports"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    file_name: Mapped[str] = mapped_column(String(500))
    sha256: Mapped[str] = mapped_column(String(64), index=True)
    format: Mapped[str] = mapped_column(String(40))
    timestamp_unit: Mapped[str | None] = mapped_column(String(40))
    naive_tz: Mapped[str] = mapped_column(String(64), default="UTC")
    size_bytes: Mapped[int] = mapped_column(BigInteger, default=0)
    row_count: Mapped[int] = mapped_column(Integer, default=0)
    point_count: Mapped[int] = mapped_column(Integer, default=0)
    inserted_count: Mapped[int] = mapped_column(Integer, default=0)
    updated_count: Mapped[int] = mapped_column(Integer, default=0)
    gap_count: Mapped[int] = mapped_column(Integer, default=0)
    duplicate_count: Mapped[int] = mapped_column(Integer, default=0)
    series_count: Mapped[int] = mapped_column(Integer, default=0)
    first_ts: Mapped[int | None] = mapped_column(BigInteger)
    last_ts: Mapped[int | None] = mapped_column(BigInteger)
    summary: Mapped[dict[str, Any]] = mapped_column(JSON, default=dict)
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utcnow)


class Series(Base):
    """One metric with one label set, e.g. ``checkout.latency_p95{host=api-3}``."""

    __tablename__ = "series"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    key: Mapped[str] = mapped_column(String(1000), unique=True)
    metric: Mapped[str] = mapped_column(String(500), index=True)
    labels: Mapped[dict[str, str]] = mapped_column(JSON, default=dict)
    unit: Mapped[str | None] = mapped_column(String(40))
    # Kept current by the store on every import and delete, so listing series is cheap.
    point_count: Mapped[int] = mapped_column(BigInteger, default=0)
    first_ts: Mapped[int | None] = mapped_column(BigInteger)  # UTC epoch milliseconds
    last_ts: Mapped[int | None] = mapped_column(BigInteger)
    step_ms: Mapped[int | None] = mapped_column(BigInteger)  # median spacing of recent points
    # Means of equal time buckets over the whole span, None where empty (store.stats).
    sparkline: Mapped[list[float | None] | None] = mapped_column(JSON)
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utcnow)


class Point(Base):
    """One sample. ``import_id`` is the import that last wrote the value.

    On SQLite the table is clustered on its key (``WITHOUT ROWID``): one B-tree, appended
    in (series, ts) order by bulk imports. An import's points always lie inside its own
    series and time range, so deleting an import needs no index on ``import_id``.
    """

    __tablename__ = "points"
    __table_args__ = {"sqlite_with_rowid": False}

    series_id: Mapped[int] = mapped_column(
        ForeignKey("series.id", ondelete="CASCADE"), primary_key=True
    )
    ts: Mapped[int] = mapped_column(BigInteger, primary_key=True)
    value: Mapped[float] = mapped_column(Float)
    # No foreign key: deleting an import removes the points it owns first, and skipping the
    # per-row parent lookup keeps bulk imports fast.
    import_id: Mapped[int | None] = mapped_column(Integer)


class PointBlock(Base):
    """One UTC day of one series' points, packed for reading (``webapp.store.blocks``).

    Derived from ``points`` and rebuilt for the days an import or an undo touches."""

    __tablename__ = "point_blocks"
    __table_args__ = {"sqlite_with_rowid": False}

    series_id: Mapped[int] = mapped_column(
        ForeignKey("series.id", ondelete="CASCADE"), primary_key=True
    )
    day: Mapped[int] = mapped_column(BigInteger, primary_key=True)  # UTC epoch ms // 86,400,000
    n: Mapped[int] = mapped_column(Integer)
    ts: Mapped[bytes] = mapped_column(LargeBinary)
    value: Mapped[bytes] = mapped_column(LargeBinary)


class AlertRule(Base):
    """The condition that produced pages: a threshold or an expected-band rule."""

    __tablename__ = "alert_rules"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(200))
    series_id: Mapped[int | None] = mapped_column(ForeignKey("series.id", ondelete="SET NULL"))
    metric: Mapped[str | None] = mapped_column(String(500))
    label_filter: Mapped[dict[str, str]] = mapped_column(JSON, default=dict)
    kind: Mapped[str] = mapped_column(String(20), default="threshold")  # threshold | band
    direction: Mapped[str] = mapped_column(String(10), default="above")  # above | below
    threshold: Mapped[float | None] = mapped_column(Float)
    tolerance: Mapped[float | None] = mapped_column(Float)
    hold_seconds: Mapped[int] = mapped_column(Integer, default=0)
    check_every_seconds: Mapped[int | None] = mapped_column(Integer)
    description: Mapped[str] = mapped_column(Text, default="")
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utcnow)


class Page(Base):
    """One alert notification that fired."""

    __tablename__ = "pages"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    series_id: Mapped[int | None] = mapped_column(ForeignKey("series.id", ondelete="SET NULL"))
    alert_rule_id: Mapped[int | None] = mapped_column(
        ForeignKey("alert_rules.id", ondelete="SET NULL")
    )
    fired_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, index=True)
    resolved_at: Mapped[dt.datetime | None] = mapped_column(UTCDateTime)
    rule_text: Mapped[str] = mapped_column(Text, default="")
    note: Mapped[str] = mapped_column(Text, default="")
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utcnow)


class ExcludedPeriod(Base):
    """A span left out of a series' baselines; ``series_id`` NULL marks it for every series,
    those imported later included (see ``webapp.store.excluded.add_excluded``)."""

    __tablename__ = "excluded_periods"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    series_id: Mapped[int | None] = mapped_column(ForeignKey("series.id", ondelete="CASCADE"))
    start: Mapped[dt.datetime] = mapped_column(UTCDateTime)
    end: Mapped[dt.datetime] = mapped_column(UTCDateTime)
    reason: Mapped[str] = mapped_column(Text, default="")
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utcnow)


class Explanation(Base):
    """A frozen analysis: parameters, engine version, the computed frame, facts, sentences."""

    __tablename__ = "explanations"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    series_id: Mapped[int | None] = mapped_column(ForeignKey("series.id", ondelete="SET NULL"))
    series_key: Mapped[str] = mapped_column(String(1000))
    page_id: Mapped[int | None] = mapped_column(ForeignKey("pages.id", ondelete="SET NULL"))
    title: Mapped[str] = mapped_column(String(300), default="")
    window_start: Mapped[dt.datetime] = mapped_column(UTCDateTime)
    window_end: Mapped[dt.datetime] = mapped_column(UTCDateTime)
    parameters: Mapped[dict[str, Any]] = mapped_column(JSON, default=dict)
    engine_version: Mapped[str] = mapped_column(String(40))
    frame: Mapped[bytes] = mapped_column(LargeBinary)  # webapp.store.frames.encode_frame
    overlay: Mapped[bytes | None] = mapped_column(LargeBinary)  # the same, may be absent
    facts: Mapped[dict[str, Any]] = mapped_column(JSON, default=dict)
    summary: Mapped[list[str]] = mapped_column(JSON, default=list)
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utcnow)


class Review(Base):
    """The post-incident review."""

    __tablename__ = "reviews"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    title: Mapped[str] = mapped_column(String(300))
    status: Mapped[str] = mapped_column(String(10), default="draft")  # draft | final
    incident_start: Mapped[dt.datetime | None] = mapped_column(UTCDateTime)
    incident_end: Mapped[dt.datetime | None] = mapped_column(UTCDateTime)
    severity: Mapped[str] = mapped_column(String(20), default="")
    summary: Mapped[str] = mapped_column(Text, default="")
    impact: Mapped[str] = mapped_column(Text, default="")
    trigger: Mapped[str] = mapped_column(Text, default="")
    root_cause: Mapped[str] = mapped_column(Text, default="")
    detection: Mapped[str] = mapped_column(Text, default="")
    resolution: Mapped[str] = mapped_column(Text, default="")
    lessons: Mapped[str] = mapped_column(Text, default="")
    page_id: Mapped[int | None] = mapped_column(ForeignKey("pages.id", ondelete="SET NULL"))
    alert_rule_id: Mapped[int | None] = mapped_column(
        ForeignKey("alert_rules.id", ondelete="SET NULL")
    )
    verdict: Mapped[str | None] = mapped_column(String(10))  # keep | tune | retire
    verdict_parameters: Mapped[dict[str, Any]] = mapped_column(JSON, default=dict)
    verdict_rationale: Mapped[str] = mapped_column(Text, default="")
    exclude_from_baselines: Mapped[bool] = mapped_column(Boolean, default=True)
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utcnow)
    updated_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utcnow, onupdate=utcnow)

    timeline: Mapped[list[TimelineEntry]] = relationship(
        back_populates="review", cascade="all, delete-orphan", order_by="TimelineEntry.at"
    )
    action_items: Mapped[list[ActionItem]] = relationship(
        back_populates="review", cascade="all, delete-orphan", order_by="ActionItem.position"
    )
    attachments: Mapped[list[ReviewExplanation]] = relationship(
        back_populates="review", cascade="all, delete-orphan", order_by="ReviewExplanation.position"
    )


class TimelineEntry(Base):
    __tablename__ = "timeline_entries"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    review_id: Mapped[int] = mapped_column(ForeignKey("reviews.id", ondelete="CASCADE"))
    at: Mapped[dt.datetime] = mapped_column(UTCDateTime)
    text: Mapped[str] = mapped_column(Text)
    explanation_id: Mapped[int | None] = mapped_column(
        ForeignKey("explanations.id", ondelete="SET NULL")
    )
    fact: Mapped[str | None] = mapped_column(String(80))

    review: Mapped[Review] = relationship(back_populates="timeline")


class ReviewExplanation(Base):
    __tablename__ = "review_explanations"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    review_id: Mapped[int] = mapped_column(ForeignKey("reviews.id", ondelete="CASCADE"))
    explanation_id: Mapped[int] = mapped_column(ForeignKey("explanations.id", ondelete="CASCADE"))
    caption: Mapped[str] = mapped_column(Text, default="")
    position: Mapped[int] = mapped_column(Integer, default=0)

    review: Mapped[Review] = relationship(back_populates="attachments")
    explanation: Mapped[Explanation] = relationship()


class ActionItem(Base):
    __tablename__ = "action_items"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    review_id: Mapped[int] = mapped_column(ForeignKey("reviews.id", ondelete="CASCADE"))
    text: Mapped[str] = mapped_column(Text)
    owner: Mapped[str] = mapped_column(String(200), default="")
    due_date: Mapped[dt.date | None] = mapped_column()
    state: Mapped[str] = mapped_column(String(20), default="open")  # open | in progress | done
    position: Mapped[int] = mapped_column(Integer, default=0)

    review: Mapped[Review] = relationship(back_populates="action_items")
