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
    UniqueConstraint,
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
    timestamp_unit: Mapped[str | None] = mapped_column(String(120))
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
    created_by: Mapped[str | None] = mapped_column(String(100))  # team mode: who imported


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

    Neither id is a foreign key: only imports write points, with series ids they hold under
    the imports lock, and a series is removed only once it has no points left. A per-row
    check would make a bulk load on PostgreSQL several times slower.
    """

    __tablename__ = "points"
    __table_args__ = {"sqlite_with_rowid": False}

    series_id: Mapped[int] = mapped_column(Integer, primary_key=True)
    ts: Mapped[int] = mapped_column(BigInteger, primary_key=True)
    value: Mapped[float] = mapped_column(Float)
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


class BandFit(Base):
    """A band rule's daily fits over all of one series' history, kept so that replays and
    rule kinds side by side need not fit them again after a restart or in another worker.

    Derived data (``webapp.store.band_fits``): used only while ``data_version``,
    ``engine_version`` and ``exclusions`` still match; one row per series and fit
    ``parameters``, replaced when the data, the engine or the exclusions change."""

    __tablename__ = "band_fits"
    __table_args__ = (UniqueConstraint("series_id", "parameters"),)

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    series_id: Mapped[int] = mapped_column(ForeignKey("series.id", ondelete="CASCADE"))
    parameters: Mapped[str] = mapped_column(String(400))  # canonical JSON
    exclusions: Mapped[str] = mapped_column(String(64))  # sha256 of the excluded spans
    data_version: Mapped[str] = mapped_column(String(400))
    engine_version: Mapped[str] = mapped_column(String(40))
    frame: Mapped[bytes] = mapped_column(LargeBinary)  # webapp.store.frames.encode_frame
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utcnow)


class AlertRule(Base):
    """The condition that produced pages: a threshold, an expected-band or a burn-rate rule.

    A burn-rate rule watches ``series_id`` as an error-ratio series, or, with
    ``good_series_id``, as the total events of a good/total pair of counts per sample."""

    __tablename__ = "alert_rules"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(200))
    series_id: Mapped[int | None] = mapped_column(ForeignKey("series.id", ondelete="SET NULL"))
    metric: Mapped[str | None] = mapped_column(String(500))
    label_filter: Mapped[dict[str, str]] = mapped_column(JSON, default=dict)
    kind: Mapped[str] = mapped_column(String(20), default="threshold")  # RULE_KINDS
    direction: Mapped[str] = mapped_column(String(10), default="above")  # above | below
    threshold: Mapped[float | None] = mapped_column(Float)
    tolerance: Mapped[float | None] = mapped_column(Float)
    hold_seconds: Mapped[int] = mapped_column(Integer, default=0)
    check_every_seconds: Mapped[int | None] = mapped_column(Integer)
    description: Mapped[str] = mapped_column(Text, default="")
    version: Mapped[int] = mapped_column(Integer, default=1, server_default="1")
    objective: Mapped[float | None] = mapped_column(Float)  # 0.999 for 99.9%
    period_seconds: Mapped[int | None] = mapped_column(Integer)  # the compliance period
    burn_windows: Mapped[list[dict[str, Any]] | None] = mapped_column(JSON)
    severity: Mapped[str | None] = mapped_column(String(10))  # page | ticket
    good_series_id: Mapped[int | None] = mapped_column(ForeignKey("series.id", ondelete="SET NULL"))
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
    # Marked by the reviewer: this page was real trouble (it is then also an incident).
    real_incident: Mapped[bool] = mapped_column(Boolean, default=False)
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utcnow)


class Incident(Base):
    """A span of real trouble on a scope: one series, or a metric and a label filter (every
    series of the metric whose labels include it). ``source`` says where it came from: a
    review's incident window, a page marked real, or an imported list; overlapping ones of
    one scope are merged when read (``webapp.analysis._incidents.merge_incidents``)."""

    __tablename__ = "incidents"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    start: Mapped[dt.datetime] = mapped_column(UTCDateTime, index=True)
    end: Mapped[dt.datetime | None] = mapped_column(UTCDateTime)  # None: still open
    title: Mapped[str] = mapped_column(String(300), default="")
    series_id: Mapped[int | None] = mapped_column(ForeignKey("series.id", ondelete="CASCADE"))
    metric: Mapped[str | None] = mapped_column(String(500))
    label_filter: Mapped[dict[str, str]] = mapped_column(JSON, default=dict)
    source: Mapped[str] = mapped_column(String(10))  # review | page | list
    review_id: Mapped[int | None] = mapped_column(ForeignKey("reviews.id", ondelete="CASCADE"))
    page_id: Mapped[int | None] = mapped_column(ForeignKey("pages.id", ondelete="CASCADE"))
    list_name: Mapped[str] = mapped_column(String(500), default="")  # the imported file's name
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
    # The peer comparison and the screening, as their JSON downloads (may be absent).
    peers: Mapped[dict[str, Any] | None] = mapped_column(JSON)
    screening: Mapped[dict[str, Any] | None] = mapped_column(JSON)
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
    exclude_from_baselines: Mapped[bool] = mapped_column(Boolean, default=True)
    # Bumped by every edit of the fields above the verdict (webapp.store.versions).
    version: Mapped[int] = mapped_column(Integer, default=1, server_default="1")
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utcnow)
    updated_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utcnow, onupdate=utcnow)
    created_by: Mapped[str | None] = mapped_column(String(100))  # team mode: the author
    updated_by: Mapped[str | None] = mapped_column(String(100))  # team mode: the last editor

    timeline: Mapped[list[TimelineEntry]] = relationship(
        back_populates="review", cascade="all, delete-orphan", order_by="TimelineEntry.at"
    )
    action_items: Mapped[list[ActionItem]] = relationship(
        back_populates="review", cascade="all, delete-orphan", order_by="ActionItem.position"
    )
    attachments: Mapped[list[ReviewExplanation]] = relationship(
        back_populates="review", cascade="all, delete-orphan", order_by="ReviewExplanation.position"
    )
    verdicts: Mapped[list[ReviewVerdict]] = relationship(
        back_populates="review", cascade="all, delete-orphan", order_by="ReviewVerdict.id"
    )


class ReviewVerdict(Base):
    """A review's decision on one alert rule it discusses: keep, tune (``parameters`` are the
    new ones), replace (``parameters`` describe the other kind) or retire, with the evidence
    numbers it rests on (pages per week, incidents caught, ...)."""

    __tablename__ = "review_verdicts"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    review_id: Mapped[int] = mapped_column(ForeignKey("reviews.id", ondelete="CASCADE"))
    alert_rule_id: Mapped[int | None] = mapped_column(
        ForeignKey("alert_rules.id", ondelete="SET NULL")
    )
    rule_name: Mapped[str] = mapped_column(String(200), default="")  # kept if the rule goes
    decision: Mapped[str] = mapped_column(String(10))  # keep | tune | replace | retire
    parameters: Mapped[dict[str, Any]] = mapped_column(JSON, default=dict)
    evidence: Mapped[dict[str, Any]] = mapped_column(JSON, default=dict)
    rationale: Mapped[str] = mapped_column(Text, default="")
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utcnow)
    updated_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utcnow, onupdate=utcnow)

    review: Mapped[Review] = relationship(back_populates="verdicts")


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
    __table_args__ = (UniqueConstraint("review_id", "explanation_id"),)  # attached once

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    review_id: Mapped[int] = mapped_column(ForeignKey("reviews.id", ondelete="CASCADE"))
    explanation_id: Mapped[int] = mapped_column(ForeignKey("explanations.id", ondelete="CASCADE"))
    caption: Mapped[str] = mapped_column(Text, default="")
    position: Mapped[int] = mapped_column(Integer, default=0)
    version: Mapped[int] = mapped_column(Integer, default=1, server_default="1")

    review: Mapped[Review] = relationship(back_populates="attachments")
    explanation: Mapped[Explanation] = relationship()


class ActionItem(Base):
    __tablename__ = "action_items"
    __table_args__ = (UniqueConstraint("review_id", "position"),)

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    review_id: Mapped[int] = mapped_column(ForeignKey("reviews.id", ondelete="CASCADE"))
    text: Mapped[str] = mapped_column(Text)
    owner: Mapped[str] = mapped_column(String(200), default="")
    due_date: Mapped[dt.date | None] = mapped_column()
    state: Mapped[str] = mapped_column(String(20), default="open")  # open | in progress | done
    position: Mapped[int] = mapped_column(Integer, default=0)
    version: Mapped[int] = mapped_column(Integer, default=1, server_default="1")

    review: Mapped[Review] = relationship(back_populates="action_items")


class AppKey(Base):
    """A secret the instance keeps across restarts, e.g. the key that signs sessions."""

    __tablename__ = "app_keys"

    name: Mapped[str] = mapped_column(String(40), primary_key=True)
    value: Mapped[str] = mapped_column(String(200))
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utcnow)


class User(Base):
    """A person who signs in to a team-mode instance. ``role``: viewer | editor | admin."""

    __tablename__ = "users"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(100), unique=True)
    password_hash: Mapped[str] = mapped_column(String(300))
    role: Mapped[str] = mapped_column(String(10), default="viewer")
    failed_sign_ins: Mapped[int] = mapped_column(Integer, default=0)
    last_failed_at: Mapped[dt.datetime | None] = mapped_column(UTCDateTime)
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utcnow)


class AuditEntry(Base):
    """Who changed which record when; ``changes`` holds old and new values of text fields."""

    __tablename__ = "audit"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utcnow, index=True)
    user_name: Mapped[str | None] = mapped_column(String(100))
    action: Mapped[str] = mapped_column(String(10))  # insert | update | delete
    table_name: Mapped[str] = mapped_column(String(60))
    record_id: Mapped[str | None] = mapped_column(String(100))
    changes: Mapped[dict[str, Any]] = mapped_column(JSON, default=dict)
